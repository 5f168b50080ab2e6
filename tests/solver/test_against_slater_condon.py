"""The native solver held to the plain Slater–Condon reference, in every input form."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from integrity.solver import slater_condon_solve, solve_arrays
from integrity.solver.integrals import spin_orbital_integrals
from integrity.solver.problems import two_string_problem
from integrity.solver.sigma_spin_orbital import build_spin_orbital, sigma_spin_orbital
from integrity.solver.strings import strings
from integrity.testing.arrays import (
    random_restricted,
    random_unitary,
    random_unrestricted,
    rotate_orbitals,
)

TOL = 1e-9


def _agree(native, dense, count):
    assert np.allclose(native.energies[:count], dense.energies[:count], atol=TOL, rtol=0)
    assert all(root.converged for root in native.roots)


def _four_fold_real(n, rng):
    """Real (pq|rs) = (qp|sr) = (rs|pq) but (pq|rs) != (qp|rs): no pair packing possible."""
    x = rng.standard_normal((n,) * 4)
    g = x + x.transpose(1, 0, 3, 2) + x.transpose(2, 3, 0, 1) + x.transpose(3, 2, 1, 0)
    h = rng.standard_normal((n, n))
    return h + h.T, 0.25 * g


@pytest.mark.slow
@pytest.mark.parametrize(("n", "n_alpha", "n_beta"), [(2, 1, 1), (4, 2, 2), (5, 3, 1), (5, 0, 3), (6, 3, 3), (6, 4, 2)])
def test_restricted_real_roots_match_the_dense_reference(n, n_alpha, n_beta):
    h, eri = random_restricted(n, np.random.default_rng(n * 10 + n_alpha))
    native = solve_arrays("restricted", h, eri, 0.3, n_alpha=n_alpha, n_beta=n_beta, nroots=3)
    dense = slater_condon_solve("restricted", h, eri, 0.3, n_alpha=n_alpha, n_beta=n_beta)
    _agree(native, dense, 3)
    assert np.allclose([r.s_squared for r in native.roots], dense.s_squared[:3], atol=1e-7)


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_real_integrals_without_pair_symmetry_use_the_unpacked_path(seed):
    h, eri = _four_fold_real(5, np.random.default_rng(seed))
    native = solve_arrays("restricted", h, eri, n_alpha=3, n_beta=2, nroots=2)
    dense = slater_condon_solve("restricted", h, eri, n_alpha=3, n_beta=2)
    _agree(native, dense, 2)


@pytest.mark.slow
@pytest.mark.parametrize(("n", "n_alpha", "n_beta"), [(4, 2, 2), (5, 2, 3), (6, 3, 3)])
def test_restricted_complex_roots_match_the_dense_reference(n, n_alpha, n_beta):
    rng = np.random.default_rng(100 + n)
    h, eri = rotate_orbitals(*random_restricted(n, rng), random_unitary(n, rng))
    native = solve_arrays("restricted", h, eri, n_alpha=n_alpha, n_beta=n_beta, nroots=3)
    dense = slater_condon_solve("restricted", h, eri, n_alpha=n_alpha, n_beta=n_beta)
    _agree(native, dense, 3)


@pytest.mark.slow
@pytest.mark.parametrize("complex_values", [False, True])
@pytest.mark.parametrize(("n", "n_alpha", "n_beta"), [(4, 2, 1), (5, 3, 3), (6, 2, 4)])
def test_unrestricted_roots_match_the_dense_reference(n, n_alpha, n_beta, complex_values):
    rng = np.random.default_rng(200 + n)
    h1, eri = random_unrestricted(n, rng)
    if complex_values:
        ua, ub = random_unitary(n, rng), random_unitary(n, rng)
        ha, gaa = rotate_orbitals(h1[0], eri[0], ua)
        hb, gbb = rotate_orbitals(h1[1], eri[2], ub)
        gab = np.einsum("abcd,ap,bq,cr,ds->pqrs", eri[1], ua.conj(), ua, ub.conj(), ub)
        h1, eri = np.array([ha, hb]), np.array([gaa, gab, gbb])
    native = solve_arrays("unrestricted", h1, eri, 1.0, n_alpha=n_alpha, n_beta=n_beta, nroots=3)
    dense = slater_condon_solve("unrestricted", h1, eri, 1.0, n_alpha=n_alpha, n_beta=n_beta)
    _agree(native, dense, 3)
    assert all(r.s_squared is None for r in native.roots)


@pytest.mark.parametrize("layout", ["blocked", "interleaved"])
def test_spin_orbital_sectors_match_the_dense_reference(layout):
    h, eri = random_restricted(4, np.random.default_rng(7))
    hs, gs = spin_orbital_integrals("restricted", h, eri, layout)
    for n_alpha, n_beta in ((2, 2), (3, 1), (1, 2)):
        native = solve_arrays("spin-orbital", hs, gs, n_alpha=n_alpha, n_beta=n_beta, spin_layout=layout, nroots=3)
        dense = slater_condon_solve(
            "spin-orbital", hs, gs, n_electrons=n_alpha + n_beta, n_alpha=n_alpha, spin_layout=layout
        )
        _agree(native, dense, 3)


def _random_spin_orbital(m, rng):
    """Complex Hermitian spin-orbital integrals with no spin structure at all."""
    h = rng.standard_normal((m, m)) + 1j * rng.standard_normal((m, m))
    x = rng.standard_normal((m,) * 4) + 1j * rng.standard_normal((m,) * 4)
    g = x + x.transpose(2, 3, 0, 1)  # (pq|rs) = (rs|pq)
    g = g + g.transpose(1, 0, 3, 2).conj()  # (pq|rs) = (qp|sr)*
    return h + h.conj().T, 0.1 * g


@pytest.mark.parametrize(("m", "n_electrons"), [(6, 3), (8, 4), (8, 1), (6, 5)])
def test_spin_orbital_hamiltonians_that_couple_alpha_and_beta_match_the_dense_reference(m, n_electrons):
    h, eri = _random_spin_orbital(m, np.random.default_rng(m + n_electrons))
    native = solve_arrays("spin-orbital", h, eri, n_electrons=n_electrons, spin_layout="interleaved", nroots=3)
    dense = slater_condon_solve("spin-orbital", h, eri, n_electrons=n_electrons, spin_layout="interleaved")
    _agree(native, dense, 3)
    assert any("not conserved" in note for note in native.notes)


@pytest.mark.parametrize("layout", ["blocked", "interleaved"])
def test_antisymmetrised_input_in_plain_form_gives_the_same_states(layout):
    # g'_pqrs = (g_pqrs - g_psrq) / 2 writes the same operator as g, but with elements
    # (p alpha, q beta | r beta, s alpha) that move single electrons between spins.
    h, eri = random_restricted(4, np.random.default_rng(3))
    hs, gs = spin_orbital_integrals("restricted", h, eri, layout)
    antisymmetric = 0.5 * (gs - gs.transpose(0, 3, 2, 1))
    plain = solve_arrays("spin-orbital", hs, gs, n_alpha=2, n_beta=2, spin_layout=layout, nroots=3)
    mixed = solve_arrays("spin-orbital", hs, antisymmetric, n_alpha=2, n_beta=2, spin_layout=layout, nroots=3)
    assert np.allclose(plain.energies, mixed.energies, atol=TOL)
    reference = solve_arrays("restricted", h, eri, n_alpha=2, n_beta=2, nroots=3)
    assert np.allclose(reference.energies, mixed.energies, atol=TOL)


@settings(max_examples=25, deadline=None)
@given(st.integers(0, 10**6), st.integers(2, 5), st.booleans())
def test_two_string_sigma_is_hermitian_for_all_vectors(seed, n, complex_values):
    rng = np.random.default_rng(seed)
    h, eri = random_restricted(n, rng)
    if complex_values:
        h, eri = rotate_orbitals(h, eri, random_unitary(n, rng))
    n_alpha, n_beta = int(rng.integers(0, n + 1)), int(rng.integers(0, n + 1))
    problem = two_string_problem("restricted", h, eri, n_alpha, n_beta)
    dtype = problem.dtype
    x = rng.standard_normal(problem.ndet).astype(dtype)
    y = rng.standard_normal(problem.ndet).astype(dtype)
    if complex_values:
        x = x + 1j * rng.standard_normal(problem.ndet)
        y = y + 1j * rng.standard_normal(problem.ndet)
    assert abs(np.vdot(x, problem.matvec(y)) - np.vdot(problem.matvec(x), y)) < 1e-9


@settings(max_examples=15, deadline=None)
@given(st.integers(0, 10**6), st.integers(1, 3))
def test_spin_orbital_sigma_equals_the_dense_matrix_times_the_vector(seed, half):
    rng = np.random.default_rng(seed)
    m = 2 * half + 2
    h, eri = _random_spin_orbital(m, rng)
    n_electrons = int(rng.integers(0, m + 1))
    dets = strings(m, n_electrons)
    op = build_spin_orbital(h, eri, n_electrons, dets)
    from integrity.solver.slater_condon import hamiltonian_matrix

    c = rng.standard_normal(len(dets)) + 1j * rng.standard_normal(len(dets))
    assert np.allclose(sigma_spin_orbital(op, c), hamiltonian_matrix(h, eri, dets) @ c, atol=1e-10)


def test_a_high_spin_ground_state_is_found_from_low_spin_start_determinants():
    # For this seed the lowest diagonal determinants have two open shells, so they hold no
    # quintet component, yet the ground state of the sector is a quintet (<S^2> = 6).
    h, eri = random_restricted(6, np.random.default_rng(3063))
    dense = slater_condon_solve("restricted", h, eri, n_alpha=3, n_beta=3, nroots=2)
    assert abs(dense.s_squared[0] - 6.0) < 1e-8
    native = solve_arrays("restricted", h, eri, n_alpha=3, n_beta=3, nroots=2)
    _agree(native, dense, 2)
    assert native.roots[0].two_s == 4
