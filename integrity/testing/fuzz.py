"""Run damaged files through ``integrity check`` and count what went wrong.

A case is a (fixture, mutation, seed) triple (:class:`Case`). Each case runs
in a child process forked from this one (so the imports are paid once): the
child writes the damaged copy (:mod:`integrity.testing.mutations`) into a
folder of its own, then runs ``integrity check FILE --format json`` through
the command's own entry point, with the files judged in the child itself (the
batch module's in-process executor, so no second pool of workers is started
under the child). The child runs under an address-space limit
(``RLIMIT_AS``); the parent kills it after ``time_limit`` seconds of wall
time and runs ``workers`` children at a time.

Each case gets one verdict (:data:`VERDICTS`):

``ok``
    the outcome is one the mutation allows;
``traceback``
    exit status outside {0, 1, 2}, or "Traceback" or "internal error" in the output;
``contained``
    no exit within the time limit in the child (the HDF5 library hangs on some
    damaged metadata, where no Python code runs), and the real command, which
    reads every file in a worker process, reported the file unreadable ("hung")
    within ``--timeout`` :data:`CONTAIN_TIMEOUT`: the batch goes on, as it must;
``hang``
    no exit within the time limit, and the real command did not contain it;
``memory``
    a ``MemoryError``, or the child killed by a signal (an abort, a crash, the kernel);
``silent_pass``
    a mutation that must fail (:data:`~integrity.testing.mutations.FAIL`) and exit status 0;
``false_alarm``
    a file that must pass (the good fixtures, meaning-preserving mutations) and a status other than 0;
``harness``
    the mutation itself could not be applied (a bug in the fuzzer, not in ``integrity``).
"""

from __future__ import annotations

import io
import json
import os
import re
import resource
import shutil
import signal
import sys
import tempfile
import time
import traceback
from collections import Counter
from collections.abc import Callable, Iterable, Iterator
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from integrity.testing.mutations import EITHER, FAIL, MUTATIONS, PASS, case_name, mutations_for

VERDICTS = ("ok", "contained", "traceback", "hang", "memory", "silent_pass", "false_alarm", "harness")
#: the bad verdicts, in the order a table prints them
PROBLEMS = VERDICTS[2:]
#: the row of each bad verdict in a table
LABELS = {
    "contained": "library hangs contained by --timeout (not problems)",
    "traceback": "tracebacks",
    "hang": "hangs",
    "memory": "memory blow-ups",
    "silent_pass": "silent passes",
    "false_alarm": "false alarms (good files failed)",
    "harness": "harness errors (fuzzer bugs)",
}
#: seconds a case may take before it counts as a hang
TIME_LIMIT = 30.0
#: ``--timeout`` of the real command that re-judges a case that hung in the child
CONTAIN_TIMEOUT = 10.0
#: the address space a child may use
MEMORY_LIMIT = 3 * 2**30
#: the memory budget ``check`` is given, well inside the limit
CHECK_MEMORY = "1GiB"
#: the exit status of a child whose mutation could not be applied
_HARNESS_STATUS = 99
#: the exit status of a child in which something escaped the command
_ESCAPED_STATUS = 70


@dataclass(frozen=True)
class Case:
    """One damaged file: the ``mutation`` of ``fixture`` drawn with ``seed``."""

    fixture: str
    mutation: str
    seed: int

    @property
    def name(self) -> str:
        return case_name(self.fixture, self.mutation, self.seed)


@dataclass
class Outcome:
    """What became of a case: the ``verdict``, a one-line ``reason``, and what was seen."""

    case: Case
    verdict: str
    reason: str
    expect: str | None = None
    damage: str | None = None
    status: int | None = None
    seconds: float = 0.0


def plan(fixtures: Iterable[str | Path], cases: int, seed: int, *, include_good: bool = True) -> list[Case]:
    """``cases`` cases drawn from ``seed``: each good fixture unchanged first, then random
    (fixture, mutation, seed) triples, every mutation as often as every other."""
    fixtures = sorted(str(f) for f in fixtures)
    out = [Case(f, "identity", 0) for f in fixtures] if include_good else []
    rng = np.random.default_rng(seed)
    pairs = [(f, m.name) for f in fixtures for m in mutations_for(f) if m.name != "identity"]
    by_mutation: dict[str, list[str]] = {}
    for fixture, name in pairs:
        by_mutation.setdefault(name, []).append(fixture)
    names = sorted(by_mutation)
    while len(out) < cases:
        name = names[int(rng.integers(len(names)))]
        fixture = by_mutation[name][int(rng.integers(len(by_mutation[name])))]
        out.append(Case(fixture, name, int(rng.integers(2**31))))
    return out[:cases]


