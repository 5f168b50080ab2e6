"""One Hamiltonian in several forms (restricted, spin-orbital, rotated, complex) and edge sectors."""

from __future__ import annotations

from math import comb

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from pyscf import fci

from integrity.solver import slater_condon_solve, solve_arrays
from integrity.solver.integrals import spin_orbital_integrals
from integrity.testing.arrays import (
    hubbard,
    random_restricted,
    random_unitary,
    rotate_orbitals,
)

TOL = 1e-9


@pytest.mark.slow
@pytest.mark.parametrize("layout", ["blocked", "interleaved"])
@pytest.mark.parametrize(
    ("n_alpha", "n_beta", "nroots"), [(3, 3, 3), (3, 2, 3), (2, 4, 3), (0, 3, 3), (5, 4, 2), (5, 5, 1)]
)
def test_restricted_and_spin_orbital_forms_give_the_same_energies(layout, n_alpha, n_beta, nroots):
    h, eri = random_restricted(5, np.random.default_rng(11))
    restricted = solve_arrays("restricted", h, eri, 2.0, n_alpha=n_alpha, n_beta=n_beta, nroots=nroots)
    hs, gs = spin_orbital_integrals("restricted", h, eri, layout)
    spin_orbital = solve_arrays(
        "spin-orbital", hs, gs, 2.0, n_alpha=n_alpha, n_beta=n_beta, spin_layout=layout, nroots=nroots
    )
    assert np.allclose(restricted.energies, spin_orbital.energies, atol=TOL)
    for a, b in zip(restricted.roots, spin_orbital.roots, strict=True):
        assert abs(a.s_squared - b.s_squared) < 1e-7


def test_unrestricted_and_spin_orbital_forms_give_the_same_energies():
    from integrity.testing.arrays import random_unrestricted

    h1, eri = random_unrestricted(4, np.random.default_rng(12))
    un = solve_arrays("unrestricted", h1, eri, n_alpha=2, n_beta=3, nroots=3)
    hs, gs = spin_orbital_integrals("unrestricted", h1, eri, "interleaved")
    so = solve_arrays("spin-orbital", hs, gs, n_alpha=2, n_beta=3, spin_layout="interleaved", nroots=3)
    assert np.allclose(un.energies, so.energies, atol=TOL)
    mapped = solve_arrays(
        "spin-orbital", hs, gs, n_alpha=2, n_beta=3, spin_layout="interleaved", nroots=3, engine="pyscf"
    )
    assert np.allclose(mapped.energies, un.energies, atol=TOL)
    assert any("as unrestricted" in note for note in mapped.notes)


@pytest.mark.slow
@pytest.mark.parametrize("layout", ["blocked", "interleaved"])
def test_n_minus_one_and_n_plus_one_sectors_of_spin_orbital_input_agree_with_pyscf(layout):
    h, eri = random_restricted(6, np.random.default_rng(13))
    hs, gs = spin_orbital_integrals("restricted", h, eri, layout)
    for nelec in ((3, 2), (2, 3), (4, 3), (3, 4)):
        native = solve_arrays("spin-orbital", hs, gs, n_alpha=nelec[0], n_beta=nelec[1], spin_layout=layout, nroots=2)
        solver = fci.direct_spin1.FCI()
        solver.conv_tol = 1e-12
        reference, _ = solver.kernel(h, eri, 6, nelec, nroots=2)
        assert np.allclose(native.energies, reference, atol=TOL)


def test_lowest_sz_sector_is_chosen_when_only_the_electron_count_is_given():
    h, eri = random_restricted(4, np.random.default_rng(14))
    hs, gs = spin_orbital_integrals("restricted", h, eri, "blocked")
    result = solve_arrays("spin-orbital", hs, gs, n_electrons=5, spin_layout="blocked")
    assert (result.n_alpha, result.n_beta) == (3, 2)
    direct = solve_arrays("restricted", h, eri, n_electrons=5)
    assert (direct.n_alpha, direct.n_beta) == (3, 2)
    assert abs(result.roots[0].energy - direct.roots[0].energy) < TOL


