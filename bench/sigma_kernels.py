"""Compile time of the numba loops of blocked sigma (:mod:`integrity.solver.sigma_kernels`).

Times, in a fresh process each, importing numba, then the first blocked
sigma on a small problem (where the loops are compiled or loaded from
numba's cache) against the second call on the same problem (already
compiled): the difference is the cost of first use, on top of the import. ``--cold`` first deletes this checkout's
numba cache files of the module, so the first call compiles.

    python bench/sigma_kernels.py            # warm cache (after any earlier run)
    python bench/sigma_kernels.py --cold     # empty cache: full compilation
"""

from __future__ import annotations

import argparse
import json
import subprocess
import sys
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


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--cold", action="store_true", help="delete the numba cache of the module first")
    parser.add_argument("--worker", action="store_true", help=argparse.SUPPRESS)
    args = parser.parse_args()
    if args.worker:
        worker()
        return
    if args.cold:
        for path in (ROOT / "integrity" / "solver" / "__pycache__").glob("sigma_kernels.*.nb[ic]"):
            path.unlink()
    out = subprocess.run([sys.executable, __file__, "--worker"], check=True, capture_output=True, text=True)
    print(out.stdout.strip())


if __name__ == "__main__":
    main()
