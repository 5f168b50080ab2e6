"""Matrix products that keep small problems off the threaded BLAS.

A threaded BLAS wakes its worker threads for every call above its own size
threshold; on a busy machine that wake-up can cost milliseconds, far more than
a small product itself. Products below ``SMALL_PRODUCT`` multiply-adds are
therefore done by ``numpy.einsum`` (single-threaded C loops), larger ones by
``numpy.matmul``. The result is the same either way (up to rounding).

>>> a = np.arange(6.0).reshape(2, 3); b = np.ones((3, 2))
>>> matmul(a, b).tolist()
[[3.0, 3.0], [12.0, 12.0]]
"""

from __future__ import annotations

import numpy as np

__all__ = ["SMALL_PRODUCT", "matmul"]

SMALL_PRODUCT = 2**20


def matmul(a, b, out=None):
    """``a @ b`` for 1-D or 2-D operands; ``out`` as in :func:`numpy.matmul`."""
    a = np.asarray(a)
    b = np.asarray(b)
    rows = a.shape[0] if a.ndim == 2 else 1
    inner = a.shape[-1]
    cols = b.shape[-1] if b.ndim == 2 else 1
    if rows * inner * cols >= SMALL_PRODUCT:
        return np.matmul(a, b, out=out)
    spec = (
        ("ij" if a.ndim == 2 else "j")
        + ","
        + ("jk" if b.ndim == 2 else "j")
        + "->"
        + ("i" if a.ndim == 2 else "")
        + ("k" if b.ndim == 2 else "")
    )
    if out is None:
        return np.einsum(spec, a, b)
    return np.einsum(spec, a, b, out=out)
