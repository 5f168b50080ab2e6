"""Memory estimates and the budget."""

from __future__ import annotations

from math import comb

import numpy as np
import pytest

from integrity.errors import BudgetError
from integrity.solver import estimate_memory, slater_condon_solve, solve_arrays
from integrity.solver.irrep_blocks import block_layout
from integrity.solver.memory import two_string_memory
from integrity.testing.arrays import random_restricted


def test_a_space_too_large_for_a_tiny_budget_raises_with_the_figures():
    h, eri = random_restricted(8, np.random.default_rng(0))
    with pytest.raises(BudgetError) as caught:
        solve_arrays("restricted", h, eri, n_alpha=4, n_beta=4, memory=2**20)
    error = caught.value
    assert error.size == comb(8, 4) ** 2
    assert error.budget == 2**20
    assert error.needed > error.budget
    assert "4900 determinants" in str(error)
    assert "but the budget is 1 MiB (--memory)" in str(error)  # sizes humanized, the option named


def test_the_estimate_is_made_without_building_anything_and_grows_with_the_space():
    sizes = [estimate_memory("restricted", n, n_alpha=n // 2, n_beta=n // 2) for n in (8, 10, 12, 14, 16)]
    assert sizes == sorted(sizes)
    # At least the Davidson basis and its images: 16 vectors of comb(16, 8)**2 doubles.
    assert sizes[-1] > 16 * comb(16, 8) ** 2 * 8
    assert estimate_memory("restricted", 6, n_alpha=3, n_beta=3, complex_values=True) > estimate_memory(
        "restricted", 6, n_alpha=3, n_beta=3
    )
    assert estimate_memory("spin-orbital", 12, n_electrons=6, sz_conserved=False) > estimate_memory(
        "spin-orbital", 12, n_electrons=6
    )


def test_the_estimate_counts_only_the_blocks_of_the_target_irrep():
    irreps = [0, 1, 2, 3, 4, 5, 6, 7, 0, 3, 5, 6]
    whole = two_string_memory(12, 6, 6)
    layout = block_layout(12, 6, 6, irreps, 0)
    blocked = two_string_memory(12, 6, 6, layout=layout)
    assert blocked.determinants == layout.size < whole.determinants / 4
    assert blocked.parts["davidson"] * whole.determinants == whole.parts["davidson"] * layout.size
    assert blocked.total < whole.total / 2


@pytest.mark.slow
def test_the_estimate_bounds_what_a_solve_actually_allocates():
    import tracemalloc

    h, eri = random_restricted(9, np.random.default_rng(2))
    tracemalloc.start()
    try:
        result = solve_arrays("restricted", h, eri, n_alpha=5, n_beta=4, nroots=2)
        _, peak = tracemalloc.get_traced_memory()
    finally:
        tracemalloc.stop()
    assert result.determinants == comb(9, 5) * comb(9, 4)
    assert peak <= result.memory_estimate


def test_the_dense_reference_refuses_large_spaces():
    h, eri = random_restricted(8, np.random.default_rng(3))
    with pytest.raises(BudgetError) as caught:
        slater_condon_solve("restricted", h, eri, n_alpha=4, n_beta=4)
    assert caught.value.size == 4900
