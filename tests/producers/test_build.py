"""The pyscf producer: published H2 numbers, active spaces, unrestricted files, provenance.

Published values: A. Szabo and N. S. Ostlund, *Modern Quantum Chemistry* (1989),
section 3.5.2 (minimal-basis H2, STO-3G, R = 1.4 bohr) and the full-CI
treatment of the same model in chapter 4, printed to 4 decimals (from memory).
Where the book is silent (the orbital symmetry labels, the full CI of a larger
molecule), pyscf is the independent check (reference library).
"""

from __future__ import annotations

import datetime
import itertools
import re

import numpy as np
import pytest
from plain_format import assert_same_hamiltonian, is_close_to

from integrity.cli import main
from integrity.io import load, save
from integrity.producers.molecule import build

H2 = ["H 0 0 0", "H 0 0 1.4"]
WATER = ["O 0 0 0", "H 0 0.757 0.587", "H 0 -0.757 0.587"]  # angstrom
HYDROXYL = ["O 0 0 0", "H 0 0 0.97"]  # angstrom


def _geometry(lines):
    """--geometry once per atom line."""
    return [part for line in lines for part in ("--geometry", line)]


# Source: Szabo and Ostlund (1989), section 3.5.2, H2 STO-3G at R = 1.4 bohr, MO basis (from memory)
SZABO_H11 = -1.2528
SZABO_H22 = -0.4756
SZABO_J11 = 0.6746  # (11|11)
SZABO_J12 = 0.6636  # (11|22)
SZABO_J22 = 0.6975  # (22|22)
SZABO_K12 = 0.1813  # (12|12) = (12|21)
SZABO_EPSILON_1 = -0.5782  # orbital energies
SZABO_EPSILON_2 = 0.6703
SZABO_NUCLEAR_REPULSION = 0.7143  # 1/R = 1/1.4
SZABO_E_HF = -1.1167  # total Hartree-Fock energy, hartree
SZABO_E_FCI = -1.1373  # Source: Szabo and Ostlund (1989), chapter 4, full CI, hartree (from memory)
# Source: Szabo and Ostlund (1989), chapter 4, E_FCI - E_HF = -1.1373 - (-1.1167) (from memory);
# pyscf gives -0.020562 (reference library)
SZABO_E_CORRELATION = -0.0206


@pytest.fixture(scope="module", autouse=True)
def _pyscf_on_one_thread(one_openmp_thread):
    return one_openmp_thread


@pytest.fixture(scope="module")
def h2():
    return build(H2, "sto-3g", unit="bohr")


@pytest.fixture(scope="module")
def water_active():
    return build(WATER, "sto-3g", active=(6, 5))


@pytest.fixture(scope="module")
def hydroxyl_unrestricted():
    return build(HYDROXYL, "sto-3g", two_s=1, unrestricted=True)


@pytest.fixture(scope="module")
def hydroxyl_uhf():
    """pyscf's own UHF of the same OH doublet (reference library), converged tightly."""
    from pyscf import gto, scf

    uhf = scf.UHF(gto.M(atom=HYDROXYL, basis="sto-3g", spin=1, verbose=0))
    uhf.conv_tol = 1e-11
    uhf.kernel()
    return uhf


# ---------------------------------------------------------------- H2, the minimal-basis model


def test_h2_in_sto3g_has_two_spatial_orbitals_and_so_four_spin_orbitals(h2):
    assert h2.orbitals.count == 2 and h2.orbitals.basis == "restricted"
    assert 2 * h2.orbitals.per_spin == 4
    assert (h2.electrons.alpha, h2.electrons.beta) == (1, 1)
    assert h2.one_electron.shape == (2, 2) and h2.two_electron.array.shape == (2, 2, 2, 2)
    assert h2.two_electron.notation == "chemist" and h2.two_electron.storage == "dense"


