"""Excitation and ladder tables over occupation strings.

``E_pq = a†_p a_q`` (one spin species). The excitation table of the space of
``k`` electrons in ``n`` orbitals lists, for every *target* string ``I``, each
``(p, q)`` for which some string ``J`` of the space has ``<I|E_pq|J> != 0``::

    <I|E_pq|J> = table.sign[I, e]   with   p, q = table.p[I, e], table.q[I, e]
                                           J = table.source[I, e]

That is ``p`` occupied in ``I`` and ``q`` empty in ``I`` or ``q == p``. Every
row has the same length ``k + k * (n - k)`` (the ``k`` diagonal entries first),
so the table is a rectangular array ready for vectorised gathers:
``(E_pq c)[I] = sign * c[J]`` and ``sum_pq (E_pq X_pq)[I] = sum_e sign * X[pq_e, J_e]``.

``table.pair`` labels the operator: ``p * n + q`` in the plain table, or the
packed index ``P(p, q) = max(p, q) * (max(p, q) + 1) // 2 + min(p, q)`` of the
symmetric combination ``E_pq + E_qp`` (``E_pp`` when p == q) in a packed table.
For a target ``I`` at most one of ``E_pq`` and ``E_qp`` reaches it (only one of
p, q is occupied in I), so a packed pair still appears once per row.

>>> t = excitation_table(3, 1)
>>> t.p[0].tolist(), t.q[0].tolist(), t.source[0].tolist(), t.sign[0].tolist()
([0, 0, 0], [0, 1, 2], [0, 1, 2], [1, 1, 1])
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from integrity.errors import FieldError
from integrity.solver.strings import address, popcount, strings

__all__ = [
    "ExcitationTable",
    "LadderTable",
    "annihilation_table",
    "creation_table",
    "excitation_entries",
    "excitation_table",
    "packed_pair",
]


@dataclass(frozen=True)
class ExcitationTable:
    """Rectangular single-excitation table; see the module docstring."""

    n: int
    k: int
    packed: bool
    p: np.ndarray
    q: np.ndarray
    pair: np.ndarray
    source: np.ndarray
    sign: np.ndarray

    @property
    def npair(self) -> int:
        """Number of distinct pair labels: ``n*(n+1)//2`` packed, ``n*n`` plain."""
        return self.n * (self.n + 1) // 2 if self.packed else self.n * self.n


@dataclass(frozen=True)
class LadderTable:
    """``op_p |strings(n, k)[I]> = sign[I, p] |strings(n, k')[index[I, p]]>``.

    ``index`` is -1 and ``sign`` 0 where the operator gives zero.
    """

    n: int
    k: int
    k_result: int
    index: np.ndarray
    sign: np.ndarray


def packed_pair(p, q):
    """Packed index of the unordered pair: ``max*(max+1)//2 + min``.

    >>> packed_pair(2, 1), packed_pair(1, 2), packed_pair(0, 0)
    (4, 4, 0)
    >>> packed_pair(np.array([3]), np.array([1])).tolist()
    [7]
    """
    if isinstance(p, int) and isinstance(q, int):
        hi, lo = max(p, q), min(p, q)
        return hi * (hi + 1) // 2 + lo
    hi, lo = np.maximum(p, q), np.minimum(p, q)
    return hi * (hi + 1) // 2 + lo


def _positions(strs: np.ndarray, n: int, occupied: bool) -> np.ndarray:
    """Orbitals occupied (or empty) in each string, ascending, shape (len, count)."""
    bits = ((strs[:, None] >> np.arange(n, dtype=np.int64)) & 1).astype(bool)
    if not occupied:
        bits = ~bits
    count = int(bits[0].sum()) if len(strs) else 0
    return np.nonzero(bits)[1].reshape(len(strs), count).astype(np.int64)


def _excitation_sign(target, p, q):
    """<target|a†_p a_q|source> for source = target - p + q (vectorised)."""
    one = np.int64(1)
    without_p = target & ~(one << p)
    sign_p = 1 - 2 * (popcount(without_p & ((one << p) - 1)) & 1)
    source = without_p | (one << q)
    sign_q = 1 - 2 * (popcount(source & ((one << q) - 1)) & 1)
    return source, sign_p * sign_q


