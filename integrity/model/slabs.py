"""Read the two-electron array as dense chemist slabs, whatever its storage.

A slab is ``chem[p0:p1]``: all (pq|rs) with first index p0 <= p < p1, shape
(p1 - p0, n, n, n). Slabs let the fingerprint and the checks walk an array
that does not fit in memory (an open ``h5py.Dataset``) while holding one slab
at a time; for an in-memory dense chemist array a slab is a view, not a copy.

Unrestricted arrays are walked block by block, in the order [aa, ab, bb].
"""

from __future__ import annotations

import contextlib
import contextvars
from collections.abc import Iterator

import numpy as np

from integrity.model.indexing import chemist_to_physicist, pair_table, pairs_from_unique

DEFAULT_SLAB_BYTES = 64 * 2**20
_slab_bytes = contextvars.ContextVar("slab_bytes", default=DEFAULT_SLAB_BYTES)


@contextlib.contextmanager
def slab_budget(slab_bytes: int):
    """Within this block, slabs default to at most ``slab_bytes`` (a memory budget)."""
    token = _slab_bytes.set(max(1, int(slab_bytes)))
    try:
        yield
    finally:
        _slab_bytes.reset(token)


def current_slab_bytes() -> int:
    """The slab size in force (see :func:`slab_budget`)."""
    return _slab_bytes.get()


