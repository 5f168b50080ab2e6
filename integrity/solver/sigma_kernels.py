"""Compiled loops for the alpha-beta part of blocked sigma (numba), and the switch that picks them.

:mod:`sigma_blocked` has two interchangeable paths for its alpha-beta units:
the numpy path (``take``, an elementwise product and a batched ``matmul``) and
the compiled path, which runs the two gathers below as loops compiled by
numba. The products with the pair blocks stay numpy ``matmul`` calls on both
paths (one BLAS, held to one thread by the solve).

* :func:`gather_rows` is the beta gather with its sign in one pass: rows of
  ``[c_s.T | 0]`` picked by a table of rows and scaled by a table of signs.
* :func:`scatter_alpha` is the alpha gather with its sign reduction:
  ``sigma[Ia, i] += sum_e sign_e G[offset_e(i)]``. The numpy path gathers
  every term into a ``(rows, nent, width)`` array and reduces it with a
  matmul; here the terms are visited in the order in which they lie in
  ``G`` and added into a ``(rows, width)`` accumulator, so ``G`` is read
  once, in order, and only the small accumulator is written at random.

The functions are plain Python over numpy arrays (they run uncompiled too);
:func:`compiled_kernels` compiles them on first use with
``njit(cache=True, nogil=True)``: ``nogil`` lets the worker threads of
:mod:`parallel` run them side by side (no numba threads, so no second layer
of threads), ``cache`` keeps the machine code on disk for later processes.

numba is optional (the ``fast`` extra). ``INTEGRITY_SIGMA_KERNEL`` selects the
path: ``numpy`` forces the numpy path, ``numba`` requires the compiled one,
unset (or ``auto``) takes the compiled path when numba can be imported and
the vector has at least ``COMPILED_FROM`` determinants: a process pays about
0.2 s to import numba and 0.2-0.4 s to load the loops from the cache (about
1 s to compile them the first time), and some 100 MiB of memory, which a
small solve does not win back.

>>> import numpy as np
>>> out = np.zeros((1, 2, 3))
>>> gather_rows(np.arange(6.0).reshape(2, 3), np.array([[1, 0]]), np.array([[[2.0], [-1.0]]]), 0, 1, False, out)
>>> out.tolist()
[[[6.0, 8.0, 10.0], [-0.0, -1.0, -2.0]]]
"""

from __future__ import annotations

import importlib.util
import os
import threading
from types import SimpleNamespace

import numpy as np

__all__ = [
    "COMPILED_BYTES",
    "COMPILED_FROM",
    "ENVIRONMENT",
    "compiled_kernels",
    "gather_rows",
    "scatter_alpha",
    "use_compiled",
    "warm_up",
]

ENVIRONMENT = "INTEGRITY_SIGMA_KERNEL"
"""Environment variable choosing the alpha-beta path: ``numpy``, ``numba`` or ``auto`` (the default)."""

COMPILED_FROM = 500_000
"""Determinants from which ``auto`` takes the compiled path (N2 CAS(14,14) in Ag has 1.47 million)."""

COMPILED_BYTES = 128 * 2**20
"""Memory of numba and the loaded loops in a process (measured: 100-120 MiB), counted in the estimate."""

_CHOICES = ("auto", "numpy", "numba")
_lock = threading.Lock()
_compiled: SimpleNamespace | None = None


def use_compiled(determinants: int) -> bool:
    """Whether sigma over so many determinants takes the compiled path (``INTEGRITY_SIGMA_KERNEL``, numba).

    >>> import os
    >>> os.environ[ENVIRONMENT] = "numpy"
    >>> use_compiled(10**8)
    False
    >>> del os.environ[ENVIRONMENT]
    >>> use_compiled(10)
    False
    """
    setting = os.environ.get(ENVIRONMENT, "").strip().lower() or "auto"
    if setting not in _CHOICES:
        raise ValueError(f"{ENVIRONMENT} must be one of {', '.join(_CHOICES)}, got {setting!r}")
    if setting == "numpy":
        return False
    available = importlib.util.find_spec("numba") is not None
    if setting == "numba" and not available:
        raise ValueError(f"{ENVIRONMENT}=numba but numba is not installed (pip install 'integrity[fast]')")
    return available and (setting == "numba" or determinants >= COMPILED_FROM)


