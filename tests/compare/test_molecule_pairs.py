"""Pairs of files for one molecule, made with pyscf, each landing on the rung it should.

The molecule is ammonia distorted to no symmetry at all (C1, no degenerate orbitals), so the
orbital order that maps one file onto another is unique and the signs are unique up to one
overall sign (flipping every orbital changes nothing). Files are CAS(8,6) active spaces over
the RHF orbitals (one frozen core orbital) and, for the unrestricted cases, CAS over the UHF
orbitals of the cation; a relabelled copy is made the way another group would make it:
permute and negate columns of the MO coefficients before pyscf's integral transformation.
"""

from __future__ import annotations

import numpy as np
import pytest

from integrity.compare import compare
from integrity.convert import convert
from integrity.io import save
from integrity.model.hamiltonian import Electrons, Hamiltonian, Orbitals, Reference, TwoElectron

ATOMS = [("N", (0.0, 0.0, 0.0)), ("H", (0.98, 0.12, -0.21)), ("H", (-0.41, 0.93, -0.30)), ("H", (-0.33, -0.52, 0.88))]
NCORE, NCAS = 1, 6
ORDER = (3, 0, 5, 1, 4, 2)
SIGNS = (-1, 1, -1, -1, 1, 1)


def _molecule(shift: float = 0.0, basis: str = "sto-3g", charge: int = 0, spin: int = 0):
    from pyscf import gto

    atoms = [(symbol, xyz) for symbol, xyz in ATOMS]
    atoms[1] = ("H", (ATOMS[1][1][0] + shift, *ATOMS[1][1][1:]))
    return gto.M(atom=atoms, basis=basis, charge=charge, spin=spin, unit="angstrom", verbose=0)


def _scf(mol, unrestricted: bool = False):
    from pyscf import scf

    mf = scf.UHF(mol) if unrestricted else scf.RHF(mol)
    mf.conv_tol = 1e-12
    mf.kernel()
    assert mf.converged
    return mf


