"""Judge files on an existing Dask distributed cluster (``integrity check --scheduler ADDRESS``).

The client (this process) sends one task per file; the workers open the
files themselves, so they must see them at the same absolute path (a shared
file system). A worker that cannot see a file says so, naming itself, and the
file is reported unreadable.

Dask reruns the task of a worker that dies (up to the scheduler's
``distributed.scheduler.allowed-failures``, 3 by default), so a killed worker
loses no file, and each file's outcome is taken once, from the task's one
result. A file that kills every worker it runs on (a crash in the HDF5
library, or a hang stopped by the time limit) ends as unreadable once Dask
gives up on it. The time limit is a watchdog in the worker process
(:func:`faulthandler.dump_traceback_later`, which needs no help from the stuck
thread) that ends the worker, whose nanny starts a new one; run workers with
one thread each (``--nthreads 1``) so a stopped file takes no other file's
task with it and each task keeps its own watchdog.

Dask is an optional extra: ``pip install 'integrity[cluster]'``.
"""

from __future__ import annotations

import faulthandler
import os
import uuid
from collections.abc import Callable

from integrity.batch.job import Job, judge, unreadable
from integrity.errors import UnsupportedError

INSTALL_HINT = "--scheduler needs Dask's distributed package: pip install 'integrity[cluster]'"


def _distributed():
    try:
        import distributed
    except ImportError:
        raise UnsupportedError("--scheduler", INSTALL_HINT) from None
    return distributed


def on_worker(job: Job, timeout: float | None, task: Callable[[Job], dict] = judge) -> dict:
    """The task a Dask worker runs for one file."""
    if not os.path.exists(job.location):
        return unreadable(
            job,
            f"the Dask worker {_worker_name()} cannot see {job.location}; the workers read the files "
            "themselves, from a file system shared with this machine at the same path",
        )
    if timeout is not None:
        faulthandler.dump_traceback_later(timeout, exit=True)
    try:
        return task(job)
    finally:
        if timeout is not None:
            faulthandler.cancel_dump_traceback_later()


def _worker_name() -> str:
    try:
        from distributed import get_worker

        return get_worker().address
    except (ImportError, ValueError):
        return f"process {os.getpid()}"


class DaskCluster:
    """An executor that sends each job to the Dask scheduler at ``address``."""

    def __init__(self, address: str, timeout: float | None, task: Callable[[Job], dict] = judge, client=None):
        distributed = _distributed()
        self.timeout = timeout
        self.task = task
        self.run_id = uuid.uuid4().hex[:12]
        self._own_client = client is None
        try:
            self.client = client or distributed.Client(address, set_as_default=False, timeout="30s")
        except OSError as err:
            raise UnsupportedError("--scheduler", f"cannot reach the Dask scheduler at {address} ({err})") from None
        self.workers = max(1, len(self.client.scheduler_info().get("workers", {})))
        self.completed = distributed.as_completed(loop=self.client.loop, with_results=False)
        self.running: dict[str, tuple] = {}

    def submit(self, job: Job) -> None:
        future = self.client.submit(
            on_worker, job, self.timeout, self.task, key=f"integrity-{self.run_id}-{job.index}", pure=False
        )
        self.running[future.key] = (future, job)
        self.completed.add(future)

    def wait(self) -> list[tuple[int, dict]]:
        first = next(self.completed)
        finished = []
        for future in [first, *self.completed.next_batch(block=False)]:
            _, job = self.running.pop(future.key)
            finished.append((job.index, self._outcome(future, job)))
        return finished

    def _outcome(self, future, job: Job) -> dict:
        distributed = _distributed()
        try:
            return future.result()
        except distributed.KilledWorker:
            what = (
                "the HDF5 library crashed or hung reading it"
                if job.path.lower().endswith((".h5", ".hdf5"))
                else "reading or checking it crashed or hung"
            )
            limit = f"a crash, or the limit of {self.timeout:g} s per file" if self.timeout is not None else "a crash"
            return unreadable(job, f"{what}: every Dask worker that took it died ({limit})")
        except Exception as err:
            return unreadable(job, f"the Dask task failed ({type(err).__name__}: {err})")

    def close(self, cancel: bool = False) -> None:
        if cancel and self.running:
            self.client.cancel([future for future, _ in self.running.values()], force=True)
        self.running.clear()
        if self._own_client:
            self.client.close()
