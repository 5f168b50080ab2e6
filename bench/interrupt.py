"""SIGKILL real ``convert``, ``wrap`` and ``build`` processes at random moments and count what they leave.

For each command (:mod:`integrity.testing.interruptions`): one uncut run measures its wall time,
when its temporary file appears (the write phase) and the checksum it writes; then each round starts
the command, kills it after a delay drawn uniformly (seeded) from the whole run in even rounds and
from the write phase in odd ones (most of a run is starting Python and computing), judges the target
and the input, and runs the command again to completion with ``--overwrite``. Rounds go on until
``--kills`` kills per command have landed (at most three times as many rounds). Every third round
starts with a valid file of another content under the target's name and runs with ``--overwrite``
(the target must then be that file or the new one, never absent). Printed per command and in total:

* kills: processes the signal reached (a process that ended before it is counted apart);
* target absent / previous (the file being replaced, unchanged) / complete (the new file) /
  half-written (goal 0): what is under the target's name;
* input changed (goal 0): an input's SHA-256 differs;
* part files left by the kill: the kill landed during a write (its temporary file is there);
* temporaries after the next run (goal 0): ``*.part`` files still there once the command ran again.

    python bench/interrupt.py                 # 20 kills per command (60 kills)
    python bench/interrupt.py --quick         # 3 kills per command
"""

from __future__ import annotations

import argparse
import tempfile
from pathlib import Path

import numpy as np

from integrity.testing.interruptions import COMMANDS, kill_once, measure, prepare, previous_file

COLUMNS = (
    ("kills", "kills"),
    ("ended first", "ended before the kill"),
    ("absent", "target absent"),
    ("previous", "the file an --overwrite round set out to replace, unchanged"),
    ("complete", "target complete (the new file)"),
    ("half", "target half-written (goal 0)"),
    ("input", "input changed (goal 0)"),
    ("part left", "part files left by the kill"),
    ("after next", "temporaries after the next run (goal 0)"),
    ("next failed", "next run failed (goal 0)"),
)


def run_command(command: str, rounds: int, size: int, rng: np.random.Generator) -> tuple[dict, list]:
    counts = dict.fromkeys((key for key, _ in COLUMNS), 0)
    problems = []
    with tempfile.TemporaryDirectory() as folder:
        scenario = prepare(command, Path(folder), size=size)
        timing = measure(scenario)
        expected = None if command == "build" else timing.checksum
        print(
            f"{command}: an uncut run takes {timing.elapsed:.2f} s, writing from {timing.writing_from:.2f} s; "
            f"{rounds} kills",
            flush=True,
        )
        index = 0
        while counts["kills"] < rounds and index < 3 * rounds:
            index += 1
            replacing = index % 3 == 2
            delay = timing.draw_delay(rng, in_write=index % 2 == 1)
            outcome = kill_once(scenario, delay, expected, previous=previous_file(scenario) if replacing else None)
            counts["kills" if outcome.killed else "ended first"] += 1
            if outcome.killed:
                counts[outcome.target] += 1
            elif outcome.target == "half":
                counts["half"] += 1
            counts["input"] += outcome.input_changed
            counts["part left"] += bool(outcome.parts_after_kill)
            counts["after next"] += len(outcome.parts_after_next_run)
            counts["next failed"] += outcome.next_run_status != 0
            if (
                outcome.target == "half"
                or (replacing and outcome.target == "absent")
                or outcome.input_changed
                or outcome.parts_after_next_run
                or outcome.next_run_status
            ):
                problems.append(outcome)
    return counts, problems


def table(rows: dict[str, dict]) -> str:
    headers = ["command", *(key for key, _ in COLUMNS)]
    lines = [headers] + [[name, *(str(counts[key]) for key, _ in COLUMNS)] for name, counts in rows.items()]
    widths = [max(len(line[i]) for line in lines) for i in range(len(headers))]
    return "\n".join("  ".join(cell.rjust(width) for cell, width in zip(line, widths, strict=True)) for line in lines)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--kills", type=int, default=20, help="kills per command (default 20)")
    parser.add_argument("--size", type=int, default=24, help="orbitals of the convert and wrap inputs (default 24)")
    parser.add_argument("--seed", type=int, default=2611)
    parser.add_argument("--quick", action="store_true", help="3 kills per command")
    args = parser.parse_args()
    rounds = 3 if args.quick else args.kills
    rng = np.random.default_rng(args.seed)
    rows, problems = {}, []
    for command in COMMANDS:
        rows[command], found = run_command(command, rounds, args.size, rng)
        problems += found
    rows["total"] = {key: sum(row[key] for row in rows.values()) for key, _ in COLUMNS}
    print()
    print(table(rows))
    print()
    for key, meaning in COLUMNS:
        print(f"  {key:>11}: {meaning}")
    for outcome in problems:
        print(f"PROBLEM {outcome}")
    print("all goals met" if not problems else f"{len(problems)} rounds missed a goal")


if __name__ == "__main__":
    main()