def _restricted(mf, columns=None, signs=None, ncas=NCAS) -> Hamiltonian:
    """The CAS Hamiltonian over the active MO columns ``columns`` (in that order) times ``signs``."""
    from pyscf import ao2mo, mcscf

    nmo = mf.mo_coeff.shape[1]
    ncas = min(ncas, nmo - NCORE)
    window = np.arange(NCORE, NCORE + ncas)
    columns = window if columns is None else window[np.asarray(columns)]
    signs = np.ones(ncas) if signs is None else np.asarray(signs, dtype=float)
    mo = np.array(mf.mo_coeff)
    mo[:, window] = mf.mo_coeff[:, columns] * signs
    electrons = int(mf.mol.nelectron) - 2 * NCORE
    cas = mcscf.CASCI(mf, ncas, electrons, ncore=NCORE)
    h1, ecore = cas.get_h1eff(mo)
    eri = ao2mo.restore(1, cas.get_h2eff(mo), ncas)
    occupied = tuple(int(p) for p in np.flatnonzero(mf.mo_occ[columns] > 1.5))
    enuc = float(mf.mol.energy_nuc())
    return Hamiltonian(
        Orbitals(ncas, "restricted"),
        Electrons(electrons // 2, electrons // 2),
        float(ecore),
        np.ascontiguousarray(h1),
        TwoElectron(np.ascontiguousarray(eri), "chemist"),
        core_energy_parts={"nuclear_repulsion": enuc, "frozen_core": float(ecore) - enuc},
        references=(Reference("hf", "hf", float(mf.e_tot), occupation=(occupied, occupied)),),
    )


def _unrestricted(mf, columns=((None, None)), signs=(None, None)) -> Hamiltonian:
    from pyscf import ao2mo, mcscf

    window = np.arange(NCORE, NCORE + NCAS)
    mo = np.array(mf.mo_coeff)
    occupied = []
    for spin in (0, 1):
        chosen = window if columns[spin] is None else window[np.asarray(columns[spin])]
        flips = np.ones(NCAS) if signs[spin] is None else np.asarray(signs[spin], dtype=float)
        mo[spin][:, window] = mf.mo_coeff[spin][:, chosen] * flips
        occupied.append(tuple(int(p) for p in np.flatnonzero(mf.mo_occ[spin][chosen] > 0.5)))
    alpha, beta = (int(n) - NCORE for n in mf.nelec)
    cas = mcscf.UCASCI(mf, NCAS, (alpha, beta), ncore=NCORE)
    (h1a, h1b), ecore = cas.get_h1eff(mo)
    active = (mo[0][:, window], mo[1][:, window])
    eri = np.stack([ao2mo.restore(1, block, NCAS) for block in cas.get_h2eff(active)])
    return Hamiltonian(
        Orbitals(NCAS, "unrestricted"),
        Electrons(alpha, beta),
        float(ecore),
        np.stack([h1a, h1b]),
        TwoElectron(eri, "chemist"),
        references=(Reference("hf", "hf", float(mf.e_tot), occupation=tuple(occupied)),),
    )


@pytest.fixture(scope="module")
def rhf(one_openmp_thread):
    return _scf(_molecule())


@pytest.fixture(scope="module")
def uhf(one_openmp_thread):
    return _scf(_molecule(charge=1, spin=1), unrestricted=True)


@pytest.fixture(scope="module")
def reference(rhf):
    return _restricted(rhf)


def test_permuted_and_negated_orbitals_are_a_relabelling_recovered_exactly(rhf, reference, tmp_path):
    other = _restricted(rhf, ORDER, SIGNS)
    # and another group's container and notation on top
    save(convert(other, notation="physicist").hamiltonian, tmp_path / "theirs.json")
    save(reference, tmp_path / "ours.h5")
    verdict = compare(tmp_path / "ours.h5", tmp_path / "theirs.json")
    assert verdict.name == "relabel" and verdict.equivalent
    assert verdict.relabelling.order == (ORDER,)
    assert verdict.relabelling.signs == (tuple(s * SIGNS[0] for s in SIGNS),)  # up to the overall sign
    assert verdict.relabelling.largest < 1e-12
    applied = convert(reference, orbital_order=ORDER, orbital_signs=verdict.relabelling.signs[0]).hamiltonian
    assert compare(applied, other).name == "tolerance"


def test_another_notation_storage_or_container_is_identical(reference, tmp_path):
    save(reference, tmp_path / "ours.h5")
    for name, form in (("p.json", {"notation": "physicist"}), ("pairs.h5", {"storage": "pairs"})):
        save(convert(reference, **form).hamiltonian, tmp_path / name)
        verdict = compare(tmp_path / "ours.h5", tmp_path / name)
        assert verdict.name == "identical" and verdict.rung == 1
    # 8-fold packing keeps one of (pq|rs) and (rs|pq), which pyscf computes apart: the last bits differ
    save(convert(reference, storage="unique", tolerance=1e-12).hamiltonian, tmp_path / "unique.h5")
    verdict = compare(tmp_path / "ours.h5", tmp_path / "unique.h5")
    assert verdict.name == "tolerance" and max(b.largest for b in verdict.blocks) < 1e-13


def test_a_core_energy_split_into_other_parts_is_identical_and_noted(reference):
    other = reference.replace(core_energy_parts={"total": reference.core_energy})
    verdict = compare(reference, other)
    assert verdict.name == "identical"
    assert any("split into different parts" in note for note in verdict.notes)


def test_a_missing_frozen_core_energy_is_a_constant_named_by_its_part(rhf, reference):
    other = _restricted(rhf, ORDER, SIGNS)
    other = other.replace(core_energy=other.core_energy_parts["nuclear_repulsion"], core_energy_parts=None)
    verdict = compare(reference, other)
    assert verdict.name == "constant" and not verdict.equivalent
    assert verdict.constant.difference == pytest.approx(-reference.core_energy_parts["frozen_core"], abs=1e-10)
    assert any(
        "core_energy_parts.frozen_core" in text and "B's core_energy lacks it" in text
        for text in verdict.constant.named
    )
    assert verdict.relabelling.order == (ORDER,)
    assert compare(reference, other, accept="constant").equivalent


@pytest.mark.slow
def test_orbitals_localized_within_the_occupied_and_virtual_spaces_give_the_same_spectrum(rhf, reference):
    from pyscf import lo

    mo = np.array(rhf.mo_coeff)
    occupied = np.arange(NCORE, 5)  # active orbitals occupied in RHF
    virtual = np.arange(5, NCORE + NCAS)
    mo[:, occupied] = lo.Boys(rhf.mol, rhf.mo_coeff[:, occupied]).kernel()
    mo[:, virtual] = lo.Boys(rhf.mol, rhf.mo_coeff[:, virtual]).kernel()
    localized = _restricted(_with_orbitals(rhf, mo))
    verdict = compare(reference, localized)
    assert verdict.name == "spectrum" and not verdict.equivalent
    assert compare(reference, localized, accept="spectrum").equivalent
    energies = verdict.energies
    assert len(energies.fci_a) == 3
    assert np.max(np.abs(np.subtract(energies.fci_b, energies.fci_a))) <= 1e-10
    assert energies.hf_b == pytest.approx(energies.hf_a, abs=1e-10)  # occupied orbitals only mixed among themselves
    blocks = {b.block: b for b in verdict.blocks}
    assert blocks["one_electron"].largest > 1e-2  # the elements themselves differ


def test_a_rotation_mixing_occupied_and_virtual_orbitals_keeps_the_spectrum_not_the_determinant(rhf, reference):
    from scipy.linalg import expm

    rng = np.random.default_rng(7)
    generator = rng.standard_normal((NCAS, NCAS)) * 0.3
    rotation = expm(generator - generator.T)
    mo = np.array(rhf.mo_coeff)
    window = slice(NCORE, NCORE + NCAS)
    mo[:, window] = rhf.mo_coeff[:, window] @ rotation
    verdict = compare(reference, _restricted(_with_orbitals(rhf, mo)))
    assert verdict.name == "spectrum"
    assert abs(verdict.energies.hf_b - verdict.energies.hf_a) > 1e-3
    assert "mixes occupied and virtual" in verdict.steps[-1].evidence


def _with_orbitals(mf, mo):
    """A copy of the SCF object whose MO coefficients are ``mo`` (occupations kept)."""
    copy = mf.copy()
    copy.mo_coeff = mo
    return copy


@pytest.mark.slow
def test_a_geometry_a_hundredth_of_an_angstrom_away_is_different(reference):
    moved = _restricted(_scf(_molecule(shift=0.01)))
    verdict = compare(reference, moved)
    assert verdict.name == "different" and verdict.rung == 6
    assert 1e-5 < abs(verdict.energies.difference) < 1e-2
    assert all(step.holds is False for step in verdict.steps[:5])
    assert any("differ throughout" in reason for reason in verdict.reasons)


@pytest.mark.slow
def test_another_basis_is_different_and_says_the_sizes(reference):
    large = _restricted(_scf(_molecule(basis="6-31g")), ncas=7)
    verdict = compare(reference, large)
    assert verdict.name == "different" and verdict.blocks == ()
    assert "A has 6 restricted orbitals, B has 7" in verdict.reasons[0]
    assert verdict.energies.fci_a and verdict.energies.fci_b  # each file's own energy, compared
    assert verdict.energies.difference < 0  # the larger basis lies lower


def test_one_altered_element_is_found_where_it_is(reference):
    array = np.array(reference.two_electron.array)
    array[4, 1, 2, 2] += 3e-7
    verdict = compare(reference, reference.replace(two_electron=TwoElectron(array, "chemist")))
    assert verdict.name == "different"
    (block,) = [b for b in verdict.blocks if b.beyond]
    assert (block.block, block.where, block.beyond) == ("two_electron", (4, 1, 2, 2), 1)
    assert block.largest == pytest.approx(3e-7, rel=1e-6)
    assert any("only 1 element(s) of two_electron" in reason for reason in verdict.reasons)


def test_unrestricted_orbitals_permuted_per_spin_are_recovered_exactly(uhf):
    reference = _unrestricted(uhf)
    beta_order = (1, 0, 2, 5, 3, 4)
    other = _unrestricted(uhf, (ORDER, beta_order), (SIGNS, (1, 1, -1, 1, -1, 1)))
    verdict = compare(reference, other)
    assert verdict.name == "relabel"
    assert verdict.relabelling.order == (ORDER, beta_order)
    assert verdict.relabelling.signs == (tuple(s * SIGNS[0] for s in SIGNS), (1, 1, -1, 1, -1, 1))
    assert not verdict.relabelling.exchange_spins


@pytest.mark.slow
def test_alpha_and_beta_exchanged_throughout_is_a_relabelling_but_swapped_counts_alone_are_not(uhf):
    reference = _unrestricted(uhf)
    h = np.asarray(reference.one_electron)
    g = np.asarray(reference.two_electron.array)
    swapped = reference.replace(
        electrons=Electrons(reference.electrons.beta, reference.electrons.alpha),
        one_electron=h[::-1].copy(),
        two_electron=TwoElectron(np.stack([g[2], g[1].transpose(2, 3, 0, 1), g[0]]), "chemist"),
        references=(),
    )
    verdict = compare(reference, swapped)
    assert verdict.name == "relabel" and verdict.relabelling.exchange_spins
    assert verdict.relabelling.order == (tuple(range(NCAS)),) * 2
    counts_only = reference.replace(electrons=swapped.electrons, references=())
    verdict = compare(reference, counts_only)
    assert verdict.name == "different"
    assert any("alpha and beta counts are exchanged" in reason for reason in verdict.reasons)