def judge_output(expect: str | None, status: int | None, stdout: str, stderr: str) -> tuple[str, str]:
    """The verdict and its reason, from what the child printed and how it ended."""
    text = stdout + "\n" + stderr
    if status == _HARNESS_STATUS:
        return "harness", _last_line(stderr) or "the mutation failed"
    if "MemoryError" in text:
        return "memory", _last_line(stderr) or "MemoryError"
    if status not in (0, 1, 2) or "Traceback" in text or "internal error" in text:
        return "traceback", _last_line(stderr) or f"exit status {status}"
    report = _report(stdout)
    if report is None:
        return "traceback", f"exit status {status} without a JSON report ({_last_line(stdout)[:80]!r})"
    if expect == FAIL and status == 0:
        return "silent_pass", "exit status 0 for a file that must fail"
    if expect == PASS and status != 0:
        return "false_alarm", f"exit status {status}: {_why(report) or _last_line(stderr)}"
    return "ok", f"exit status {status}: {_why(report) or 'pass'}"


def _report(stdout: str):
    try:
        return json.loads(stdout)
    except ValueError:
        return None


def _why(report) -> str:
    """The first error or failing check of a report, in one line."""
    for entry in report.get("files", []):
        if entry.get("error"):
            return entry["error"][:200]
        for result in entry.get("checks", []):
            if result.get("status") == "fail":
                return f"{result.get('id')} failed: {str(result.get('message'))[:160]}"
    return ""


def _last_line(text: str) -> str:
    lines = [line for line in text.strip().splitlines() if line.strip()]
    return lines[-1][:300] if lines else ""


# --------------------------------------------------------------------------------------------
# The child


def _child(case: Case, folder: Path, memory_limit: int, time_limit: float) -> None:
    """Run in the forked child: damage, then check; never returns (``os._exit``)."""
    status = _ESCAPED_STATUS
    try:
        signal.signal(signal.SIGALRM, signal.SIG_DFL)
        signal.alarm(int(time_limit) + 30)  # ends the child even if the parent is gone
        out = os.open(folder / "stdout", os.O_WRONLY | os.O_CREAT | os.O_TRUNC)
        err = os.open(folder / "stderr", os.O_WRONLY | os.O_CREAT | os.O_TRUNC)
        os.dup2(out, 1)
        os.dup2(err, 2)
        sys.stdout = io.TextIOWrapper(io.FileIO(1, "w", closefd=False), encoding="utf-8", errors="replace")
        sys.stderr = io.TextIOWrapper(io.FileIO(2, "w", closefd=False), encoding="utf-8", errors="replace")
        signal.signal(signal.SIGINT, signal.SIG_DFL)
        os.chdir(folder)
        os.environ["INTEGRITY_THREADS"] = "1"  # two children share the cores; no sigma threads (nor a
        # thread pool inherited from the parent, whose threads do not exist here)
        resource.setrlimit(resource.RLIMIT_AS, (memory_limit, memory_limit))
        target = folder / Path(case.fixture).name
        try:
            damage = MUTATIONS[case.mutation].apply(case.fixture, target, case.seed)
        except BaseException:
            traceback.print_exc()
            sys.stderr.flush()
            os._exit(_HARNESS_STATUS)
        (folder / "damage.json").write_text(json.dumps({"description": damage.description, "expect": damage.expect}))
        status = _run_check(target)
    except BaseException:
        traceback.print_exc()
    finally:
        for stream in (sys.stdout, sys.stderr):
            try:
                stream.flush()
            except BaseException:
                pass
        os._exit(status)


