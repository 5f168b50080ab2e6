"""Dense index permutations: notation, spin layout and antisymmetrization, in one copy.

Notation (every basis): ``phys[p,q,r,s] = chem[p,r,q,s]``, i.e.
<pq|rs> = (pr|qs); the swap of the middle two axes is its own inverse. An
unrestricted (3, n, n, n, n) stack keeps its block axis, so its ab block
reads ``phys_ab[p,q,r,s] = chem_ab[p,r,q,s]`` = <pa qb|ra sb>.

Spin layout (spin-orbital): with ``n`` spatial orbitals, spatial p and spin s
is ``2*p + s`` (interleaved) or ``p + s*n`` (blocked). :func:`spin_split`
views an (m, ..., m) array as ``v[s1, p1, s2, p2, ...] = a[P(p1, s1), P(p2, s2), ...]``
in either layout, so changing layout is copying one split view into another.

Antisymmetrization (spin-orbital, physicist):
``anti[p,q,r,s] = phys[p,q,r,s] - phys[p,q,s,r]`` (<pq||rs> = <pq|rs> - <pq|sr>).

>>> import numpy as np
>>> chem = np.arange(16.0).reshape(2, 2, 2, 2)
>>> phys = swap_notation(chem)
>>> bool(phys[0, 1, 1, 0] == chem[0, 1, 1, 0]), bool(phys[0, 0, 1, 1] == chem[0, 1, 0, 1])
(True, True)
>>> h = np.arange(16.0).reshape(4, 4)            # interleaved: a0 b0 a1 b1
>>> blocked = reindexed(h, n_spatial=2, layout=("interleaved", "blocked"))
>>> bool(blocked[0, 3] == h[0, 3]), bool(blocked[2, 1] == h[1, 2])  # (a0, b1); (b0, a1)
(True, True)
"""

from __future__ import annotations

import numpy as np

from integrity.convert.bitwise import native, same_bits
from integrity.errors import FieldError
from integrity.model.indexing import SPIN_LAYOUTS

#: axes of index 2 and index 3 in a split four-index view (each index is (spin, spatial))
NOTATION_SWAP = (0, 1, 4, 5, 2, 3, 6, 7)
#: axes of index 3 and index 4 in a split four-index view
LAST_PAIR_SWAP = (0, 1, 2, 3, 6, 7, 4, 5)


def swap_notation(array) -> np.ndarray:
    """Contiguous copy with the middle two of the last four axes swapped (chemist <-> physicist)."""
    return np.ascontiguousarray(np.swapaxes(native(array), -3, -2))


def spin_split(array: np.ndarray, n_spatial: int, layout: str) -> np.ndarray:
    """View of an (m, ..., m) spin-orbital array with each index split into (spin, spatial).

    ``v[s1, p1, ..., sk, pk] = array[P(p1, s1), ..., P(pk, sk)]`` with P the
    layout's index map. A view when ``array`` is C-contiguous (else a copy).

    >>> import numpy as np
    >>> h = np.arange(16.0).reshape(4, 4)
    >>> float(spin_split(h, 2, "interleaved")[1, 0, 0, 1]), float(h[1, 2])   # (b0, a1)
    (6.0, 6.0)
    >>> float(spin_split(h, 2, "blocked")[1, 0, 0, 1]), float(h[2, 1])
    (9.0, 9.0)
    """
    k = array.ndim
    if layout == "blocked":
        return array.reshape((2, n_spatial) * k)
    if layout == "interleaved":
        view = array.reshape((n_spatial, 2) * k)
        order = [axis for i in range(k) for axis in (2 * i + 1, 2 * i)]
        return view.transpose(order)
    raise FieldError("orbitals.spin_layout", f"unknown spin layout {layout!r}; expected one of {SPIN_LAYOUTS}")


def reindexed(
    array,
    *,
    n_spatial: int,
    layout: tuple[str, str] | None = None,
    swap: bool = False,
    antisymmetrize: bool = False,
) -> np.ndarray:
    """One contiguous copy of a dense array with the requested index changes applied.

    ``layout`` is (from, to) for a spin-orbital array (two or four indices);
    ``swap`` changes notation (four indices); ``antisymmetrize`` applies
    ``anti[p,q,r,s] = x[p,q,r,s] - x[p,q,s,r]`` to the result of the other
    changes (so the input must end up physicist). The output is allocated once;
    every other operand is a view of the input.
    """
    array = native(array)
    if layout is None or layout[0] == layout[1]:
        if antisymmetrize:
            source = np.swapaxes(array, -3, -2) if swap else array
            out = np.empty(source.shape, dtype=source.dtype)
            return np.subtract(source, np.swapaxes(source, -2, -1), out=out)
        return swap_notation(array) if swap else np.array(array, copy=True, order="C")
    source = spin_split(np.ascontiguousarray(array), n_spatial, layout[0])
    out = np.empty(array.shape, dtype=array.dtype)
    target = spin_split(out, n_spatial, layout[1])
    if swap:
        source = source.transpose(NOTATION_SWAP)
    if antisymmetrize:
        np.subtract(source, source.transpose(LAST_PAIR_SWAP), out=target)
    else:
        np.copyto(target, source)
    return out


def antisymmetrize_in_place(phys: np.ndarray) -> bool:
    """``phys[p,q,r,s] -> phys[p,q,r,s] - phys[p,q,s,r]`` in the same memory, one slab at a time.

    For an array the caller owns (e.g. one just built): the only temporary is
    one first-index slab, so no second full copy is held. Returns whether any
    bit changed (False only when every exchange term was +0.0).

    >>> x = np.arange(16.0).reshape(2, 2, 2, 2)
    >>> anti = x - x.swapaxes(2, 3)
    >>> antisymmetrize_in_place(x), bool(np.array_equal(x, anti))
    (True, True)
    """
    changed = False
    for p in range(phys.shape[0]):
        slab = phys[p] - np.swapaxes(phys[p], -2, -1)
        changed = changed or not same_bits(slab, phys[p])
        phys[p] = slab
    return changed
