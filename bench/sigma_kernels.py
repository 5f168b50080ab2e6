"""Compile time of the numba loops of blocked sigma (:mod:`integrity.solver.sigma_kernels`).

Times, in a fresh process each, importing numba, then the first blocked
sigma on a small problem (where the loops are compiled or loaded from
numba's cache) against the second call on the same problem (already
compiled): the difference is the cost of first use, on top of the import. ``--cold`` first deletes this checkout's
numba cache files of the module, so the first call compiles.

    python bench/sigma_kernels.py            # warm cache (after any earlier run)
    python bench/sigma_kernels.py --cold     # empty cache: full compilation

``--solves`` times whole N2 / cc-pVDZ CAS(n,n) ground-state solves (the
problems of ``bench/fci.py``, each in a fresh process by its ``run``) with
the compiled loops, with the numpy path (``INTEGRITY_SIGMA_KERNEL=numpy``)
and, with irreps, pyscf's ``direct_spin1_symm`` in the same rounds; the
rounds alternate, and the table gives the minimum of each over the rounds
and the load average at the start of every round::

    python bench/sigma_kernels.py --solves --sizes 12 14 --plain 12 --rounds 3
"""

from __future__ import annotations

import argparse
import json
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def worker() -> None:
    start = time.perf_counter()
    import numpy as np

    sys.path.insert(0, str(ROOT))
    from integrity.solver.irrep_blocks import block_layout
    from integrity.solver.sigma_blocked import build_blocked, sigma_blocked
    from integrity.testing.arrays import random_restricted

    imported = time.perf_counter()
    import numba

    numba_imported = time.perf_counter()
    h, g = random_restricted(8, np.random.default_rng(0))
    layout = block_layout(8, 4, 4, [0, 1, 2, 3, 0, 1, 2, 3], 0)
    op = build_blocked(h, h, g, g, g, layout, compiled=True)
    c = np.random.default_rng(1).standard_normal(layout.size)
    times = []
    for _ in range(2):
        begun = time.perf_counter()
        sigma_blocked(op, c)
        times.append(time.perf_counter() - begun)
    print(
        json.dumps(
            {
                "numba": numba.__version__,
                "import_s": imported - start,
                "numba_import_s": numba_imported - imported,
                "first_s": times[0],
                "second_s": times[1],
                "first_use_s": times[0] - times[1],
            }
        )
    )


def _native(kernel: str, path: Path, symmetric: bool) -> dict:
    import fci

    os.environ["INTEGRITY_SIGMA_KERNEL"] = kernel
    try:
        return fci.run("native", path, symmetric)
    finally:
        del os.environ["INTEGRITY_SIGMA_KERNEL"]


def solves(sizes, plain, rounds: int) -> None:
    sys.path.insert(0, str(ROOT / "bench"))
    import fci

    cases = [(n, True) for n in sizes] + [(n, False) for n in plain]
    best: dict = {}
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        fci.build_integrals(folder, sorted(set(sizes) | set(plain)), ["n2"])
        for index in range(rounds):
            print(f"round {index + 1}: load average {os.getloadavg()[0]:.2f} on {os.cpu_count()} cores", flush=True)
            for n, symmetric in cases:
                path = folder / f"n2_cas{n}.npz"
                label = f"CAS({n},{n}) {'irreps' if symmetric else 'plain'}"
                for name in ("numba", "numpy", "pyscf") if symmetric else ("numba", "numpy"):
                    result = fci.run("pyscf", path, True) if name == "pyscf" else _native(name, path, symmetric)
                    key = (n, symmetric, name)
                    print(f"  {label} {name}: {result['time']:.2f} s", flush=True)
                    if key not in best or result["time"] < best[key]["time"]:
                        best[key] = result
    print(f"minimum of {rounds}; load average at end {os.getloadavg()[0]:.2f}")
    print(f"{'problem':<20} {'numba s':>8} {'numpy s':>8} {'speedup':>8} {'pyscf s':>8} {'numba/pyscf':>11} {'dE':>9}")
    for n, symmetric in cases:
        fast, slow = best[(n, symmetric, "numba")], best[(n, symmetric, "numpy")]
        theirs = best.get((n, symmetric, "pyscf"))
        label = f"CAS({n},{n}) {'irreps' if symmetric else 'plain'}"
        row = f"{label:<20} {fast['time']:8.2f} {slow['time']:8.2f} {slow['time'] / fast['time']:8.2f}"
        if theirs:
            ratio, delta = fast["time"] / theirs["time"], fast["energy"] - theirs["energy"]
            row += f" {theirs['time']:8.2f} {ratio:11.2f} {delta:9.1e}"
        print(row, flush=True)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--cold", action="store_true", help="delete the numba cache of the module first")
    parser.add_argument("--solves", action="store_true", help="time whole solves instead (see the module docstring)")
    parser.add_argument("--sizes", nargs="+", type=int, default=[12, 14], help="CAS(n,n) solved with irreps")
    parser.add_argument("--plain", nargs="*", type=int, default=[12], help="CAS(n,n) solved without irreps")
    parser.add_argument("--rounds", type=int, default=3)
    parser.add_argument("--worker", action="store_true", help=argparse.SUPPRESS)
    args = parser.parse_args()
    if args.worker:
        worker()
        return
    if args.solves:
        solves(args.sizes, args.plain, args.rounds)
        return
    if args.cold:
        for path in (ROOT / "integrity" / "solver" / "__pycache__").glob("sigma_kernels.*.nb[ic]"):
            path.unlink()
    out = subprocess.run([sys.executable, __file__, "--worker"], check=True, capture_output=True, text=True)
    print(out.stdout.strip())


if __name__ == "__main__":
    main()
