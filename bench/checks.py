"""Speed and memory of the checks, as ratios measured in one run.

1. A dense real chemist array with n = 100 (800 MB) in memory: the time of the
   ``two_electron.symmetry`` check (as ``integrity check --select
   two_electron.symmetry`` runs it, with its finiteness pre-pass) against one
   ``numpy.sum`` over the same array, and the extra memory it allocates
   (tracemalloc sees NumPy's allocations).
2. A dense n = 120 HDF5 file (1.6 GB) checked by ``integrity check --memory
   512MiB`` in a fresh process: wall time and peak resident memory, against
   the file size.

Usage: python bench/checks.py [--quick] [--skip-hdf5] [--out bench/out]
(--quick uses n = 60 and n = 70.)
"""

from __future__ import annotations

import argparse
import subprocess
import sys
import time
import tracemalloc
from pathlib import Path

import numpy as np


def coulomb_like_pairs(n: int, points: int, seed: int) -> np.ndarray:
    """Pair matrix (pq|rs) = sum_xy rho_pq(x) K(x, y) rho_rs(y) of random real orbitals on a grid.

    rho_pq = phi_p phi_q and K is a Gaussian kernel (positive entries, positive
    definite), so like real Coulomb integrals the matrix is PSD, (pp|qq) >= 0
    and (pq|qp) >= 0.
    """
    rng = np.random.default_rng(seed)
    grid = np.linspace(0.0, 1.0, points)
    kernel = np.exp(-((grid[:, None] - grid[None, :]) ** 2) / 0.02) + 1e-9 * np.eye(points)
    factor = np.linalg.cholesky(kernel)
    orbitals = rng.standard_normal((n, points)) / np.sqrt(points)
    p, q = np.tril_indices(n)
    vectors = (orbitals[p] * orbitals[q]) @ factor
    pairs = vectors @ vectors.T
    return 0.5 * (pairs + pairs.T)


def symmetric_array(n: int, rank: int, seed: int = 7) -> np.ndarray:
    """A dense chemist array with exact 8-fold symmetry, Coulomb-like, pair-matrix rank ``rank``."""
    from integrity.model.indexing import pair_table

    pairs = coulomb_like_pairs(n, rank, seed)
    table = pair_table(n)
    out = np.empty((n, n, n, n))
    for p in range(n):
        out[p] = pairs[table[p]][:, table]
    return out


def hamiltonian_of(eri: np.ndarray):
    from integrity.model.hamiltonian import Electrons, Hamiltonian, Orbitals, TwoElectron

    n = eri.shape[0]
    return Hamiltonian(Orbitals(n, "restricted"), Electrons(1, 1), 0.0, np.eye(n), TwoElectron(eri, notation="chemist"))


def best_of(function, repeat=3):
    times = []
    for _ in range(repeat):
        start = time.perf_counter()
        function()
        times.append(time.perf_counter() - start)
    return min(times)


def in_memory(n: int) -> None:
    from integrity.checks import check

    eri = symmetric_array(n, rank=2 * n)
    ham = hamiltonian_of(eri)
    sum_time = best_of(lambda: np.sum(eri))
    tracemalloc.start()
    start = time.perf_counter()
    report = check(ham, select=["two_electron.symmetry"], fingerprint=False)
    first = time.perf_counter() - start
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    check_time = min(first, best_of(lambda: check(ham, select=["two_electron.symmetry"], fingerprint=False), repeat=2))
    result = report.results[0]
    print(f"in memory: dense real chemist n = {n}, {eri.nbytes / 1e6:.0f} MB")
    print(f"  numpy.sum                 {sum_time:8.3f} s")
    print(f"  two_electron.symmetry     {check_time:8.3f} s   ({result.status}, value {result.value:.2g})")
    print(f"  ratio check / sum         {check_time / sum_time:8.1f}   (goal <= 10)")
    print(
        f"  extra memory (peak)       {peak / 1e6:8.1f} MB = {100 * peak / eri.nbytes:.2f}% of the array (goal < 10%)"
    )