@pytest.mark.parametrize(
    ("index", "published"),
    [((0, 0), SZABO_H11), ((1, 1), SZABO_H22)],
    ids=["h11", "h22"],
)
def test_h2_one_electron_integrals_match_szabo_and_ostlund(h2, index, published):
    assert is_close_to(h2.one_electron[index], published, 4), h2.one_electron[index]
    assert abs(h2.one_electron[0, 1]) < 1e-10  # sigma_g and sigma_u do not mix


@pytest.mark.parametrize(
    ("index", "published"),
    [
        ((0, 0, 0, 0), SZABO_J11),
        ((0, 0, 1, 1), SZABO_J12),
        ((1, 1, 0, 0), SZABO_J12),
        ((1, 1, 1, 1), SZABO_J22),
        ((0, 1, 0, 1), SZABO_K12),
        ((0, 1, 1, 0), SZABO_K12),
        ((1, 0, 1, 0), SZABO_K12),
    ],
    ids=["(11|11)", "(11|22)", "(22|11)", "(22|22)", "(12|12)", "(12|21)", "(21|21)"],
)
def test_h2_two_electron_integrals_match_szabo_and_ostlund(h2, index, published):
    value = h2.two_electron.array[index]
    assert is_close_to(value, published, 4), value


def test_h2_integrals_of_mixed_symmetry_vanish(h2):
    g = h2.two_electron.array
    for p, q, r, s in itertools.product(range(2), repeat=4):
        if (p + q + r + s) % 2:
            assert abs(g[p, q, r, s]) < 1e-10, (p, q, r, s)


def test_h2_core_energy_is_the_nuclear_repulsion_one_over_r(h2):
    assert h2.core_energy == pytest.approx(1 / 1.4, abs=1e-14)
    assert is_close_to(h2.core_energy, SZABO_NUCLEAR_REPULSION, 4)
    assert h2.core_energy_parts["nuclear_repulsion"] == pytest.approx(1 / 1.4, abs=1e-14)
    assert h2.core_energy_parts["frozen_core"] == 0.0


def test_h2_orbital_energies_from_the_file_match_szabo_and_ostlund(h2):
    h, g = h2.one_electron, h2.two_electron.array
    epsilon_1 = h[0, 0] + g[0, 0, 0, 0]  # h11 + 2 J11 - K11
    epsilon_2 = h[1, 1] + 2 * g[1, 1, 0, 0] - g[1, 0, 0, 1]
    assert is_close_to(epsilon_1, SZABO_EPSILON_1, 4), epsilon_1
    assert is_close_to(epsilon_2, SZABO_EPSILON_2, 4), epsilon_2


def test_h2_hartree_fock_energy_matches_szabo_and_ostlund_from_the_file_and_the_reference(h2):
    h, g = h2.one_electron, h2.two_electron.array
    from_integrals = h2.core_energy + 2 * h[0, 0] + g[0, 0, 0, 0]
    reference = h2.reference("hf")
    assert reference.method == "hf" and reference.occupation == ((0,), (0,))
    assert reference.energy == pytest.approx(from_integrals, abs=1e-10)
    assert is_close_to(reference.energy, SZABO_E_HF, 4), reference.energy


def _two_by_two_ci(h2) -> float:
    """Full CI of minimal-basis H2: the singlet sigma_g^2, sigma_u^2 pair, coupled by K12."""
    h, g = h2.one_electron, h2.two_electron.array
    matrix = np.array(
        [
            [2 * h[0, 0] + g[0, 0, 0, 0], g[0, 1, 0, 1]],
            [g[1, 0, 1, 0], 2 * h[1, 1] + g[1, 1, 1, 1]],
        ]
    )
    return h2.core_energy + float(np.linalg.eigvalsh(matrix)[0])


def test_h2_full_ci_energy_matches_szabo_and_ostlund(h2):
    reference = h2.reference("fci")
    assert reference.method == "fci" and reference.two_s == 0 and reference.root == 0
    assert reference.energy == pytest.approx(_two_by_two_ci(h2), abs=1e-9)
    assert is_close_to(reference.energy, SZABO_E_FCI, 4), reference.energy


