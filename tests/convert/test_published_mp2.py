"""Antisymmetrized spin-orbital conversion against a published worked example: MP2 of water.

Water in STO-3G at the geometry of the worked example (bohr), built with ``integrity build``,
converted with ``integrity convert`` to spin orbitals, physicist notation, antisymmetrized
(interleaved and blocked layouts, HDF5 and JSON), read back with :func:`integrity.load`. The
SCF and MP2 energies are then computed from the converted arrays alone, with the textbook
spin-orbital formulas (the Fock matrix as in docs/format.md):

    F_pq    = h_pq + sum_{j in O} <pj||qj>,               eps_p = F_pp
    E_HF    = E_core + sum_{i in O} h_ii + 1/2 sum_{ij in O} <ij||ij>
    E_MP2   = 1/4 sum_{ij in O, ab in V} |<ij||ab>|^2 / (eps_i + eps_j - eps_a - eps_b)

Formulas: Source: A. Szabo and N. S. Ostlund, Modern Quantum Chemistry (1989), ch. 3 (Hartree-Fock
energy) and ch. 6 (second-order Moller-Plesset energy in spin orbitals) (from memory).

Values: Source: T. D. Crawford, programming projects in quantum chemistry (public), project #3
(Hartree-Fock) and project #4 (MP2), water in STO-3G: geometry, SCF energy
-74.942079928192 and MP2 correlation energy -0.049149636120 hartree (from memory).
"""

from __future__ import annotations

import numpy as np
import pytest
from builders import spin_orbital
from command_line import succeeded

import integrity

pytestmark = pytest.mark.slow  # builds water with pyscf and converts it three times: a few seconds

#: Source: T. D. Crawford, programming projects (public), project #3, water STO-3G input, bohr
#: (from memory)
WATER_BOHR = """3
water, STO-3G worked example (bohr)
O   0.000000000000  -0.143225816552   0.000000000000
H   1.638036840407   1.136548822547  -0.000000000000
H  -1.638036840407   1.136548822547  -0.000000000000
"""
#: Source: T. D. Crawford, programming projects (public), project #3, final SCF energy (from memory)
PUBLISHED_SCF = -74.942079928192
#: Source: T. D. Crawford, programming projects (public), project #4, MP2 correlation energy (from memory)
PUBLISHED_MP2 = -0.049149636120

#: The issue asks for 1e-9 (looser than half a unit in the 12th decimal, 5e-13): MP2 is not
#: stationary in the orbitals, so it carries the SCF's convergence error to first order. Measured
#: with pyscf: 7.9e-11 from the build's SCF (conv_tol 1e-11), 3.8e-11 from one converged to 1e-13;
#: the published value comes from an SCF stopped at its own threshold.
MP2_TOLERANCE = 1e-9
#: 1e-12, not 5e-13: pyscf's STO-3G reproduces the published SCF energy to 3e-13 to 4.2e-13
#: (measured over SCF thresholds 1e-9 to 1e-13 and one or two threads), so half a unit of the
#: 12th decimal leaves less margin than the run-to-run spread of the 13th.
SCF_TOLERANCE = 1e-12

CASES = [
    pytest.param(("interleaved", "h5"), id="interleaved-hdf5"),
    pytest.param(("blocked", "h5"), id="blocked-hdf5"),
    pytest.param(("interleaved", "json"), id="interleaved-json"),
]


@pytest.fixture(scope="module")
def water_file(tmp_path_factory, one_openmp_thread):
    folder = tmp_path_factory.mktemp("published_mp2")
    (folder / "water.xyz").write_text(WATER_BOHR)
    path = folder / "water.h5"
    succeeded("build", path, "--geometry", folder / "water.xyz", "--unit", "bohr", "--basis-set", "sto-3g")
    return path


@pytest.fixture(scope="module", params=CASES)
def converted(request, water_file):
    """The spin-orbital, physicist, antisymmetrized file of one layout and container, as read back."""
    layout, container = request.param
    out = water_file.with_name(f"water_so_{layout}.{container}")
    succeeded(
        "convert",
        water_file,
        out,
        "--basis",
        "spin-orbital",
        "--notation",
        "physicist",
        "--antisymmetrize",
        "--spin-layout",
        layout,
    )
    return layout, integrity.load(out)


def _occupied(ham) -> np.ndarray:
    occupation = ham.reference("hf").occupation
    return np.array(sorted(occupation[0] + occupation[1]))


def test_the_built_file_is_water_in_sto3g_with_the_published_scf_energy(water_file):
    ham = integrity.load(water_file)
    assert (ham.n, ham.electrons.alpha, ham.electrons.beta) == (7, 5, 5)
    assert ham.provenance["unit"] == "bohr"
    assert abs(ham.reference("hf").energy - PUBLISHED_SCF) <= SCF_TOLERANCE


def test_the_converted_file_is_what_was_asked_for(converted):
    layout, ham = converted
    assert ham.basis == "spin-orbital" and ham.orbitals.spin_layout == layout
    assert ham.two_electron.notation == "physicist" and ham.two_electron.antisymmetrized is True
    # the occupied spin orbitals are spatial 0-4 of each spin, mapped as docs/format.md says
    expected = sorted(spin_orbital(p, s, 7, layout) for p in range(5) for s in (0, 1))
    assert _occupied(ham).tolist() == expected


def test_scf_energy_from_the_converted_arrays_matches_the_published_one(converted):
    _, ham = converted
    h = np.asarray(ham.one_electron)
    g = np.asarray(ham.two_electron.array)  # <pq||rs>
    occ = _occupied(ham)
    energy = ham.core_energy + np.trace(h[np.ix_(occ, occ)]) + 0.5 * np.einsum("ijij->", g[np.ix_(occ, occ, occ, occ)])
    assert abs(energy - PUBLISHED_SCF) <= SCF_TOLERANCE


def test_mp2_from_the_converted_arrays_matches_the_published_worked_example(converted):
    _, ham = converted
    h = np.asarray(ham.one_electron)
    g = np.asarray(ham.two_electron.array)  # <pq||rs>
    occ = _occupied(ham)
    vir = np.setdiff1d(np.arange(ham.n), occ)
    fock = h + np.einsum("pjqj->pq", g[:, occ][:, :, :, occ])
    # canonical orbitals: the formula below needs a diagonal Fock matrix (the SCF stops at
    # a gradient of about 1e-9 here; 1e-7 leaves room for any machine)
    assert np.max(np.abs(fock - np.diag(np.diag(fock)))) < 1e-7
    eps = np.diag(fock)
    denominator = eps[occ, None, None, None] + eps[None, occ, None, None] - eps[None, None, vir, None] - eps[vir]
    correlation = 0.25 * np.sum(np.abs(g[np.ix_(occ, occ, vir, vir)]) ** 2 / denominator)
    assert abs(correlation - PUBLISHED_MP2) <= MP2_TOLERANCE
