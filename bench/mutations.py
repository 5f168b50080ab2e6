"""Mutation experiment: does some test fail when a check's failure branch is switched off?

    python bench/mutations.py [--ids ID ...] [--markdown FILE] [-- TEST PATHS AND PYTEST OPTIONS]

For every registered check id, the test suite runs with that check's failure
branch disabled (bench/mutation_hook.py, installed as ``sitecustomize.py`` on
``PYTHONPATH``, so CLI subprocesses and worker processes carry the mutation
too): a ``fail`` the check returns becomes ``pass`` (for a check registered
with severity ``warn``, a ``warn`` as well). A mutation is *caught* when at
least one test fails. The package is never edited.

Before the table means anything, three things are shown:

1. the mutation takes effect in a fresh process: the registry and the
   module attribute hold the mutated function (every id);
2. it takes effect in the real ``integrity check`` command: on a damaged
   fixture that fails the check (fixtures/manifest.json), ``integrity check
   --only ID --format json`` reports ``fail`` without the mutation and
   ``pass`` with it (every id some damaged fixture fails);
3. the same test run without any mutation is green.

Then one pytest run per id, stopping at the first failure (``-x``), each
with a fresh hypothesis example database. Printed: check id | caught? |
first failing test | seconds. Exit status 0 when every mutation is caught,
1 when one is not, 2 when the baseline or a self-test fails.

The default test selection is the quick one over the suites that judge files
(tests/checks tests/cli tests/io tests/batch, ``-m "not slow"``); give other
paths or options after ``--``.
"""

from __future__ import annotations

import argparse
import json
import os
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

REPOSITORY = Path(__file__).resolve().parents[1]
HOOK = Path(__file__).resolve().with_name("mutation_hook.py")
DEFAULT_TESTS = ["tests/checks", "tests/cli", "tests/io", "tests/batch", "-m", "not slow"]
QUICK_ID, QUICK_TESTS = "one_electron.hermitian", ["tests/checks", "-m", "not slow"]
PYTEST = [sys.executable, "-m", "pytest", "-q", "-x", "-p", "no:cacheprovider"]
VARIABLE = "INTEGRITY_MUTATION"

PROBE = """
import importlib, json, sys
import integrity.checks
from integrity.checks.registry import REGISTRY
spec = REGISTRY[sys.argv[1]]
function = spec.function
module = importlib.import_module(function.__module__)
mark = "__integrity_mutation__"
print(json.dumps({
    "registry": getattr(function, mark, None),
    "module": getattr(getattr(module, function.__name__), mark, None),
    "others": sorted(i for i, s in REGISTRY.items() if i != sys.argv[1] and hasattr(s.function, mark)),
}))
"""


def check_ids() -> list[str]:
    from integrity.checks import check_ids as ids

    return ids()


def environment(hook_dir: Path, check_id: str | None, storage: Path) -> dict[str, str]:
    """The environment of one run: the hook on PYTHONPATH, the mutated id (or none), a fresh hypothesis database."""
    env = dict(os.environ)
    env.pop(VARIABLE, None)
    env["PYTHONPATH"] = os.pathsep.join([str(hook_dir), *filter(None, [os.environ.get("PYTHONPATH")])])
    env["HYPOTHESIS_STORAGE_DIRECTORY"] = str(storage)
    if check_id is not None:
        env[VARIABLE] = check_id
    return env


def probe(env: dict[str, str], check_id: str) -> dict:
    """What a fresh Python process sees of the mutation of ``check_id``."""
    out = subprocess.run(
        [sys.executable, "-c", PROBE, check_id], env=env, cwd=REPOSITORY, capture_output=True, text=True, check=True
    )
    return json.loads(out.stdout)


def command_status(env: dict[str, str], path: Path, check_id: str) -> str:
    """The status ``integrity check --only ID`` gives the check on ``path``, from the real command's JSON report."""
    command = shutil.which("integrity", path=str(Path(sys.executable).parent)) or "integrity"
    out = subprocess.run(
        [command, "check", str(path), "--only", check_id, "--format", "json", "--no-policy", "--jobs", "1", "-q"],
        env=env,
        cwd=REPOSITORY,
        capture_output=True,
        text=True,
    )
    document = json.loads(out.stdout)
    return next(c["status"] for c in document["files"][0]["checks"] if c["id"] == check_id)


def failing_fixture(check_id: str) -> Path | None:
    """A damaged fixture that fails ``check_id``, per fixtures/manifest.json (None when there is none)."""
    manifest = json.loads((REPOSITORY / "fixtures" / "manifest.json").read_text())
    for entry in manifest["files"]:
        if check_id in entry["fails"]:
            return REPOSITORY / "fixtures" / entry["file"]
    return None


