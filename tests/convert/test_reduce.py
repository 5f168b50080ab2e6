"""reduce: an active space cut out of a larger file, checked against pyscf's CASCI.

pyscf (an independent library) folds the frozen core the same way: ``get_h1eff`` returns
h^eff over the active orbitals with the core energy, ``get_h2eff`` the active integrals, and
its CASCI energy is the full-CI energy of that active space. The full-space files below are
made from the same SCF object as pyscf's CASCI, so the orbitals (and their phases) agree.
"""

from __future__ import annotations

import numpy as np
import pytest
from builders import restricted, seeded
from locations import GOOD

from integrity import load
from integrity.checks import check
from integrity.cli import main
from integrity.convert import convert, reduce_active_space, reduce_file
from integrity.energies import determinant_energy, solve
from integrity.energies.meanfield import reference_occupation
from integrity.errors import FieldError, RefusedError
from integrity.model.hamiltonian import Electrons, Hamiltonian, Orbitals, Reference, TwoElectron

WATER = "O 0.0 0.0 0.1173; H 0.0 0.7572 -0.4692; H 0.0 -0.7572 -0.4692"
AMMONIA_CATION = "N 0 0 0; H 0.98 0.12 -0.21; H -0.41 0.93 -0.30; H -0.33 -0.52 0.88"
DATE = "2026-11-30"


def _scf(atom, basis, unrestricted=False, charge=0, spin=0):
    from pyscf import gto, scf

    mol = gto.M(atom=atom, basis=basis, charge=charge, spin=spin, verbose=0)
    mf = scf.UHF(mol) if unrestricted else scf.RHF(mol)
    mf.conv_tol = 1e-12
    mf.kernel()
    assert mf.converged
    return mf


def _full_space(mf) -> Hamiltonian:
    """Every orbital of the SCF as a Hamiltonian (pyscf's CASCI with no core), with its hf reference."""
    from pyscf import ao2mo, mcscf

    enuc = float(mf.mol.energy_nuc())
    unrestricted = np.ndim(mf.mo_coeff) == 3
    nmo = mf.mo_coeff[0].shape[1] if unrestricted else mf.mo_coeff.shape[1]
    if unrestricted:
        alpha, beta = (int(n) for n in mf.nelec)
        cas = mcscf.UCASCI(mf, nmo, (alpha, beta), ncore=0)
        (h1a, h1b), _ = cas.get_h1eff()
        h1 = np.stack([h1a, h1b])
        eri = np.stack([ao2mo.restore(1, block, nmo) for block in cas.get_h2eff()])
        occupation = tuple(tuple(int(p) for p in np.flatnonzero(mf.mo_occ[s] > 0.5)) for s in (0, 1))
    else:
        alpha = beta = mf.mol.nelectron // 2
        cas = mcscf.CASCI(mf, nmo, mf.mol.nelectron, ncore=0)
        h1, _ = cas.get_h1eff()
        eri = ao2mo.restore(1, cas.get_h2eff(), nmo)
        occupied = tuple(int(p) for p in np.flatnonzero(mf.mo_occ > 1.5))
        occupation = (occupied, occupied)
    return Hamiltonian(
        Orbitals(nmo, "unrestricted" if unrestricted else "restricted", canonical=True),
        Electrons(alpha, beta),
        enuc,
        np.ascontiguousarray(h1),
        TwoElectron(np.ascontiguousarray(eri), "chemist"),
        core_energy_parts={"nuclear_repulsion": enuc, "frozen_core": 0.0},
        references=(
            Reference("hf", "hf", float(mf.e_tot), occupation=occupation),
            Reference("fci", "fci", -1.0, root=0),  # over all orbitals: it cannot survive a reduction
        ),
    )


@pytest.fixture(scope="module")
def water(one_openmp_thread):
    mf = _scf(WATER, "6-31g")
    return mf, _full_space(mf)


@pytest.fixture(scope="module")
def cation(one_openmp_thread):
    mf = _scf(AMMONIA_CATION, "sto-3g", unrestricted=True, charge=1, spin=1)
    return mf, _full_space(mf)


@pytest.mark.slow
@pytest.mark.parametrize("active", [(2, 3, 4, 5, 6, 7), (2, 3, 4, 6, 7, 9)], ids=["contiguous", "chosen"])
def test_restricted_reduction_equals_pyscf_casci(water, active):
    from pyscf import ao2mo, mcscf

    mf, full = water
    result = reduce_active_space(full, frozen=(0, 1), active=active, date=DATE)
    reduced = result.hamiltonian
    cas = mcscf.CASCI(mf, 6, 6, ncore=2)
    orbitals = mcscf.sort_mo(cas, mf.mo_coeff, list(active), base=0)  # the core: the lowest orbitals left, 0 and 1
    h1, ecore = cas.get_h1eff(orbitals)
    eri = ao2mo.restore(1, cas.get_h2eff(orbitals), 6)
    assert np.max(np.abs(reduced.one_electron - h1)) <= 1e-10
    assert np.max(np.abs(reduced.two_electron.array - eri)) <= 1e-10
    assert reduced.core_energy == pytest.approx(ecore, abs=1e-10)
    assert reduced.electrons == Electrons(3, 3)
    cas.fcisolver.conv_tol = 1e-12
    pyscf_energy = cas.kernel(orbitals)[0]
    assert solve(reduced).energies[0] == pytest.approx(pyscf_energy, abs=1e-9)
    parts = reduced.core_energy_parts
    assert parts["frozen_core"] == pytest.approx(ecore - parts["nuclear_repulsion"], abs=1e-10)
    assert check(reduced).status == "pass"