def _run_check(target: Path) -> int:
    """``integrity check TARGET --format json``, its files judged in this process; the exit status."""
    import threadpoolctl

    import integrity.batch.execute as execute
    from integrity.cli.app import main

    execute.make_executor = lambda settings, files, task=execute.judge: execute.InProcess(task)
    args = ["check", str(target), "--format", "json", "--no-policy", "--no-cache", "--quiet"]
    args += ["--memory", CHECK_MEMORY]
    with threadpoolctl.threadpool_limits(1):
        try:
            main.main(args=args, prog_name="integrity", standalone_mode=True)
        except SystemExit as exit_:
            code = exit_.code
            return code if isinstance(code, int) else (0 if code is None else 1)
    return 0


# --------------------------------------------------------------------------------------------
# The parent


@dataclass
class _Running:
    case: Case
    pid: int
    folder: Path
    started: float
    killed: bool = False


def prepare() -> None:
    """Import what every child needs, once, before the first fork."""
    import threadpoolctl  # noqa: F401

    import integrity.batch.preload
    import integrity.cli.app  # noqa: F401


def run_cases(
    cases: Iterable[Case],
    *,
    workers: int = 2,
    time_limit: float = TIME_LIMIT,
    memory_limit: int = MEMORY_LIMIT,
    folder: str | Path | None = None,
    keep: bool = False,
) -> Iterator[Outcome]:
    """Run ``cases``, ``workers`` children at a time; yield each :class:`Outcome` as it ends.

    Damaged files are written under ``folder`` (a new temporary folder when
    None), one folder per case, removed after judging unless ``keep``.
    """
    prepare()
    pending = list(cases)[::-1]
    own = folder is None
    root = Path(tempfile.mkdtemp(prefix="integrity-fuzz-")) if own else Path(folder)
    root.mkdir(parents=True, exist_ok=True)
    running: dict[int, _Running] = {}
    try:
        while pending or running:
            while pending and len(running) < workers:
                case = pending.pop()
                work = Path(tempfile.mkdtemp(prefix="case-", dir=root))
                sys.stdout.flush()
                sys.stderr.flush()
                pid = os.fork()
                if pid == 0:
                    _child(case, work, memory_limit, time_limit)
                running[pid] = _Running(case, pid, work, time.monotonic())
            finished = _reap(running, time_limit)
            for child, wait_status in finished:
                outcome = _outcome(child, wait_status)
                if not keep:
                    shutil.rmtree(child.folder, ignore_errors=True)
                yield outcome
    finally:
        for child in running.values():
            _kill(child.pid)
        if own and not keep:
            shutil.rmtree(root, ignore_errors=True)


def _reap(running: dict[int, _Running], time_limit: float) -> list[tuple[_Running, int]]:
    """Wait until at least one child ends (killing those over the limit); the ended ones."""
    while True:
        ended = []
        for pid, child in list(running.items()):
            done, wait_status = os.waitpid(pid, os.WNOHANG)
            if done:
                ended.append((running.pop(pid), wait_status))
            elif not child.killed and time.monotonic() - child.started > time_limit:
                child.killed = True
                _kill(pid)
        if ended:
            return ended
        time.sleep(0.005)


def _kill(pid: int) -> None:
    try:
        os.kill(pid, signal.SIGKILL)
    except ProcessLookupError:
        pass


def _outcome(child: _Running, wait_status: int) -> Outcome:
    seconds = time.monotonic() - child.started
    stdout = _read(child.folder / "stdout")
    stderr = _read(child.folder / "stderr")
    damage = _damage(child.folder)
    expect = damage.get("expect")
    out = Outcome(child.case, "ok", "", expect=expect, damage=damage.get("description"), seconds=seconds)
    if child.killed:
        out.verdict, out.reason = "hang", f"no verdict within {seconds:.0f} s (killed)"
        target = child.folder / Path(child.case.fixture).name
        if target.exists():
            contained = _contained(target)
            if contained is not None:
                out.verdict, out.reason = "contained", f"{out.reason}; the command said: {contained}"
        return out
    if os.WIFSIGNALED(wait_status):
        name = signal.Signals(os.WTERMSIG(wait_status)).name
        out.verdict, out.reason = "memory", f"the child was killed by {name} ({_last_line(stderr)[:120]})"
        return out
    out.status = os.WEXITSTATUS(wait_status)
    out.verdict, out.reason = judge_output(expect, out.status, stdout, stderr)
    return out


