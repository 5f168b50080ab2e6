"""Positivity of a Coulomb two-electron operator.

For real values the pair matrix M[(pq),(rs)] = (pq|rs) over pairs p >= q, for
complex values the Hermitian W[(pq),(rs)] = (qp|rs) over ordered pairs, must be
positive semidefinite (Source: Helgaker, Jorgensen, Olsen, *Molecular
Electronic-Structure Theory*, sec. 9.12 (from memory): the Coulomb kernel is
positive, so the two-electron integrals form a Gram matrix). Unrestricted files are
judged on the joint matrix [[aa, ab], [ba, bb]].

Method: the full spectrum when the pair space is small (at most
``EIGEN_PAIRS``); otherwise pivoted Cholesky with complete pivoting, which
stops when the residual diagonal falls below the limit, then one pass over the
residual R = M - L L^H: a negative pivot, or a 2x2 principal minor of R with a
negative eigenvalue, proves M indefinite (by Sylvester's law of inertia).
Also: Coulomb (pp|qq) >= 0, exchange (pq|qp) >= 0, and the Schwarz bound
|(qp|rs)|^2 <= (qp|pq)(sr|rs) for every element.
"""

from __future__ import annotations

import numpy as np

from integrity.checks.registry import (
    OUTSIDE_FINGERPRINT,
    Result,
    at_element,
    at_field,
    failed,
    figure,
    passed,
    register,
    skipped,
    warned,
)
from integrity.model.slabs import chemist_column, chemist_row, chemist_slabs, exchange_diagonal, spin_blocks

EIGEN_PAIRS = 2000


class PairSpace:
    """Rows and diagonal of the (joint) pair matrix, read from the stored array on demand."""

    def __init__(self, ham):
        two = ham.two_electron
        self.n, self.notation, self.storage = ham.n, two.notation, two.storage
        self.complex = ham.is_complex
        blocks = spin_blocks(two, ham.basis)
        # (row block, column block) per spin pair: same-spin blocks, and ab for the joint matrix
        self.spins = 2 if ham.basis == "unrestricted" else 1
        self.blocks = (
            {(0, 0): blocks[0]} if self.spins == 1 else {(0, 0): blocks[0], (0, 1): blocks[1], (1, 1): blocks[2]}
        )
        n = self.n
        if self.complex:
            self.first, self.second = (a.ravel() for a in np.indices((n, n)))  # ordered pairs (p, q)
        else:
            self.first, self.second = np.tril_indices(n)
        self.size_per_spin = len(self.first)
        self.size = self.size_per_spin * self.spins

    def label(self, index: int) -> str:
        spin, local = divmod(int(index), self.size_per_spin)
        p, q = int(self.first[local]), int(self.second[local])
        return ("beta " if spin else ("alpha " if self.spins == 2 else "")) + f"pair ({p}, {q})"

    def location(self, index: int):
        """The pair matrix's diagonal element of a pair: (pq|pq) real, (qp|pq) complex."""
        spin, local = divmod(int(index), self.size_per_spin)
        p, q = int(self.first[local]), int(self.second[local])
        element = (q, p, p, q) if self.complex else (p, q, p, q)
        return at_element("two_electron", element, ("bb" if spin else "aa") if self.spins == 2 else None)

    def _part(self, spin_row, spin_col, p, q):
        """Row (p, q) of block (spin_row, spin_col) over the column pairs of spin_col.

        Real: M[(pq),(rs)] = (pq|rs); complex: W[(pq),(rs)] = (qp|rs). The ba block's
        rows are columns of the stored ab block: (pb qb|ra sa) = (ra sa|pb qb).
        """
        left, right = (q, p) if self.complex else (p, q)
        if (spin_row, spin_col) == (1, 0):
            values = chemist_column(self.blocks[(0, 1)], self.notation, self.storage, self.n, left, right)
        else:
            values = chemist_row(self.blocks[(spin_row, spin_col)], self.notation, self.storage, self.n, left, right)
        return values.ravel() if self.complex else values[self.first, self.second]

    def row(self, index: int) -> np.ndarray:
        spin, local = divmod(int(index), self.size_per_spin)
        p, q = int(self.first[local]), int(self.second[local])
        parts = [self._part(spin, col, p, q) for col in range(self.spins)]
        return np.concatenate(parts) if len(parts) > 1 else parts[0]

    def diagonal(self) -> np.ndarray:
        """Pair-matrix diagonal: real (pq|pq) or complex (qp|pq), per spin in order."""
        out = []
        for spin in range(self.spins):
            block = self.blocks[(spin, spin)]
            g = exchange_diagonal(block, self.notation, self.storage, self.n)  # g[a,b] = (ab|ba)
            if self.complex:
                out.append(g.T[self.first, self.second].real)  # (qp|pq) = g[q, p]
            else:
                out.append(g[self.first, self.second].real)
        return np.concatenate(out)

    def matrix(self) -> np.ndarray:
        rows = [self.row(i) for i in range(self.size)]
        return np.array(rows)