def test_h2_correlation_energy_matches_szabo_and_ostlund(h2):
    correlation = h2.reference("fci").energy - h2.reference("hf").energy
    assert is_close_to(correlation, SZABO_E_CORRELATION, 4), correlation


def test_h2_irreps_are_the_d2h_labels_pyscf_gives_its_orbitals(h2):
    """sigma_g is Ag and sigma_u is B1u (z the molecular axis), by name and by number.

    Source: pyscf ``symm.label_orb_symm`` on its own RHF orbitals (reference library);
    sigma_g = Ag, sigma_u = B1u in D2h with the bond along z (common practice).
    """
    from pyscf import gto, scf, symm

    mol = gto.M(atom=[("H", (0, 0, 0)), ("H", (0, 0, 1.4))], unit="bohr", basis="sto-3g", symmetry="D2h", verbose=0)
    mf = scf.RHF(mol)
    mf.kernel()
    labels = symm.label_orb_symm(mol, mol.irrep_name, mol.symm_orb, mf.mo_coeff)
    assert mol.groupname == h2.orbitals.point_group == "D2h"
    names = h2.provenance["irrep_names"].split()
    assert [names[i] for i in h2.orbitals.irreps] == list(labels) == ["Ag", "B1u"]
    assert list(h2.orbitals.irreps) == [symm.irrep_name2id("D2h", label) for label in labels]


def test_the_build_command_writes_the_same_h2_file(runner, in_tmp, h2):
    result = runner.invoke(main, ["build", "out.h5", *_geometry(H2), "--unit", "bohr", "--basis-set", "sto-3g"])
    assert result.exit_code == 0, result.output
    printed = re.fullmatch(
        r"wrote out\.h5: 2 restricted orbitals, point group D2h, "
        r"hf (\S+), fci (\S+)\n",
        result.stdout,
    )
    assert printed, result.stdout
    assert is_close_to(float(printed[1]), SZABO_E_HF, 4)
    assert is_close_to(float(printed[2]), SZABO_E_FCI, 4)
    built = load("out.h5")
    assert built.n == 2
    assert built.checksum is not None
    for index in [(0, 0), (1, 1)]:
        assert built.one_electron[index] == pytest.approx(h2.one_electron[index], abs=1e-9)
    assert np.allclose(np.abs(built.two_electron.array), np.abs(h2.two_electron.array), atol=1e-9)
    assert built.reference("hf").energy == pytest.approx(h2.reference("hf").energy, abs=1e-10)
    assert is_close_to(built.reference("fci").energy, SZABO_E_FCI, 4)


def test_a_built_file_survives_saving_and_loading_bit_for_bit(tmp_path, h2):
    from integrity.model.fingerprint import fingerprint

    for name in ("h2.h5", "h2.json"):
        save(h2, tmp_path / name)
        assert_same_hamiltonian(load(tmp_path / name), h2.replace(checksum=fingerprint(h2)))


# ---------------------------------------------------------------- provenance and geometry input


def test_provenance_names_pyscf_version_geometry_basis_and_date(h2):
    import pyscf

    provenance = h2.provenance
    assert provenance["pyscf_version"] == pyscf.__version__
    assert provenance["geometry"] == "H 0.0 0.0 0.0\nH 0.0 0.0 1.4"
    assert provenance["unit"] == "bohr"
    assert provenance["basis"] == "sto-3g"
    made = datetime.date.fromisoformat(provenance["date"])
    today = datetime.datetime.now(datetime.timezone.utc).date()
    assert made in (today, today - datetime.timedelta(days=1))


def test_an_xyz_file_gives_the_same_molecule_as_inline_geometry(tmp_path, runner):
    lines = ["H 0.0 0.0 0.0", "H 0.0 0.0 0.74"]
    xyz = tmp_path / "h2.xyz"
    xyz.write_text("2\nhydrogen molecule, angstrom\n" + "\n".join(lines) + "\n")
    from_file = build(str(xyz), "sto-3g")
    inline = build("\n".join(lines), "sto-3g")
    assert from_file.provenance["geometry"] == "\n".join(lines)
    assert from_file.core_energy == pytest.approx(inline.core_energy, abs=1e-12)
    assert from_file.reference("hf").energy == pytest.approx(inline.reference("hf").energy, abs=1e-10)
    result = runner.invoke(main, ["build", str(tmp_path / "out.json"), "--geometry", str(xyz), "--basis-set", "sto-3g"])
    assert result.exit_code == 0, result.output
    assert load(tmp_path / "out.json").reference("hf").energy == pytest.approx(inline.reference("hf").energy, abs=1e-10)


