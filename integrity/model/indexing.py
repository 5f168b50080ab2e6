"""Index conventions every other module relies on.

All indices are 0-based and all arrays C-ordered.

Pair index
    For p >= q the pair (p, q) has index ``p*(p+1)//2 + q``; there are
    ``n_pairs(n) = n*(n+1)//2`` pairs. The pair matrix of a real chemist array
    is ``pairs[pair(p,q), pair(r,s)] = (pq|rs)``.
Unique storage
    The lower triangle of the pair matrix, row by row: element (I, J), I >= J,
    sits at ``I*(I+1)//2 + J``, so its length is ``n_pairs(n_pairs(n))``.
Notation
    ``phys[p, q, r, s] = chem[p, r, q, s]``, i.e. <pq|rs> = (pr|qs); the
    transpose (0, 2, 1, 3) is its own inverse.
Spin orbitals
    Spatial orbital p with spin s (0 = alpha, 1 = beta) is spin orbital
    ``2*p + s`` in the interleaved layout and ``p + s*n`` in the blocked one.

>>> pair_index(2, 1), pair_index(1, 2), n_pairs(4)
(4, 4, 10)
>>> import numpy as np
>>> chem = np.arange(16.0).reshape(2, 2, 2, 2)
>>> bool(chemist_to_physicist(chem)[0, 1, 1, 0] == chem[0, 1, 1, 0])
True
>>> bool(chemist_to_physicist(chem)[0, 0, 1, 1] == chem[0, 1, 0, 1])
True
"""

from __future__ import annotations

import numpy as np

from integrity.errors import FieldError

BASES = ("restricted", "unrestricted", "spin-orbital")
NOTATIONS = ("chemist", "physicist")
STORAGES = ("dense", "pairs", "unique")
SPIN_LAYOUTS = ("interleaved", "blocked")
#: number of irreps of each abelian point group the format allows
POINT_GROUP_ORDER = {"C1": 1, "Ci": 2, "C2": 2, "Cs": 2, "C2v": 4, "C2h": 4, "D2": 4, "D2h": 8}


def n_pairs(n: int) -> int:
    """Number of pairs p >= q among n orbitals: n(n+1)/2."""
    return n * (n + 1) // 2


def pair_index(p, q):
    """Pair index of (p, q) in either order: max*(max+1)/2 + min (works on arrays)."""
    hi = np.maximum(p, q)
    lo = np.minimum(p, q)
    if np.ndim(hi) == 0:
        return int(hi) * (int(hi) + 1) // 2 + int(lo)
    return hi * (hi + 1) // 2 + lo


def pair_table(n: int) -> np.ndarray:
    """(n, n) array with ``table[p, q] = pair_index(p, q)``."""
    idx = np.arange(n)
    return pair_index(idx[:, None], idx[None, :])


def pair_members(n: int) -> tuple[np.ndarray, np.ndarray]:
    """Arrays (p, q), p >= q, listing the pairs in pair-index order."""
    p, q = np.tril_indices(n)
    return p, q


def one_electron_shape(basis: str, n: int) -> tuple[int, ...]:
    """Shape of ``one_electron``: (n, n), or (2, n, n) as [alpha, beta] when unrestricted."""
    return (2, n, n) if basis == "unrestricted" else (n, n)


def two_electron_shape(basis: str, n: int, storage: str) -> tuple[int, ...]:
    """Shape of ``two_electron`` for a basis, orbital count and storage.

    Unrestricted arrays carry a leading axis of 3, [aa, ab, bb]. The ab block
    has no pair-swap symmetry, so unrestricted files cannot use ``unique``.

    >>> two_electron_shape("restricted", 4, "pairs")
    (10, 10)
    >>> two_electron_shape("unrestricted", 2, "dense")
    (3, 2, 2, 2, 2)
    """
    if storage == "dense":
        block = (n, n, n, n)
    elif storage == "pairs":
        block = (n_pairs(n), n_pairs(n))
    elif storage == "unique":
        if basis == "unrestricted":
            raise FieldError(
                "two_electron.storage",
                "storage 'unique' is not defined for unrestricted files: the ab block "
                "(pa qa|rb sb) has no pair-swap symmetry; use 'pairs' or 'dense'",
            )
        block = (n_pairs(n_pairs(n)),)
    else:
        raise FieldError("two_electron.storage", f"unknown storage {storage!r}; expected one of {STORAGES}")
    return (3, *block) if basis == "unrestricted" else block


