"""Every kind of point group pyscf reports builds, with the irreps of the abelian subgroup used; build checks
everything cheap before the SCF; pyscf's warnings and multi-line errors do not reach the user."""

from __future__ import annotations

import math

import pytest

from integrity.checks import check
from integrity.cli import main
from integrity.model.indexing import POINT_GROUP_ORDER
from integrity.producers.molecule import build

COS, SIN = math.cos(2 * math.pi / 3), math.sin(2 * math.pi / 3)
# NH3: N-H 1.012 angstrom, H-N-H about 106.7 degrees; C3v up to pyscf's symmetry tolerance
NH3 = ["N 0 0 0"] + [f"H {0.9377 * c!r} {0.9377 * s!r} -0.3816" for c, s in ((1.0, 0.0), (COS, SIN), (COS, -SIN))]
# CH4: C-H 1.087 angstrom along the cube diagonals, Td
CH4 = [
    "C 0 0 0",
    "H 0.6276 0.6276 0.6276",
    "H -0.6276 -0.6276 0.6276",
    "H -0.6276 0.6276 -0.6276",
    "H 0.6276 -0.6276 -0.6276",
]

#: (name, geometry, 2S, active space, the group pyscf detects, the abelian group whose irreps are stored)
KINDS = [
    ("Ne atom", ["Ne 0 0 0"], 0, None, "SO3", "D2h"),
    ("H atom", ["H 0 0 0"], 1, None, "SO3", "D2h"),
    ("O atom, triplet", ["O 0 0 0"], 2, None, "SO3", "D2h"),
    ("N2, linear with inversion", ["N 0 0 0", "N 0 0 1.0977"], 0, (6, 6), "Dooh", "D2h"),
    ("HF, linear without inversion", ["H 0 0 0", "F 0 0 0.917"], 0, (6, 4), "Coov", "C2v"),
    ("NH3, C3v", NH3, 0, (4, 4), "C3v", "Cs"),
    ("CH4, Td", CH4, 0, (4, 4), "Td", "D2"),
]


@pytest.fixture(scope="module", autouse=True)
def _pyscf_on_one_thread(one_openmp_thread):
    return one_openmp_thread


@pytest.mark.slow
@pytest.mark.parametrize(("name", "geometry", "two_s", "active", "detected", "group"), KINDS, ids=[k[0] for k in KINDS])
def test_every_kind_of_point_group_builds_with_the_irreps_of_its_abelian_subgroup(
    name, geometry, two_s, active, detected, group
):
    from pyscf import gto

    mol = gto.M(atom="; ".join(geometry), spin=two_s, symmetry=True, verbose=0)
    assert mol.topgroup == detected  # the kind of group this case stands for
    ham = build(geometry, "sto-3g", two_s=two_s, active=active, date="2026-01-31")
    assert ham.orbitals.point_group == group
    order = POINT_GROUP_ORDER[group]
    assert all(0 <= irrep < order for irrep in ham.orbitals.irreps)
    names = ham.provenance["irrep_names"].split()
    assert len(names) == order
    fci = ham.reference("fci")
    assert fci.two_s == two_s and 0 <= fci.irrep < order
    report = check(ham)
    assert report.status == "pass", [r.message for r in report.failures]
    statuses = {r.id: r.status for r in report.results}
    assert statuses["orbitals.irreps"] == "pass" and statuses["energy.fci"] == "pass"


def test_the_atom_command_that_failed_now_writes_a_file(runner, in_tmp):
    result = runner.invoke(main, ["build", "ne.h5", "--geometry", "Ne 0 0 0", "--basis-set", "sto-3g"])
    assert result.exit_code == 0, result.output
    assert result.stdout.startswith("wrote ne.h5: 5 restricted orbitals, point group D2h, hf ")
    shown = runner.invoke(main, ["show", "ne.h5"]).stdout
    row = next(line for line in shown.splitlines() if line.startswith("  irrep names"))
    assert sorted(row.split()[2:]) == ["Ag", "Ag", "B1u", "B2u", "B3u"]  # 1s, 2s and the three 2p in D2h
    assert "  provenance   producer: integrity" in shown


# ------------------------------------------------------------------ cheap checks first


@pytest.fixture
def no_scf(monkeypatch):
    """Fail the test if anything reaches pyscf's SCF."""

    def refuse(*args, **kwargs):
        raise AssertionError("the SCF ran before a cheap check refused the request")

    monkeypatch.setattr("integrity.producers.molecule._scf", refuse)


@pytest.mark.parametrize(
    ("args", "words"),
    [
        (["exists.h5", "--geometry", "He 0 0 0"], "exists.h5: exists; give --overwrite"),
        (["out.txt", "--geometry", "He 0 0 0"], "unknown extension '.txt'"),
        (["missing/out.h5", "--geometry", "He 0 0 0"], "folder 'missing' does not exist"),
        (["out.h5", "--geometry", "Xq 0 0 0"], "'Xq' is not an element symbol"),
        (["out.h5", "--geometry", "H 0 0 0", "--geometry", "H 0 0 0"], "atoms 1 and 2 are at the same place"),
        (["out.h5", "--geometry", "H 0 0 0", "--geometry", "H 0 0 0.74", "--charge", "1"], "--two-s: 1 electron"),
        (["out.h5", "--geometry", "He 0 0 0", "--two-s", "1"], "--two-s: 2 electrons (charge 0) cannot have 2S = 1"),
        (["out.h5", "--geometry", "He 0 0 0", "--charge", "3"], "--charge: charge 3 leaves -1 electrons"),
        (["out.h5", "--geometry", "Li 0 0 0", "--geometry", "H 0 0 1.6", "--cas", "3,2"], "--cas: 3 active electrons"),
        (["out.h5", "--geometry", "H 0 0 nan"], "coordinates must be finite"),
    ],
)
def test_build_refuses_before_the_scf_what_is_cheap_to_check(runner, in_tmp, no_scf, args, words):
    (in_tmp / "exists.h5").write_bytes(b"someone's data")
    result = runner.invoke(main, ["build", *args, "--basis-set", "sto-3g"])
    assert result.exit_code == 2, result.output
    assert len(result.stderr.splitlines()) == 1 and words in result.stderr, result.stderr
    assert (in_tmp / "exists.h5").read_bytes() == b"someone's data"
    assert not (in_tmp / "out.h5").exists()


def test_an_unknown_basis_set_is_one_line_without_pyscf_warnings(runner, in_tmp, no_scf):
    result = runner.invoke(main, ["build", "out.h5", "--geometry", "He 0 0 0", "--basis-set", "not-a-basis"])
    assert result.exit_code == 2
    assert result.stderr == "error: basis_set: pyscf does not know the basis set 'not-a-basis' for these atoms\n"
    assert "Warning" not in result.output
