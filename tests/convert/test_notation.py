"""Chemist <-> physicist: <pq|rs> = (pr|qs), the definition in docs/format.md (two_electron.notation)."""

from __future__ import annotations

import itertools

import numpy as np
import pytest
from builders import (
    PROPERTY_SETTINGS,
    generic_spin_orbital,
    restricted,
    same_bits,
    seeded,
    unrestricted,
)
from hypothesis import given
from hypothesis import strategies as st

from integrity.convert import convert, convert_notation
from integrity.convert.reindex import swap_notation
from integrity.model.fingerprint import fingerprint

BUILDERS = {
    "restricted": lambda n, rng, c: restricted(n, rng, is_complex=c),
    "unrestricted": lambda n, rng, c: unrestricted(n, rng, is_complex=c),
    "spin-orbital": lambda n, rng, c: generic_spin_orbital(2 * n, rng, is_complex=c),
}


@pytest.mark.parametrize("is_complex", [False, True])
def test_physicist_elements_equal_chemist_elements_with_the_middle_indices_swapped(is_complex):
    ham = restricted(3, seeded(f"loops {is_complex}"), is_complex=is_complex)
    chem = ham.two_electron.array
    phys = convert_notation(ham, "physicist").hamiltonian.two_electron.array
    for p, q, r, s in itertools.product(range(3), repeat=4):
        assert phys[p, q, r, s] == chem[p, r, q, s]  # <pq|rs> = (pr|qs)


def test_the_unrestricted_ab_block_reads_alpha_for_electron_one_in_physicist_order():
    ham = unrestricted(3, seeded("ab loops"))
    chem_ab = ham.two_electron.array[1]  # (pa qa|rb sb)
    phys = convert_notation(ham, "physicist").hamiltonian.two_electron.array
    for p, q, r, s in itertools.product(range(3), repeat=4):
        # <pa qb|ra sb> = (pa ra|qb sb)
        assert phys[1, p, q, r, s] == chem_ab[p, r, q, s]
        assert phys[0, p, q, r, s] == ham.two_electron.array[0, p, r, q, s]


def test_the_notation_copy_is_c_contiguous_and_independent_of_the_input():
    chem = np.arange(81.0).reshape(3, 3, 3, 3)
    phys = swap_notation(chem)
    assert phys.flags.c_contiguous and not np.shares_memory(phys, chem)


@PROPERTY_SETTINGS
@given(
    basis=st.sampled_from(sorted(BUILDERS)),
    n=st.integers(1, 5),
    is_complex=st.booleans(),
    seed=st.integers(0, 2**32 - 1),
)
def test_chemist_to_physicist_and_back_is_bit_exact_and_keeps_the_fingerprint(basis, n, is_complex, seed):
    n = min(n, 3) if basis == "spin-orbital" else n
    ham = BUILDERS[basis](n, np.random.default_rng(seed), is_complex)
    there = convert(ham, notation="physicist")
    back = convert(there.hamiltonian, notation="chemist").hamiltonian
    assert there.hamiltonian.two_electron.notation == "physicist"
    assert same_bits(back.two_electron.array, ham.two_electron.array)
    assert same_bits(back.one_electron, ham.one_electron)
    assert fingerprint(there.hamiltonian) == fingerprint(ham) == fingerprint(back)
    assert not there.fingerprint_changed
    assert [s["step"] for s in there.steps] == ["notation"]


def test_asking_for_the_notation_a_file_already_has_is_no_step():
    ham = restricted(2, seeded("same"))
    result = convert(ham, notation="chemist")
    assert result.steps == () and same_bits(result.hamiltonian.two_electron.array, ham.two_electron.array)
