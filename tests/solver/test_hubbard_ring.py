"""The six-site Hubbard ring (t = 1, U = 4, half filling) against pyscf's full CI of the same model.

The model is ``integrity.testing.hubbard(6, t=1, u=4, periodic=True)``: h[j, j+-1] = -t around
the ring, (jj|jj) = U, in the site basis (energies in units of t). Both sides take the same
``h1``/``eri`` arrays. The values held against ours are reference-library values, computed in the
test by pyscf, not textbook ones.
"""

from __future__ import annotations

import numpy as np
import pytest
from pyscf import fci

from integrity.solver import solve_arrays
from integrity.testing import hubbard

SITES, HOPPING, ONSITE = 6, 1.0, 4.0
HALF = (3, 3)
AGREEMENT = 1e-9  # energy units of t: the solves' accuracy (pyscf converged to 1e-12)


@pytest.fixture(scope="module", autouse=True)
def _pyscf_on_one_thread(one_openmp_thread):
    return one_openmp_thread


@pytest.fixture(scope="module")
def ring():
    return hubbard(SITES, t=HOPPING, u=ONSITE, periodic=True)


def _pyscf_lowest(h1, eri, nelec, *, s_squared=None):
    """pyscf's lowest state of ``nelec`` (of total spin S(S+1) = ``s_squared`` when given)."""
    solver = fci.direct_spin1.FCI()
    solver.conv_tol = 1e-12
    solver.max_cycle = 1000
    if s_squared is not None:
        solver = fci.addons.fix_spin_(solver, ss=s_squared, shift=0.5)
    energy, vector = solver.kernel(h1, eri, SITES, nelec)
    assert solver.converged
    spin, _ = fci.spin_op.spin_square0(vector, SITES, nelec)
    return float(energy), float(spin)


def test_the_model_is_the_ring():
    h1, eri = hubbard(SITES, t=HOPPING, u=ONSITE, periodic=True)
    for j in range(SITES):
        assert h1[j, (j + 1) % SITES] == h1[(j + 1) % SITES, j] == -HOPPING
        assert eri[j, j, j, j] == ONSITE
    assert np.count_nonzero(h1) == 2 * SITES and np.count_nonzero(eri) == SITES


def test_the_ground_singlet_is_pyscfs(ring):
    h1, eri = ring
    ours = solve_arrays("restricted", h1, eri, n_alpha=3, n_beta=3, two_s=0).roots[0]
    lowest = solve_arrays("restricted", h1, eri, n_alpha=3, n_beta=3).roots[0]
    # Source: pyscf.fci.direct_spin1.FCI, the lowest state of (3, 3) electrons (reference library)
    theirs, spin = _pyscf_lowest(h1, eri, HALF)
    assert abs(spin) < 1e-8  # pyscf's lowest state is the singlet too
    assert abs(ours.energy - theirs) <= AGREEMENT
    assert ours.two_s == 0 and abs(lowest.energy - ours.energy) <= AGREEMENT  # the singlet is the ground state


@pytest.mark.slow
def test_the_lowest_triplet_is_pyscfs_in_both_sectors(ring):
    h1, eri = ring
    in_ms0 = solve_arrays("restricted", h1, eri, n_alpha=3, n_beta=3, two_s=2).roots[0]
    in_ms1 = solve_arrays("restricted", h1, eri, n_alpha=4, n_beta=2).roots[0]
    # Source: pyscf.fci.direct_spin1.FCI with fci.addons.fix_spin_ (S(S+1) = 2) for (3, 3) electrons,
    # and its lowest state of (4, 2) electrons (reference library)
    fixed, fixed_spin = _pyscf_lowest(h1, eri, HALF, s_squared=2.0)
    sector, sector_spin = _pyscf_lowest(h1, eri, (4, 2))
    assert abs(fixed_spin - 2.0) < 1e-8 and abs(sector_spin - 2.0) < 1e-8
    assert abs(fixed - sector) <= AGREEMENT
    assert in_ms0.two_s == 2 and in_ms1.two_s == 2
    assert abs(in_ms0.energy - fixed) <= AGREEMENT
    assert abs(in_ms1.energy - sector) <= AGREEMENT


def test_the_spin_gap_is_positive(ring):
    """The ring is bipartite with three sites per sublattice: at half filling with U > 0 its ground state
    is unique and has S = 0, so the lowest triplet lies above it.

    Source: E. H. Lieb, Phys. Rev. Lett. 62, 1201 (1989), theorem 2 (from memory).
    """
    h1, eri = ring
    singlet = solve_arrays("restricted", h1, eri, n_alpha=3, n_beta=3, two_s=0).roots[0].energy
    triplet = solve_arrays("restricted", h1, eri, n_alpha=3, n_beta=3, two_s=2).roots[0].energy
    assert triplet - singlet > 1e-2