def write_hdf5(path: Path, n: int, rank: int, seed: int = 11) -> None:
    """A dense n^4 chemist file written slab by slab (never whole in memory)."""
    import h5py

    from integrity.model.fingerprint import fingerprint
    from integrity.model.indexing import pair_table

    pairs = coulomb_like_pairs(n, rank, seed)
    table = pair_table(n)
    h1 = np.diag(np.linspace(-2.0, 1.0, n))
    with h5py.File(path, "w") as out:
        out.attrs.update(
            {
                "format": "integrity.hamiltonian",
                "format_version": 1,
                "energy_unit": "hartree",
                "title": f"bench: dense n = {n}",
                "core_energy": 0.0,
            }
        )
        orbitals = out.create_group("orbitals")
        orbitals.attrs.update({"count": n, "basis": "restricted"})
        electrons = out.create_group("electrons")
        electrons.attrs.update({"alpha": 1, "beta": 1})
        out.create_dataset("one_electron", data=h1)
        dataset = out.create_dataset("two_electron", shape=(n,) * 4, dtype="f8")
        dataset.attrs.update({"notation": "chemist", "storage": "dense"})
        for p in range(n):
            dataset[p] = pairs[table[p]][:, table]
    from integrity.io import open_document
    from integrity.io.content import hamiltonian_from_content

    with open_document(path, lazy=True) as doc:
        checksum = fingerprint(hamiltonian_from_content(doc.content))
    with h5py.File(path, "a") as out:
        out.attrs["checksum"] = checksum


def on_disk(n: int, folder: Path, memory: str) -> None:
    folder.mkdir(parents=True, exist_ok=True)
    path = folder / f"dense_n{n}.h5"
    if not path.exists():
        start = time.perf_counter()
        write_hdf5(path, n, rank=2 * n)
        print(f"wrote {path} in {time.perf_counter() - start:.0f} s")
    size = path.stat().st_size
    baseline, _, _ = _child_peak([])
    start = time.perf_counter()
    peak, code, output = _child_peak(["check", str(path), "--memory", memory])
    elapsed = time.perf_counter() - start
    print(f"on disk: dense real chemist n = {n}, {size / 1e9:.2f} GB HDF5, --memory {memory}")
    print(f"  integrity check (all checks)   {elapsed:8.1f} s, exit status {code}")
    print(
        f"  peak resident memory           {peak / 2**20:8.0f} MiB; interpreter and libraries alone "
        f"{baseline / 2**20:.0f} MiB, so the checks added {(peak - baseline) / 2**20:.0f} MiB"
    )
    print("  " + output.strip().replace("\n", "\n  "))


CHILD = """
import sys, contextlib, io
import integrity.cli, integrity.checks, h5py, numpy
code = 0
if sys.argv[1:]:
    out = io.StringIO()
    with contextlib.redirect_stdout(out):
        try:
            integrity.cli.main(sys.argv[1:], prog_name="integrity")
        except SystemExit as stop:
            code = stop.code or 0
    sys.stderr.write(out.getvalue())
peak = [l for l in open("/proc/self/status") if l.startswith("VmHWM")][0].split()[1]
print(int(peak) * 1024, code)
"""


def _child_peak(arguments):
    """(peak resident bytes, exit code, output) of a fresh interpreter running the CLI.

    VmHWM is read by the child itself: it starts afresh at exec, so the parent's
    arrays are not counted.
    """
    run = subprocess.run([sys.executable, "-c", CHILD, *arguments], capture_output=True, text=True, check=True)
    peak, code = run.stdout.split()
    return int(peak), int(code), run.stderr


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="smaller arrays (n = 60 and 70)")
    parser.add_argument("--skip-hdf5", action="store_true", help="only the in-memory measurement")
    parser.add_argument("--out", type=Path, default=Path(__file__).parent / "out")
    parser.add_argument("--memory", default="512MiB")
    args = parser.parse_args(argv)
    in_memory(60 if args.quick else 100)
    if not args.skip_hdf5:
        on_disk(70 if args.quick else 120, args.out, args.memory)
    return 0


if __name__ == "__main__":
    sys.exit(main())
