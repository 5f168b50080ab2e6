"""Kill a real ``integrity`` process that writes a file, at a random moment, and judge what it left.

A :class:`Scenario` is one command line of ``convert``, ``wrap`` or ``build`` writing one target
from its inputs (:func:`prepare` makes the inputs in a folder). :func:`kill_once` starts it as a
subprocess (``python -m integrity``), sends SIGKILL after a given delay (callers draw it from a
seeded generator within the command's measured run time or its write phase, :func:`measure`), and
returns a
:class:`KillOutcome`:

* the target is ``absent``, ``previous`` (the file a round run with ``--overwrite`` set out to
  replace, unchanged), ``complete`` (it loads, and its content's fingerprint equals both its stored
  checksum and the one an uninterrupted run writes) or ``half`` (anything else: a half-written file
  under the target's name, which must never happen);
* whether an input's SHA-256 changed (must never happen);
* the temporary (``*.part``) files the kill left, and those still there after the same command
  is run again to completion with ``--overwrite`` (must be none: that run removes the stale
  temporary files of dead writers, :mod:`integrity.io.atomic`).

The verdict never depends on when the kill lands: whatever the moment, these must hold.
``tests/io/test_interruptions.py`` runs a few kills; ``bench/interrupt.py`` runs many and prints a table.
"""

from __future__ import annotations

import hashlib
import os
import signal
import subprocess
import sys
import time
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from integrity.io.atomic import PART_SUFFIX

COMMANDS = ("convert", "wrap", "build")
#: a limit that only stops a broken run; never part of a verdict
RUN_LIMIT = 600.0


@dataclass(frozen=True)
class Scenario:
    """``integrity COMMAND ARGUMENTS...`` writing ``target`` from ``inputs`` (``arguments`` include the target)."""

    command: str
    arguments: tuple[str, ...]
    target: Path
    inputs: tuple[Path, ...]

    def argv(self, *, overwrite: bool = False) -> list[str]:
        return [self.command, *self.arguments, *(["--overwrite"] if overwrite else [])]


@dataclass
class KillOutcome:
    """What one kill left behind (see the module's docstring)."""

    command: str
    delay: float
    killed: bool  # False: the process ended before the signal
    target: str  # "absent", "previous", "complete" or "half"
    problem: str  # why a target is "half"; empty otherwise
    input_changed: bool
    parts_after_kill: list[str] = field(default_factory=list)
    parts_after_next_run: list[str] = field(default_factory=list)
    next_run_status: int = 0
    next_run_error: str = ""


def sha256(path) -> str:
    digest = hashlib.sha256()
    with open(path, "rb") as handle:
        for block in iter(lambda: handle.read(1 << 20), b""):
            digest.update(block)
    return digest.hexdigest()


def prepare(command: str, folder, *, size: int = 24) -> Scenario:
    """Inputs for ``command`` in ``folder`` and the scenario writing ``folder/out.*``.

    ``convert``: a random restricted Hamiltonian with ``size`` orbitals (HDF5) into physicist JSON
    (text is slow to write, so many kills land in the write). ``wrap``: its arrays in an ``.npz``
    into HDF5. ``build``: water in STO-3G with pyscf (``size`` unused).
    """
    from integrity.io import save
    from integrity.testing.hamiltonians import random_hamiltonian

    folder = Path(folder)
    if command == "convert":
        source = folder / "in.h5"
        save(random_hamiltonian("restricted", size, seed=size), source)
        target = folder / "out.json"
        return Scenario(command, (str(source), str(target), "--notation", "physicist"), target, (source,))
    if command == "wrap":
        ham = random_hamiltonian("restricted", size, seed=size + 1)
        source = folder / "arrays.npz"
        np.savez(source, one_electron=ham.one_electron, two_electron=ham.two_electron.array, core_energy=0.5)
        target = folder / "out.h5"
        arguments = (str(source), str(target), "--notation", "chemist", "--alpha", "1", "--beta", "1")
        return Scenario(command, (*arguments, "--basis", "restricted"), target, (source,))
    if command == "build":
        geometry = folder / "water.xyz"
        geometry.write_text("3\nwater\nO 0.0 0.0 0.117\nH 0.0 0.757 -0.467\nH 0.0 -0.757 -0.467\n")
        target = folder / "out.h5"
        arguments = (str(target), "--geometry", str(geometry), "--basis-set", "sto-3g", "--max-fci-determinants", "1")
        return Scenario(command, arguments, target, (geometry,))
    raise ValueError(f"no scenario for {command!r}; expected one of {', '.join(COMMANDS)}")


def previous_file(scenario: Scenario) -> Path:
    """A valid file of another content, in the target's container, for rounds that replace a file."""
    from integrity.io import save
    from integrity.testing.hamiltonians import random_hamiltonian

    path = scenario.target.with_name(f"previous{scenario.target.suffix}")
    if not path.exists():
        save(random_hamiltonian("restricted", 3, seed=7), path)
    return path


def _environment() -> dict[str, str]:
    env = dict(os.environ)
    env.setdefault("OMP_NUM_THREADS", "1")  # pyscf on a tiny molecule; no thread pool to spin
    return env