def excitation_table(n: int, k: int, packed: bool = False) -> ExcitationTable:
    """Single-excitation table of ``strings(n, k)`` (targets are rows).

    >>> t = excitation_table(4, 2)
    >>> t.sign.shape
    (6, 6)
    >>> int(t.p[4, 4]), int(t.q[4, 4]), int(t.source[4, 4]), int(t.sign[4, 4])
    (3, 0, 0, -1)
    """
    strs = strings(n, k)
    occ = _positions(strs, n, occupied=True)
    virt = _positions(strs, n, occupied=False)
    nstr = len(strs)
    p = np.concatenate([occ, np.repeat(occ, n - k, axis=1)], axis=1)
    q = np.concatenate([occ, np.tile(virt, (1, k))], axis=1)
    if nstr == 0 or p.shape[1] == 0:
        empty = np.zeros((nstr, 0), dtype=np.int64)
        return ExcitationTable(n, k, packed, empty, empty, empty, empty, empty.astype(np.int8))
    source_str, sign = _excitation_sign(strs[:, None], p, q)
    source = address(source_str, n, k)
    pair = packed_pair(p, q) if packed else p * n + q
    return ExcitationTable(n, k, packed, p, q, pair, source, sign.astype(np.int8))


def _ladder(n: int, k: int, k_result: int) -> LadderTable:
    if not 0 <= k_result <= n:
        raise FieldError("electrons", f"ladder from {k} to {k_result} electrons in {n} orbitals")
    strs = strings(n, k)
    one = np.int64(1)
    index = np.full((len(strs), n), -1, dtype=np.int64)
    sign = np.zeros((len(strs), n), dtype=np.int8)
    for orb in range(n):
        bit = one << np.int64(orb)
        present = (strs & bit) != 0
        wanted = present if k_result < k else ~present
        parity = popcount(strs[wanted] & (bit - 1)) & 1
        sign[wanted, orb] = 1 - 2 * parity
        index[wanted, orb] = address(strs[wanted] ^ bit, n, k_result)
    return LadderTable(n, k, k_result, index, sign)


def creation_table(n: int, k: int) -> LadderTable:
    """``a†_p`` from ``strings(n, k)`` into ``strings(n, k + 1)``.

    >>> t = creation_table(2, 1)
    >>> t.index.tolist(), t.sign.tolist()
    ([[-1, 0], [0, -1]], [[0, -1], [1, 0]])
    """
    return _ladder(n, k, k + 1)


def annihilation_table(n: int, k: int) -> LadderTable:
    """``a_p`` from ``strings(n, k)`` into ``strings(n, k - 1)``.

    >>> t = annihilation_table(2, 2)
    >>> t.index.tolist(), t.sign.tolist()
    ([[1, 0]], [[1, -1]])
    """
    return _ladder(n, k, k - 1)


def excitation_entries(targets, sources, n: int, *, chunk: int = 2**15):
    """Nonzero ``<T|E_pq|S>`` between two sets of strings of equal electron count.

    ``targets`` is any int64 array, ``sources`` a sorted one. Returns flat int64
    arrays ``(target_index, p, q, source_index, sign)`` holding every entry with
    ``<targets[t]|a†_p a_q|sources[s]> = sign != 0``, for all ``p, q < n``, sorted
    by target. Targets are processed ``chunk`` at a time to bound the scratch.

    >>> t, p, q, s, sign = excitation_entries(np.array([1]), np.array([1, 2]), 2)
    >>> t.tolist(), p.tolist(), q.tolist(), s.tolist(), sign.tolist()
    ([0, 0], [0, 0], [0, 1], [0, 1], [1, 1])
    """
    targets = np.asarray(targets, dtype=np.int64)
    sources = np.asarray(sources, dtype=np.int64)
    parts = [
        _entries(targets[start : start + chunk], sources, n, start)
        for start in range(0, len(targets) if len(sources) else 0, chunk)
    ]
    if not parts:
        empty = np.zeros(0, dtype=np.int64)
        return empty, empty, empty, empty, empty
    return tuple(np.concatenate(column) for column in zip(*parts, strict=True))


def _entries(targets, sources, n, offset):
    occ_bits = ((targets[:, None] >> np.arange(n, dtype=np.int64)) & 1).astype(bool)
    t_idx, p = np.nonzero(occ_bits)
    t_idx = np.repeat(t_idx, n)
    p = np.repeat(p, n).astype(np.int64)
    q = np.tile(np.arange(n, dtype=np.int64), len(p) // n)
    target_str = targets[t_idx]
    keep = (q == p) | (((target_str >> q) & 1) == 0)
    t_idx, p, q, target_str = t_idx[keep], p[keep], q[keep], target_str[keep]
    source_str, sign = _excitation_sign(target_str, p, q)
    s_idx = np.minimum(np.searchsorted(sources, source_str), len(sources) - 1)
    found = sources[s_idx] == source_str
    return (
        t_idx[found].astype(np.int64) + offset,
        p[found],
        q[found],
        s_idx[found].astype(np.int64),
        sign[found].astype(np.int64),
    )
