"""Permutational symmetry relations of two-electron integrals, and how far an array is from them.

Each relation says ``X[i] = sign * X[perm(i)]`` (complex-conjugated when
``conjugate``), with ``perm`` an involution of the four axes. Each notation's
relations below *generate* its permutation group, so checking them checks
the group: with a = (pq|rs)=(qp|rs) and c = (pq|rs)=(rs|pq), the third
familiar relation (pq|rs)=(pq|sr) is c.a.c, and every element of the
8-element group is a word of at most four generators. So if every listed
relation holds to within e, every relation of the group holds to within 4e.

Real chemist, 8-fold (Source: Helgaker, Jorgensen, Olsen, *Molecular Electronic-Structure
Theory*, eq. 9.2.4; Sherrill, "Permutational symmetries of one- and
two-electron integrals", lecture notes (both from memory)): (pq|rs) = (qp|rs) = (pq|sr) = (rs|pq) = ...
    generators (pq|rs) = (qp|rs) and (pq|rs) = (rs|pq)
Complex chemist, 4-fold:   (pq|rs) = (rs|pq) = (qp|sr)*
Real physicist, 8-fold:    <pq|rs> = <rq|ps> = <ps|rq> = <qp|sr> = ...
    generators <pq|rs> = <rq|ps> and <pq|rs> = <qp|sr>
Complex physicist, 4-fold: <pq|rs> = <qp|sr> = <rs|pq>*
Antisymmetrized:           <pq||rs> = -<qp||rs> = <rs||pq> (conjugated if complex),
    which imply <pq||rs> = -<pq||sr>
Unrestricted ab block (pa qa|rb sb): no pair swap (it would exchange the spins);
    real: (pq|rs) = (qp|rs) = (pq|sr); complex: (pq|rs) = (qp|sr)*.

:func:`deviation` walks the array in boxes (views of an in-memory array, or
hyperslab reads of an HDF5 dataset), comparing each box with its partner box
under the permutation, so it never holds more than a few boxes.
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass

import numpy as np

DEFAULT_BOX_BYTES = 2**20


@dataclass(frozen=True)
class Relation:
    """``X[i] == sign * X[perm(i)]`` (conjugated when ``conjugate``), written out in ``text``."""

    text: str
    perm: tuple[int, ...]
    sign: int = 1
    conjugate: bool = False


BRA_SWAP = Relation("(pq|rs) = (qp|rs)", (1, 0, 2, 3))
KET_SWAP = Relation("(pq|rs) = (pq|sr)", (0, 1, 3, 2))
PAIR_SWAP = Relation("(pq|rs) = (rs|pq)", (2, 3, 0, 1))
CHEMIST_REAL = (BRA_SWAP, PAIR_SWAP)
CHEMIST_COMPLEX = (PAIR_SWAP, Relation("(pq|rs) = (qp|sr)*", (1, 0, 3, 2), conjugate=True))
PHYSICIST_REAL = (Relation("<pq|rs> = <rq|ps>", (2, 1, 0, 3)), Relation("<pq|rs> = <qp|sr>", (1, 0, 3, 2)))
PHYSICIST_COMPLEX = (
    Relation("<pq|rs> = <qp|sr>", (1, 0, 3, 2)),
    Relation("<pq|rs> = <rs|pq>*", (2, 3, 0, 1), conjugate=True),
)
ANTISYMMETRIZED_REAL = (
    Relation("<pq||rs> = -<qp||rs>", (1, 0, 2, 3), sign=-1),
    Relation("<pq||rs> = <rs||pq>", (2, 3, 0, 1)),
)
ANTISYMMETRIZED_COMPLEX = (ANTISYMMETRIZED_REAL[0], Relation("<pq||rs> = <rs||pq>*", (2, 3, 0, 1), conjugate=True))
MIXED_SPIN_CHEMIST_REAL = (BRA_SWAP, KET_SWAP)
MIXED_SPIN_CHEMIST_COMPLEX = (CHEMIST_COMPLEX[1],)
MIXED_SPIN_PHYSICIST_REAL = (PHYSICIST_REAL[0], Relation("<pq|rs> = <ps|rq>", (0, 3, 2, 1)))
MIXED_SPIN_PHYSICIST_COMPLEX = (Relation("<pq|rs> = <rs|pq>*", (2, 3, 0, 1), conjugate=True),)
PAIR_MATRIX = (Relation("(pq|rs) = (rs|pq)", (1, 0)),)


def relations_for(
    notation: str, is_complex: bool, antisymmetrized: bool = False, mixed_spin: bool = False
) -> tuple[Relation, ...]:
    """The generating relations of the group a dense array must obey.

    >>> [r.text for r in relations_for("chemist", is_complex=True)]
    ['(pq|rs) = (rs|pq)', '(pq|rs) = (qp|sr)*']
    """
    if antisymmetrized:
        return ANTISYMMETRIZED_COMPLEX if is_complex else ANTISYMMETRIZED_REAL
    if mixed_spin:
        if notation == "chemist":
            return MIXED_SPIN_CHEMIST_COMPLEX if is_complex else MIXED_SPIN_CHEMIST_REAL
        return MIXED_SPIN_PHYSICIST_COMPLEX if is_complex else MIXED_SPIN_PHYSICIST_REAL
    if notation == "chemist":
        return CHEMIST_COMPLEX if is_complex else CHEMIST_REAL
    return PHYSICIST_COMPLEX if is_complex else PHYSICIST_REAL


@dataclass(frozen=True)
class Deviation:
    """How far an array is from one relation.

    ``max_abs`` is max |X[i] - sign X[perm(i)]| (conjugated as the relation says),
    at index ``where`` (partner ``partner``); ``count`` is how many elements
    differ from their partner by more than the limit, out of ``elements``.
    """

    relation: Relation
    max_abs: float
    where: tuple[int, ...] | None
    partner: tuple[int, ...] | None
    count: int
    elements: int


def _chunk_sizes(shape, perm, target_elements):
    """Chunk length per axis: partnered axes share one; outer axes are cut first."""
    chunk = list(shape)
    orbits = []
    for axis in range(len(shape)):
        if perm[axis] >= axis:
            orbits.append(sorted({axis, perm[axis]}))
    size = int(np.prod(chunk, dtype=np.int64))
    for orbit in orbits:  # outermost first
        if size <= target_elements:
            break
        rest = size // int(np.prod([chunk[a] for a in orbit], dtype=np.int64))
        per_axis = (max(1, target_elements // max(1, rest))) ** (1.0 / len(orbit))
        length = max(1, min(shape[orbit[0]], int(per_axis)))
        for a in orbit:
            chunk[a] = length
        size = rest * length ** len(orbit)
    return chunk


def deviation(array, relation: Relation, limit: float, box_bytes: int = DEFAULT_BOX_BYTES) -> Deviation:
    """Compare ``array`` with its image under ``relation`` box by box.

    ``array`` is an ndarray or any array-like with ``shape``, ``dtype`` and
    basic slicing (an HDF5 dataset). Peak extra memory is a few boxes of
    ``box_bytes``.
    """
    shape = tuple(array.shape)
    perm = relation.perm
    is_complex = np.dtype(array.dtype).kind == "c"
    itemsize = np.dtype(array.dtype).itemsize
    chunk = _chunk_sizes(shape, perm, max(1, box_bytes // itemsize))
    starts = [range(0, extent, chunk[a]) for a, extent in enumerate(shape)]
    counts = [len(s) for s in starts]
    best, where, total_count = -1.0, None, 0
    for box in itertools.product(*(range(c) for c in counts)):
        partner = tuple(box[perm[a]] for a in range(len(shape)))
        if partner < box:
            continue  # compared when its partner was visited
        here = tuple(slice(starts[a][box[a]], starts[a][box[a]] + chunk[a]) for a in range(len(shape)))
        there = tuple(slice(starts[a][partner[a]], starts[a][partner[a]] + chunk[a]) for a in range(len(shape)))
        a_box = np.asarray(array[here])
        b_box = np.asarray(array[there]).transpose(perm)
        if relation.conjugate and is_complex:
            b_box = np.conj(b_box)
        diff = np.subtract(a_box, b_box) if relation.sign == 1 else np.add(a_box, b_box)
        magnitude = np.abs(diff, out=diff) if not is_complex else np.abs(diff)
        peak = float(magnitude.max()) if magnitude.size else 0.0
        if peak > best:
            best = peak
            local = np.unravel_index(int(np.argmax(magnitude)), magnitude.shape)
            where = tuple(int(h.start + i) for h, i in zip(here, local, strict=True))
        if peak > limit:
            broken = int(np.count_nonzero(magnitude > limit))
            total_count += broken if partner == box else 2 * broken
    if where is None:
        return Deviation(relation, 0.0, None, None, 0, 0)
    partner_index = tuple(where[perm[a]] for a in range(len(shape)))
    return Deviation(relation, max(best, 0.0), where, partner_index, total_count, int(np.prod(shape)))


def orbit(index: tuple[int, ...], relations) -> list[tuple[tuple[int, ...], int, bool]]:
    """Every image of ``index`` under the group the relations generate.

    Each entry is (image, sign, conjugate) such that, if the relations hold,
    ``X[index] == sign * X[image]`` (conjugated when ``conjugate``).
    """
    seen = {tuple(index): (1, False)}
    frontier = [tuple(index)]
    while frontier:
        current = frontier.pop()
        sign, conj = seen[current]
        for relation in relations:
            image = tuple(current[relation.perm[a]] for a in range(len(current)))
            if image not in seen:
                seen[image] = (sign * relation.sign, conj != relation.conjugate)
                frontier.append(image)
    return [(image, sign, conj) for image, (sign, conj) in seen.items()]


def odd_one_out(array, relations, first, second):
    """Of two indices that break a relation, the one farther from its orbit's median value.

    When one element was altered, the other members of its orbit still agree,
    so the altered one stands out.
    """

    def spread(index):
        members = orbit(index, relations)
        values = np.array([s * (np.conj(array[m]) if c else array[m]) for m, s, c in members])
        median = np.median(values.real) + 1j * np.median(values.imag)
        own = values[0]
        return abs(own - median)

    return first if spread(first) >= spread(second) else second
