"""Full CI over every orbital does not depend on the orbitals: UHF and ROHF files agree.

Full CI in the whole one-electron space is invariant under any unitary change of the orbitals,
and separately of the alpha and of the beta spin orbitals (the determinant space of each spin is
the antisymmetric power of the same one-particle space, whatever its basis). Source: T. Helgaker,
P. Jorgensen, J. Olsen, Molecular Electronic-Structure Theory, Wiley, Chichester (2000), ch. 11,
configuration-interaction theory (from memory). So a file built by our producer from UHF
orbitals (unrestricted: different alpha and beta orbitals) and one built from ROHF orbitals
(restricted) must give the same full-CI energies, root by root, in the same (n_alpha, n_beta)
sector. Both files are solved by our native solver.

Geometries are near equilibrium but are not checked against anything: the invariance holds at any
geometry.
"""

from __future__ import annotations

import numpy as np
import pytest

from integrity.energies import solve
from integrity.producers import build

INVARIANCE = 1e-9  # hartree: the figure; the two solves are each accurate to ~1e-12 here
ROOTS = 3


@pytest.fixture(scope="module", autouse=True)
def _pyscf_on_one_thread(one_openmp_thread):
    return one_openmp_thread


MOLECULES = {
    # name: (geometry in angstrom, basis set, 2S, charge)
    "OH doublet sto-3g": ("O 0 0 0\nH 0 0 0.9697", "sto-3g", 1, 0),
    "CH2 triplet sto-3g": ("C 0 0 0.1027\nH 0 0.9929 -0.3081\nH 0 -0.9929 -0.3081", "sto-3g", 2, 0),
    "Li2+ doublet sto-3g": ("Li 0 0 0\nLi 0 0 3.1", "sto-3g", 1, 1),
    "OH doublet 6-31g": ("O 0 0 0\nH 0 0 0.9697", "6-31g", 1, 0),
}


def _pair(name):
    geometry, basis, two_s, charge = MOLECULES[name]
    common = dict(two_s=two_s, charge=charge, max_fci_determinants=0, date="2026-01-01")
    rohf = build(geometry, basis, **common)
    uhf = build(geometry, basis, unrestricted=True, **common)
    return rohf, uhf


def _assert_invariant(name):
    rohf, uhf = _pair(name)
    assert (rohf.basis, uhf.basis) == ("restricted", "unrestricted")
    assert rohf.provenance["scf"] == "ROHF" and uhf.provenance["scf"] == "UHF"
    assert rohf.provenance["active_space"] == uhf.provenance["active_space"] == "all orbitals"
    assert rohf.electrons == uhf.electrons
    # really different orbitals: UHF's alpha and beta differ, and its energy is below ROHF's
    h_alpha, h_beta = np.asarray(uhf.one_electron)
    assert np.max(np.abs(h_alpha - h_beta)) > 1e-3
    assert uhf.references[0].energy < rohf.references[0].energy - 1e-6
    restricted = solve(rohf, roots=ROOTS)
    unrestricted = solve(uhf, roots=ROOTS)
    assert all(r.converged for r in restricted.roots + unrestricted.roots)
    assert restricted.determinants == unrestricted.determinants
    difference = np.abs(np.array(restricted.energies) - np.array(unrestricted.energies))
    assert np.all(difference <= INVARIANCE), difference
    return restricted


@pytest.mark.parametrize("name", ["OH doublet sto-3g", "CH2 triplet sto-3g", "Li2+ doublet sto-3g"])
def test_full_ci_from_uhf_orbitals_equals_full_ci_from_rohf_orbitals(name):
    restricted = _assert_invariant(name)
    two_s = MOLECULES[name][2]
    assert restricted.roots[0].two_s == two_s  # the ground state has the SCF's spin


@pytest.mark.slow
def test_the_invariance_holds_in_a_split_valence_basis():
    restricted = _assert_invariant("OH doublet 6-31g")
    assert restricted.determinants == 462 * 330  # C(11, 5) C(11, 4)
    # OH's ground state is X 2Pi, so the two lowest roots are its degenerate pair. Source: K. P. Huber
    # and G. Herzberg, Molecular Spectra and Molecular Structure IV: Constants of Diatomic Molecules,
    # Van Nostrand Reinhold, New York (1979), OH (from memory).
    assert abs(restricted.energies[1] - restricted.energies[0]) <= INVARIANCE
