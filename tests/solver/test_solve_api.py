"""The entry point: argument checks, errors that name what was wrong, result records."""

from __future__ import annotations

import numpy as np
import pytest

from integrity.errors import FieldError, UnsupportedError
from integrity.solver import FCIResult, Root, solve_arrays
from integrity.solver.integrals import spin_orbital_integrals
from integrity.testing.arrays import random_restricted, random_unitary, rotate_orbitals


@pytest.fixture
def small():
    return random_restricted(3, np.random.default_rng(0))


def test_the_result_is_a_frozen_record_of_roots(small):
    h, eri = small
    result = solve_arrays("restricted", h, eri, 1.5, n_alpha=2, n_beta=1, nroots=2)
    assert isinstance(result, FCIResult) and all(isinstance(r, Root) for r in result.roots)
    assert result.engine == "native" and result.determinants == 9
    assert result.iterations >= 1 and result.memory_estimate > 0
    assert result.roots[0].energy <= result.roots[1].energy
    assert all(r.converged and r.residual_norm < 1e-6 for r in result.roots)
    with pytest.raises(AttributeError):
        result.engine = "pyscf"


@pytest.mark.parametrize(
    ("args", "kwargs", "field"),
    [
        (("restricted", np.eye(3), np.zeros((3, 3, 3))), {"n_alpha": 1, "n_beta": 1}, "two_electron"),
        (("restricted", np.eye(3)[:2], np.zeros((3,) * 4)), {"n_alpha": 1, "n_beta": 1}, "one_electron"),
        (("orbital", np.eye(2), np.zeros((2,) * 4)), {"n_alpha": 1, "n_beta": 1}, "basis"),
        (("restricted", np.eye(2), np.zeros((2,) * 4)), {"n_alpha": 3, "n_beta": 1}, "n_alpha"),
        (("restricted", np.eye(2), np.zeros((2,) * 4)), {"n_alpha": 1}, "n_alpha"),
        (("restricted", np.eye(2), np.zeros((2,) * 4)), {}, "n_electrons"),
        (("restricted", np.eye(2), np.zeros((2,) * 4)), {"n_alpha": 1, "n_beta": 1, "engine": "fast"}, "engine"),
        (("spin-orbital", np.eye(4), np.zeros((4,) * 4)), {"n_electrons": 2}, "spin_layout"),
        (("restricted", np.eye(2), np.zeros((2,) * 4)), {"n_alpha": 1, "n_beta": 1, "irreps": [0, 9]}, "irreps"),
    ],
)
def test_bad_arguments_raise_field_errors_naming_the_field(args, kwargs, field):
    with pytest.raises(FieldError) as caught:
        solve_arrays(*args, **kwargs)
    assert caught.value.field == field


def test_a_non_hermitian_one_electron_array_is_refused(small):
    h, eri = small
    h = h.copy()
    h[0, 1] += 0.1
    with pytest.raises(FieldError, match="largest deviation"):
        solve_arrays("restricted", h, eri, n_alpha=1, n_beta=1)


def test_nan_values_are_refused(small):
    h, eri = small
    eri = eri.copy()
    eri[0, 0, 0, 0] = np.nan
    with pytest.raises(FieldError, match="NaN"):
        solve_arrays("restricted", h, eri, n_alpha=1, n_beta=1)


def test_n_alpha_is_refused_when_the_hamiltonian_does_not_conserve_sz(small):
    h, eri = small
    hs, gs = spin_orbital_integrals("restricted", h, eri, "blocked")
    hs = hs.copy()
    hs[0, 3] = hs[3, 0] = 0.1
    with pytest.raises(FieldError, match="couples alpha and beta"):
        solve_arrays("spin-orbital", hs, gs, n_alpha=1, n_beta=1, spin_layout="blocked")


def test_pyscf_refuses_complex_values_and_spin_coupling_with_the_reason(small):
    h, eri = small
    hc, gc = rotate_orbitals(h, eri, random_unitary(3, np.random.default_rng(1)))
    with pytest.raises(UnsupportedError, match="imaginary"):
        solve_arrays("restricted", hc, gc, n_alpha=1, n_beta=1, engine="pyscf")
    hs, gs = spin_orbital_integrals("restricted", h, eri, "interleaved")
    hs = hs.astype(complex)
    result = solve_arrays("spin-orbital", hs, gs, n_electrons=2, spin_layout="interleaved", engine="pyscf")
    assert any("as restricted" in note for note in result.notes)
    mixed = 0.5 * (gs - gs.transpose(0, 3, 2, 1))
    with pytest.raises(UnsupportedError, match="different spin"):
        solve_arrays("spin-orbital", hs.real, mixed, n_electrons=2, spin_layout="interleaved", engine="pyscf")


def test_roots_are_counted_from_the_requested_one(small):
    h, eri = small
    all_roots = solve_arrays("restricted", h, eri, n_alpha=2, n_beta=1, nroots=4)
    later = solve_arrays("restricted", h, eri, n_alpha=2, n_beta=1, root=2, nroots=2)
    assert np.allclose(later.energies, all_roots.energies[2:], atol=1e-10)


def test_unconverged_roots_are_flagged_not_hidden():
    h, eri = random_restricted(6, np.random.default_rng(4))
    result = solve_arrays("restricted", h, eri, n_alpha=3, n_beta=3, max_iter=2, tol=1e-14)
    assert not result.roots[0].converged
    assert result.roots[0].residual_norm > 1e-7


def test_negligible_spin_coupling_is_treated_as_zero_and_reported(small):
    h, eri = small
    hs, gs = spin_orbital_integrals("restricted", h, eri, "blocked")
    hs = hs.copy()
    hs[0, 3] = hs[3, 0] = 1e-17
    result = solve_arrays("spin-orbital", hs, gs, n_alpha=1, n_beta=1, spin_layout="blocked")
    direct = solve_arrays("restricted", h, eri, n_alpha=1, n_beta=1)
    assert abs(result.roots[0].energy - direct.roots[0].energy) < 1e-12
    assert any("treated as zero" in note for note in result.notes)


def test_inconsistent_electron_counts_are_refused(small):
    h, eri = small
    hs, gs = spin_orbital_integrals("restricted", h, eri, "blocked")
    with pytest.raises(FieldError, match="differs"):
        solve_arrays("spin-orbital", hs, gs, n_electrons=3, n_alpha=1, n_beta=1, spin_layout="blocked")
    with pytest.raises(FieldError, match="differs"):
        solve_arrays("restricted", h, eri, n_electrons=3, n_alpha=1, n_beta=1)
    derived = solve_arrays("restricted", h, eri, n_electrons=3, n_alpha=2)
    assert (derived.n_alpha, derived.n_beta) == (2, 1)
