"""Run the jobs of a batch: in this process, in local worker processes, or on a Dask cluster.

Every executor has the same two calls: ``submit(job)`` and ``wait()``, which
blocks until at least one submitted job is done and returns the finished
``(index, outcome)`` pairs in any order; ``close(cancel=)`` ends it.
:class:`BatchRun` drives one: it passes over the files the policy excludes,
answers the files the cache knows, submits the others (a bounded number at a
time, so memory stays flat over any number of files), stores new verdicts in
the cache, and yields every file's entry in input order as soon as it and
all files before it are done.

:class:`LocalProcesses` reads every file in a worker process with a time
limit: a file that crashes the HDF5 library (or hangs it) costs one worker,
which is replaced, and the file is reported unreadable with the reason; the
batch goes on.
"""

from __future__ import annotations

import concurrent.futures
import multiprocessing
import os
import signal
from collections import deque
from collections.abc import Callable, Iterator
from dataclasses import replace
from typing import Any

from integrity.batch.cache import ResultCache, settings_digest
from integrity.batch.job import Job, judge, outcome_entry, renamed, settings_of, unreadable
from integrity.batch.settings import BatchSettings
from integrity.batch.status import Show, StatusChannel
from integrity.checks.report import FileReport, PassedOver
from integrity.errors import IntegrityError
from integrity.io import find_files
from integrity.io.digest import file_digest

#: jobs kept submitted per worker; more hides the latency of handing out work, fewer keeps memory flat
QUEUE_PER_WORKER = 4
#: outcomes finished ahead of the first unfinished file, at most (bounds the reordering buffer)
REORDER_WINDOW = 256


class InProcess:
    """Judge each job in this process, one after another (no isolation: for the library and tests)."""

    workers = 1

    def __init__(self, task: Callable[[Job], dict] = judge):
        self.task = task
        self.queue: deque[Job] = deque()

    def submit(self, job: Job) -> None:
        self.queue.append(job)

    def wait(self) -> list[tuple[int, dict]]:
        job = self.queue.popleft()
        return [(job.index, self.task(job))]

    def close(self, cancel: bool = False) -> None:
        self.queue.clear()


def _worker_start() -> None:
    """In each worker: Ctrl-C is the parent's to handle (it stops the workers)."""
    signal.signal(signal.SIGINT, signal.SIG_IGN)


class LocalProcesses:
    """Judge jobs in ``workers`` processes on this machine, each job within ``timeout`` seconds.

    Workers are forked from a server process that has imported integrity
    (the ``forkserver`` start method), so a replaced worker starts at once and
    no worker inherits the parent's threads. A worker that dies (a crash in a
    native library) or overruns the limit is replaced, and its file gets an
    unreadable outcome saying which.
    """

    def __init__(self, workers: int, timeout: float | None, task: Callable[[Job], dict] = judge):
        import pebble

        self.workers = workers
        self.timeout = timeout
        self.task = task
        context = multiprocessing.get_context("forkserver")
        context.set_forkserver_preload(["integrity.batch.preload"])
        with _threads_per_worker(workers):
            self.pool = pebble.ProcessPool(max_workers=workers, context=context, initializer=_worker_start)
            self._start_server(context)
        self.running: dict[concurrent.futures.Future, Job] = {}

    @staticmethod
    def _start_server(context) -> None:
        from multiprocessing import forkserver

        if context.get_start_method() == "forkserver":
            forkserver.ensure_running()

    def submit(self, job: Job) -> None:
        future = self.pool.schedule(self.task, args=(job,), timeout=self.timeout)
        self.running[future] = job

    def wait(self) -> list[tuple[int, dict]]:
        done, _ = concurrent.futures.wait(list(self.running), return_when=concurrent.futures.FIRST_COMPLETED)
        finished = []
        for future in done:
            job = self.running.pop(future)
            finished.append((job.index, self._outcome(future, job)))
        return finished

    def _outcome(self, future, job: Job) -> dict:
        import pebble

        try:
            return future.result()
        except concurrent.futures.TimeoutError:
            return unreadable(job, hung_reason(job.path, self.timeout))
        except pebble.ProcessExpired as err:
            return unreadable(job, crashed_reason(job.path, err.exitcode))
        except Exception as err:  # a job that could not be handed over or answered
            return unreadable(job, f"the worker process failed ({type(err).__name__}: {err})")

    def close(self, cancel: bool = False) -> None:
        if cancel:
            for future in self.running:
                future.cancel()
            self.pool.stop()
        else:
            self.pool.close()
        self.pool.join()
        self.running.clear()