def compiled_kernels() -> SimpleNamespace:
    """:func:`gather_rows` and :func:`scatter_alpha` wrapped by numba (compiled at their first call)."""
    global _compiled
    with _lock:
        if _compiled is None:
            from numba import njit

            try:
                jit = njit(cache=True, nogil=True)
                _compiled = SimpleNamespace(gather_rows=jit(gather_rows), scatter_alpha=jit(scatter_alpha))
            except RuntimeError:  # numba finds no writable cache directory: compile in every process
                jit = njit(nogil=True)
                _compiled = SimpleNamespace(gather_rows=jit(gather_rows), scatter_alpha=jit(scatter_alpha))
        return _compiled


def warm_up(dtype) -> threading.Thread:
    """Import numba and load (or compile) the loops for ``dtype`` on a background thread.

    :func:`sigma_blocked.build_blocked` starts it before building its tables,
    so that numba's start-up overlaps the build. The arguments have the types
    of the real calls, so the first sigma finds its machine code ready; any
    failure is left for that first sigma to raise.
    """

    def run():
        try:
            kernels = compiled_kernels()
            index = np.zeros(1, dtype=np.int64)
            row, sign, out = index.reshape(1, 1), np.zeros((1, 1, 1)), np.zeros((1, 1, 1), dtype)
            kernels.gather_rows(np.zeros((1, 1), dtype), row, sign, 0, 1, True, out)
            one = np.zeros((1, 1), dtype)
            kernels.scatter_alpha(np.zeros(1, dtype), index, np.zeros(1), index, index, index, 1, one, one.copy(), 0)
        except Exception:  # the first sigma makes the same calls and raises
            pass

    thread = threading.Thread(target=run, name="integrity-kernels", daemon=True)
    thread.start()
    return thread


def gather_rows(source, row, sign, start, stop, by_column, out):
    """Signed rows of ``source`` for the columns ``start:stop`` of a gather table.

    ``row`` and ``sign`` (with a trailing axis of 1) are the tables of
    :func:`sigma_blocked._beta_gather`. With ``by_column`` (the plain table,
    ``(npair, nb)``) ``out[a, b - start] = sign[a, b] * source[row[a, b]]``
    for ``start <= b < stop``; without it (the compressed table, ``(nb, K)``)
    ``out[b - start, k] = sign[b, k] * source[row[b, k]]``.
    """
    width = source.shape[1]
    if by_column:
        for a in range(row.shape[0]):
            for b in range(start, stop):
                r = row[a, b]
                s = sign[a, b, 0]
                for j in range(width):
                    out[a, b - start, j] = s * source[r, j]
    else:
        for b in range(start, stop):
            for k in range(row.shape[1]):
                r = row[b, k]
                s = sign[b, k, 0]
                for j in range(width):
                    out[b - start, k, j] = s * source[r, j]


def scatter_alpha(g, row, sign, base, stride, column, width, accumulator, out, start):
    """``out[:, start:start + width] += A`` with ``A[row_e, i] = sum_e sign_e g[width base_e + column_e + i stride_e]``.

    The terms ``e`` are ``<Ia|E_pq|Ja>`` of one target block (``Ia = row_e``),
    sorted by ``(base, column)`` so that ``g`` is read in ascending order;
    ``accumulator`` is scratch of at least ``(rows, width)``.
    """
    rows = out.shape[0]
    for a in range(rows):
        for i in range(width):
            accumulator[a, i] = 0
    for e in range(row.shape[0]):
        a = row[e]
        s = sign[e]
        offset = width * base[e] + column[e]
        step = stride[e]
        for i in range(width):
            accumulator[a, i] += s * g[offset + i * step]
    for a in range(rows):
        for i in range(width):
            out[a, start + i] += accumulator[a, i]
