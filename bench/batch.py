"""Many files: the cost of the batch machinery, parallel speed-up, the result cache, a Dask cluster, flat memory.

The delivery: 500 small synthetic Hamiltonians (``integrity.testing``), CAS(4,4),
CAS(5,5) and CAS(6,6) at half filling, alternating HDF5 and JSON, each with a
full-CI reference computed by pyscf (``fci.direct_spin1``), so every file runs
the structural, symmetry and positivity checks and a full-CI solve. Each figure
is a ratio of two runs measured here, one after the other:

1. per-file cost of ``integrity check --jobs 1`` (a worker process with a time
   limit, in input order) against calling ``integrity.check`` on each file in
   one process; the interpreter's start (``integrity check --list``) is given
   apart;
2. ``--jobs 2`` against ``--jobs 1`` (goal >= 1.7 on 2 cores);
3. a warm ``--cache`` against a cold run (goal >= 50), as command lines and as
   the batch run alone (in-process, without the interpreter's start);
4. a Dask ``LocalCluster`` (two worker processes, one thread each, TCP on
   loopback) against ``--jobs 2`` (reported; a cluster is for scale, not for
   one machine);
5. 1,000 and then 10,000 tiny files (CAS(2,2) JSON) with ``--jobs 2``: the peak
   resident memory of the run's main process and of its largest worker, which
   stay flat when the file count grows tenfold.

Usage: python bench/batch.py [--quick] [--out bench/out] [--skip-cluster]
(--quick: 60 files and 1,000 / 2,000 tiny ones.)
"""

from __future__ import annotations

import argparse
import json
import os
import shutil
import subprocess
import sys
import time
from pathlib import Path

FOLDER_VERSION = "1"  # bump when the generated delivery changes