@pytest.mark.slow
@pytest.mark.parametrize("seed", [0, 1, 2])
def test_a_unitary_orbital_rotation_leaves_the_spectrum_unchanged(seed):
    rng = np.random.default_rng(seed)
    h, eri = random_restricted(5, rng)
    real = solve_arrays("restricted", h, eri, n_alpha=3, n_beta=2, nroots=4)
    hc, gc = rotate_orbitals(h, eri, random_unitary(5, rng))
    assert np.abs(hc.imag).max() > 1e-3 and np.abs(gc.imag).max() > 1e-3
    rotated = solve_arrays("restricted", hc, gc, n_alpha=3, n_beta=2, nroots=4)
    assert np.allclose(real.energies, rotated.energies, atol=TOL)
    assert np.allclose([r.s_squared for r in real.roots], [r.s_squared for r in rotated.roots], atol=1e-7)
    hs, gs = spin_orbital_integrals("restricted", hc, gc, "interleaved")
    spin_orbital = solve_arrays("spin-orbital", hs, gs, n_alpha=3, n_beta=2, spin_layout="interleaved", nroots=4)
    assert np.allclose(real.energies, spin_orbital.energies, atol=TOL)


def test_a_spin_mixing_unitary_keeps_the_spectrum_of_the_whole_n_electron_space():
    # Rotating spin orbitals with a unitary that mixes alpha and beta couples the spins
    # (S_z is lost), but the spectrum over all N-electron determinants is unchanged.
    rng = np.random.default_rng(15)
    h, eri = random_restricted(3, rng)
    hs, gs = spin_orbital_integrals("restricted", h, eri, "interleaved")
    hm, gm = rotate_orbitals(hs, gs, random_unitary(6, rng))
    mixed = solve_arrays("spin-orbital", hm, gm, n_electrons=3, spin_layout="interleaved", nroots=6)
    dense = slater_condon_solve("spin-orbital", hs, gs, n_electrons=3, spin_layout="interleaved")
    assert np.allclose(mixed.energies, dense.energies[:6], atol=TOL)
    assert any("not conserved" in note for note in mixed.notes)


@settings(max_examples=20, deadline=None)
@given(st.integers(0, 10**6), st.integers(2, 5), st.data())
def test_permuting_orbitals_does_not_change_the_energies(seed, n, data):
    rng = np.random.default_rng(seed)
    h, eri = random_restricted(n, rng)
    n_alpha = data.draw(st.integers(0, n))
    n_beta = data.draw(st.integers(0, n))
    order = rng.permutation(n)
    nroots = min(2, comb(n, n_alpha) * comb(n, n_beta))
    permuted = solve_arrays(
        "restricted",
        h[np.ix_(order, order)],
        eri[np.ix_(order, order, order, order)],
        n_alpha=n_alpha,
        n_beta=n_beta,
        nroots=nroots,
    )
    plain = solve_arrays("restricted", h, eri, n_alpha=n_alpha, n_beta=n_beta, nroots=nroots)
    assert np.allclose(permuted.energies, plain.energies, atol=TOL)


def test_empty_and_full_spaces_hold_one_determinant():
    h, eri = random_restricted(4, np.random.default_rng(16))
    empty = solve_arrays("restricted", h, eri, 0.7, n_alpha=0, n_beta=0)
    assert empty.determinants == 1 and empty.roots[0].energy == pytest.approx(0.7, abs=1e-14)
    full = solve_arrays("restricted", h, eri, 0.7, n_alpha=4, n_beta=4)
    # Closed shell over all orbitals: 2 sum h_pp + sum_pq [2 (pp|qq) - (pq|qp)].
    expected = 0.7 + 2 * np.trace(h) + 2 * np.einsum("ppqq->", eri) - np.einsum("pqqp->", eri)
    assert full.determinants == 1 and abs(full.roots[0].energy - expected) < 1e-10
    one = solve_arrays("restricted", h, eri, n_alpha=4, n_beta=0)
    assert one.determinants == 1 and one.roots[0].two_s == 4
    hs, gs = spin_orbital_integrals("restricted", h, eri, "blocked")
    for n_electrons in (0, 8):
        so = solve_arrays("spin-orbital", hs, gs, 0.7, n_electrons=n_electrons, spin_layout="blocked")
        want = 0.7 if n_electrons == 0 else expected
        assert so.determinants == 1 and abs(so.roots[0].energy - want) < 1e-10


def test_more_roots_than_determinants_are_refused():
    from integrity.errors import FieldError

    h, eri = hubbard(2, t=1.0, u=2.0)
    with pytest.raises(FieldError, match="root"):
        solve_arrays("restricted", h, eri, n_alpha=1, n_beta=1, nroots=5)
