"""The policy file: where it is found, what a malformed one says, and how the command line overrides it."""

from __future__ import annotations

import json

import pytest
from delivery import damage, delivery
from locations import SCHEMAS

from integrity.batch import discover_policy, find_policy, load_policy, settle
from integrity.cli import main
from integrity.errors import FieldError
from integrity.io.schema import schema_problems


def write(path, text):
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text(text)
    return path


def test_the_nearest_policy_wins_walking_up(in_tmp):
    write(in_tmp / "integrity.toml", "strict = true\n")
    inner = in_tmp / "group" / "scan"
    inner.mkdir(parents=True)
    assert find_policy(inner) == in_tmp / "integrity.toml"
    write(in_tmp / "group" / "pyproject.toml", "[tool.integrity]\nstrict = false\n")
    assert find_policy(inner) == in_tmp / "group" / "pyproject.toml"
    assert discover_policy(inner).strict is False


def test_a_pyproject_without_the_table_is_passed_by(in_tmp):
    write(in_tmp / "integrity.toml", "jobs = 3\n")
    write(in_tmp / "code" / "pyproject.toml", "[project]\nname = 'x'\n[tool.other]\nkey = 1\n")
    assert find_policy(in_tmp / "code") == in_tmp / "integrity.toml"


def test_integrity_toml_outranks_pyproject_in_the_same_folder(in_tmp):
    write(in_tmp / "pyproject.toml", "[tool.integrity]\njobs = 2\n")
    write(in_tmp / "integrity.toml", "jobs = 5\n")
    assert discover_policy(in_tmp).jobs == 5


def test_every_key_is_read(in_tmp):
    path = write(
        in_tmp / "pyproject.toml",
        """[project]
name = "hsc-2611"

[tool.integrity]
without = ["energy.fci"]
strict = true
memory = "2GiB"
engine = "pyscf"
foreign = "note"
jobs = 3
timeout = 120
cache = ".integrity/verdicts.sqlite"
scheduler = "tcp://127.0.0.1:8786"

[tool.integrity.tolerance]
"energy.hf" = 1e-8

[tool.integrity.files]
include = ["scans/**"]
exclude = ["scans/scratch/"]
""",
    )
    policy = load_policy(path)
    assert policy.without == ("energy.fci",)
    assert policy.strict is True and policy.memory == 2 * 2**30 and policy.engine == "pyscf"
    assert policy.foreign == "note" and policy.jobs == 3 and policy.timeout == 120.0
    assert policy.cache == str(in_tmp / ".integrity" / "verdicts.sqlite")
    assert policy.scheduler == "tcp://127.0.0.1:8786"
    assert policy.tolerance == {"energy.hf": 1e-8}
    assert policy.include == ("scans/**",) and policy.exclude == ("scans/scratch/",)


@pytest.mark.parametrize(
    ("text", "line", "key", "words"),
    [
        ("strict = true\nselect = ['schema']\n", 2, "select", "unknown key; known keys here: only"),
        ("only = ['schema', 'two_electron.symetry']\n", 1, "only[1]", "unknown check id 'two_electron.symetry'"),
        ("\n\n[tolerance]\n'energy.hf' = 'tight'\n", 4, 'tolerance."energy.hf"', "expected number, got 'tight'"),
        ("[tolerance]\nenergy.hf = 1e-8\n", 2, "tolerance.energy", "expected number"),
        ('[tolerance]\n"energy.hf" = inf\n', 2, 'tolerance."energy.hf"', "finite positive number"),
        ('[tolerance]\n"energy.hf" = -1e-8\n', 2, 'tolerance."energy.hf"', "not above 0"),
        ('[tolerance]\n"energy.hff" = 1e-8\n', 2, 'tolerance."energy.hff"', "unknown check id"),
        ("jobs = 'many'\n", 1, "jobs", "expected integer"),
        ("memory = 'lots'\n", 1, "memory", "lots"),
        ("[files]\ninclude = ['a/**']\ntake = ['b']\n", 3, "files.take", "known keys here: include, exclude"),
    ],
)
def test_a_malformed_policy_names_file_line_and_key(in_tmp, text, line, key, words):
    path = write(in_tmp / "integrity.toml", text)
    with pytest.raises(FieldError) as caught:
        load_policy(path)
    message = str(caught.value)
    assert message.startswith(f"{path.name}: line {line}: {key}: "), message
    assert words in message


def test_a_pyproject_key_is_named_with_its_table(in_tmp):
    path = write(in_tmp / "pyproject.toml", "[project]\nname = 'x'\n\n[tool.integrity]\nstrickt = true\n")
    with pytest.raises(FieldError, match=r"pyproject.toml: line 5: tool\.integrity\.strickt: unknown key"):
        load_policy(path)