class _threads_per_worker:
    """Give worker processes an equal share of the cores for their numerical libraries
    (OpenMP and BLAS read these variables when they start), unless the user set them."""

    NAMES = ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS")

    def __init__(self, workers: int):
        from integrity.batch.settings import available_cores

        self.share = str(max(1, available_cores() // max(1, workers)))
        self.saved: dict[str, str | None] = {}

    def __enter__(self):
        for name in self.NAMES:
            self.saved[name] = os.environ.get(name)
            os.environ.setdefault(name, self.share)

    def __exit__(self, *exc):
        for name, value in self.saved.items():
            if value is None:
                os.environ.pop(name, None)
            else:
                os.environ[name] = value


def _is_hdf5(path: str) -> bool:
    return path.lower().endswith((".h5", ".hdf5"))


def hung_reason(path: str, timeout: float | None) -> str:
    """Why a file that overran the time limit has no verdict."""
    what = "the HDF5 library hung reading it" if _is_hdf5(path) else "reading or checking it hung"
    return (
        f"{what}: no verdict within the limit of {timeout:g} s per file "
        "(--timeout; a genuine file this slow needs a higher one)"
    )


def crashed_reason(path: str, exitcode: int | None) -> str:
    """Why a file whose worker died has no verdict."""
    if exitcode is not None and exitcode < 0:
        how = f"killed by {signal.Signals(-exitcode).name}"
    else:
        how = f"exit status {exitcode}"
    if exitcode == -signal.SIGKILL:
        how += ", perhaps by the system for lack of memory"
    what = "the HDF5 library crashed reading it" if _is_hdf5(path) else "the reader crashed on it"
    return f"{what} (the worker process died: {how})"


def make_executor(settings: BatchSettings, files: int, task: Callable[[Job], dict] = judge):
    """The executor the settings ask for, for ``files`` files to judge."""
    if settings.scheduler is not None:
        from integrity.batch.cluster import DaskCluster

        return DaskCluster(settings.scheduler, settings.timeout, task=task)
    return LocalProcesses(max(1, min(settings.jobs, files)), settings.timeout, task=task)


Entry = FileReport | PassedOver


class BatchRun:
    """Judge the files named or found under ``paths`` with ``settings``; iterate for the entries.

    ``executor`` is built by :func:`make_executor` unless given (a given one is
    not closed); ``warn`` receives one line per cache problem;
    ``progress(done, total, failures, path)`` is called as each file is done;
    ``status(path, check_id, update)`` as a check starts in a local worker
    (``update`` None) and at every iteration of a full-CI solve in it.
    After an interruption, :meth:`finished_early` gives the entries done but
    not yet yielded.
    """

    def __init__(
        self,
        paths,
        settings: BatchSettings,
        *,
        executor=None,
        task: Callable[[Job], dict] = judge,
        warn: Callable[[str], None] = lambda line: None,
        progress: Callable[[int, int, int, str], None] | None = None,
        status: Show | None = None,
    ):
        self.settings = settings
        self.files = find_files(paths)
        self.warn = warn
        self.progress = progress
        self.status = status
        self.task = task
        self.executor = executor
        self.cache_hits = 0
        self._started = None
        self._buffer: dict[int, Entry] = {}
        self._done = 0
        self._failures = 0

    @property
    def total(self) -> int:
        return len(self.files)

    def worker_options(self):
        """The options each worker judges with: on this machine, a 1/jobs share of the memory."""
        options = self.settings.options
        if self.settings.scheduler is not None:
            return options
        return replace(options, memory=max(1, options.memory // max(1, self.settings.jobs)))

    def __iter__(self) -> Iterator[Entry]:
        settings = self.settings
        cache = ResultCache(settings.cache, warn=self.warn) if settings.cache else None
        options, cwd = self.worker_options(), os.getcwd()
        key = settings_digest(settings_of(options, settings.foreign))
        channel = StatusChannel(self.status) if self.status and settings.scheduler is None else None
        jobs: list[Job] = []
        for index, path in enumerate(self.files):
            reason = settings.files.passed_over(path)
            if reason is None:
                status = None if channel is None else channel.reporter(path)
                jobs.append(Job(index, path, cwd, options, settings.foreign, digest=cache is not None, status=status))
            else:
                self._finish(index, PassedOver(path, reason))
        self._started = None
        try:
            yield from self._drive(jobs, cache, key)
        except BaseException:
            self._close(cancel=True)
            raise
        finally:
            self._close()
            if channel is not None:
                channel.close()
            if cache is not None:
                self.cache_hits = cache.hits
                cache.close()

    def _executor_for(self, remaining: int):
        """The executor, started at the first file the cache does not answer."""
        if self.executor is not None:
            return self.executor
        if self._started is None:
            self._started = make_executor(self.settings, remaining, task=self.task)
        return self._started

    def _close(self, cancel: bool = False) -> None:
        started, self._started = self._started, None
        if started is not None:
            started.close(cancel=cancel)

    def _drive(self, jobs: list[Job], cache, key: str) -> Iterator[Entry]:
        """Submit, wait, store and yield in input order; cache lookups interleave with judging."""
        pending = deque(jobs)
        submitted: dict[int, Job] = {}
        executor = None
        next_out = 0
        while True:
            while next_out in self._buffer:
                yield self._buffer.pop(next_out)
                next_out += 1
            if next_out >= len(self.files):
                return
            queue_length = QUEUE_PER_WORKER * getattr(executor, "workers", 1)
            while pending and len(submitted) < queue_length and pending[0].index < next_out + REORDER_WINDOW:
                job = pending.popleft()
                stored = self._lookup(cache, job, key) if cache is not None else None
                if stored is not None:
                    self._finish(job.index, stored)
                    continue
                executor = self._executor_for(len(pending) + 1)
                queue_length = QUEUE_PER_WORKER * executor.workers
                executor.submit(job)
                submitted[job.index] = job
            if not submitted:
                continue  # answered from the cache: yield, then look further
            for index, outcome in executor.wait():
                job = submitted.pop(index)
                digest = outcome.get("digest")
                if cache is not None and digest is not None and not outcome.get("transient"):
                    cache.put(digest, key, job.path, _storable(outcome))
                self._finish(index, outcome_entry(outcome))

    def _lookup(self, cache: ResultCache, job: Job, key: str) -> Entry | None:
        if not cache.usable:
            return None
        try:
            digest = file_digest(job.location)
        except IntegrityError:
            return None  # judged, and reported unreadable there
        found = cache.get(digest, key, job.path)
        if found is None:
            return None
        outcome = found["outcome"]
        if "report" in outcome:
            outcome = {"report": renamed(outcome["report"], found["stored_path"], job.path)}
        else:
            outcome = {"passed_over": dict(outcome["passed_over"], path=job.path)}
        return outcome_entry(outcome)

    def _finish(self, index: int, entry: Entry) -> None:
        self._buffer[index] = entry
        self._done += 1
        if isinstance(entry, FileReport) and entry.status != "pass":
            self._failures += 1
        if self.progress is not None:
            self.progress(self._done, len(self.files), self._failures, entry.path)

    def finished_early(self) -> list[Entry]:
        """Entries done but not yielded (after an interruption), in input order."""
        return [self._buffer[i] for i in sorted(self._buffer)]


def _storable(outcome: dict[str, Any]) -> dict[str, Any]:
    return {key: value for key, value in outcome.items() if key in ("report", "passed_over")}
