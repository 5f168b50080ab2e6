"""Design gaps closed: a file without a checksum, and fields outside the fingerprint that switch checks off,
warn (and fail under --strict) naming the field; every problem is listed in the result's details;
alpha-beta coupling in a spin-orbital file warns."""

from __future__ import annotations

import dataclasses
import json

import numpy as np
import pytest
from locations import DAMAGED, GOOD

from integrity.checks import check
from integrity.checks.structure import MAX_LISTED
from integrity.cli import main
from integrity.io import load, save
from integrity.model.fingerprint import fingerprint

LIH = GOOD / "lih_sto3g.h5"


def _statuses(report):
    return {r.id: r for r in report.results}


@pytest.mark.slow
def test_a_file_without_a_checksum_warns_and_fails_under_strict(runner, in_tmp):
    document = json.loads((GOOD / "water_sto3g.json").read_text())
    del document["checksum"]
    (in_tmp / "bare.json").write_text(json.dumps(document))
    result = _statuses(check("bare.json"))["checksum"]
    assert result.status == "warn" and str(result.where) == "checksum"
    assert runner.invoke(main, ["check", "bare.json"]).exit_code == 0
    strict = runner.invoke(main, ["check", "bare.json", "--strict"])
    assert strict.exit_code == 1
    assert "checksum: no checksum stored" in strict.stdout


@pytest.mark.slow
@pytest.mark.parametrize(
    ("change", "check_ids", "field"),
    [
        (lambda h: h.replace(references=()), ("energy.hf", "energy.fci"), "references"),
        (
            lambda h: h.replace(references=tuple(r for r in h.references if r.method != "fci")),
            ("energy.fci",),
            "references",
        ),
        (lambda h: h.replace(core_energy_parts=None), ("core_energy.parts",), "core_energy_parts"),
        (
            lambda h: h.replace(orbitals=dataclasses.replace(h.orbitals, canonical=None)),
            ("orbitals.canonical",),
            "orbitals.canonical",
        ),
        (
            lambda h: h.replace(
                two_electron=dataclasses.replace(h.two_electron, interaction="model"),
            ),
            ("two_electron.positive",),
            "two_electron.interaction",
        ),
    ],
    ids=["no references", "no fci reference", "no core_energy_parts", "canonical not claimed", "interaction model"],
)
def test_a_field_outside_the_fingerprint_that_switches_a_check_off_is_a_warning_naming_it(
    runner, in_tmp, change, check_ids, field
):
    original = load(LIH)
    changed = change(original)
    assert fingerprint(changed) == original.checksum  # the checksum still matches
    save(changed.replace(checksum=original.checksum), "changed.h5", fingerprint_checksum=False)
    results = _statuses(check("changed.h5"))
    assert results["checksum"].status == "pass"
    for check_id in check_ids:
        assert results[check_id].status == "warn", results[check_id]
        assert str(results[check_id].where) == field
        assert "outside the fingerprint" in results[check_id].message
    assert runner.invoke(main, ["check", "changed.h5"]).exit_code == 0
    strict = runner.invoke(main, ["check", "changed.h5", "--strict"])
    assert strict.exit_code == 1
    for check_id in check_ids:
        assert f"  {check_id}: not run" in strict.stdout


def test_a_reference_that_passes_only_by_its_own_looser_tolerance_warns_naming_the_field():
    ham = load(LIH)
    loose = tuple(
        dataclasses.replace(r, energy=r.energy + 1e-4, tolerance=1e-3) if r.label == "fci" else r
        for r in ham.references
    )
    result = _statuses(check(ham.replace(references=loose), only=("energy.fci",)))["energy.fci"]
    assert result.status == "warn"
    assert str(result.where) == "references[fci].tolerance"
    assert result.value == pytest.approx(1e-4, rel=1e-3) and result.limit == 1e-3


def _many_schema_problems(tmp_path):
    document = json.loads((GOOD / "water_sto3g.json").read_text())
    document["orbitals"]["canonical"] = "yes"
    document["title"] = 7
    document["electrons"]["alpha"] = "five"
    document["electrons"]["beta"] = -1
    document["core_energy"] = "zero"
    document["two_electron"]["notation"] = "dirac"
    document["two_electron"]["storage"] = "packed"
    document["energy_unit"] = "eV"
    path = tmp_path / "many.json"
    path.write_text(json.dumps(document))
    return path


@pytest.mark.slow
def test_every_schema_problem_is_in_the_details_and_the_message_stays_short(runner, tmp_path):
    path = _many_schema_problems(tmp_path)
    result = _statuses(check(path))["schema"]
    problems = result.details["problems"]
    assert result.status == "fail" and len(problems) == result.value > MAX_LISTED
    assert f"and {len(problems) - MAX_LISTED} more (the result's details list all {len(problems)})" in result.message
    report = json.loads(runner.invoke(main, ["check", str(path), "--format", "json"]).stdout)
    listed = report["files"][0]["checks"][0]["details"]["problems"]
    assert [p["field"] for p in listed] == [p["field"] for p in problems]
    assert {"field", "reason"} <= set(listed[0])


# ------------------------------------------------------------------ alpha-beta coupling


def test_alpha_beta_coupling_warns_and_names_the_layout_that_removes_it(tmp_path):
    document = json.loads((DAMAGED / "lih_spin_orbital_layout_mislabelled.json").read_text())
    for key in ("irreps", "point_group"):
        document["orbitals"].pop(key, None)  # no irreps: the irreps check cannot see the layout
    document.pop("checksum", None)
    path = tmp_path / "mislabelled.json"
    path.write_text(json.dumps(document))
    result = _statuses(check(path))["orbitals.spin_coupling"]
    assert result.status == "warn"
    assert "read as blocked, no element couples them" in result.message
    assert "probably blocked, labelled interleaved" in result.message


def test_alpha_beta_coupling_in_a_file_converted_from_spatial_orbitals_says_it_was_altered():
    result = _statuses(check(DAMAGED / "h4_spin_orbital_alpha_beta_coupling.h5"))["orbitals.spin_coupling"]
    assert result.status == "warn" and result.value == pytest.approx(0.05)
    assert "made from spatial orbitals" in result.message and str(result.where) == "one_electron[0, 6]"


@pytest.mark.slow
@pytest.mark.parametrize(
    "name",
    [
        "lih_sto3g_spin_orbital_interleaved.json",
        "h4_chain_uhf_spin_orbital_blocked.h5",
        "water_sto3g_antisymmetrized.h5",
    ],
)
def test_spin_orbital_files_from_spatial_orbitals_have_no_coupling(name):
    result = _statuses(check(GOOD / name))["orbitals.spin_coupling"]
    assert result.status == "pass" and result.value == 0.0


def test_solve_shows_2s_undetermined_when_sz_is_not_conserved(runner):
    result = runner.invoke(main, ["solve", str(DAMAGED / "h4_spin_orbital_alpha_beta_coupling.h5"), "--roots", "2"])
    assert result.exit_code == 0, result.output
    rows = [line.split() for line in result.stdout.splitlines() if line.strip()[:1].isdigit()]
    assert len(rows) == 2 and all(row[2] == "-" for row in rows)  # the 2S column
    assert "2S is undetermined" in result.stdout
    as_json = json.loads(
        runner.invoke(
            main, ["solve", str(DAMAGED / "h4_spin_orbital_alpha_beta_coupling.h5"), "--format", "json"]
        ).stdout
    )
    root = as_json["results"][0]["roots"][0]
    assert root["two_s"] is None and np.isfinite(root["s_squared"])