def test_invalid_toml_names_the_file_and_the_line(in_tmp):
    path = write(in_tmp / "integrity.toml", "strict = true\njobs = \n")
    with pytest.raises(FieldError, match=r"integrity.toml: not valid TOML: .*line 2"):
        load_policy(path)


def test_a_malformed_policy_is_exit_status_two_on_one_line(in_tmp, runner):
    paths = delivery(in_tmp / "scan", 1)
    write(in_tmp / "integrity.toml", '[tolerance]\n"energy.hf" = "tight"\n')
    result = runner.invoke(main, ["check", *paths])
    assert result.exit_code == 2
    assert result.stderr.strip().count("\n") == 0
    assert 'integrity.toml: line 2: tolerance."energy.hf": expected number' in result.stderr


def test_the_policy_schema_is_a_valid_schema_and_describes_every_key():
    schema = json.loads((SCHEMAS / "policy.schema.json").read_text())
    keys = set(schema["properties"])
    assert keys == {
        "only",
        "without",
        "tolerance",
        "memory",
        "engine",
        "strict",
        "foreign",
        "files",
        "jobs",
        "timeout",
        "cache",
        "scheduler",
    }
    assert schema_problems({"jobs": 2, "files": {"include": ["a"]}}, name="policy") == []
    assert schema_problems({"jobs": 0}, name="policy")[0].path == ("jobs",)


def test_the_command_line_overrides_the_policy(in_tmp):
    policy = load_policy(write(in_tmp / "integrity.toml", "strict = true\nonly = ['schema']\njobs = 3\n"))
    assert settle(policy).options.strict is True
    settings = settle(policy, strict=False, only=("checksum",), jobs=1)
    assert settings.options.strict is False and settings.options.only == ("checksum",) and settings.jobs == 1


def test_jobs_on_the_command_line_runs_locally_over_a_policy_scheduler(in_tmp):
    policy = load_policy(write(in_tmp / "integrity.toml", "scheduler = 'tcp://127.0.0.1:1'\n"))
    assert settle(policy).scheduler == "tcp://127.0.0.1:1"
    assert settle(policy, jobs=2).scheduler is None


@pytest.mark.slow
def test_check_follows_the_policy_and_says_which(in_tmp, runner):
    paths = delivery(in_tmp / "scan", 2)
    damage(paths[0])
    write(in_tmp / "integrity.toml", "without = ['checksum', 'two_electron.symmetry']\n")
    result = runner.invoke(main, ["check", *paths, "--format", "json", "--jobs", "1"])
    assert result.stderr.strip() == "policy: integrity.toml"
    report = json.loads(result.stdout)
    assert schema_problems(report, name="report") == []
    assert report["policy"] == "integrity.toml"
    assert result.exit_code == 0  # the damaged element is seen only by the checks left out
    ids = {entry["id"] for entry in report["files"][0]["checks"]}
    assert "checksum" not in ids and "two_electron.symmetry" not in ids

    again = runner.invoke(main, ["check", *paths, "--only", "checksum", "--jobs", "1"])
    assert again.exit_code == 1 and "checksum" in again.stdout

    bare = runner.invoke(main, ["check", *paths, "--no-policy", "--format", "json", "--jobs", "1"])
    assert bare.exit_code == 1 and json.loads(bare.stdout)["policy"] is None and bare.stderr == ""


@pytest.mark.slow
def test_excluded_paths_are_passed_over_even_when_named(in_tmp, runner):
    paths = delivery(in_tmp / "scan", 3)
    damage(paths[1])
    write(in_tmp / "integrity.toml", "[files]\nexclude = ['scan_001.*']\n")
    result = runner.invoke(main, ["check", "scan", "-q", "--jobs", "1"])
    assert result.exit_code == 0, result.output
    lines = result.stdout.splitlines()
    assert lines[1] == "scan/scan_001.json: passed over: excluded by files.exclude 'scan_001.*'"
    assert lines[0].startswith("scan/scan_000.h5: pass") and lines[2].startswith("scan/scan_002.h5: pass")


@pytest.mark.slow
def test_include_limits_the_files_judged(in_tmp, runner):
    delivery(in_tmp / "scan", 2)
    write(in_tmp / "results" / "table.json", "[1, 2, 3]")
    write(in_tmp / "integrity.toml", "[files]\ninclude = ['scan/**']\n")
    result = runner.invoke(main, ["check", ".", "--format", "json", "-q", "--jobs", "1"])
    assert result.exit_code == 0
    report = json.loads(result.stdout)
    assert [entry["path"] for entry in report["passed_over"]] == ["results/table.json"]
    assert report["summary"]["files"] == 2 and report["summary"]["passed_over"] == 1
