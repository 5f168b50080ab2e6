"""10,000 damaged files through ``integrity check``: tracebacks, hangs, memory blow-ups, silent passes.

Every good fixture (``fixtures/good/``) is checked unchanged first (it must
pass), then random (fixture, mutation, seed) triples drawn from ``--seed``
(``integrity.testing.mutations`` lists the mutations; each is drawn as often
as every other). Each case runs ``integrity check FILE --format json`` in a
child process forked from this one, under a 3 GiB address-space limit, killed
after 30 s; two children run at a time (``--workers``). The table counts the
verdicts of ``integrity.testing.fuzz`` and lists every case that was not ok
with a one-line reason; the goal is 0 in every row.

Usage:
    python bench/fuzz.py [--cases 10000] [--seed 0] [--workers 2] [--quick]
    python bench/fuzz.py --case lih_sto3g.h5:flip_bytes:123 [--keep DIR]
(--quick: 500 cases; --case replays one case and prints what the child printed.)
"""

from __future__ import annotations

import argparse
import os
import signal
import sys
import time
from pathlib import Path

for _name in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_name, "1")  # two children share two cores; set before numpy loads

REPOSITORY = Path(__file__).resolve().parent.parent
GOOD = REPOSITORY / "fixtures" / "good"


def _interrupt(signum, frame):
    raise KeyboardInterrupt


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--cases", type=int, default=10_000)
    parser.add_argument("--seed", type=int, default=0)
    parser.add_argument("--workers", type=int, default=2)
    parser.add_argument("--time-limit", type=float, default=30.0)
    parser.add_argument("--quick", action="store_true", help="500 cases")
    parser.add_argument("--case", metavar="FIXTURE:MUTATION:SEED", help="replay one case")
    parser.add_argument("--keep", metavar="DIR", help="with --case: keep the damaged file in DIR")
    args = parser.parse_args()

    from integrity.testing.fuzz import Case, Summary, plan, run_cases

    if args.case:
        fixture, mutation, seed = args.case.rsplit(":", 2)
        case = Case(str(GOOD / fixture), mutation, int(seed))
        folder = Path(args.keep) if args.keep else None
        for outcome in run_cases([case], workers=1, time_limit=args.time_limit, folder=folder, keep=bool(folder)):
            print(f"{outcome.case.name}: {outcome.damage} (expect {outcome.expect})")
            print(f"verdict {outcome.verdict}: {outcome.reason} ({outcome.seconds:.1f} s)")
        if folder is not None:
            print(f"damaged file kept under {folder}")
        return 0

    count = 500 if args.quick else args.cases
    fixtures = sorted(p for p in GOOD.iterdir() if p.suffix in (".h5", ".json"))
    cases = plan(fixtures, count, args.seed)
    summary = Summary()
    started = time.monotonic()
    signal.signal(signal.SIGTERM, _interrupt)
    interrupted = False
    try:
        for outcome in run_cases(cases, workers=args.workers, time_limit=args.time_limit):
            summary.add(outcome)
            if summary.cases % 250 == 0 or outcome.verdict != "ok":
                note = "" if outcome.verdict == "ok" else f"  {outcome.verdict}: {outcome.case.name}: {outcome.reason}"
                print(f"[{summary.cases:>6}/{count}] {time.monotonic() - started:7.0f} s{note}", file=sys.stderr)
    except KeyboardInterrupt:
        interrupted = True  # the table of the cases judged so far
    elapsed = time.monotonic() - started
    print(f"integrity check over damaged fixtures: seed {args.seed}, {args.workers} children at a time")
    if interrupted:
        print(f"interrupted after {summary.cases:,} of {count:,} cases")
    print(summary.table())
    print(f"wall time {elapsed:.0f} s ({elapsed / max(1, summary.cases) * 1000:.0f} ms per case)")
    problems = sum(summary.counts[name] for name in summary.counts if name != "ok")
    return 1 if problems else 0


if __name__ == "__main__":
    sys.exit(main())