def self_test(hook_dir: Path, storage: Path, ids: list[str]) -> list[str]:
    """Problems showing a mutation would not take effect (empty: every one does)."""
    problems = []
    for check_id in ids:
        seen = probe(environment(hook_dir, check_id, storage), check_id)
        if not seen["registry"] or not seen["module"] or seen["others"]:
            problems.append(f"{check_id}: the mutation is not in place in a fresh process: {seen}")
            continue
        path = failing_fixture(check_id)
        if path is None:
            print(f"  {check_id}: mutated in a fresh process (no damaged fixture fails it)", flush=True)
            continue
        plain = command_status(environment(hook_dir, None, storage), path, check_id)
        mutated = command_status(environment(hook_dir, check_id, storage), path, check_id)
        line = f"{check_id}: integrity check {path.relative_to(REPOSITORY)}: {plain} unmutated, {mutated} mutated"
        print(f"  {line}", flush=True)
        if plain != "fail" or mutated != "pass":
            problems.append(line)
    return problems


def first_failure(output: str) -> str:
    """The first FAILED or ERROR line of pytest's short summary, as its test id."""
    for line in output.splitlines():
        if line.startswith(("FAILED ", "ERROR ")):
            return line.split(" ", 1)[1].split(" - ", 1)[0]
    return ""


def run_tests(env: dict[str, str], tests: list[str]) -> tuple[int, str, float]:
    """pytest's exit status, its first failing test and the wall seconds it took."""
    start = time.perf_counter()
    out = subprocess.run([*PYTEST, *tests], env=env, cwd=REPOSITORY, capture_output=True, text=True)
    seconds = time.perf_counter() - start
    return out.returncode, first_failure(out.stdout) or out.stdout.strip().splitlines()[-1:][0], seconds


def table(rows) -> str:
    lines = ["| check id | caught? | first failing test | seconds |", "|---|---|---|---|"]
    lines += [f"| `{i}` | {caught} | {test and f'`{test}`'} | {seconds:.0f} |" for i, caught, test, seconds in rows]
    return "\n".join(lines)


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--ids", nargs="+", metavar="ID", help="check ids to mutate (default: every registered one)")
    parser.add_argument("--markdown", type=Path, help="also write the table to this file")
    parser.add_argument("--skip-baseline", action="store_true", help="do not run the unmutated suite first")
    parser.add_argument(
        "--skip-self-test", action="store_true", help="do not show first that the mutations take effect"
    )
    parser.add_argument("--quick", action="store_true", help=f"smoke run: mutate {QUICK_ID} only, over tests/checks")
    parser.add_argument("tests", nargs="*", help=f"pytest paths and options after -- (default: {DEFAULT_TESTS})")
    args = parser.parse_args(argv)
    tests = args.tests or (QUICK_TESTS if args.quick else DEFAULT_TESTS)
    known = check_ids()
    ids = args.ids or ([QUICK_ID] if args.quick else known)
    unknown = [i for i in ids if i not in known]
    if unknown:
        parser.error(f"unknown check ids {unknown}; known: {', '.join(known)}")
    print(f"pytest {' '.join(PYTEST[3:] + tests)}", flush=True)
    with tempfile.TemporaryDirectory(prefix="mutations-") as folder:
        hook_dir, storage = Path(folder) / "hook", Path(folder) / "hypothesis"
        hook_dir.mkdir()
        shutil.copyfile(HOOK, hook_dir / "sitecustomize.py")
        problems = []
        if not args.skip_self_test:
            print("1-2. the mutation takes effect in fresh processes and in the integrity command:", flush=True)
            problems = self_test(hook_dir, storage, ids)
        if problems:
            print("self-test failed:\n  " + "\n  ".join(problems))
            return 2
        if not args.skip_baseline:
            status, last, seconds = run_tests(environment(hook_dir, None, storage / "baseline"), tests)
            print(f"3. baseline, no mutation: exit {status} in {seconds:.0f} s ({last})", flush=True)
            if status != 0:
                print("the unmutated suite is not green: the table would mean nothing")
                return 2
        rows = []
        for check_id in ids:
            status, first, seconds = run_tests(environment(hook_dir, check_id, storage / check_id), tests)
            caught = {0: "no", 1: "yes"}.get(status, f"error (pytest exit {status})")
            rows.append((check_id, caught, first if status == 1 else "", seconds))
            print(f"  {check_id}: {caught} {first if status == 1 else ''} ({seconds:.0f} s)", flush=True)
    text = table(rows)
    print(text)
    if args.markdown:
        args.markdown.write_text(text + "\n", encoding="utf-8")
    return 0 if all(caught == "yes" for _, caught, _, _ in rows) else 1


if __name__ == "__main__":
    sys.exit(main())
