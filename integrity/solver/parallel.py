"""Both cores for sigma: a pool of worker threads, each running single-threaded BLAS.

Sigma is cut into independent work units (column or row ranges of one
block) that write disjoint parts of the result. The units are handed out to
``workers()`` threads one at a time, so a thread that loses its core to
another process simply takes fewer units. NumPy releases the GIL inside the
gathers (``take``) and the matrix products, so the threads run in parallel.

While the units run, BLAS is held to one thread (threadpoolctl): a threaded
BLAS splits every product statically between its threads, which then wait
for the slowest one; on a machine where another process keeps a core busy,
that thread runs at half speed and so does every product. The native solve
holds BLAS to one thread throughout (``solve_arrays``): LAPACK's
eigensolver on the P-space matrix (400 x 400) took 3 s with two BLAS threads
on a loaded machine against 0.07 s with one. Outside a solve BLAS keeps its
own setting.

>>> run_units(lambda unit: None, range(3))
"""

from __future__ import annotations

import os
import threading
from collections.abc import Callable, Iterable
from concurrent.futures import ThreadPoolExecutor
from contextlib import contextmanager

__all__ = ["run_units", "single_threaded_blas", "workers"]

_lock = threading.Lock()
_pool: ThreadPoolExecutor | None = None
_controller = None
_DONE = object()


def workers() -> int:
    """Threads used by sigma: the cores this process may run on (``INTEGRITY_THREADS`` overrides).

    >>> workers() >= 1
    True
    """
    setting = os.environ.get("INTEGRITY_THREADS", "")
    if setting.isdigit() and int(setting) > 0:
        return int(setting)
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except AttributeError:  # pragma: no cover - platforms without affinity
        return max(1, os.cpu_count() or 1)


def _executor() -> ThreadPoolExecutor:
    global _pool
    with _lock:
        if _pool is None or _pool._max_workers != workers():
            _pool = ThreadPoolExecutor(max_workers=workers(), thread_name_prefix="integrity-sigma")
        return _pool


@contextmanager
def single_threaded_blas():
    """Hold every loaded BLAS to one thread inside the block."""
    global _controller
    from threadpoolctl import ThreadpoolController

    with _lock:
        if _controller is None:
            _controller = ThreadpoolController()
        controller = _controller
    with controller.limit(limits=1, user_api="blas"):
        yield


def run_units(work: Callable, units: Iterable) -> None:
    """``work(unit)`` for every unit, on the worker threads; exceptions propagate.

    With one worker (or one unit) the units run in the calling thread.
    """
    units = list(units)
    count = min(workers(), len(units))
    if count <= 1:
        for unit in units:
            work(unit)
        return
    queue = iter(units)
    taking = threading.Lock()

    def drain():
        while True:
            with taking:
                unit = next(queue, _DONE)
            if unit is _DONE:
                return
            work(unit)

    futures = [_executor().submit(drain) for _ in range(count)]
    errors = [future.exception() for future in futures]  # waits for every worker
    for error in errors:
        if error is not None:
            raise error