def smallest_eigenvalue(space: PairSpace):
    """(lowest eigenvalue, index of the dominant pair of its eigenvector) of the full pair matrix."""
    matrix = space.matrix()
    matrix = 0.5 * (matrix + matrix.conj().T)
    values, vectors = np.linalg.eigh(matrix)
    return float(values[0]), int(np.argmax(np.abs(vectors[:, 0])))


def cholesky_certificate(space: PairSpace, tolerance: float, max_rank: int):
    """Pivoted Cholesky with a residual check.

    Returns (value, index, rank, complete): ``value`` is the most negative
    residual pivot or 2x2-minor eigenvalue found (>= -tolerance when none is),
    ``index`` the pair where it occurs, ``rank`` the number of pivots, and
    ``complete`` False when ``max_rank`` pivots did not exhaust the matrix.
    """
    diagonal = space.diagonal().astype(float)
    size = space.size
    factor = np.zeros((size, max(1, min(max_rank, size))), dtype=complex if space.complex else float)
    rank = 0
    while rank < factor.shape[1]:
        pivot = int(np.argmax(diagonal))
        if diagonal[pivot] <= tolerance:
            break
        column = space.row(pivot).conj() - factor[:, :rank] @ factor[pivot, :rank].conj()
        factor[:, rank] = column / np.sqrt(diagonal[pivot])
        diagonal -= np.abs(factor[:, rank]) ** 2
        diagonal[pivot] = 0.0
        rank += 1
    complete = rank < factor.shape[1] or np.max(diagonal) <= tolerance
    lowest = float(diagonal.min())
    where = int(np.argmin(diagonal))
    if lowest < -tolerance:
        return lowest, where, rank, complete
    # the residual R = M - L L^H: every 2x2 principal minor must be positive semidefinite
    positive = np.clip(diagonal, 0.0, None)
    worst, worst_index = 0.0, where
    for i in range(size):
        residual = space.row(i) - factor[i, :rank] @ factor[:, :rank].conj().T
        mean = 0.5 * (positive[i] + positive)
        half_gap = 0.5 * (positive[i] - positive)
        minor = mean - np.sqrt(half_gap**2 + np.abs(residual) ** 2)
        minor[i] = positive[i]
        j = int(np.argmin(minor))
        if minor[j] < worst:
            worst, worst_index = float(minor[j]), i
    return min(worst, lowest), worst_index, rank, complete


def schwarz_and_diagonals(ham):
    """(largest Schwarz excess, lowest Coulomb (pp|qq), lowest exchange (pq|qp)), each followed by its Location.

    The excess |(qp|rs)| - sqrt((qp|pq)(sr|rs)) is taken over every element but (pq|qp) of a same-spin
    block, which is its own bound (-inf when no element is left).
    """
    two = ham.two_electron
    blocks = spin_blocks(two, ham.basis)
    n = ham.n
    same = [blocks[0]] if ham.basis != "unrestricted" else [blocks[0], blocks[2]]
    g = [exchange_diagonal(b, two.notation, two.storage, n).real for b in same]
    exchange_min, exchange_at = min(
        (float(x.min()), (i, np.unravel_index(int(np.argmin(x)), x.shape))) for i, x in enumerate(g)
    )
    coulomb_min, coulomb_at = np.inf, None
    schwarz, schwarz_at = -np.inf, None
    pairs = (
        [(blocks[0], g[0], g[0], None)]
        if ham.basis != "unrestricted"
        else [(blocks[0], g[0], g[0], "aa"), (blocks[1], g[0], g[1], "ab"), (blocks[2], g[1], g[1], "bb")]
    )
    idx = np.arange(n)
    for block, g_left, g_right, label in pairs:
        bound_right = np.sqrt(np.clip(g_right.T, 0.0, None))  # sqrt((sr|rs)) at [r, s]
        for p0, slab in chemist_slabs(block, two.notation, two.storage, n):
            rows = slice(p0, p0 + len(slab))
            bound = np.sqrt(np.clip(g_left[rows], 0.0, None))[:, :, None, None] * bound_right[None, None]
            excess = np.abs(slab) - bound
            if label != "ab":  # (pq|qp) is its own bound: it measures nothing
                local_rows = np.arange(len(slab))[:, None]
                excess[local_rows, idx[None, :], idx[None, :], local_rows + p0] = -np.inf
            peak = float(excess.max())
            if peak > schwarz:
                local = np.unravel_index(int(np.argmax(excess)), excess.shape)
                schwarz, schwarz_at = peak, at_element("two_electron", (int(local[0]) + p0, *local[1:]), label)
            local_rows = np.arange(len(slab))
            coulomb = slab[local_rows[:, None], (local_rows + p0)[:, None], idx[None, :], idx[None, :]].real
            low = float(coulomb.min())
            if low < coulomb_min:
                i, q = np.unravel_index(int(np.argmin(coulomb)), coulomb.shape)
                coulomb_min, coulomb_at = low, at_element("two_electron", (i + p0, i + p0, q, q), label)
    spin_label = None if ham.basis != "unrestricted" else ("aa" if exchange_at[0] == 0 else "bb")
    a, b = exchange_at[1]
    exchange_where = at_element("two_electron", (a, b, b, a), spin_label)
    return schwarz, schwarz_at, coulomb_min, coulomb_at, exchange_min, exchange_where