def test_an_xyz_file_listing_fewer_atoms_than_it_declares_is_refused(tmp_path, runner):
    xyz = tmp_path / "bad.xyz"
    xyz.write_text("3\ncomment\nH 0 0 0\nH 0 0 0.74\n")
    result = runner.invoke(main, ["build", str(tmp_path / "out.h5"), "--geometry", str(xyz), "--basis-set", "sto-3g"])
    assert result.exit_code == 2
    assert "bad.xyz" in result.stderr and "3 atoms" in result.stderr
    assert not (tmp_path / "out.h5").exists()


# ---------------------------------------------------------------- an active space


def _closed_shell_energy(ham, occupied) -> float:
    h, g = ham.one_electron, ham.two_electron.array
    energy = ham.core_energy + sum(2 * h[i, i] for i in occupied)
    for i in occupied:
        for j in occupied:
            energy += 2 * g[i, i, j, j] - g[i, j, j, i]
    return float(energy)


def test_an_active_space_puts_the_frozen_core_energy_in_core_energy(water_active):
    from pyscf import gto, scf

    ham = water_active
    assert ham.n == 5 and (ham.electrons.alpha, ham.electrons.beta) == (3, 3)
    parts = ham.core_energy_parts
    assert set(parts) == {"nuclear_repulsion", "frozen_core"}
    assert parts["nuclear_repulsion"] + parts["frozen_core"] == pytest.approx(ham.core_energy, rel=0, abs=1e-12)
    mol = gto.M(atom=WATER, basis="sto-3g", verbose=0)
    assert parts["nuclear_repulsion"] == pytest.approx(mol.energy_nuc(), abs=1e-10)
    full = scf.RHF(mol)
    full.conv_tol = 1e-11
    e_full = full.kernel()
    # the energy of the two lowest (frozen) orbitals, doubly occupied, in the AO basis
    core = full.mo_coeff[:, :2]
    density = 2 * core @ core.T
    frozen = np.einsum("ij,ji", density, full.get_hcore()) + 0.5 * np.einsum(
        "ij,ji", density, full.get_veff(mol, density)
    )
    assert parts["frozen_core"] == pytest.approx(frozen, abs=1e-7)
    # the frozen orbitals' mean field is in one_electron: the active-space determinant
    # reproduces the full-space RHF energy
    occupied = ham.reference("hf").occupation[0]
    assert occupied == (0, 1, 2)
    assert _closed_shell_energy(ham, occupied) == pytest.approx(e_full, abs=1e-8)
    assert ham.reference("hf").energy == pytest.approx(e_full, abs=1e-8)


def test_the_active_space_fci_reference_is_the_casci_energy(water_active):
    from pyscf import fci

    ham = water_active
    solver = fci.direct_spin1.FCI()
    solver.conv_tol = 1e-12
    energy, _ = solver.kernel(ham.one_electron, ham.two_electron.array, ham.n, (3, 3), ecore=ham.core_energy)
    reference = ham.reference("fci")
    assert reference.energy == pytest.approx(energy, abs=1e-8)
    assert reference.energy < ham.reference("hf").energy


def test_irreps_are_present_for_a_symmetric_molecule_and_the_integrals_obey_them(water_active):
    ham = water_active
    assert ham.orbitals.point_group == "C2v"
    irreps = ham.orbitals.irreps
    assert len(irreps) == ham.n and all(0 <= i < 4 for i in irreps)
    assert len(set(irreps)) > 1
    h, g = ham.one_electron, ham.two_electron.array
    for p, q in itertools.product(range(ham.n), repeat=2):
        if irreps[p] != irreps[q]:
            assert abs(h[p, q]) < 1e-8, (p, q)
    for p, q, r, s in itertools.product(range(ham.n), repeat=4):
        if irreps[p] ^ irreps[q] ^ irreps[r] ^ irreps[s]:
            assert abs(g[p, q, r, s]) < 1e-8, (p, q, r, s)


