"""integrity compare: the demo pair, exit statuses, the JSON report against its schema, and the
relabelling it prints applied by integrity convert."""

from __future__ import annotations

import json
import shlex

import pytest
from locations import DAMAGED, FIXTURES, GOOD

from integrity.cli import main
from integrity.io.schema import schema_problems

PAIRS = json.loads((FIXTURES / "manifest.json").read_text())["compare"]
HALDEN, QUILL = (str(FIXTURES / PAIRS[0][key]) for key in ("a", "b"))


@pytest.mark.parametrize("pair", PAIRS, ids=[p["a"] for p in PAIRS])
def test_the_demo_pair_lands_on_the_rung_the_manifest_names(runner, pair):
    result = runner.invoke(main, ["compare", str(FIXTURES / pair["a"]), str(FIXTURES / pair["b"]), "--format", "json"])
    document = json.loads(result.output)
    assert document["verdict"] == pair["rung"]
    assert result.exit_code == 0


def test_the_printed_relabelling_applied_by_convert_reproduces_the_other_file(runner, in_tmp):
    result = runner.invoke(main, ["compare", HALDEN, QUILL])
    assert result.exit_code == 0, result.output
    assert "rung 3 of 6: equal after relabelling orbitals (equivalent" in result.output
    (line,) = [line for line in result.output.splitlines() if line.strip().startswith("apply")]
    words = shlex.split(line.split("apply", 1)[1])
    assert words[:2] == ["integrity", "convert"]
    applied = runner.invoke(main, words[1:])
    assert applied.exit_code == 0, applied.output
    again = runner.invoke(main, ["compare", words[3], QUILL, "--accept", "tolerance", "--format", "json"])
    assert again.exit_code == 0 and json.loads(again.output)["verdict"] == "tolerance"


def test_a_rung_below_the_accepted_one_exits_1(runner):
    result = runner.invoke(main, ["compare", HALDEN, QUILL, "--accept", "identical"])
    assert result.exit_code == 1
    assert "not equivalent; --accept identical" in result.output


@pytest.mark.slow
@pytest.mark.parametrize(
    ("first", "second", "verdict"),
    [
        (HALDEN, QUILL, "relabel"),
        (str(GOOD / "water_sto3g.json"), str(GOOD / "water_sto3g_antisymmetrized.h5"), "tolerance"),
        (str(GOOD / "n2_ccpvdz_cas66.h5"), str(DAMAGED / "n2_core_energy_dropped.json"), "constant"),
        (str(GOOD / "lih_sto3g.h5"), str(GOOD / "water_sto3g.json"), "different"),
    ],
)
def test_the_json_report_validates_against_its_schema(runner, first, second, verdict):
    result = runner.invoke(main, ["compare", first, second, "--format", "json"])
    document = json.loads(result.output)
    assert schema_problems(document, name="comparison") == []
    assert document["verdict"] == verdict
    assert result.exit_code == (0 if verdict in ("identical", "tolerance", "relabel") else 1)


def test_the_schema_catches_a_report_that_breaks_it(runner):
    document = json.loads(runner.invoke(main, ["compare", HALDEN, QUILL, "--format", "json"]).output)
    document["rung"] = 7
    del document["steps"]
    assert {problem.path for problem in schema_problems(document, name="comparison")} == {("rung",), ("steps",)}


@pytest.mark.slow
def test_files_of_different_sizes_are_compared_as_far_as_meaningful_without_a_traceback(runner):
    result = runner.invoke(main, ["compare", str(GOOD / "lih_sto3g.h5"), str(GOOD / "water_sto3g.json")])
    assert result.exit_code == 1
    assert "Traceback" not in result.output
    assert "A has 6 restricted orbitals, B has 7: another basis or active space" in result.output
    assert "fci root 0" in result.output


def test_a_constant_difference_names_the_part_the_other_file_lacks(runner):
    result = runner.invoke(
        main, ["compare", str(GOOD / "n2_ccpvdz_cas66.h5"), str(DAMAGED / "n2_core_energy_dropped.json")]
    )
    assert "rung 4 of 6: equal up to a constant" in result.output
    assert "core_energy_parts.frozen_core" in result.output and "B's core_energy lacks it" in result.output


def test_an_unreadable_file_exits_2_with_one_line(runner):
    result = runner.invoke(main, ["compare", HALDEN, str(DAMAGED / "h4_chain_truncated.h5")])
    assert result.exit_code == 2
    assert result.output.count("\n") == 1 and "h4_chain_truncated.h5" in result.output
