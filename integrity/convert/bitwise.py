"""Bit-level helpers: native arrays, bit views and bit-for-bit comparison.

Conversions promise exactness, and "exact" here means the same bits, not
merely equal values: ``0.0 == -0.0`` is true, yet the two hash differently,
so a step that turned one into the other would change the fingerprint.

>>> import numpy as np
>>> same_bits(np.array([0.0, 1.0]), np.array([-0.0, 1.0]))
False
>>> same_bits(np.array([1.5 + 2j]), np.array([1.5 + 2j]))
True
"""

from __future__ import annotations

import numpy as np


def native(array) -> np.ndarray:
    """``array`` as an in-memory NumPy array in native byte order (a copy only when needed).

    Values are unchanged (float64 stays float64, complex128 stays complex128).

    >>> big = np.array([1.0, 2.0], dtype=">f8")
    >>> native(big).dtype.byteorder in ("=", "<"), native(big).tolist()
    (True, [1.0, 2.0])
    """
    array = np.asarray(array)
    if not array.dtype.isnative:
        array = array.astype(array.dtype.newbyteorder("="))
    return array


def bit_views(array: np.ndarray) -> tuple[np.ndarray, ...]:
    """Views of ``array`` as unsigned 64-bit integers: (bits,) if float64, (real, imag) if complex.

    Two float64 values are the same bits exactly when their views are equal,
    and ``a - b`` on these views is zero exactly then (it wraps, never warns).
    Works on strided views without copying.
    """
    if array.dtype.kind == "c":
        return (array.real.view(np.uint64), array.imag.view(np.uint64))
    return (array.view(np.uint64),)


def same_bits(a, b) -> bool:
    """True when ``a`` and ``b`` have the same shape, kind and bits, element by element.

    Compares slab by slab along the first axis, so it needs no full-size temporary.
    """
    a, b = native(a), native(b)
    if a.shape != b.shape or a.dtype != b.dtype:
        return False
    if a.ndim == 0:
        a, b = a.reshape(1), b.reshape(1)
    for i in range(a.shape[0]):
        for left, right in zip(bit_views(a[i : i + 1]), bit_views(b[i : i + 1]), strict=True):
            if not np.array_equal(left, right):
                return False
    return True