def test_the_build_command_takes_an_active_space(runner, in_tmp):
    result = runner.invoke(main, ["build", "water.json", *_geometry(WATER), "--basis-set", "sto-3g", "--cas", "6,5"])
    assert result.exit_code == 0, result.output
    ham = load("water.json")
    assert ham.n == 5 and ham.core_energy_parts["frozen_core"] < 0
    assert "CAS(6,5)" in ham.title


@pytest.mark.parametrize("active", ["7,5", "6,9", "six,five"])
def test_an_impossible_active_space_is_refused(runner, in_tmp, active):
    result = runner.invoke(main, ["build", "water.h5", *_geometry(WATER), "--basis-set", "sto-3g", "--cas", active])
    assert result.exit_code == 2
    assert "active" in result.stderr or "--cas" in result.stderr
    assert not (in_tmp / "water.h5").exists()


# ---------------------------------------------------------------- unrestricted


def test_an_unrestricted_build_gives_spin_resolved_arrays(hydroxyl_unrestricted):
    ham = hydroxyl_unrestricted
    n = ham.n
    assert ham.basis == "unrestricted"
    assert ham.one_electron.shape == (2, n, n)
    assert ham.two_electron.array.shape == (3, n, n, n, n)
    assert (ham.electrons.alpha, ham.electrons.beta) == (5, 4)


def test_the_unrestricted_hf_reference_is_the_energy_of_its_determinant(hydroxyl_unrestricted, hydroxyl_uhf):
    ham = hydroxyl_unrestricted
    h, g = ham.one_electron, ham.two_electron.array  # g: [aa, ab, bb]
    alpha, beta = ham.reference("hf").occupation
    energy = ham.core_energy + sum(h[0, i, i] for i in alpha) + sum(h[1, i, i] for i in beta)
    for block, occ in ((0, alpha), (2, beta)):
        energy += 0.5 * sum(g[block, i, i, j, j] - g[block, i, j, j, i] for i in occ for j in occ)
    energy += sum(g[1, i, i, j, j] for i in alpha for j in beta)  # (i_a i_a | j_b j_b)
    assert ham.reference("hf").energy == pytest.approx(energy, abs=1e-8)
    assert hydroxyl_uhf.e_tot == pytest.approx(energy, abs=1e-7)


def test_the_unrestricted_full_space_fci_reference_is_pyscfs_full_ci(hydroxyl_unrestricted, hydroxyl_uhf):
    """The full-space FCI of OH (doublet) equals pyscf's, from pyscf's own UHF orbitals.

    Source: pyscf ``fci.direct_uhf`` on integrals pyscf transforms itself (reference library).
    Full CI in the full space does not depend on the orbitals (common practice), so any
    orbital set pyscf converges to gives the same energy.
    """
    from pyscf import ao2mo, fci

    ham, uhf = hydroxyl_unrestricted, hydroxyl_uhf
    mol = uhf.mol
    ca, cb = uhf.mo_coeff
    h_ao, n = uhf.get_hcore(), ca.shape[1]
    h1 = (ca.T @ h_ao @ ca, cb.T @ h_ao @ cb)
    eri = [ao2mo.restore(1, ao2mo.general(mol, c), n) for c in ((ca, ca, ca, ca), (ca, ca, cb, cb), (cb, cb, cb, cb))]
    solver = fci.direct_uhf.FCI()
    solver.conv_tol = 1e-12
    energy, _ = solver.kernel(h1, eri, n, mol.nelec, ecore=mol.energy_nuc())
    assert ham.reference("fci").energy == pytest.approx(energy, abs=1e-8)
    assert ham.reference("fci").energy < ham.reference("hf").energy
