"""Storage: dense <-> pairs <-> unique, for real chemist arrays.

With the pair index ``pair(p, q) = p*(p+1)/2 + q`` (p >= q) and
``P = n*(n+1)/2`` (see :mod:`integrity.model.indexing`)::

    pairs[pair(p,q), pair(r,s)] = dense[p,q,r,s]              for p >= q, r >= s
    unique[I*(I+1)/2 + J]       = pairs[I, J]                 for I >= J

Packing keeps exactly those elements and assumes the others equal them:
``pairs`` assumes (pq|rs) = (qp|rs) = (pq|sr), ``unique`` also (pq|rs) = (rs|pq).
Before packing, :func:`measure_symmetry` first asks whether the assumed
relations hold bit for bit (then packing is exact and the fingerprint is
unchanged), and otherwise measures how far they are broken with
:func:`integrity.checks.relations.deviation`. Beyond the tolerance the step
is refused unless the loss is allowed; an allowed lossy step records the largest deviation dropped.
Unpacking is always exact. Unrestricted files pack each of their blocks
[aa, ab, bb] into ``pairs``; ``unique`` is not defined for them.

>>> import numpy as np
>>> from integrity.model.indexing import unpack_pairs
>>> pairs = np.array([[1.0, 0.5, 0.25], [0.5, 2.0, 0.125], [0.25, 0.125, 3.0]])
>>> dense = unpack_pairs(pairs, 2)
>>> bool(np.array_equal(pairs_of_dense(dense), pairs))
True
>>> unique_of_dense(dense).tolist()
[1.0, 0.5, 2.0, 0.25, 0.125, 3.0]
>>> bool(np.array_equal(dense_of_pairs(pairs_of_unique(unique_of_dense(dense), 3), 2), dense))
True
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from integrity.checks.relations import Deviation, Relation, deviation
from integrity.convert.bitwise import bit_views, native
from integrity.convert.history import step_entry
from integrity.errors import FieldError, RefusedError
from integrity.model.hamiltonian import Hamiltonian, TwoElectron
from integrity.model.indexing import (
    GATHER_BYTES,
    STORAGES,
    n_pairs,
    pack_pairs,
    pair_members,
    pairs_from_unique,
    two_electron_shape,
    unique_from_pairs,
)
from integrity.model.slabs import chemist_slabs

BRA = Relation("(pq|rs) = (qp|rs)", (1, 0, 2, 3))
KET = Relation("(pq|rs) = (pq|sr)", (0, 1, 3, 2))
PAIR = Relation("(pq|rs) = (rs|pq)", (2, 3, 0, 1))
PAIR_MATRIX = Relation("(pq|rs) = (rs|pq)", (1, 0))
#: relations each packing assumes (measured when the bits do not already agree)
ASSUMED = {
    ("dense", "pairs"): (BRA, KET),
    ("dense", "unique"): (BRA, KET, PAIR),
    ("pairs", "unique"): (PAIR_MATRIX,),
}
#: relations whose bit-exact truth implies all of ASSUMED (they generate the same group:
#: KET = PAIR . BRA . PAIR), so the exact test reads the array twice, not three times
GENERATORS = {
    ("dense", "pairs"): (BRA, KET),
    ("dense", "unique"): (BRA, PAIR),
    ("pairs", "unique"): (PAIR_MATRIX,),
}
#: packed storages, from least to most packed
PACKING_ORDER = {"dense": 0, "pairs": 1, "unique": 2}
BLOCK_LABELS = ("aa", "ab", "bb")


def pairs_of_dense(dense) -> np.ndarray:
    """``pairs[pair(p,q), pair(r,s)] = dense[p,q,r,s]`` (p >= q, r >= s), gathered in row blocks."""
    return pack_pairs(native(dense))


def unique_of_dense(dense) -> np.ndarray:
    """``unique[I*(I+1)/2 + J] = dense[p_I, q_I, p_J, q_J]`` for I >= J (pair members p >= q)."""
    dense = np.ascontiguousarray(native(dense))
    n = dense.shape[-1]
    flat = dense.reshape(n * n, n * n)
    p, q = pair_members(n)
    index = p * n + q
    npair = len(index)
    out = np.empty(n_pairs(npair), dtype=dense.dtype)
    rows = max(1, GATHER_BYTES // (n * n * dense.itemsize))
    for start in range(0, npair, rows):
        stop = min(npair, start + rows)
        block = flat[index[start:stop]][:, index[:stop]]
        for local, row in enumerate(range(start, stop)):
            offset = row * (row + 1) // 2
            out[offset : offset + row + 1] = block[local, : row + 1]
    return out


def unique_of_pairs(pairs) -> np.ndarray:
    """The lower triangle of a pair matrix, row by row: ``unique[I*(I+1)/2 + J] = pairs[I, J]``."""
    return unique_from_pairs(native(pairs))


def pairs_of_unique(unique, npair: int) -> np.ndarray:
    """The symmetric pair matrix of a lower triangle: ``pairs[I, J] = pairs[J, I]``, I >= J."""
    return pairs_from_unique(native(unique), npair)


def dense_of_pairs(pairs, n: int) -> np.ndarray:
    """``dense[p,q,r,s] = pairs[pair(p,q), pair(r,s)]``, filled slab by slab."""
    pairs = native(pairs)
    out = np.empty((n, n, n, n), dtype=pairs.dtype)
    for p0, slab in chemist_slabs(pairs, "chemist", "pairs", n):
        out[p0 : p0 + len(slab)] = slab
    return out


def _as_pairs(block, storage: str, n: int) -> np.ndarray:
    return pairs_of_unique(block, n_pairs(n)) if storage == "unique" else native(block)


def repacked(block, source: str, target: str, n: int) -> np.ndarray:
    """One spin block moved from storage ``source`` to ``target`` (no symmetry check here)."""
    if source == target:
        return native(block)
    if source == "dense":
        return pairs_of_dense(block) if target == "pairs" else unique_of_dense(block)
    if target == "dense":
        return dense_of_pairs(_as_pairs(block, source, n), n)
    if target == "unique":
        return unique_of_pairs(block)
    return pairs_of_unique(block, n_pairs(n))


@dataclass(frozen=True)
class SymmetryMeasure:
    """How far the blocks are from the relations a storage assumes.

    ``exact``: every assumed relation holds bit for bit (packing loses nothing).
    ``worst``: the Deviation with the largest ``max_abs`` (None when exact), in
    block ``label`` ("" for a single block).
    """

    exact: bool
    worst: Deviation | None = None
    label: str = ""

    @property
    def max_abs(self) -> float:
        return 0.0 if self.worst is None else self.worst.max_abs


def measure_symmetry(blocks, relations, tolerance: float, generators=None) -> SymmetryMeasure:
    """Bit-exact test of ``generators`` (default ``relations``) on each (label, block); if any
    fails, measure every one of ``relations``.

    The bit test compares the arrays' bits as unsigned integers (so -0.0 and
    0.0 differ), the measurement compares values; both walk the array in
    boxes, never holding a full-size temporary.
    """
    exact = all(
        deviation(bits, relation, 0).max_abs == 0
        for _, block in blocks
        for bits in bit_views(block)
        for relation in (generators or relations)
    )
    if exact:
        return SymmetryMeasure(True)
    worst, worst_label = None, ""
    for label, block in blocks:
        for relation in relations:
            found = deviation(block, relation, tolerance)
            if worst is None or found.max_abs > worst.max_abs:
                worst, worst_label = found, label
    return SymmetryMeasure(False, worst, worst_label)


def storage_problem(basis: str, notation: str, is_complex: bool, storage: str) -> str | None:
    """Why ``storage`` is not defined for this basis, notation and dtype (None if it is)."""
    if storage not in STORAGES:
        return f"{storage!r} is not a storage; expected one of {STORAGES}"
    if storage == "dense":
        return None
    if notation == "physicist":
        return (
            f"storage {storage!r} is defined for chemist notation only (physicist arrays are "
            "dense); add notation='chemist' (--notation chemist) or keep storage='dense'"
        )
    if is_complex:
        return (
            f"storage {storage!r} is defined for real values only; this two-electron array is "
            "complex (its 4-fold symmetry (pq|rs) = (rs|pq) = (qp|sr)* does not fit a pair "
            "matrix), so it stays dense"
        )
    if storage == "unique" and basis == "unrestricted":
        return (
            "storage 'unique' is not defined for unrestricted files: the ab block "
            "(pa qa|rb sb) has no pair-swap symmetry; use storage='pairs'"
        )
    return None


def _where_text(deviation_found: Deviation, storage: str, n: int) -> str:
    """'(p, q, r, s) and its partner (...)' in orbital indices, also for pair-matrix indices."""
    where, partner = deviation_found.where, deviation_found.partner
    if storage == "pairs":
        p, q = pair_members(n)
        where = (int(p[where[0]]), int(q[where[0]]), int(p[where[1]]), int(q[where[1]]))
        partner = (int(p[partner[0]]), int(q[partner[0]]), int(p[partner[1]]), int(q[partner[1]]))
    return f"{where} (partner {partner})"


def _refusal(measure: SymmetryMeasure, source: str, target: str, n: int, tolerance: float) -> str:
    found = measure.worst
    block = f" in the {measure.label} block" if measure.label else ""
    kept = "p >= q, r >= s" + (", pair(p,q) >= pair(r,s)" if target == "unique" else "")
    return (
        f"packing {source} -> {target} assumes {found.relation.text}, but the array{block} "
        f"breaks it by up to {found.max_abs:.3g} at {_where_text(found, source, n)}, for "
        f"{found.count} of {found.elements} elements beyond the tolerance {tolerance:g}; pass "
        f"allow the loss (--allow-loss) to pack anyway, keeping the elements with {kept} and noting "
        "the largest deviation dropped"
    )


def require_tolerance(tolerance) -> float:
    """A tolerance must be a number >= 0 (hartree); returns it as float."""
    if (
        isinstance(tolerance, bool)
        or not isinstance(tolerance, int | float)
        or not math.isfinite(tolerance)
        or not tolerance >= 0
    ):
        raise FieldError("tolerance", f"expected a finite number >= 0 (hartree), got {tolerance!r}")
    return float(tolerance)


def storage_step(
    ham: Hamiltonian, storage: str, *, allow_loss: bool = False, tolerance: float = 1e-10
) -> tuple[Hamiltonian, dict | None]:
    """Move the two-electron array to ``storage``; returns (new Hamiltonian, history entry or None).

    Refuses (RefusedError) a packing that would drop differences beyond
    ``tolerance`` unless ``allow_loss``; refuses (FieldError) a storage the format
    does not define for this notation, dtype or basis.
    """
    tolerance = require_tolerance(tolerance)
    two = ham.two_electron
    source = two.storage
    if source == storage:
        return ham, None
    array = native(two.array)
    problem = storage_problem(ham.basis, two.notation, array.dtype.kind == "c", storage)
    if problem:
        raise FieldError("storage", problem)
    n = ham.n
    unrestricted = ham.basis == "unrestricted"
    blocks = list(zip(BLOCK_LABELS, array, strict=True)) if unrestricted else [("", array)]
    extra = {}
    exact = True
    if PACKING_ORDER[storage] > PACKING_ORDER[source]:
        measure = measure_symmetry(blocks, ASSUMED[source, storage], tolerance, GENERATORS[source, storage])
        exact = measure.exact
        if not exact:
            if measure.max_abs > tolerance and not allow_loss:
                raise RefusedError("two_electron", _refusal(measure, source, storage, n, tolerance))
            extra = {
                "dropped_max_deviation": measure.max_abs,
                "dropped_relation": (f"{measure.label} " if measure.label else "") + measure.worst.relation.text,
                "tolerance": tolerance,
                "forced": measure.max_abs > tolerance,
            }
    if unrestricted:
        new_array = np.empty((3, *two_electron_shape("restricted", n, storage)), dtype=array.dtype)
        for b, (_, block) in enumerate(blocks):
            new_array[b] = repacked(block, source, storage, n)
    else:
        new_array = repacked(array, source, storage, n)
    new_two = TwoElectron(
        new_array,
        notation=two.notation,
        storage=storage,
        interaction=two.interaction,
        antisymmetrized=two.antisymmetrized,
    )
    entry = step_entry("storage", source, storage, fingerprint_changed=not exact, **extra)
    return ham.replace(two_electron=new_two), entry