def build_delivery(folder: Path, count: int) -> list[Path]:
    """``count`` files, reused when the folder already holds this version."""
    marker = folder / "VERSION"
    if marker.exists() and marker.read_text() == f"{FOLDER_VERSION} {count}":
        return sorted(p for p in folder.iterdir() if p.suffix in (".h5", ".json"))
    shutil.rmtree(folder, ignore_errors=True)
    folder.mkdir(parents=True)
    from pyscf import fci

    from integrity.io import save
    from integrity.model.hamiltonian import Reference
    from integrity.testing import random_hamiltonian

    paths = []
    for index in range(count):
        n = 4 + index % 3
        ham = random_hamiltonian("restricted", n, seed=index, alpha=n // 2, beta=n // 2)
        energy, _ = fci.direct_spin1.kernel(
            ham.one_electron, ham.two_electron.array, n, (n // 2, n // 2), ecore=ham.core_energy, conv_tol=1e-12
        )
        ham = ham.replace(references=(Reference("fci", "fci", float(energy)),), title=f"scan point {index}")
        path = folder / f"point_{index:04d}{'.h5' if index % 2 == 0 else '.json'}"
        save(ham, path)
        paths.append(path)
    marker.write_text(f"{FOLDER_VERSION} {count}")
    return paths


def tiny_folder(folder: Path, count: int) -> None:
    """``count`` copies of one CAS(2,2) JSON file (distinct names, same bytes)."""
    if folder.exists() and len(list(folder.iterdir())) == count:
        return
    shutil.rmtree(folder, ignore_errors=True)
    folder.mkdir(parents=True)
    from integrity.io import save
    from integrity.testing import random_hamiltonian

    first = folder / "tiny_00000.json"
    save(random_hamiltonian("restricted", 2, seed=1), first)
    data = first.read_bytes()
    for index in range(1, count):
        (folder / f"tiny_{index:05d}.json").write_bytes(data)


def cli(*arguments, cwd=None) -> tuple[float, subprocess.CompletedProcess]:
    start = time.perf_counter()
    done = subprocess.run(
        [sys.executable, "-m", "integrity", *arguments], cwd=cwd, capture_output=True, text=True, check=False
    )
    return time.perf_counter() - start, done


def in_process_checks(paths) -> float:
    from integrity.checks import check

    start = time.perf_counter()
    for path in paths:
        check(path)
    return time.perf_counter() - start


def batch_alone(folder: Path, cache: Path) -> float:
    """The batch run (cache lookups included) inside this process, without the interpreter's start."""
    from integrity.batch import BatchRun, BatchSettings

    start = time.perf_counter()
    entries = list(BatchRun([folder], BatchSettings(jobs=1, cache=str(cache))))
    elapsed = time.perf_counter() - start
    if not entries:
        raise SystemExit("no files judged")
    return elapsed


PEAK_SCRIPT = """
import json, os, resource, sys
from integrity.batch import BatchRun, BatchSettings

def descendants():
    parents = {}
    for entry in os.listdir("/proc"):
        if entry.isdigit():
            try:
                with open(f"/proc/{entry}/stat") as handle:
                    parents[int(entry)] = int(handle.read().rsplit(")", 1)[1].split()[1])
            except OSError:
                pass
    found, frontier = [], [os.getpid()]
    while frontier:
        current = frontier.pop()
        children = [child for child, parent in parents.items() if parent == current]
        found += children
        frontier += children
    return found

def high_water(pid):
    try:
        with open(f"/proc/{pid}/status") as handle:
            return next(int(line.split()[1]) for line in handle if line.startswith("VmHWM"))
    except (OSError, StopIteration):
        return 0

worker_peak = 0
def sample(done, total, failures, path):
    global worker_peak
    if done % 250 == 0 or done == total:
        worker_peak = max([worker_peak, *(high_water(pid) for pid in descendants())])

count = 0
for entry in BatchRun([sys.argv[1]], BatchSettings(jobs=2), progress=sample):
    count += 1
print(json.dumps({"files": count, "main": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss, "worker": worker_peak}))
"""


def peak_memory(folder: Path) -> dict:
    """Peak resident memory (KiB) of a --jobs 2 run's main process and of its largest worker process
    (the fork server included), in a fresh process."""
    start = time.perf_counter()
    done = subprocess.run([sys.executable, "-c", PEAK_SCRIPT, str(folder)], capture_output=True, text=True, check=True)
    figures = json.loads(done.stdout.strip().splitlines()[-1])
    figures["seconds"] = time.perf_counter() - start
    return figures


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true")
    parser.add_argument("--out", default="bench/out")
    parser.add_argument("--skip-cluster", action="store_true")
    args = parser.parse_args()
    out = Path(args.out).resolve()
    count = 60 if args.quick else 500
    tiny_counts = (1000, 2000) if args.quick else (1000, 10000)

    print(f"machine: {os.cpu_count()} cores, load average {os.getloadavg()[0]:.1f} at the start")
    start = time.perf_counter()
    paths = build_delivery(out / f"delivery-{count}", count)
    folder = paths[0].parent
    print(f"delivery: {len(paths)} files in {folder} ({time.perf_counter() - start:.1f} s to make or find)")

    startup, _ = cli("check", "--list")
    alone = in_process_checks(paths)
    serial, done = cli("check", str(folder), "--jobs", "1", "--no-policy")
    if done.returncode != 0:
        raise SystemExit(f"the delivery did not pass:\n{done.stdout[-2000:]}{done.stderr[-2000:]}")
    per_file = (serial - startup - alone) / len(paths)
    batch_per_file = (serial - startup) / len(paths)
    print(
        f"1. serial: integrity.check in one process {alone / len(paths) * 1e3:.1f} ms per file; "
        f"`integrity check --jobs 1` {serial:.2f} s = start {startup:.2f} s + {batch_per_file * 1e3:.1f} "
        f"ms per file: the batch machinery adds {per_file * 1e3:.1f} ms per file"
    )

    parallel, _ = cli("check", str(folder), "--jobs", "2", "--no-policy")
    print(
        f"2. --jobs 2: {parallel:.2f} s against --jobs 1 {serial:.2f} s: speed-up {serial / parallel:.2f} "
        f"(without the start: {(serial - startup) / (parallel - startup):.2f}; goal >= 1.7)"
    )

    cache = out / "bench-cache.sqlite"
    for leftover in out.glob("bench-cache.sqlite*"):
        leftover.unlink()
    cold, _ = cli("check", str(folder), "--jobs", "2", "--cache", str(cache), "--no-policy")
    warm, done = cli("check", str(folder), "--jobs", "2", "--cache", str(cache), "--no-policy")
    cold_alone_cache = out / "bench-cache-alone.sqlite"
    for leftover in out.glob("bench-cache-alone.sqlite*"):
        leftover.unlink()
    cold_alone = batch_alone(folder, cold_alone_cache)
    warm_alone = batch_alone(folder, cold_alone_cache)
    print(
        f"3. cache: command line cold {cold:.2f} s, warm {warm:.2f} s, ratio {cold / warm:.1f} "
        f"(the start of {startup:.2f} s bounds it); batch run alone (--jobs 1) cold {cold_alone:.2f} s, "
        f"warm {warm_alone:.3f} s, ratio {cold_alone / warm_alone:.0f} (goal >= 50)"
    )

    if not args.skip_cluster:
        try:
            import distributed
        except ImportError:
            print("4. cluster: skipped (pip install 'integrity[cluster]')")
        else:
            with distributed.LocalCluster(
                n_workers=2, threads_per_worker=1, processes=True, host="127.0.0.1", dashboard_address=None
            ) as cluster:
                address = cluster.scheduler_address
                cli("check", str(paths[0]), "--scheduler", address, "--no-policy")  # workers import integrity
                remote, done = cli("check", str(folder), "--scheduler", address, "--no-policy")
            print(
                f"4. LocalCluster (2 workers): {remote:.2f} s against --jobs 2 {parallel:.2f} s: "
                f"ratio {remote / parallel:.2f} (exit status {done.returncode})"
            )

    rows = []
    for tiny in tiny_counts:
        tiny_path = out / f"tiny-{tiny}"
        tiny_folder(tiny_path, tiny)
        figures = peak_memory(tiny_path)
        rows.append((tiny, figures))
        print(
            f"5. {figures['files']} tiny files, --jobs 2: {figures['seconds']:.1f} s, peak resident memory "
            f"main {figures['main'] / 1024:.0f} MiB, largest worker {figures['worker'] / 1024:.0f} MiB"
        )
    (small, first), (large, last) = rows
    print(
        f"   {large // small}x the files: main process peak x{last['main'] / first['main']:.2f}, "
        f"worker peak x{last['worker'] / first['worker']:.2f}"
    )
    print(f"load average {os.getloadavg()[0]:.1f} at the end")


if __name__ == "__main__":
    main()
