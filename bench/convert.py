"""Conversion speed and memory against one ``numpy.copy`` of the same array.

Measures, on a dense real chemist array with n orbitals (n = 100: 800 MB):

* chemist -> physicist (``convert(ham, notation="physicist")``): a transposed copy;
* dense -> unique (``convert(ham, storage="unique")``): the bit-exact symmetry
  test, then the gather into the 1/8-size array;
* with ``--noisy``, dense -> unique of an array whose symmetry is broken at
  the 1e-14 level, so the symmetry is also measured in values (two passes).

Each is timed (best of ``--repeat``) and divided by the best time of
``numpy.copy``; the goal is a ratio of at most 5. The peak memory allocated
during each conversion (tracemalloc, which sees NumPy's allocations) is given
in MB and in copies of the array; the goal is at most one extra copy (the
input plus at most one more). Timing and memory are measured in separate runs;
the copy is timed before and after the conversions and its best time is used,
so that no case profits alone from memory the allocator already holds.

    python bench/convert.py            # n = 100
    python bench/convert.py --quick    # n = 40, a smoke run
"""

from __future__ import annotations

import argparse
import gc
import time
import tracemalloc

import numpy as np

from integrity.convert import convert
from integrity.model.hamiltonian import Electrons, Hamiltonian, Orbitals, TwoElectron
from integrity.model.indexing import n_pairs, unpack_pairs

GOAL_RATIO = 5.0
#: the input plus at most one more copy (the output of a transposed copy is that copy);
#: 1% allows for bookkeeping
GOAL_EXTRA_COPIES = 1.01


def symmetric_dense(n: int, rank: int = 8, seed: int = 0) -> np.ndarray:
    """A dense chemist array with exact 8-fold symmetry, from a low-rank pair matrix."""
    rng = np.random.default_rng(seed)
    low = rng.standard_normal((n_pairs(n), rank))
    return unpack_pairs(low @ low.T, n)


def hamiltonian_of(dense: np.ndarray) -> Hamiltonian:
    n = dense.shape[0]
    return Hamiltonian(
        Orbitals(n, "restricted"),
        Electrons(1, 1),
        0.0,
        np.eye(n),
        TwoElectron(dense, notation="chemist"),
    )


def best_time(action, repeat: int) -> float:
    best = float("inf")
    for _ in range(repeat):
        gc.collect()
        start = time.perf_counter()
        result = action()
        best = min(best, time.perf_counter() - start)
        del result
    return best


def peak_bytes(action) -> int:
    gc.collect()
    tracemalloc.start()
    try:
        before = tracemalloc.get_traced_memory()[0]
        result = action()
        peak = tracemalloc.get_traced_memory()[1] - before
    finally:
        tracemalloc.stop()
    del result
    return peak


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="n = 40 instead of 100")
    parser.add_argument("--n", type=int, default=None, help="number of orbitals (overrides --quick)")
    parser.add_argument("--repeat", type=int, default=3, help="timed runs per case (best is kept)")
    parser.add_argument("--noisy", action="store_true", help="also pack an array whose symmetry is broken at 1e-14")
    args = parser.parse_args()
    n = args.n or (40 if args.quick else 100)
    dense = symmetric_dense(n)
    ham = hamiltonian_of(dense)
    mb = dense.nbytes / 2**20
    print(f"dense real chemist array: n = {n}, {mb:.0f} MB")
    copy_time = best_time(lambda: np.copy(dense), args.repeat)
    cases = [
        ("chemist -> physicist", ham, {"notation": "physicist"}),
        ("dense -> unique", ham, {"storage": "unique"}),
    ]
    if args.noisy:
        noisy = dense.copy()
        noisy += 1e-14 * np.random.default_rng(1).standard_normal(noisy.shape)
        cases.append(("dense -> unique (noisy)", hamiltonian_of(noisy), {"storage": "unique"}))
    timed = [
        (
            label,
            best_time(lambda s=source, r=request: convert(s, **r), args.repeat),
            peak_bytes(lambda s=source, r=request: convert(s, **r)),
        )
        for label, source, request in cases
    ]
    copy_time = min(copy_time, best_time(lambda: np.copy(dense), args.repeat))
    print(f"  numpy.copy                   {copy_time:8.3f} s   (1.00x)")
    failed = False
    for label, seconds, extra in timed:
        ratio = seconds / copy_time
        copies = extra / dense.nbytes
        verdict = "ok" if ratio <= GOAL_RATIO and copies <= GOAL_EXTRA_COPIES else "OVER GOAL"
        failed |= verdict != "ok"
        print(
            f"  {label:<28} {seconds:8.3f} s   ({ratio:.2f}x copy)   peak extra "
            f"{extra / 2**20:8.1f} MB = {copies:.2f} copies   {verdict}"
        )
    print(
        f"goal: at most {GOAL_RATIO:g}x one copy, at most one extra copy of memory: "
        + ("met" if not failed else "NOT met")
    )


if __name__ == "__main__":
    main()