@register("two_electron.positive", limit=-1e-8, fails_when="below", needs_finite=True)
def check_positive(ham, ctx) -> Result:
    """Lowest of the pair matrix's eigenvalues (or pivots), (pp|qq), (pq|qp) and the Schwarz margin.

    The Schwarz margin is min sqrt((qp|pq)(sr|rs)) - |(qp|rs)| over the elements that are not their own
    bound; every one of the four is >= 0 for a Coulomb operator. For real integrals (pq|pq) meets the
    bound, so a valid file's value is 0 to rounding; the eigenvalue is in the details and the message.
    """
    two = ham.two_electron
    if not two.is_coulomb:
        return warned(
            f"not run: interaction: model (two_electron.interaction is {OUTSIDE_FINGERPRINT}); "
            "a model interaction (e.g. an attractive Hubbard U) need not be positive semidefinite",
            where=at_field("two_electron.interaction"),
        )
    if two.antisymmetrized:
        return skipped("antisymmetrized <pq||rs> is not a Coulomb pair matrix")
    limit = ctx.limit
    tolerance = -limit
    space = PairSpace(ham)
    itemsize = 16 if space.complex else 8
    if space.size <= EIGEN_PAIRS and 4 * space.size**2 * itemsize <= ctx.memory // 4:
        lowest, index = smallest_eigenvalue(space)
        method, rank, complete = "lowest eigenvalue", None, True
    else:
        budget_rank = max(1, int(ctx.memory // 4 // (space.size * 16)))
        lowest, index, rank, complete = cholesky_certificate(space, tolerance, budget_rank)
        method = "most negative Cholesky pivot or residual minor"
    schwarz, schwarz_at, coulomb, coulomb_at, exchange, exchange_at = schwarz_and_diagonals(ham)
    margin = -schwarz
    details = {
        "method": method,
        "pairs": space.size,
        "lowest": lowest,
        "schwarz_margin": margin,
        "coulomb_min": coulomb,
        "exchange_min": exchange,
    }
    if rank is not None:
        details["cholesky_rank"] = rank
    measured = [
        (
            lowest,
            f"the pair matrix is not positive semidefinite: {method} {figure(lowest)} at {space.label(index)}",
            space.location(index),
        ),
        (coulomb, f"Coulomb integral (pp|qq) = {figure(coulomb)} < 0 at {coulomb_at}", coulomb_at),
        (exchange, f"exchange integral (pq|qp) = {figure(exchange)} < 0 at {exchange_at}", exchange_at),
        (
            margin,
            f"the Schwarz bound |(qp|rs)| <= sqrt((qp|pq)(sr|rs)) is broken: margin {figure(margin)} at {schwarz_at}",
            schwarz_at,
        ),
    ]
    value = min(figure_value for figure_value, _, _ in measured)
    faults = sorted((item for item in measured if item[0] < limit), key=lambda item: item[0])
    if faults:
        text = "; ".join(text for _, text, _ in faults)
        return failed(
            f"{text}; a Coulomb operator cannot do this: the array may be in the wrong notation, "
            "altered, or a model interaction (declare interaction: model)",
            value=value,
            limit=limit,
            where=faults[0][2],
            details=details,
        )
    if not complete:
        return skipped(
            f"pivoted Cholesky reached the memory budget at rank {rank} "
            f"of {space.size} pairs without finishing; raise --memory",
            value=value,
            limit=limit,
            details=details,
        )
    return passed(
        f"positive semidefinite ({method} {figure(lowest)} over {space.size} pairs); the lowest of that, "
        f"Coulomb, exchange and the Schwarz margin is {figure(value)}",
        value=value,
        limit=limit,
        details=details,
    )
