"""Hamiltonians with known spectra: Hubbard dimer and ring, H2 / STO-3G, a Hund's-rule pair."""

from __future__ import annotations

import numpy as np
import pytest
from plain_format import is_close_to

from integrity.solver import slater_condon_solve, solve_arrays
from integrity.testing.arrays import hubbard, hund_pair


@pytest.mark.parametrize(("t", "u"), [(1.0, 4.0), (0.5, 1.0), (1.0, 0.0), (0.3, 10.0)])
def test_hubbard_dimer_at_half_filling_has_the_analytic_levels(t, u):
    # Two-site Hubbard model, two electrons, S_z = 0: singlets at U/2 -+ sqrt(U²/4 + 4t²) and U,
    # the triplet at 0. Source: Fazekas, Lecture Notes on Electron Correlation and Magnetism,
    # World Scientific (1999), section 5.1 (from memory).
    h, eri = hubbard(2, t=t, u=u)
    root = np.sqrt(u * u / 4 + 4 * t * t)
    expected = sorted([u / 2 - root, 0.0, u, u / 2 + root])
    result = solve_arrays("restricted", h, eri, n_alpha=1, n_beta=1, nroots=4)
    assert np.allclose(result.energies, expected, atol=1e-10)
    ground = result.roots[0]
    assert ground.two_s == 0 and abs(ground.s_squared) < 1e-8
    triplet = [r for r in result.roots if abs(r.energy) < 1e-9 and r.two_s == 2]
    assert len(triplet) == 1 and abs(triplet[0].s_squared - 2.0) < 1e-8
    dense = slater_condon_solve("restricted", h, eri, n_alpha=1, n_beta=1)
    assert np.allclose(dense.energies, expected, atol=1e-12)


def test_hubbard_dimer_triplet_components_sit_at_zero_in_every_sz_sector():
    # the M_S = ±1 triplet components have energy 0 (Source: Fazekas 1999, as above (from memory)).
    h, eri = hubbard(2, t=1.0, u=3.0)
    for n_alpha, n_beta in ((2, 0), (0, 2)):
        result = solve_arrays("restricted", h, eri, n_alpha=n_alpha, n_beta=n_beta)
        assert abs(result.roots[0].energy) < 1e-12 and result.roots[0].two_s == 2


def _band_energy(sites: int, t: float, n_alpha: int, n_beta: int) -> float:
    # Tight-binding ring: the hopping matrix is circulant, so its eigenvalues are the band
    # energies -2t cos(2 pi j / L), j = 0 .. L-1 (Essler et al., The One-Dimensional Hubbard
    # Model, Cambridge 2005); the U = 0 ground state fills the lowest of them per spin.
    levels = np.sort(-2.0 * t * np.cos(2.0 * np.pi * np.arange(sites) / sites))
    return float(levels[:n_alpha].sum() + levels[:n_beta].sum())


@pytest.mark.parametrize(
    ("sites", "n_alpha", "n_beta"),
    [
        (3, 1, 1),
        (4, 2, 2),
        (4, 1, 1),
        (5, 3, 2),
        (6, 3, 3),
        (6, 2, 1),
        (7, 4, 3),
        (8, 4, 4),
    ],
)
def test_noninteracting_hubbard_ring_fills_the_lowest_band_levels(sites, n_alpha, n_beta):
    h, eri = hubbard(sites, t=1.0, u=0.0, periodic=True)
    result = solve_arrays("restricted", h, eri, n_alpha=n_alpha, n_beta=n_beta)
    assert abs(result.roots[0].energy - _band_energy(sites, 1.0, n_alpha, n_beta)) < 1e-9


@pytest.mark.slow
def test_h2_sto3g_at_1_4_bohr_reproduces_the_szabo_ostlund_full_ci_energy():
    # Source: Szabo and Ostlund, Modern Quantum Chemistry (1989), chapter 4, H2/STO-3G at
    # R = 1.4 bohr: E(FCI) = -1.1373 hartree, correlation energy -0.0206 hartree (from memory).
    from pyscf import ao2mo, gto, scf

    mol = gto.M(atom="H 0 0 0; H 0 0 1.4", unit="bohr", basis="sto-3g", verbose=0)
    mf = scf.RHF(mol).run()
    c = mf.mo_coeff
    h1 = c.T @ mf.get_hcore() @ c
    eri = ao2mo.restore(1, ao2mo.kernel(mol, c), 2)
    result = solve_arrays("restricted", h1, eri, mol.energy_nuc(), n_alpha=1, n_beta=1)
    energy = result.roots[0].energy
    assert is_close_to(energy, -1.1373, 4)
    assert is_close_to(energy - mf.e_tot, -0.0206, 4)


def test_hund_pair_levels_follow_from_the_two_electron_matrix():
    # Derived by hand in the S_z = 0 determinants: triplet v - k, open-shell singlet v + k,
    # closed-shell singlets u -+ k (pair hopping k couples |0a0b> and |1a1b>).
    h, eri = hund_pair(1.0, 0.6, 0.15)
    result = solve_arrays("restricted", h, eri, n_alpha=1, n_beta=1, nroots=4)
    assert np.allclose(result.energies, [0.45, 0.75, 0.85, 1.15], atol=1e-12)
    assert [r.two_s for r in result.roots] == [2, 0, 0, 0]
