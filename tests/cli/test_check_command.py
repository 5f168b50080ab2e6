"""The check command: exit codes, text output of a failure, JSON report against its schema."""

from __future__ import annotations

import json

import pytest
from locations import FIXTURES

from integrity.cli import main
from integrity.io.schema import schema_problems

GOOD = str(FIXTURES / "good" / "lih_sto3g.h5")
DAMAGED = str(FIXTURES / "damaged" / "lih_perturbed_element.h5")
TRUNCATED = str(FIXTURES / "damaged" / "h4_chain_truncated.h5")


def test_a_passing_file_exits_zero_with_one_line(runner):
    result = runner.invoke(main, ["check", GOOD])
    assert result.exit_code == 0
    assert result.output.strip().count("\n") == 0
    assert "pass" in result.output


def test_a_failing_file_exits_one_and_shows_value_limit_and_where(runner):
    result = runner.invoke(main, ["check", DAMAGED])
    assert result.exit_code == 1
    line = next(x for x in result.output.splitlines() if "two_electron.symmetry" in x)
    assert "value 1e-06" in line
    assert "limit 1e-10" in line
    assert "at two_electron[5, 2, 3, 3]" in line


def test_an_unreadable_file_exits_two(runner):
    result = runner.invoke(main, ["check", TRUNCATED])
    assert result.exit_code == 2
    assert "truncated" in result.output


@pytest.mark.slow
def test_unreadable_wins_over_failed_when_both_occur(runner):
    assert runner.invoke(main, ["check", DAMAGED, TRUNCATED]).exit_code == 2


@pytest.mark.slow
def test_a_folder_is_searched_for_hamiltonian_files(runner):
    result = runner.invoke(main, ["check", str(FIXTURES / "good")])
    assert result.exit_code == 0
    assert len(result.output.strip().splitlines()) == len(list((FIXTURES / "good").glob("*.*")))


@pytest.mark.slow
def test_the_json_report_validates_against_its_schema(runner):
    result = runner.invoke(main, ["check", GOOD, DAMAGED, TRUNCATED, "--format", "json"])
    assert result.exit_code == 2
    document = json.loads(result.output)
    assert schema_problems(document, name="report") == []
    statuses = [entry["status"] for entry in document["files"]]
    assert statuses == ["pass", "fail", "unreadable"]
    assert document["summary"]["failed"] == 1 and document["summary"]["unreadable"] == 1


@pytest.mark.slow
def test_a_report_missing_a_required_field_does_not_validate(runner):
    document = json.loads(runner.invoke(main, ["check", GOOD, "--format", "json"]).output)
    del document["files"][0]["checks"][0]["limit"]
    assert schema_problems(document, name="report")


@pytest.mark.slow
def test_select_skip_and_tolerance_change_what_runs(runner):
    selected = runner.invoke(main, ["check", DAMAGED, "--only", "checksum", "--format", "json"])
    assert [c["id"] for c in json.loads(selected.output)["files"][0]["checks"]] == ["checksum"]
    skipped = runner.invoke(main, ["check", DAMAGED, "--without", "two_electron.symmetry", "--without", "checksum"])
    assert skipped.exit_code == 0
    loosened = runner.invoke(
        main, ["check", DAMAGED, "--tolerance", "two_electron.symmetry=1e-5", "--without", "checksum"]
    )
    assert loosened.exit_code == 0


def test_an_unknown_check_id_is_a_usage_error(runner):
    result = runner.invoke(main, ["check", GOOD, "--only", "two_electron.symetry"])
    assert result.exit_code == 2
    assert "unknown check id 'two_electron.symetry'" in result.output


def test_a_malformed_tolerance_is_a_usage_error(runner):
    assert runner.invoke(main, ["check", GOOD, "--tolerance", "energy.hf"]).exit_code == 2
    assert runner.invoke(main, ["check", GOOD, "--tolerance", "energy.hf=-1"]).exit_code == 2


@pytest.mark.slow
def test_strict_mode_turns_a_warning_into_a_failure(runner):
    ring = str(FIXTURES / "good" / "hubbard_ring6_u4.json")
    assert runner.invoke(main, ["check", ring]).exit_code == 0
    strict = runner.invoke(main, ["check", ring, "--strict"])
    assert strict.exit_code == 1
    assert "two_electron.notation" in strict.output


def test_list_shows_every_check_id(runner):
    from integrity.checks import check_ids

    result = runner.invoke(main, ["check", GOOD, "--list"])
    assert result.exit_code == 0
    for check_id in check_ids():
        assert check_id in result.output
