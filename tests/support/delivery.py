"""Small deliveries of Hamiltonian files for the batch tests, and worker tasks that misbehave.

``delivery(folder, count)`` writes ``count`` small synthetic Hamiltonian files
(alternating HDF5 and JSON, 3 to 5 orbitals, with a fingerprint) and returns
their paths; ``damage(path)`` changes one two-electron element of a file so it
fails ``checksum`` and ``two_electron.symmetry``.

``misbehaving`` is a worker task that crashes the worker process (SIGSEGV)
for a file whose name contains ``crash``, sleeps for an hour for ``hang``,
and judges every other file as the real task does: the stand-in for a file
that crashes or hangs the HDF5 library. ``write_entries`` stores entries in a
result cache from another process.
"""

from __future__ import annotations

import json
import os
import signal
import time
from pathlib import Path

import h5py
import numpy as np

from integrity.batch.job import judge
from integrity.io import save
from integrity.testing import random_hamiltonian


def delivery(folder, count: int, prefix: str = "scan") -> list[str]:
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    paths = []
    for index in range(count):
        suffix = ".h5" if index % 2 == 0 else ".json"
        path = folder / f"{prefix}_{index:03d}{suffix}"
        save(random_hamiltonian("restricted", 3 + index % 3, seed=index), path)
        paths.append(str(path))
    return paths


def damage(path) -> None:
    """Change (01|00) alone by 1e-3, keeping the stored checksum."""
    path = Path(path)
    if path.suffix == ".json":
        document = json.loads(path.read_text())
        node = document["two_electron"]
        data = np.asarray(node["data"], dtype=float).reshape(node["shape"])
        data[0, 1, 0, 0] += 1e-3
        node["data"] = data.ravel().tolist()
        path.write_text(json.dumps(document))
    else:
        with h5py.File(path, "r+") as handle:
            handle["two_electron"][0, 1, 0, 0] += 1e-3


def misbehaving(job):
    name = os.path.basename(job.path)
    if "crash" in name:
        os.kill(os.getpid(), signal.SIGSEGV)
    if "hang" in name:
        time.sleep(3600)
    return judge(job)


def write_entries(path, names, barrier) -> None:
    """Store one entry per name in the cache at ``path``, starting when ``barrier`` lets every writer go."""
    from integrity.batch import ResultCache

    barrier.wait()
    with ResultCache(path, busy_seconds=60) as store:
        for name in names:
            store.put(f"sha256:{name}", "settings", name, {"report": {"path": name, "status": "pass"}})
        if store.stored != len(names) or not store.usable:
            raise SystemExit(1)