def slab_rows(n: int, itemsize: int, slab_bytes: int | None = None) -> int:
    """How many first-index rows of an n^4 array fit in ``slab_bytes`` (at least one)."""
    slab_bytes = _slab_bytes.get() if slab_bytes is None else slab_bytes
    return max(1, min(n, slab_bytes // max(1, n**3 * itemsize)))


def spin_blocks(two_electron, basis: str) -> list:
    """The stored array split into its spin blocks: [aa, ab, bb] or [whole]."""
    array = two_electron.array
    if basis == "unrestricted":
        return [_Block(array, b) for b in range(3)]
    return [array]


class _Block:
    """Lazy view of ``array[b]`` that slices without reading the other blocks."""

    def __init__(self, array, b):
        self.array, self.b = array, b
        self.shape = tuple(array.shape[1:])
        self.dtype = array.dtype

    def __getitem__(self, key):
        key = key if isinstance(key, tuple) else (key,)
        return self.array[(self.b, *key)]


def chemist_slabs(
    block,
    notation: str,
    storage: str,
    n: int,
    slab_bytes: int | None = None,
    antisymmetrized: bool = False,
) -> Iterator[tuple[int, np.ndarray]]:
    """Yield (p0, slab) covering one spin block as dense chemist ``chem[p0:p0+len]``.

    For an antisymmetrized array the slabs are of the stored physicist
    <pq||rs> array unchanged (the plain integrals cannot be recovered from it).
    Packed storage is read whole (it is a quarter or an eighth of dense).
    """
    itemsize = np.dtype(block.dtype).itemsize
    rows = slab_rows(n, itemsize, slab_bytes)
    if storage == "dense":
        for p0 in range(0, n, rows):
            raw = np.asarray(block[p0 : p0 + rows])
            if notation == "physicist" and not antisymmetrized:
                # chem[p, q, r, s] = phys[p, r, q, s]: the first index is shared
                raw = chemist_to_physicist(raw)
            yield p0, raw
        return
    packed = np.asarray(block[()])
    npair = n * (n + 1) // 2
    pairs = pairs_from_unique(packed, npair) if storage == "unique" else packed
    table = pair_table(n)
    for p0 in range(0, n, rows):
        rows_pq = table[p0 : p0 + rows]  # (rows, n) pair indices of (p, q)
        yield p0, pairs[rows_pq][:, :, table]


def chemist_pieces(
    block,
    notation: str,
    storage: str,
    n: int,
    slab_bytes: int | None = None,
    antisymmetrized: bool = False,
) -> Iterator[np.ndarray]:
    """Yield one spin block as dense chemist in C order, in pieces of at most ``slab_bytes``.

    Concatenated, the pieces are ``chem.ravel()``. For dense storage a piece is
    ``chem[p0:p1]`` or, when one first-index row exceeds the budget,
    ``chem[p, q0:q1]`` (for physicist arrays read as ``phys[p, :, q0:q1, :]``
    with its first two axes exchanged), so no read exceeds the budget while n^2
    values fit in it. Packed storage goes through :func:`chemist_slabs` (it is
    read whole: a quarter or an eighth of dense).
    """
    slab_bytes = _slab_bytes.get() if slab_bytes is None else slab_bytes
    itemsize = np.dtype(block.dtype).itemsize
    if storage != "dense" or n**3 * itemsize <= slab_bytes:
        for _, slab in chemist_slabs(block, notation, storage, n, slab_bytes, antisymmetrized):
            yield slab
        return
    width = max(1, min(n, slab_bytes // max(1, n * n * itemsize)))
    physicist = notation == "physicist" and not antisymmetrized
    for p in range(n):
        for q0 in range(0, n, width):
            q1 = min(n, q0 + width)
            if physicist:
                yield np.asarray(block[p, :, q0:q1, :]).transpose(1, 0, 2)
            else:
                yield np.asarray(block[p, q0:q1])


def dense_chemist(two_electron, basis: str, n: int) -> np.ndarray:
    """The whole two-electron array as dense chemist (n,n,n,n), or (3,n,n,n,n) unrestricted.

    For antisymmetrized files this is the stored <pq||rs> array. Returns a
    view when the stored array already is dense chemist in memory.
    """
    two = two_electron
    if two.storage == "dense" and isinstance(two.array, np.ndarray):
        if two.notation == "chemist" or two.antisymmetrized:
            return two.array
        return chemist_to_physicist(two.array)
    out = []
    for block in spin_blocks(two, basis):
        full = np.empty((n, n, n, n), dtype=block.dtype)
        for p0, slab in chemist_slabs(block, two.notation, two.storage, n, antisymmetrized=bool(two.antisymmetrized)):
            full[p0 : p0 + len(slab)] = slab
        out.append(full)
    return np.stack(out) if basis == "unrestricted" else out[0]


def chemist_row(block, notation: str, storage: str, n: int, p: int, q: int) -> np.ndarray:
    """``chem[p, q, :, :]`` of one spin block, reading only that row where the storage allows."""
    if storage == "dense":
        if notation == "physicist":
            return np.asarray(block[p, :, q, :])  # chem[p,q,r,s] = phys[p,r,q,s]
        return np.asarray(block[p, q])
    table = pair_table(n)
    index = int(table[p, q])
    if storage == "pairs":
        row = np.asarray(block[index])
    else:
        npair = n * (n + 1) // 2
        row = pairs_from_unique(np.asarray(block[()]), npair)[index]
    return row[table]


def chemist_column(block, notation: str, storage: str, n: int, r: int, s: int) -> np.ndarray:
    """``chem[:, :, r, s]`` of one spin block."""
    if storage == "dense":
        if notation == "physicist":
            return np.asarray(block[:, r, :, s])  # chem[p,q,r,s] = phys[p,r,q,s]
        return np.asarray(block[:, :, r, s])
    table = pair_table(n)
    index = int(table[r, s])
    if storage == "pairs":
        column = np.asarray(block[:, index])
    else:
        column = pairs_from_unique(np.asarray(block[()]), n * (n + 1) // 2)[:, index]
    return column[table]


def exchange_diagonal(block, notation: str, storage: str, n: int) -> np.ndarray:
    """``G[a, b] = chem[a, b, b, a]`` of one spin block (the exchange integrals (ab|ba))."""
    diagonal = np.empty((n, n), dtype=block.dtype)
    b_index = np.arange(n)
    for p0, slab in chemist_slabs(block, notation, storage, n):
        rows = np.arange(len(slab))
        diagonal[p0 : p0 + len(slab)] = slab[rows[:, None], b_index[None, :], b_index[None, :], (rows + p0)[:, None]]
    return diagonal
