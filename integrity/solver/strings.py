"""Occupation strings: enumeration, addressing and single fermion operators.

A *string* is an integer whose bit ``p`` is set when orbital ``p`` is occupied
(``string >> p & 1``). A string stands for the ordered product of creation
operators with ascending orbital index acting on the vacuum::

    |S> = a†_{p0} a†_{p1} ... a†_{p(k-1)} |0>,   p0 < p1 < ... < p(k-1)

so moving ``a†_p`` or ``a_p`` to its place passes every occupied orbital with a
smaller index, and the sign is ``(-1) ** popcount(S & ((1 << p) - 1))``.

All strings of ``k`` electrons in ``n`` orbitals are listed in ascending
integer value (colexicographic order of the occupied sets). The index of a
string in that list is its combinatorial (lexical graph) address::

    address(S) = sum(comb(p_i, i + 1) for i, p_i in enumerate(sorted occupied))

>>> strings(4, 2).tolist()
[3, 5, 6, 9, 10, 12]
>>> address(strings(4, 2), 4, 2).tolist()
[0, 1, 2, 3, 4, 5]
>>> annihilate(0b1011, 1)
(9, -1)
>>> create(0b1011, 2)
(15, 1)
>>> create(0b1011, 0)
(11, 0)
"""

from __future__ import annotations

from math import comb

import numpy as np

from integrity.errors import FieldError

__all__ = [
    "MAX_ORBITALS",
    "address",
    "annihilate",
    "annihilate_many",
    "binomial_table",
    "create",
    "create_many",
    "occupation_matrix",
    "popcount",
    "strings",
]

MAX_ORBITALS = 62
"""Largest orbital count a string may span (strings are held in int64)."""


def _require_space(n: int, k: int) -> None:
    if not 0 <= n <= MAX_ORBITALS:
        raise FieldError("orbitals", f"need 0 <= n <= {MAX_ORBITALS} orbitals, got {n}")
    if not 0 <= k <= n:
        raise FieldError("electrons", f"need 0 <= k <= n = {n} electrons, got {k}")


def popcount(x):
    """Number of set bits of an int or of every element of an int64 array.

    >>> popcount(0b10110)
    3
    >>> popcount(np.array([0, 7, 8])).tolist()
    [0, 3, 1]
    """
    if isinstance(x, (int, np.integer)):
        return int(x).bit_count()
    return np.bitwise_count(np.asarray(x, dtype=np.int64)).astype(np.int64)


def strings(n: int, k: int) -> np.ndarray:
    """All strings of ``k`` electrons in ``n`` orbitals, ascending, as int64.

    ``len(strings(n, k)) == comb(n, k)``; ``strings(n, 0)`` is ``[0]``, the vacuum.

    >>> strings(3, 1).tolist()
    [1, 2, 4]
    >>> strings(5, 0).tolist(), strings(2, 2).tolist()
    ([0], [3])
    """
    _require_space(n, k)
    # by_count[j] holds the strings of j electrons in the orbitals seen so far,
    # ascending; adding orbital p appends the strings that occupy it, which are
    # all larger than those that do not.
    by_count = [np.zeros(1, dtype=np.int64)] + [np.zeros(0, dtype=np.int64)] * k
    for p in range(n):
        bit = np.int64(1) << np.int64(p)
        for j in range(min(k, p + 1), 0, -1):
            by_count[j] = np.concatenate([by_count[j], by_count[j - 1] | bit])
    return by_count[k]


def binomial_table(n: int) -> np.ndarray:
    """``table[p, j] = comb(p, j)`` for ``0 <= p, j <= n`` as int64.

    >>> binomial_table(4)[4].tolist()
    [1, 4, 6, 4, 1]
    """
    table = np.zeros((n + 1, n + 2), dtype=np.int64)
    for p in range(n + 1):
        for j in range(p + 1):
            table[p, j] = comb(p, j)
    return table[:, : n + 1]


def address(strs, n: int, k: int) -> np.ndarray:
    """Index of each string in ``strings(n, k)`` (vectorised, no search).

    Every element of ``strs`` must hold exactly ``k`` set bits below bit ``n``.

    >>> address(np.array([12, 3]), 4, 2).tolist()
    [5, 0]
    """
    _require_space(n, k)
    strs = np.asarray(strs, dtype=np.int64)
    binom = binomial_table(n)
    index = np.zeros(strs.shape, dtype=np.int64)
    below = np.zeros(strs.shape, dtype=np.int64)
    for p in range(n):
        occupied = (strs >> p) & 1
        index += occupied * binom[p, np.minimum(below + 1, n)]
        below += occupied
    return index


def occupation_matrix(strs, n: int) -> np.ndarray:
    """``occ[i, p] = 1.0`` when orbital ``p`` is occupied in ``strs[i]``, else 0.0.

    >>> occupation_matrix(np.array([5]), 3).tolist()
    [[1.0, 0.0, 1.0]]
    """
    strs = np.asarray(strs, dtype=np.int64)
    return ((strs[:, None] >> np.arange(n, dtype=np.int64)) & 1).astype(np.float64)


def _sign_below(strs, p):
    """(-1) ** (number of occupied orbitals with index < p), elementwise."""
    mask = (np.int64(1) << np.asarray(p, dtype=np.int64)) - 1
    return 1 - 2 * (popcount(np.asarray(strs, dtype=np.int64) & mask) & 1)


def annihilate(string: int, p: int) -> tuple[int, int]:
    """``a_p |string> = sign |new>``; returns ``(new, sign)``, sign 0 if p is empty.

    >>> annihilate(0b110, 2)
    (2, -1)
    >>> annihilate(0b110, 0)
    (6, 0)
    """
    string, p = int(string), int(p)
    if not string >> p & 1:
        return string, 0
    sign = -1 if (string & ((1 << p) - 1)).bit_count() % 2 else 1
    return string ^ (1 << p), sign


def create(string: int, p: int) -> tuple[int, int]:
    """``a†_p |string> = sign |new>``; returns ``(new, sign)``, sign 0 if p is full.

    >>> create(0b101, 1)
    (7, -1)
    """
    string, p = int(string), int(p)
    if string >> p & 1:
        return string, 0
    sign = -1 if (string & ((1 << p) - 1)).bit_count() % 2 else 1
    return string | (1 << p), sign


def annihilate_many(strs, p):
    """Vectorised :func:`annihilate`: ``(new, sign)`` int64 arrays, sign 0 where empty.

    >>> new, sign = annihilate_many(np.array([3, 4]), 0)
    >>> new.tolist(), sign.tolist()
    ([2, 4], [1, 0])
    """
    strs = np.asarray(strs, dtype=np.int64)
    bit = np.int64(1) << np.asarray(p, dtype=np.int64)
    present = (strs & bit) != 0
    sign = np.where(present, _sign_below(strs, p), 0)
    return np.where(present, strs ^ bit, strs), sign.astype(np.int64)


def create_many(strs, p):
    """Vectorised :func:`create`: ``(new, sign)`` int64 arrays, sign 0 where full.

    >>> new, sign = create_many(np.array([1, 2]), 1)
    >>> new.tolist(), sign.tolist()
    ([3, 2], [-1, 0])
    """
    strs = np.asarray(strs, dtype=np.int64)
    bit = np.int64(1) << np.asarray(p, dtype=np.int64)
    absent = (strs & bit) == 0
    sign = np.where(absent, _sign_below(strs, p), 0)
    return np.where(absent, strs | bit, strs), sign.astype(np.int64)