def start(argv: list[str]) -> subprocess.Popen:
    """``python -m integrity ARGV...`` as a subprocess (output captured)."""
    return subprocess.Popen(
        [sys.executable, "-m", "integrity", *argv],
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
        env=_environment(),
    )


def run(argv: list[str]) -> subprocess.CompletedProcess:
    """Run ``integrity ARGV...`` to completion."""
    process = start(argv)
    out, err = process.communicate(timeout=RUN_LIMIT)
    return subprocess.CompletedProcess(process.args, process.returncode, out, err)


@dataclass(frozen=True)
class Timing:
    """An uncut run: ``elapsed`` seconds in all, writing its temporary file from ``writing_from`` on
    (seconds after the start, as last seen by polling; ``elapsed`` when never seen)."""

    elapsed: float
    writing_from: float
    checksum: str

    def draw_delay(self, rng, *, in_write: bool = False) -> float:
        """A kill delay: uniform over the run, or over its write phase when ``in_write``."""
        low = self.writing_from if in_write else 0.0
        return float(rng.uniform(low, self.elapsed))


def measure(scenario: Scenario, *, poll: float = 0.005) -> Timing:
    """Run the scenario uncut: its wall time and write phase (to draw kill delays from), and the checksum
    it writes. The target is removed afterwards. Timing only spreads the kills; no verdict uses it."""
    scenario.target.unlink(missing_ok=True)
    folder = scenario.target.parent
    begin = time.perf_counter()
    process = start(scenario.argv())
    writing_from, seen = None, False
    while process.poll() is None:
        present = bool(temporaries(folder))
        if present and not seen:
            writing_from = time.perf_counter() - begin  # the start of the latest stretch with a temporary file
        seen = present
        time.sleep(poll)
    elapsed = time.perf_counter() - begin
    _, err = process.communicate(timeout=RUN_LIMIT)
    if process.returncode != 0:
        raise RuntimeError(f"the uninterrupted {scenario.command} failed: {err.strip()}")
    checksum = stored_checksum(scenario.target)
    scenario.target.unlink()
    return Timing(elapsed, elapsed if writing_from is None else writing_from, checksum)


def stored_checksum(path) -> str:
    """The file's stored checksum, after checking that it loads and that its content's fingerprint matches it."""
    from integrity.io import load
    from integrity.model.fingerprint import fingerprint

    ham = load(path)
    computed = fingerprint(ham)
    if ham.checksum != computed:
        raise ValueError(f"stored checksum {ham.checksum} but the content's fingerprint is {computed}")
    return computed


def temporaries(folder) -> list[str]:
    """Names of the ``*.part`` files in ``folder``."""
    return sorted(p.name for p in Path(folder).iterdir() if p.name.endswith(PART_SUFFIX))


def judge_target(target: Path, expected_checksum: str | None, previous_digest: str | None) -> tuple[str, str]:
    """``("absent" | "previous" | "complete" | "half", problem)`` for what is under the target's name.

    ``expected_checksum`` None: a file that loads and matches its own checksum is complete (for
    ``build``, whose numbers come from an SCF and need not repeat to the last bit).
    """
    if not target.exists() and not target.is_symlink():
        return "absent", ""
    if previous_digest is not None and sha256(target) == previous_digest:
        return "previous", ""  # the file the round set out to replace, untouched
    try:
        checksum = stored_checksum(target)
    except Exception as err:  # any failure to read it is what we look for
        return "half", f"{type(err).__name__}: {err}"
    if expected_checksum is not None and checksum != expected_checksum:
        return "half", f"checksum {checksum}, an uninterrupted run writes {expected_checksum}"
    return "complete", ""


def kill_once(
    scenario: Scenario, delay: float, expected_checksum: str | None, *, previous: Path | None = None
) -> KillOutcome:
    """Start the scenario, SIGKILL it after ``delay`` seconds, judge, run it again, judge the temporaries.

    With ``previous`` (a valid file of another content), the target starts as a copy of it and the
    command runs with ``--overwrite``: afterwards the target must be that file or the new one.
    The target is removed at the end, so rounds are independent.
    """
    folder = scenario.target.parent
    scenario.target.unlink(missing_ok=True)
    previous_digest = None
    if previous is not None:
        scenario.target.write_bytes(Path(previous).read_bytes())
        previous_digest = sha256(scenario.target)
    before = {path: sha256(path) for path in scenario.inputs}
    process = start(scenario.argv(overwrite=previous is not None))
    try:
        process.wait(timeout=delay)
        killed = False
    except subprocess.TimeoutExpired:
        process.send_signal(signal.SIGKILL)
        killed = True
    process.communicate(timeout=RUN_LIMIT)  # reaped: a dead writer's process id no longer exists
    killed = killed and process.returncode == -signal.SIGKILL
    state, problem = judge_target(scenario.target, expected_checksum, previous_digest)
    changed = any(sha256(path) != digest for path, digest in before.items())
    outcome = KillOutcome(scenario.command, delay, killed, state, problem, changed, temporaries(folder))
    again = run(scenario.argv(overwrite=True))
    outcome.next_run_status = again.returncode
    outcome.next_run_error = again.stderr.strip()
    outcome.parts_after_next_run = temporaries(folder)
    scenario.target.unlink(missing_ok=True)
    return outcome
