"""docs/checks.md documents every registered check with its default limit, in report order,
and what it says about verdicts, `where` and exit statuses is what the command line does.

The claims are tested on the worked example of docs/format.md (a file that passes every check),
damaged in one place at a time with plain json and h5py.
"""

from __future__ import annotations

import json
import re

import h5py
import pytest
from documents import CHECKS, example, read, write_example_hdf5, write_example_json

from integrity.checks import REGISTRY, check_ids
from integrity.cli import main

HEADING = re.compile(r"^### `([a-z_.]+)`$", re.MULTILINE)
NUMBER = r"-?[0-9]+(?:\.[0-9]+)?(?:e[+-]?[0-9]+)?"


def sections(text: str) -> dict[str, str]:
    """Each check's section, keyed by the id in its ``### `id` `` heading."""
    found = list(HEADING.finditer(text))
    out = {}
    for match, following in zip(found, [*found[1:], None], strict=True):
        end = following.start() if following else text.find("\n## ", match.end())
        out[match.group(1)] = text[match.end() : end if end != -1 else None]
    return out


def documented_limit(section: str) -> float | str | None:
    """The number after ``Default limit:`` (None for 'none'); 'missing' when there is no such line."""
    match = re.search(r"^Default limit: (none|" + NUMBER + r")\b", section, re.MULTILINE)
    if match is None:
        return "missing"
    return None if match.group(1) == "none" else float(match.group(1))


def glance_limits(text: str) -> dict[str, float | None]:
    """The 'Default limits at a glance' table: id -> limit."""
    table = text[text.index("## Default limits at a glance") :]
    rows = re.findall(r"^\| `([a-z_.]+)` \| (none|" + NUMBER + r") \|", table, re.MULTILINE)
    return {check_id: None if limit == "none" else float(limit) for check_id, limit in rows}


def limit_problems(ids, text: str) -> list[str]:
    """Every id whose section or stated default limit disagrees with the registry."""
    found, glance = sections(text), glance_limits(text)
    problems = []
    for check_id in ids:
        expected = REGISTRY[check_id].limit
        if check_id not in found:
            problems.append(f"{check_id}: no section")
        elif documented_limit(found[check_id]) != expected:
            problems.append(f"{check_id}: section says {documented_limit(found[check_id])}, registry {expected}")
        if glance.get(check_id, "missing") != expected:
            problems.append(f"{check_id}: table says {glance.get(check_id, 'missing')}, registry {expected}")
    return problems


@pytest.mark.parametrize("check_id", check_ids())
def test_every_check_is_documented_with_its_default_limit(check_id):
    assert limit_problems([check_id], read(CHECKS)) == []


def test_the_sections_follow_the_report_order():
    assert list(sections(read(CHECKS))) == check_ids()


def test_a_missing_or_wrong_limit_is_caught():
    text = "### `one_electron.hermitian`\n\nDefault limit: 1e-9 hartree.\n\n## Default limits at a glance\n"
    problems = limit_problems(["one_electron.hermitian", "energy.fci"], text)
    assert any(p.startswith("one_electron.hermitian: section says 1e-09") for p in problems)
    assert "energy.fci: no section" in problems
    assert any(p.startswith("energy.fci: table says missing") for p in problems)


# ---------------------------------------------------------------- the documented verdicts and places


def report(runner, *arguments):
    result = runner.invoke(main, ["check", "--format", "json", *map(str, arguments)])
    return result.exit_code, json.loads(result.stdout) if result.stdout.startswith("{") else None


def results_of(file: dict) -> dict[str, dict]:
    return {check["id"]: check for check in file["checks"]}


def test_a_missed_hf_reference_points_at_the_reference(runner, tmp_path):
    doc = example()
    doc["references"][0]["energy"] += 0.01
    code, batch = report(runner, write_example_json(tmp_path / "h2.json", doc))
    hf = results_of(batch["files"][0])["energy.hf"]
    assert code == 1 and hf["status"] == "fail"
    assert hf["where"] == {"field": "references[hf]"}
    assert hf["value"] == pytest.approx(0.01) and hf["limit"] == 1e-6


