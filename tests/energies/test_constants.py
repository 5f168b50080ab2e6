"""A constant every reference shares, the nuclear repulsion of the geometry in provenance, and a complex
one-electron matrix stored transposed: findings the energy checks and diagnose name."""

from __future__ import annotations

import math

import numpy as np
import pytest
from locations import GOOD

from integrity import diagnose, load
from integrity.checks import check
from integrity.energies import solve
from integrity.energies.nuclear import BOHR_ANGSTROM, atomic_number, nuclear_repulsion, provenance_nuclear_repulsion
from integrity.errors import FieldError
from integrity.model.hamiltonian import Reference
from integrity.testing import random_hamiltonian

WATER = [("O", (0.0, 0.0, 0.0)), ("H", (0.0, 0.757, 0.587)), ("H", (0.0, -0.757, 0.587))]


def test_nuclear_repulsion_of_h2_is_one_over_r_in_bohr():
    # two protons 1.4 bohr apart: 1/1.4 hartree (Source: Szabo and Ostlund, sec. 3.5.2 (from memory))
    assert nuclear_repulsion([("H", (0, 0, 0)), ("H", (0, 0, 1.4))], "bohr") == pytest.approx(1 / 1.4, rel=1e-15)
    angstrom = 1.4 * BOHR_ANGSTROM
    assert nuclear_repulsion([("H", (0, 0, 0)), ("H", (0, 0, angstrom))]) == pytest.approx(1 / 1.4, rel=1e-14)


def test_nuclear_repulsion_agrees_with_pyscf_for_water():
    from pyscf import gto

    mol = gto.M(atom=[[s, xyz] for s, xyz in WATER], basis="sto-3g", verbose=0)
    assert nuclear_repulsion(WATER) == pytest.approx(mol.energy_nuc(), rel=1e-13)


def test_atomic_numbers_and_refusals():
    assert [atomic_number(s) for s in ("H", "c", "Ne", "Fe", "U", "Og")] == [1, 6, 10, 26, 92, 118]
    with pytest.raises(FieldError, match="not an element"):
        atomic_number("Xq")
    with pytest.raises(FieldError, match="same place"):
        nuclear_repulsion([("H", (0, 0, 0)), ("He", (0, 0, 0))])


def test_the_geometry_in_provenance_is_read_as_build_writes_it():
    ham = load(GOOD / "lih_sto3g.h5")
    assert provenance_nuclear_repulsion(ham.provenance) == pytest.approx(
        ham.core_energy_parts["nuclear_repulsion"], abs=1e-12
    )
    assert provenance_nuclear_repulsion({"geometry": "not a geometry"}) is None
    assert provenance_nuclear_repulsion(None) is None


def test_every_reference_off_by_one_constant_is_said_with_the_constant():
    ham = load(GOOD / "lih_sto3g.h5")
    shifted = ham.replace(core_energy=ham.core_energy + 0.25, core_energy_parts=None, checksum=None)
    hf, fci = check(shifted, only=("energy.hf", "energy.fci")).results
    assert hf.status == fci.status == "fail"
    assert "full CI (native, 2S = 0) gives" in fci.message
    assert "off by the same constant -0.2500000000 hartree" in fci.message
    assert f"with core_energy {ham.core_energy:.10f} every reference matches" in fci.message
    assert "which is not the constant" in fci.message  # the geometry's nuclear repulsion was compared
    assert "energy.fci tells whether the fci references are off by the same constant" in hf.message


def test_a_core_energy_lacking_the_nuclear_repulsion_is_named_from_the_geometry_in_provenance():
    ham = load(GOOD / "lih_sto3g.h5")
    nuclear = ham.core_energy_parts["nuclear_repulsion"]
    electronic = ham.replace(core_energy=ham.core_energy - nuclear, core_energy_parts=None, checksum=None)
    report = check(electronic, only=("energy.hf", "energy.fci"))
    fci = report.results[1]
    assert fci.status == "fail"
    assert "all 2 references are off by the same constant" in fci.message
    assert (
        f"the difference equals the nuclear repulsion of the geometry in provenance ({nuclear:.10f} hartree): "
        "core_energy lacks it"
    ) in fci.message
    finding = diagnose(electronic, reference="hf")
    assert any("nuclear repulsion of the geometry in provenance" in h.description for h in finding.explanations)


def test_one_reference_alone_is_not_called_a_shared_constant():
    ham = load(GOOD / "lih_sto3g.h5")
    only_hf = ham.replace(
        references=tuple(r for r in ham.references if r.method == "hf"), core_energy_parts=None, checksum=None
    )
    shifted = only_hf.replace(core_energy=ham.core_energy + 0.25)
    result = check(shifted, only=("energy.hf",)).results[0]
    assert result.status == "fail"
    assert "same constant" not in result.message


def _complex_with_fci_reference(seed):
    ham = random_hamiltonian("restricted", 4, complex_values=True, seed=seed)
    return ham.replace(references=(Reference("fci", "fci", solve(ham).roots[0].energy),))


@pytest.mark.parametrize("seed", [3, 11])
def test_a_complex_one_electron_matrix_stored_transposed_passes_structure_and_is_named_by_the_energy_check(seed):
    ham = _complex_with_fci_reference(seed)
    h = np.asarray(ham.one_electron)
    assert np.abs(h.imag).max() > 0.1
    transposed = ham.replace(one_electron=np.ascontiguousarray(h.T))
    assert np.allclose(h.T, h.conj())  # h^T = h*: as Hermitian as h, so no structural check can see it
    report = check(transposed)
    statuses = {r.id: r.status for r in report.results}
    assert statuses["one_electron.hermitian"] == "pass" and statuses["two_electron.symmetry"] == "pass"
    energy = next(r for r in report.results if r.id == "energy.fci")
    assert energy.status == "fail"
    assert "one_electron is stored transposed" in energy.message and "reproduces the reference energy" in energy.message


@pytest.mark.slow
def test_the_transposed_hypothesis_reproduces_the_energy_and_a_real_file_does_not_try_it():
    ham = _complex_with_fci_reference(5)
    transposed = ham.replace(one_electron=np.ascontiguousarray(np.asarray(ham.one_electron).T))
    finding = diagnose(transposed, reference="fci", tolerance=1e-8)
    assert not finding.matches
    match = next(x for x in finding.hypotheses if x.name == "transposed")
    assert match.matches and math.isclose(match.energy, ham.references[0].energy, abs_tol=1e-8)
    real = load(GOOD / "lih_sto3g.h5")
    tried = diagnose(real, expected=real.reference("fci").energy + 0.01)
    assert "transposed" not in {x.name for x in tried.hypotheses}