def test_unrestricted_reduction_equals_pyscf_ucasci(cation):
    from pyscf import ao2mo, mcscf

    mf, full = cation
    reduced = reduce_active_space(full, frozen=(0,), active=range(1, 7), date=DATE).hamiltonian
    alpha, beta = (int(n) - 1 for n in mf.nelec)
    cas = mcscf.UCASCI(mf, 6, (alpha, beta), ncore=1)
    (h1a, h1b), ecore = cas.get_h1eff()
    blocks = [ao2mo.restore(1, block, 6) for block in cas.get_h2eff()]
    assert np.max(np.abs(reduced.one_electron - np.stack([h1a, h1b]))) <= 1e-10
    assert np.max(np.abs(reduced.two_electron.array - np.stack(blocks))) <= 1e-10
    assert reduced.core_energy == pytest.approx(ecore, abs=1e-10)
    assert reduced.electrons == Electrons(alpha, beta)
    cas.fcisolver.conv_tol = 1e-12
    assert solve(reduced).energies[0] == pytest.approx(cas.kernel()[0], abs=1e-9)


def test_solve_recomputes_the_full_ci_reference_in_the_new_space(water):
    from pyscf import mcscf

    mf, full = water
    result = reduce_active_space(full, frozen=(0, 1), active=range(2, 8), solve_references=True, date=DATE)
    cas = mcscf.CASCI(mf, 6, 6, ncore=2)
    cas.fcisolver.conv_tol = 1e-12
    assert result.hamiltonian.reference("fci").energy == pytest.approx(cas.kernel()[0], abs=1e-9)
    assert result.steps[-1]["recomputed_references"] == ["fci"]


def test_the_hf_reference_keeps_its_energy_and_the_history_records_the_cut(water):
    _, full = water
    result = reduce_active_space(full, frozen=(0, 1), active=(2, 3, 4, 6, 7, 9), date=DATE)
    reduced = result.hamiltonian
    hf = reduced.reference("hf")
    assert hf.occupation == ((0, 1, 2), (0, 1, 2))
    assert float(determinant_energy(reduced, reference_occupation(reduced, hf))) == pytest.approx(
        full.reference("hf").energy, abs=1e-10
    )
    assert [r.label for r in reduced.references] == ["hf"]
    step = reduced.provenance["history"][-1]
    assert step["step"] == "reduce" and step["date"] == DATE and step["fingerprint_changed"]
    assert (step["frozen"], step["active"], step["discarded"]) == ("0,1", "2-4,6,7,9", "5,8,10-12")
    assert step["dropped_references"] == ["fci"] and "no longer apply" in step["note"]
    assert step["frozen_core_energy"] == pytest.approx(reduced.core_energy_parts["frozen_core"], abs=1e-12)


@pytest.mark.parametrize("layout", ["interleaved", "blocked"])
@pytest.mark.parametrize("antisymmetrized", [False, True])
def test_a_spin_orbital_file_follows_the_same_rule_per_spin_orbital(layout, antisymmetrized):
    ham = restricted(4, seeded("reduce spin orbitals"), irreps=False)
    ham = ham.replace(electrons=Electrons(2, 2), references=(), core_energy_parts={"frozen_core": 0.25})
    ham = ham.replace(core_energy=0.25)
    spatial = reduce_active_space(ham, frozen=(0,), active=(1, 2, 3), date=DATE).hamiltonian
    form = {"basis": "spin-orbital", "spin_layout": layout}
    if antisymmetrized:
        form |= {"notation": "physicist", "antisymmetrize": True}
    so = convert(ham, **form, date=DATE).hamiltonian
    index = {(p, s): (2 * p + s if layout == "interleaved" else p + 4 * s) for p in range(4) for s in (0, 1)}
    frozen = (index[0, 0], index[0, 1])
    active = tuple(index[p, s] for p in (1, 2, 3) for s in (0, 1))
    reduced = reduce_active_space(so, frozen=frozen, active=active, date=DATE).hamiltonian
    expected = convert(spatial, **form, date=DATE).hamiltonian
    assert reduced.electrons == Electrons(1, 1) and reduced.orbitals.spin_layout == layout
    assert np.max(np.abs(reduced.one_electron - expected.one_electron)) <= 1e-12
    assert np.max(np.abs(reduced.two_electron.array - expected.two_electron.array)) <= 1e-12
    assert reduced.core_energy == pytest.approx(expected.core_energy, abs=1e-12)
    assert reduced.core_energy_parts["frozen_core"] == pytest.approx(spatial.core_energy_parts["frozen_core"])


