"""How a gate treats JSON and HDF5 files that are not Hamiltonian files (--foreign note)."""

from __future__ import annotations

import json
import shutil
from pathlib import Path

import h5py
import numpy as np
import pytest
from delivery import damage, delivery
from locations import DAMAGED

from integrity.cli import main
from integrity.errors import ContainerError
from integrity.io.marker import declared_format
from integrity.io.schema import schema_problems


@pytest.fixture
def repository(in_tmp):
    """A data repository: Hamiltonian files next to a package.json and a results table."""
    paths = delivery(in_tmp / "scan", 2)
    (in_tmp / "package.json").write_text(json.dumps({"name": "viewer", "version": "0.1.0"}))
    (in_tmp / "results.json").write_text(json.dumps([{"r": 0.74, "energy": -1.137}]))
    with h5py.File(in_tmp / "table.h5", "w") as handle:
        handle["energies"] = np.linspace(-1.1, -1.0, 5)
    return paths


def command(*paths, foreign="note"):
    return ["check", *map(str, paths), "--foreign", foreign, "--jobs", "1", "--no-policy"]


@pytest.mark.slow
def test_files_without_the_marker_are_passed_over_with_a_note(repository, runner):
    result = runner.invoke(main, command("package.json", "results.json", "table.h5", *repository))
    assert result.exit_code == 0, result.output
    lines = result.stdout.splitlines()
    assert lines[0] == "package.json: passed over: not a Hamiltonian file (no format marker 'integrity.hamiltonian')"
    assert lines[1].startswith("results.json: passed over: not a Hamiltonian file")
    assert lines[2].startswith("table.h5: passed over: not a Hamiltonian file")
    assert all(": pass (" in line for line in lines[3:])


def test_refuse_keeps_them_unreadable(repository, runner):
    result = runner.invoke(main, command("package.json", foreign="refuse"))
    assert result.exit_code == 2 and "unreadable" in result.stdout


@pytest.mark.slow
def test_another_format_marker_is_named(in_tmp, runner):
    (in_tmp / "report.json").write_text(json.dumps({"format": "integrity.report", "files": []}))
    result = runner.invoke(main, command("report.json"))
    assert result.exit_code == 0
    assert "its format marker is 'integrity.report'" in result.stdout


@pytest.mark.slow
def test_a_damaged_hamiltonian_file_still_fails(repository, runner):
    damage(repository[1])
    result = runner.invoke(main, command("package.json", *repository))
    assert result.exit_code == 1
    assert "  two_electron.symmetry:" in result.stdout and "  checksum:" in result.stdout


@pytest.mark.slow
@pytest.mark.parametrize("name", ["cut.json", "cut.h5"])
def test_a_file_that_cannot_be_parsed_fails_even_when_foreign_files_are_noted(repository, runner, name):
    source = Path(repository[0] if name.endswith(".h5") else repository[1])
    data = source.read_bytes()
    Path(name).write_bytes(data[: len(data) // 2])
    with pytest.raises(ContainerError):
        declared_format(name)
    result = runner.invoke(main, command(name))
    assert result.exit_code == 2
    assert result.stdout.startswith(f"{name}: unreadable:")


def test_the_truncated_fixture_is_not_passed_over(in_tmp, runner):
    shutil.copy(DAMAGED / "h4_chain_truncated.h5", in_tmp / "h4.h5")
    result = runner.invoke(main, command("h4.h5", "--format", "json"))
    assert result.exit_code == 2
    report = json.loads(result.stdout)
    assert schema_problems(report, name="report") == []
    assert report["files"][0]["status"] == "unreadable" and report["passed_over"] == []


@pytest.mark.slow
def test_an_unparseable_file_the_policy_excludes_is_passed_over(repository, runner):
    with open("broken.json", "w") as handle:
        handle.write('{"format": "integrity.hamiltonian", "orbi')
    with open("integrity.toml", "w") as handle:
        handle.write("foreign = 'note'\n[files]\nexclude = ['broken.json']\n")
    result = runner.invoke(main, ["check", "broken.json", *repository, "--jobs", "1"])
    assert result.exit_code == 0
    assert "broken.json: passed over: excluded by files.exclude 'broken.json'" in result.stdout
