"""Features users reached for: show's provenance, history and irrep names; solve's irreps for every root and an
unreachable 2S refused at once; convert's output size before writing, and its memory budget."""

from __future__ import annotations

import json

import pytest
from locations import GOOD

from integrity.cli import main
from integrity.io import format_bytes, load

WATER = str(GOOD / "water_sto3g.json")


def test_show_lists_provenance_history_and_irrep_names(runner, in_tmp):
    result = runner.invoke(main, ["convert", WATER, "so.h5", "--basis", "spin-orbital"])
    assert result.exit_code == 0, result.output
    shown = runner.invoke(main, ["show", "so.h5"]).stdout
    ham = load("so.h5")
    names = ham.provenance["irrep_names"].split()
    expected = " ".join(names[i] for i in ham.orbitals.irreps)
    assert f"  irrep names  {expected}\n" in shown
    assert "  provenance   producer: integrity" in shown
    assert "geometry: O 0.0 0.0 0.1173; H 0.0 0.7572 -0.4692; H " in shown  # atom lines on one line
    history = [
        line for line in shown.splitlines() if line.startswith("  history") or line.startswith("               ")
    ]
    assert any("basis restricted -> spin-orbital" in line and "new fingerprint" in line for line in history)
    assert any("container json -> hdf5" in line for line in history)
    summary = json.loads(runner.invoke(main, ["show", "so.h5", "--format", "json"]).stdout)
    assert summary["orbitals"]["irrep_names"] == expected.split()
    assert [step["step"] for step in summary["history"]] == ["basis", "container"]
    assert "history" not in summary["provenance"]


def test_solve_shows_every_roots_irrep_by_name_without_being_asked(runner):
    result = runner.invoke(main, ["solve", WATER, "--roots", "3"])
    assert result.exit_code == 0, result.output
    names = set(load(WATER).provenance["irrep_names"].split())
    rows = [line.split() for line in result.stdout.splitlines() if line.strip()[:1].isdigit()]
    assert len(rows) == 3
    assert all(row[4] in names for row in rows), rows
    as_json = json.loads(runner.invoke(main, ["solve", WATER, "--roots", "3", "--format", "json"]).stdout)
    assert all(isinstance(root["irrep"], int) for root in as_json["results"][0]["roots"])
    assert as_json["irrep_names"] == load(WATER).provenance["irrep_names"].split()


@pytest.mark.parametrize(("two_s", "words"), [("12", "at most 2S = 4"), ("5", "2S = 5")])
def test_an_unreachable_2s_is_refused_before_any_solve(runner, monkeypatch, two_s, words):
    def refuse(*args, **kwargs):
        raise AssertionError("the solver searched for a state that cannot exist")

    monkeypatch.setattr("integrity.solver.solve.lowest_states", refuse)
    result = runner.invoke(main, ["solve", WATER, "--two-s", two_s])
    assert result.exit_code == 2
    assert result.stderr.startswith("error: --two-s: ") and words in result.stderr


def test_convert_says_the_output_size_before_writing(runner, in_tmp):
    result = runner.invoke(main, ["convert", WATER, "so.json", "--basis", "spin-orbital"])
    assert result.exit_code == 0, result.output
    first = result.stdout.splitlines()[0]
    n = 7  # water in STO-3G: 7 spatial orbitals, 14 spin orbitals
    before, after = (n * n + n**4) * 8, ((2 * n) ** 2 + (2 * n) ** 4) * 8
    assert first == f"writing so.json: arrays of {format_bytes(after)} ({after / before:.3g}x the input's 19.1 KiB)"
    assert 15 < after / before < 16  # (2n)^4 / n^4 = 16 for the two-electron array


def test_convert_refuses_beyond_the_budget_with_the_figures_and_writes_nothing(runner, in_tmp):
    result = runner.invoke(main, ["convert", WATER, "so.json", "--basis", "spin-orbital", "--memory", "200KiB"])
    assert result.exit_code == 2
    line = result.stderr.strip()
    assert "the converted arrays hold 302 KiB (15.8x the input's 19.1 KiB)" in line
    assert "beyond the budget of 200 KiB (--memory)" in line
    assert not (in_tmp / "so.json").exists()
    assert not list(in_tmp.iterdir())
