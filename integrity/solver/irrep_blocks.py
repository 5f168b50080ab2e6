"""Two-string CI vectors of one irrep, stored block by block (D2h and its subgroups).

The strings of one space are grouped by irrep, keeping their ascending order
inside a group. A vector of target irrep ``G`` holds only the blocks
``c[Ga, Gb]`` with ``Ga ^ Gb = G`` (the product of D2h irreps is the XOR of
their ids): one block per alpha irrep ``Ga`` whose group and partner group
``Gb = Ga ^ G`` both hold strings, each a C-ordered ``(na[Ga], nb[Gb])``
matrix, concatenated in ascending ``Ga``::

    flat = [c[0, G].ravel(), c[1, 1 ^ G].ravel(), ...]

Without orbital irreps every string is of irrep 0, ``G = 0``, and the vector
is the single block ``c[Ia, Ib]`` in the order of :func:`strings.strings`.

>>> layout = block_layout(4, 1, 1, [0, 1, 0, 1], 1)
>>> [(b.alpha_irrep, b.beta_irrep, b.shape) for b in layout.blocks]
[(0, 1, (2, 2)), (1, 0, (2, 2))]
>>> layout.size, layout.full_size
(8, 16)
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from integrity.errors import FieldError
from integrity.solver.point_group import string_irreps
from integrity.solver.strings import strings

__all__ = ["IRREPS", "Block", "BlockLayout", "StringGroups", "block_layout", "string_groups"]

IRREPS = 8
"""Irreps of D2h, the largest group handled; subgroups use ids below their order."""


@dataclass(frozen=True)
class StringGroups:
    """Strings of one space grouped by irrep.

    ``order[starts[g]:starts[g + 1]]`` are the (global) indices of the strings
    of irrep ``g``, ascending; ``local[I]`` is the position of string ``I`` in
    its group and ``irreps[I]`` its irrep.
    """

    irreps: np.ndarray
    order: np.ndarray
    starts: np.ndarray
    local: np.ndarray

    def size(self, irrep: int) -> int:
        return int(self.starts[irrep + 1] - self.starts[irrep])

    def members(self, irrep: int) -> np.ndarray:
        return self.order[self.starts[irrep] : self.starts[irrep + 1]]


def string_groups(n: int, k: int, orbital_irreps=None) -> StringGroups:
    """Group ``strings(n, k)`` by irrep (all of irrep 0 without ``orbital_irreps``).

    >>> g = string_groups(3, 1, [0, 1, 0])
    >>> g.members(0).tolist(), g.members(1).tolist(), g.local.tolist()
    ([0, 2], [1], [0, 0, 1])
    """
    strs = strings(n, k)
    if orbital_irreps is None:
        labels = np.zeros(len(strs), dtype=np.int64)
    else:
        labels = string_irreps(strs, orbital_irreps)
    order = np.argsort(labels, kind="stable")
    counts = np.bincount(labels, minlength=IRREPS)
    starts = np.concatenate([[0], np.cumsum(counts)]).astype(np.int64)
    local = np.empty(len(strs), dtype=np.int64)
    local[order] = np.arange(len(strs)) - starts[labels[order]]
    return StringGroups(labels, order, starts, local)


@dataclass(frozen=True)
class Block:
    """One stored block ``c[alpha_irrep, beta_irrep]`` at ``offset`` in the flat vector."""

    alpha_irrep: int
    beta_irrep: int
    rows: int
    cols: int
    offset: int

    @property
    def shape(self) -> tuple[int, int]:
        return (self.rows, self.cols)

    @property
    def size(self) -> int:
        return self.rows * self.cols


@dataclass(frozen=True)
class BlockLayout:
    """Where each block of a vector of irrep ``irrep`` lies; see the module docstring.

    ``orbital_irreps`` are the labels the strings were grouped by (all 0 for
    the single-block layout).
    """

    irrep: int
    alpha: StringGroups
    beta: StringGroups
    blocks: tuple[Block, ...]
    orbital_irreps: np.ndarray
    n_alpha: int
    n_beta: int

    @property
    def size(self) -> int:
        """Stored elements (determinants of the target irrep)."""
        return sum(b.size for b in self.blocks)

    @property
    def full_size(self) -> int:
        """Determinants of the whole ``(n_alpha, n_beta)`` sector."""
        return len(self.alpha.irreps) * len(self.beta.irreps)

    def block_of_alpha(self, alpha_irrep: int) -> Block | None:
        """The stored block whose rows are strings of ``alpha_irrep``, if any."""
        for block in self.blocks:
            if block.alpha_irrep == alpha_irrep:
                return block
        return None

    def views(self, flat: np.ndarray) -> list[np.ndarray]:
        """Each block of ``flat`` as a (rows, cols) view."""
        return [flat[b.offset : b.offset + b.size].reshape(b.shape) for b in self.blocks]

    def to_full(self, flat: np.ndarray) -> np.ndarray:
        """The ``(na, nb)`` matrix over all strings, zero outside the stored blocks."""
        full = np.zeros((len(self.alpha.irreps), len(self.beta.irreps)), dtype=flat.dtype)
        for block, view in zip(self.blocks, self.views(flat), strict=True):
            full[np.ix_(self.alpha.members(block.alpha_irrep), self.beta.members(block.beta_irrep))] = view
        return full

    def from_full(self, full: np.ndarray) -> np.ndarray:
        """The stored blocks of an ``(na, nb)`` matrix, flat."""
        parts = [
            full[np.ix_(self.alpha.members(b.alpha_irrep), self.beta.members(b.beta_irrep))].ravel()
            for b in self.blocks
        ]
        return np.concatenate(parts) if parts else np.zeros(0, dtype=full.dtype)

    def transpose(self, flat: np.ndarray) -> np.ndarray:
        """``c.T`` of a vector whose alpha and beta spaces are the same (n_alpha == n_beta).

        Block ``c[Ga, Gb]`` goes to ``c[Gb, Ga]``, which is stored since
        ``Gb ^ Ga = G`` as well.
        """
        out = np.empty_like(flat)
        views = self.views(flat)
        for block, target in zip(self.blocks, self.views(out), strict=True):
            partner = self.block_of_alpha(block.beta_irrep)
            target[...] = views[self.blocks.index(partner)].T
        return out


def block_layout(n: int, n_alpha: int, n_beta: int, orbital_irreps=None, irrep=None) -> BlockLayout:
    """The block layout of the sector ``(n_alpha, n_beta)`` for target ``irrep``.

    Without ``orbital_irreps`` (or without a target) the layout is one block
    over all determinants. Raises :class:`FieldError` when no determinant has
    the target irrep.
    """
    if irrep is None:
        orbital_irreps = None
    labels = np.zeros(n, dtype=np.int64) if orbital_irreps is None else np.asarray(orbital_irreps, dtype=np.int64)
    alpha = string_groups(n, n_alpha, orbital_irreps)
    beta = alpha if n_alpha == n_beta else string_groups(n, n_beta, orbital_irreps)
    target = 0 if irrep is None else int(irrep)
    blocks, offset = [], 0
    for ga in range(IRREPS):
        gb = ga ^ target
        rows, cols = alpha.size(ga), beta.size(gb)
        if rows and cols:
            blocks.append(Block(ga, gb, rows, cols, offset))
            offset += rows * cols
    if not blocks:
        raise FieldError("irrep", f"no determinant of this sector has irrep {irrep}")
    return BlockLayout(target, alpha, beta, tuple(blocks), labels, n_alpha, n_beta)