@pytest.mark.parametrize(("notation", "storage"), [("physicist", "dense"), ("chemist", "pairs"), ("chemist", "unique")])
def test_notation_and_storage_are_kept(water, notation, storage):
    _, full = water
    stored = convert(full, notation=notation, storage=storage, tolerance=1e-12, date=DATE).hamiltonian
    reduced = reduce_active_space(stored, frozen=(0, 1), active=range(2, 8), date=DATE).hamiltonian
    plain = reduce_active_space(full, frozen=(0, 1), active=range(2, 8), date=DATE).hamiltonian
    assert (reduced.two_electron.notation, reduced.two_electron.storage) == (notation, storage)
    back = convert(reduced, notation="chemist", storage="dense", date=DATE).hamiltonian
    assert np.max(np.abs(back.two_electron.array - plain.two_electron.array)) <= 1e-12
    assert np.max(np.abs(reduced.one_electron - plain.one_electron)) <= 1e-10


def test_a_file_without_core_energy_parts_gets_the_input_core_and_the_frozen_core():
    ham = restricted(3, seeded("no parts"), irreps=False).replace(electrons=Electrons(1, 1), references=())
    reduced = reduce_active_space(ham, frozen=(0,), active=(1, 2), date=DATE).hamiltonian
    parts = reduced.core_energy_parts
    assert set(parts) == {"input_core", "frozen_core"} and parts["input_core"] == ham.core_energy
    assert sum(parts.values()) == pytest.approx(reduced.core_energy, abs=1e-12)


@pytest.mark.parametrize(
    ("frozen", "active", "error", "words"),
    [
        ((0, 5), range(1, 5), RefusedError, "orbital 5 is not doubly occupied in the reference 'hf'"),
        ((0,), (0, 1, 2, 3, 4), FieldError, "orbital 0 is in both --frozen and --active"),
        ((0,), (1, 2, 3, 4, 13), FieldError, "--active names orbital 13 outside 0..12"),
        ((0, 0), (1, 2, 3, 4), FieldError, "--frozen lists orbital 0 twice"),
        ((0,), (1, 2, 3), RefusedError, "orbital 4 is occupied in the reference 'hf' but neither frozen nor active"),
        ((0,), (), FieldError, "names no orbital"),
    ],
)
def test_a_request_that_does_not_fit_the_file_is_refused_naming_the_option(water, frozen, active, error, words):
    _, full = water
    with pytest.raises(error, match=words):
        reduce_active_space(full, frozen=frozen, active=active)


def test_freezing_an_orbital_the_reference_leaves_open_needs_its_own_permission_and_is_recorded():
    ham = load(GOOD / "lih_sto3g.h5")  # 2 alpha, 2 beta; hf occupies orbitals 0 and 1
    result = reduce_active_space(ham, frozen=(0, 2), active=(1, 3, 4), allow_open_frozen=True, date=DATE)
    step = result.steps[-1]
    assert step["open_frozen"] == {"hf": "2"}
    assert [r.label for r in result.hamiltonian.references] == []
    assert result.hamiltonian.electrons == Electrons(0, 0)
    assert result.hamiltonian.orbitals.canonical is None
    with pytest.raises(FieldError, match="cannot hold them"):
        reduce_active_space(ham, frozen=(0, 2, 3), active=(1, 4), allow_open_frozen=True)


@pytest.mark.slow
def test_the_command_writes_a_new_file_and_refuses_with_one_line(runner, tmp_path):
    source = GOOD / "lih_sto3g.h5"
    out = tmp_path / "lih_cas.json"
    result = runner.invoke(main, ["reduce", str(source), str(out), "--frozen", "0", "--active", "1-4"])
    assert result.exit_code == 0, result.output
    assert "frozen 0, active 1-4, discarded 5" in result.output
    assert "references dropped (they belong to the old space): fci" in result.output
    assert runner.invoke(main, ["check", str(out)]).exit_code == 0
    again = runner.invoke(main, ["reduce", str(source), str(out), "--frozen", "0", "--active", "1-4"])
    assert again.exit_code == 2 and "--overwrite" in again.output
    refused = runner.invoke(main, ["reduce", str(source), str(tmp_path / "x.h5"), "--frozen", "2", "--active", "0,1"])
    assert refused.exit_code == 2 and refused.output.count("\n") == 1 and "--allow-open-frozen" in refused.output
    assert not (tmp_path / "x.h5").exists()


def test_reduce_never_writes_onto_its_input(tmp_path):
    copy = tmp_path / "lih.h5"
    copy.write_bytes((GOOD / "lih_sto3g.h5").read_bytes())
    with pytest.raises(RefusedError, match="never overwrites its input"):
        reduce_file(copy, copy, frozen=(0,), active=range(1, 5), overwrite=True)
    assert copy.read_bytes() == (GOOD / "lih_sto3g.h5").read_bytes()
