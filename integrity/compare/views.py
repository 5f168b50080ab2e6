"""A Hamiltonian in common form as orbital sets and named blocks: what every rung compares.

Orbitals are numbered globally across one or two sets: restricted and
spin-orbital files have one set; unrestricted files two, alpha (global
0..n-1) and beta (global n..2n-1). Each block is an array whose axes run over
given sets:

=============== ================================ ===================================
basis           one-electron blocks (sets)       two-electron blocks (sets)
=============== ================================ ===================================
restricted      ``one_electron`` (0, 0)          ``two_electron`` (0, 0, 0, 0)
unrestricted    ``.alpha`` (0, 0), ``.beta``     ``.aa`` (0,0,0,0), ``.ab`` (0,0,1,1),
                (1, 1)                           ``.bb`` (1,1,1,1)
spin-orbital    ``one_electron`` (0, 0)          ``two_electron`` (0, 0, 0, 0)
=============== ================================ ===================================

``classes`` constrain a relabelling: an orbital may only take an orbital of its
own class, which is its set (unrestricted), its spin (spin-orbital, from the
layout) or 0 (restricted). Exchanging alpha and beta (:func:`exchanged`) swaps
the unrestricted blocks, aa <-> bb and ab'[p,q,r,s] = ab[r,s,p,q], or flips the
spin-orbital classes; a restricted view is unchanged by it.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from integrity.compare.result import BlockDifference
from integrity.convert.bitwise import native
from integrity.convert.orbital_order import permuted, slot_sets
from integrity.model.hamiltonian import Hamiltonian
from integrity.model.indexing import spin_of_spin_orbitals
from integrity.model.slabs import dense_chemist

SPIN_BLOCKS = ("aa", "ab", "bb")


@dataclass(frozen=True, eq=False)
class Block:
    """One array of a view: its name (the field a user knows) and the orbital set of each axis."""

    name: str
    sets: tuple[int, ...]
    array: np.ndarray


@dataclass(frozen=True, eq=False)
class OrbitalView:
    """Orbital sets, the class and irrep of each global orbital, and the blocks."""

    sizes: tuple[int, ...]
    classes: np.ndarray
    irreps: np.ndarray | None
    one: tuple[Block, ...]
    two: tuple[Block, ...]

    @property
    def size(self) -> int:
        return int(sum(self.sizes))

    @property
    def offsets(self) -> tuple[int, ...]:
        return tuple(int(x) for x in np.cumsum((0, *self.sizes[:-1])))

    @property
    def blocks(self) -> tuple[Block, ...]:
        return (*self.one, *self.two)

    def split(self, vector) -> list[np.ndarray]:
        """A vector over global orbitals (signs, irreps) split per set."""
        vector = np.asarray(vector)
        return [vector[offset : offset + size] for offset, size in zip(self.offsets, self.sizes, strict=True)]

    def local_orders(self, permutation) -> list[np.ndarray]:
        """A set-preserving global permutation as one order of local indices per set."""
        return [part - offset for part, offset in zip(self.split(permutation), self.offsets, strict=True)]


def view_of(ham: Hamiltonian) -> OrbitalView:
    """The view of a dense Hamiltonian (chemist, or antisymmetrized physicist)."""
    n = ham.n
    h = native(np.asarray(ham.one_electron))
    g = native(np.asarray(dense_chemist(ham.two_electron, ham.basis, n)))
    irreps = None if ham.orbitals.irreps is None else np.asarray(ham.orbitals.irreps, dtype=int)
    if ham.basis == "unrestricted":
        notation = "chemist"  # dense_chemist reads every unrestricted file as chemist
        return OrbitalView(
            sizes=(n, n),
            classes=np.repeat([0, 1], n),
            irreps=None if irreps is None else np.concatenate([irreps, irreps]),
            one=(Block("one_electron.alpha", (0, 0), h[0]), Block("one_electron.beta", (1, 1), h[1])),
            two=tuple(
                Block(f"two_electron.{name}", slot_sets("unrestricted", notation, b), g[b])
                for b, name in enumerate(SPIN_BLOCKS)
            ),
        )
    if ham.basis == "spin-orbital":
        classes = spin_of_spin_orbitals(n, ham.orbitals.spin_layout)
    else:
        classes = np.zeros(n, dtype=int)
    return OrbitalView(
        sizes=(n,),
        classes=np.asarray(classes, dtype=int),
        irreps=irreps,
        one=(Block("one_electron", (0, 0), h),),
        two=(Block("two_electron", (0, 0, 0, 0), g),),
    )


def _exchanged_axes(sets: tuple[int, ...]) -> tuple[int, ...]:
    """Axis order that makes a block over flipped sets run over ``sets`` again (stable)."""
    flipped = [1 - s for s in sets]
    taken: list[int] = []
    for wanted in sets:
        taken.append(next(axis for axis, s in enumerate(flipped) if s == wanted and axis not in taken))
    return tuple(taken)


def exchanged(view: OrbitalView) -> OrbitalView:
    """The view with alpha and beta exchanged (see the module docstring)."""
    if len(view.sizes) == 2:
        one = (
            Block(view.one[0].name, view.one[0].sets, view.one[1].array),
            Block(view.one[1].name, view.one[1].sets, view.one[0].array),
        )
        aa, ab, bb = view.two
        two = (
            Block(aa.name, aa.sets, bb.array),
            Block(ab.name, ab.sets, ab.array.transpose(_exchanged_axes(ab.sets))),
            Block(bb.name, bb.sets, aa.array),
        )
        return OrbitalView(view.sizes, view.classes, view.irreps, one, two)
    if np.any(view.classes):  # spin-orbital: flip the spin classes
        return OrbitalView(view.sizes, 1 - view.classes, view.irreps, view.one, view.two)
    return view


def relabelled(view: OrbitalView, permutation: np.ndarray, signs: np.ndarray | None = None) -> OrbitalView:
    """The view whose global orbital p is orbital ``permutation[p]`` of ``view`` times ``signs[p]``."""
    orders = view.local_orders(np.asarray(permutation, dtype=int))
    sign_sets = view.split(np.ones(view.size, dtype=int) if signs is None else np.asarray(signs, dtype=int))

    def moved(block: Block) -> Block:
        return Block(
            block.name,
            block.sets,
            permuted(block.array, [orders[s] for s in block.sets], [sign_sets[s] for s in block.sets]),
        )

    irreps = None if view.irreps is None else view.irreps[np.asarray(permutation, dtype=int)]
    classes = view.classes[np.asarray(permutation, dtype=int)]
    return OrbitalView(
        view.sizes, classes, irreps, tuple(moved(b) for b in view.one), tuple(moved(b) for b in view.two)
    )


def largest_deviation(first: OrbitalView, second: OrbitalView) -> float:
    """Largest |element difference| over all blocks (inf when a value is not finite)."""
    worst = 0.0
    for a, b in zip(first.blocks, second.blocks, strict=True):
        difference = np.subtract(b.array, a.array)
        difference = np.abs(difference, out=difference) if difference.dtype.kind == "f" else np.abs(difference)
        if difference.size:
            peak = float(np.max(difference))
            worst = max(worst, peak) if np.isfinite(peak) else np.inf
    return worst


def block_differences(first: OrbitalView, second: OrbitalView, tolerance: float) -> list[BlockDifference]:
    """Per block: the largest |second - first|, where, and how many elements exceed ``tolerance``."""
    out = []
    for a, b in zip(first.blocks, second.blocks, strict=True):
        difference = np.abs(b.array - a.array)
        finite = np.isfinite(difference)
        if not difference.size:
            out.append(BlockDifference(a.name, 0.0, None, 0, 0))
            continue
        if not finite.all():
            where = np.unravel_index(int(np.argmin(finite)), difference.shape)
            beyond = int(np.count_nonzero(~finite) + np.count_nonzero(difference[finite] > tolerance))
            out.append(BlockDifference(a.name, None, tuple(int(i) for i in where), beyond, difference.size))
            continue
        flat = int(np.argmax(difference))
        where = np.unravel_index(flat, difference.shape)
        out.append(
            BlockDifference(
                a.name,
                float(difference.flat[flat]),
                tuple(int(i) for i in where),
                int(np.count_nonzero(difference > tolerance)),
                difference.size,
            )
        )
    return out