def test_the_positivity_value_is_the_lowest_of_its_conditions_against_a_negative_limit(runner, tmp_path):
    code, batch = report(runner, write_example_json(tmp_path / "h2.json"))
    positive = results_of(batch["files"][0])["two_electron.positive"]
    assert code == 0 and positive["status"] == "pass"
    assert positive["limit"] == REGISTRY["two_electron.positive"].limit == -1e-8
    assert positive["fails_when"] == "below"
    # the smallest eigenvalue of the worked example's pair matrix: the 2 x 2 block of (00|00), (00|11), (11|11)
    a, b, c = 0.6746, 0.6636, 0.6975
    lowest = 0.5 * (a + c) - ((0.5 * (a - c)) ** 2 + b**2) ** 0.5
    assert positive["details"]["lowest"] == pytest.approx(lowest)
    details = positive["details"]
    assert positive["value"] == min(
        lowest_value
        for lowest_value in (
            details["lowest"],
            details["coulomb_min"],
            details["exchange_min"],
            details["schwarz_margin"],
        )
    )
    assert abs(positive["value"]) < 1e-12  # (01|01) meets the Schwarz bound: a valid file's value is 0


def test_a_non_finite_value_is_located_and_skips_the_value_checks(runner, tmp_path):
    path = write_example_hdf5(tmp_path / "h2.h5")
    with h5py.File(path, "a") as out:
        out["two_electron"][0, 1, 0, 1] = float("nan")
    code, batch = report(runner, path)
    results = results_of(batch["files"][0])
    assert code == 1 and results["arrays.finite"]["status"] == "fail"
    assert results["arrays.finite"]["where"] == {"array": "two_electron", "index": [0, 1, 0, 1]}
    after = check_ids()[check_ids().index("one_electron.hermitian") :]
    assert {results[i]["status"] for i in after} == {"skip"}
    assert all(results[i]["message"].startswith("not run") for i in after)


def test_a_broken_symmetry_points_at_the_altered_element(runner, tmp_path):
    doc = example()
    data = doc["two_electron"]["data"]
    data[0b0110] += 1e-3  # (01|10) alone: its orbit (01|01), (10|01), (10|10) still agrees
    code, batch = report(runner, write_example_json(tmp_path / "h2.json", doc))
    symmetry = results_of(batch["files"][0])["two_electron.symmetry"]
    assert code == 1 and symmetry["status"] == "fail"
    assert symmetry["where"] == {"array": "two_electron", "index": [0, 1, 1, 0]}
    assert symmetry["value"] == pytest.approx(1e-3) and symmetry["limit"] == 1e-10


@pytest.mark.slow
def test_exit_statuses(runner, tmp_path):
    good = write_example_json(tmp_path / "good.json")
    doc = example()
    doc["core_energy_parts"]["nuclear_repulsion"] = 0.7
    failing = write_example_json(tmp_path / "failing.json", doc)
    unreadable = tmp_path / "unreadable.json"
    unreadable.write_text("{", encoding="utf-8")
    assert report(runner, good)[0] == 0
    assert report(runner, good, failing)[0] == 1
    code, batch = report(runner, failing, unreadable)
    assert code == 2 and [f["status"] for f in batch["files"]] == ["fail", "unreadable"]
    assert "error" in batch["files"][1] and batch["files"][1]["checks"] == []
    assert runner.invoke(main, ["check", "--only", "no.such.check", str(good)]).exit_code == 2


@pytest.mark.slow
def test_strict_mode_fails_a_file_on_a_warning(runner, tmp_path):
    doc = example()
    doc["orbitals"] = {"count": 1, "basis": "restricted"}
    doc.update(
        electrons={"alpha": 1, "beta": 0},
        one_electron={"shape": [1, 1], "data": [-0.5]},
        two_electron={"notation": "chemist", "storage": "dense", "shape": [1, 1, 1, 1], "data": [0.75]},
    )
    for key in ("references", "checksum", "core_energy_parts"):
        del doc[key]
    path = write_example_json(tmp_path / "one_orbital.json", doc)  # one orbital: both notations fit
    code, batch = report(runner, path)
    assert code == 0 and results_of(batch["files"][0])["two_electron.notation"]["status"] == "warn"
    code, batch = report(runner, "--strict", path)
    assert code == 1 and batch["files"][0]["status"] == "fail"