def chemist_to_physicist(chem: np.ndarray) -> np.ndarray:
    """Physicist view of a chemist array: ``phys[p,q,r,s] = chem[p,r,q,s]`` (a view, no copy).

    Works on the last four axes, so an unrestricted (3, n, n, n, n) stack
    keeps its block axis; the ab block then reads <pa qb|ra sb>.
    """
    return np.swapaxes(chem, -3, -2)


def physicist_to_chemist(phys: np.ndarray) -> np.ndarray:
    """Chemist view of a physicist array: ``chem[p,q,r,s] = phys[p,r,q,s]`` (a view, no copy).

    The same involution as :func:`chemist_to_physicist`, named for the direction read.
    """
    return np.swapaxes(phys, -3, -2)


def unpack_pairs(pairs: np.ndarray, n: int) -> np.ndarray:
    """Dense chemist array from a pair matrix: ``dense[p,q,r,s] = pairs[pair(p,q), pair(r,s)]``."""
    table = pair_table(n)
    return pairs[table[:, :, None, None], table[None, None, :, :]]


#: bytes of dense rows gathered at once while packing
GATHER_BYTES = 2 * 2**20


def pack_pairs(dense: np.ndarray) -> np.ndarray:
    """Pair matrix of a dense chemist array: ``pairs[pair(p,q), pair(r,s)] = dense[p,q,r,s]``, p >= q, r >= s.

    Gathered in row blocks of about ``GATHER_BYTES``, so no index array of size P^2 is built.
    """
    n = dense.shape[-1]
    flat = np.ascontiguousarray(dense).reshape(n * n, n * n)
    p, q = pair_members(n)
    index = p * n + q
    npair = len(index)
    out = np.empty((npair, npair), dtype=dense.dtype)
    rows = max(1, GATHER_BYTES // (n * n * dense.itemsize))
    for start in range(0, npair, rows):
        out[start : start + rows] = flat[index[start : start + rows]][:, index]
    return out


def unique_from_pairs(pairs: np.ndarray) -> np.ndarray:
    """Lower triangle of a pair matrix, row by row (``unique`` storage): ``unique[I(I+1)/2 + J] = pairs[I, J]``."""
    npair = pairs.shape[0]
    out = np.empty(n_pairs(npair), dtype=pairs.dtype)
    for row in range(npair):
        offset = row * (row + 1) // 2
        out[offset : offset + row + 1] = pairs[row, : row + 1]
    return out


def pairs_from_unique(unique: np.ndarray, npair: int) -> np.ndarray:
    """Symmetric pair matrix from its lower triangle: ``pairs[I, J] = pairs[J, I]``, I >= J."""
    out = np.empty((npair, npair), dtype=unique.dtype)
    for row in range(npair):
        offset = row * (row + 1) // 2
        out[row, : row + 1] = unique[offset : offset + row + 1]
    for row in range(npair):
        out[row, row + 1 :] = out[row + 1 :, row]
    return out


def npair_from_unique_length(length: int) -> int | None:
    """P with P(P+1)/2 == length, or None when no such P exists."""
    npair = int((np.sqrt(8 * length + 1) - 1) // 2)
    for candidate in (npair - 1, npair, npair + 1):
        if candidate >= 0 and n_pairs(candidate) == length:
            return candidate
    return None


def spin_orbital_index(p, spin, n_spatial: int, layout: str):
    """Spin-orbital index of spatial orbital p with spin 0 (alpha) or 1 (beta)."""
    if layout == "interleaved":
        return 2 * p + spin
    if layout == "blocked":
        return p + spin * n_spatial
    raise FieldError("orbitals.spin_layout", f"unknown spin layout {layout!r}; expected {SPIN_LAYOUTS}")


def spin_of_spin_orbitals(m: int, layout: str) -> np.ndarray:
    """Spin (0 alpha, 1 beta) of each of the m spin orbitals."""
    idx = np.arange(m)
    if layout == "interleaved":
        return idx % 2
    if layout == "blocked":
        return (idx >= m // 2).astype(int)
    raise FieldError("orbitals.spin_layout", f"unknown spin layout {layout!r}; expected {SPIN_LAYOUTS}")


def spatial_of_spin_orbitals(m: int, layout: str) -> np.ndarray:
    """Spatial orbital index of each of the m spin orbitals."""
    idx = np.arange(m)
    if layout == "interleaved":
        return idx // 2
    if layout == "blocked":
        return idx % (m // 2)
    raise FieldError("orbitals.spin_layout", f"unknown spin layout {layout!r}; expected {SPIN_LAYOUTS}")