def _contained(target: Path) -> str | None:
    """The command's reason when ``integrity check TARGET --timeout CONTAIN_TIMEOUT``, run as a
    real process with its worker pool, reports the file unreadable because it hung; else None."""
    import subprocess

    command = [sys.executable, "-m", "integrity", "check", str(target), "--format", "json", "--no-policy"]
    command += ["--no-cache", "--quiet", "--jobs", "1", "--timeout", f"{CONTAIN_TIMEOUT:g}", "--memory", CHECK_MEMORY]
    try:
        done = subprocess.run(command, capture_output=True, text=True, timeout=CONTAIN_TIMEOUT + 120)
    except subprocess.TimeoutExpired:
        return None
    report = _report(done.stdout)
    files = (report or {}).get("files") or [{}]
    error = files[0].get("error") or ""
    if done.returncode == 2 and files[0].get("status") == "unreadable" and "hung" in error:
        return error[:200]
    return None


def _read(path: Path) -> str:
    try:
        return path.read_bytes().decode("utf-8", errors="replace")
    except OSError:
        return ""


def _damage(folder: Path) -> dict:
    try:
        return json.loads((folder / "damage.json").read_text())
    except (OSError, ValueError):
        return {}


# --------------------------------------------------------------------------------------------
# Counting


@dataclass
class Summary:
    """Counts of verdicts over a run, and the outcomes that were not ``ok``."""

    cases: int = 0
    counts: Counter = field(default_factory=Counter)
    expected: Counter = field(default_factory=Counter)
    problems: list[Outcome] = field(default_factory=list)
    seconds: float = 0.0

    def add(self, outcome: Outcome) -> None:
        self.cases += 1
        self.counts[outcome.verdict] += 1
        self.expected[outcome.expect or "?"] += 1
        self.seconds += outcome.seconds
        if outcome.verdict in PROBLEMS:
            self.problems.append(outcome)

    def causes(self) -> list[tuple[tuple[str, str, str], tuple[int, str]]]:
        """Problems grouped by verdict, mutation and symptom (the reason with its numbers and paths
        blurred), most frequent first, each with its count and one case."""
        groups: dict[tuple[str, str, str], list[str]] = {}
        for outcome in self.problems:
            symptom = re.sub(r"/\S+/", ".../", outcome.reason.split("; this is a bug")[0])
            symptom = re.sub(r"\d+", "N", symptom.removeprefix("error: internal error "))[:90]
            groups.setdefault((outcome.verdict, outcome.case.mutation, symptom), []).append(outcome.case.name)
        ranked = sorted(groups.items(), key=lambda item: (PROBLEMS.index(item[0][0]), -len(item[1]), item[0]))
        return [(key, (len(cases), cases[0])) for key, cases in ranked]

    def table(self) -> str:
        """The counts as a plain-text table, then one line per problem."""
        rows = [("cases", self.cases), (LABELS["contained"], self.counts["contained"])]
        rows += [(LABELS[name], self.counts[name]) for name in PROBLEMS]
        width = max(len(name) for name, _ in rows)
        lines = [f"{name:<{width}}  {count:>7,}" for name, count in rows]
        kinds = ", ".join(f"{self.expected[k]:,} {k}" for k in (FAIL, EITHER, PASS))
        lines.append(f"(mutations that must fail / may pass / must pass: {kinds})")
        causes = self.causes()
        if causes:
            lines.append("distinct causes (count, verdict, mutation, symptom, one case):")
            lines.extend(f"{n:>7,}  {v:<11} {m:<17} {symptom}  e.g. {case}" for (v, m, symptom), (n, case) in causes)
            lines.append("every case that was not ok:")
        for outcome in sorted(self.problems, key=lambda o: (o.verdict, o.case.mutation, o.case.fixture)):
            lines.append(f"{outcome.verdict:<12} {outcome.case.name}  {outcome.damage or ''}: {outcome.reason}")
        return "\n".join(lines)


def fuzz(
    cases: Iterable[Case],
    *,
    workers: int = 2,
    time_limit: float = TIME_LIMIT,
    memory_limit: int = MEMORY_LIMIT,
    progress: Callable[[Outcome, Summary], None] | None = None,
) -> Summary:
    """Run ``cases`` and count the verdicts."""
    summary = Summary()
    for outcome in run_cases(cases, workers=workers, time_limit=time_limit, memory_limit=memory_limit):
        summary.add(outcome)
        if progress is not None:
            progress(outcome, summary)
    return summary
