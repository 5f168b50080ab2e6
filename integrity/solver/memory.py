"""Memory estimates of a solve, in bytes, made before anything large is allocated.

A solve holds: the Davidson basis and its images (``2 * max_space`` vectors),
Ritz vectors, images, residuals and corrections (``4 * nroots + 2``), the
full-size work arrays of one sigma, the excitation tables, the string
Hamiltonians and the per-block scratch of the alpha-beta contraction. The
figures are upper estimates of what numpy allocates, not measurements.

>>> estimate_memory("restricted", 2, n_alpha=1, n_beta=1) > 0
True
"""

from __future__ import annotations

from dataclasses import dataclass
from math import comb

import numpy as np

from integrity.errors import BudgetError, FieldError
from integrity.io.document import format_bytes
from integrity.solver.davidson import default_max_space
from integrity.solver.irrep_blocks import BlockLayout, block_layout
from integrity.solver.parallel import workers
from integrity.solver.sigma_blocked import SCRATCH_BYTES, unit_scratch_bytes
from integrity.solver.string_hamiltonian import string_hamiltonian_bytes

__all__ = [
    "MemoryEstimate",
    "estimate_memory",
    "fitting_space",
    "require_budget",
    "smallest_space",
    "spin_orbital_memory",
    "two_string_memory",
    "with_roots",
]


@dataclass(frozen=True)
class MemoryEstimate:
    """Bytes by part; ``total`` is their sum and ``block`` the chosen block size."""

    total: int
    parts: dict
    block: int
    determinants: int


SIGMA_VECTORS = 3
"""Vector-sized arrays besides Davidson's: the diagonal, and in sigma the result and the transposed source copy."""


def _davidson_bytes(ndet: int, nroots: int, itemsize: int, max_space: int | None = None) -> int:
    space = max(default_max_space(nroots) if max_space is None else max_space, 2 * nroots)
    return (2 * space + 4 * nroots + 2) * ndet * itemsize


def smallest_space(nroots: int) -> int:
    """Fewest Davidson basis vectors a solve of ``nroots`` roots may shrink to under a tight budget.

    >>> smallest_space(1), smallest_space(4)
    (6, 8)
    """
    return max(6, 2 * nroots)


def fitting_space(estimate: MemoryEstimate, nroots: int, itemsize: int, budget: int) -> int:
    """The largest Davidson basis (from the default down to :func:`smallest_space`) that fits ``budget``.

    Raises :class:`BudgetError` when even the smallest does not fit.
    """
    space = max(default_max_space(nroots), smallest_space(nroots))
    while space > smallest_space(nroots) and with_roots(estimate, nroots, itemsize, space).total > budget:
        space -= 1
    require_budget(with_roots(estimate, nroots, itemsize, space), budget)
    return space


def _string_matrix_bytes(sizes, nent: int, itemsize: int) -> tuple[int, int]:
    """Bytes of the blocks of one string Hamiltonian, and the build scratch of the largest one."""
    sizes = [size for size in sizes if size]
    held = [string_hamiltonian_bytes(size, nent, itemsize, scratch=False) for size in sizes]
    full = [string_hamiltonian_bytes(size, nent, itemsize) for size in sizes]
    return sum(held), max((f - h for f, h in zip(full, held, strict=True)), default=0)


RUNNING = ("davidson", "sigma vectors", "block scratch")
"""Parts alive only while Davidson runs; ``build scratch`` is alive only before."""


def _total(parts: dict) -> int:
    """Peak bytes: what is held throughout, plus the larger of the build scratch and the running parts."""
    held = sum(v for k, v in parts.items() if k not in RUNNING and k != "build scratch")
    return int(held + max(parts.get("build scratch", 0), sum(parts.get(k, 0) for k in RUNNING)))


def two_string_memory(
    n: int,
    n_alpha: int,
    n_beta: int,
    *,
    nroots: int = 1,
    itemsize: int = 8,
    packed: bool = True,
    layout: BlockLayout | None = None,
) -> MemoryEstimate:
    """Estimate for restricted or unrestricted orbitals over the blocks of ``layout``.

    Without a layout, the single block of the whole sector. Only the stored
    blocks count: vectors, string-Hamiltonian blocks, gathers and the scratch
    of one alpha-beta unit per worker thread.
    """
    if layout is None:
        layout = block_layout(n, n_alpha, n_beta)
    ndet = layout.size
    na, nb = comb(n, n_alpha), comb(n, n_beta)
    npair = n * (n + 1) // 2 if packed else n * n
    nent_a = n_alpha * (n - n_alpha + 1)
    nent_b = n_beta * (n - n_beta + 1)
    rows = {b.alpha_irrep: b.rows for b in layout.blocks}
    cols = {b.beta_irrep: b.cols for b in layout.blocks}
    tables = 33 * (na * nent_a + (nb * nent_b if n_alpha != n_beta else 0))
    gathers = 24 * nent_b * sum(cols.values())
    alpha_side = 32 * nent_a * sum(rows.values())
    offsets, scratch = 0, 0
    if nent_a and nent_b:
        pair_counts = _pair_counts(layout.orbital_irreps, packed)
        for block in layout.blocks:
            sizes = [(pair_counts[g], layout.alpha.size(block.alpha_irrep ^ g)) for g in range(8)]
            total = sum(p * r for p, r in sizes)
            largest = max(p * r for p, r in sizes)
            per_width = unit_scratch_bytes(block.rows, nent_a, total, largest, 1, itemsize)
            width = max(1, min(block.cols, SCRATCH_BYTES // max(1, per_width)))
            offsets += 8 * block.rows * nent_a * (width + block.cols % width)
            scratch = max(scratch, per_width * width)
    same = n_alpha == n_beta and set(rows) >= set(cols)
    alpha_held, alpha_build = _string_matrix_bytes(rows.values(), nent_a, itemsize)
    beta_held, beta_build = (0, 0) if same else _string_matrix_bytes(cols.values(), nent_b, itemsize)
    parts = {
        "davidson": _davidson_bytes(ndet, nroots, itemsize),
        "sigma vectors": SIGMA_VECTORS * ndet * itemsize,
        "tables": tables + gathers + alpha_side + offsets,
        "string hamiltonians": alpha_held + beta_held,
        "integrals": 4 * (npair * npair + n**4) * itemsize,
        "block scratch": workers() * scratch,
        "build scratch": max(alpha_build, beta_build),
    }
    return MemoryEstimate(_total(parts), parts, 0, ndet)


def _pair_counts(orbital_irreps, packed: bool) -> np.ndarray:
    labels = np.asarray(orbital_irreps, dtype=np.int64)
    n = len(labels)
    p, q = np.tril_indices(n) if packed else np.divmod(np.arange(n * n), n)
    return np.bincount(labels[p] ^ labels[q], minlength=8)


def spin_orbital_memory(
    m: int, n_electrons: int, ndet: int, n_intermediate: int, *, nroots: int = 1, itemsize: int = 8, block: int = 4096
) -> MemoryEstimate:
    """Estimate for the one-string spin-orbital sigma over ``ndet`` determinants."""
    entries = n_intermediate * n_electrons * (m - n_electrons + 1)
    block = max(1, min(block, n_intermediate))
    parts = {
        "davidson": _davidson_bytes(ndet, nroots, itemsize),
        "tables": 7 * 8 * entries + 8 * (ndet + n_intermediate) * (m + 2),
        "block scratch": 2 * m * m * block * itemsize + 4 * entries * block // max(1, n_intermediate) * 8,
        "integrals": 4 * m**4 * itemsize,
        "sigma vectors": 4 * ndet * itemsize,
    }
    return MemoryEstimate(_total(parts), parts, block, ndet)


def with_roots(estimate: MemoryEstimate, nroots: int, itemsize: int, max_space: int | None = None) -> MemoryEstimate:
    """The same estimate with the Davidson part redone for ``nroots`` roots (and ``max_space`` vectors).

    >>> e = spin_orbital_memory(4, 2, 6, 6)
    >>> with_roots(e, 3, 8).total > e.total
    True
    """
    parts = dict(estimate.parts)
    parts["davidson"] = _davidson_bytes(estimate.determinants, nroots, itemsize, max_space)
    return MemoryEstimate(_total(parts), parts, estimate.block, estimate.determinants)


def require_budget(estimate: MemoryEstimate, budget: int) -> None:
    """Raise :class:`BudgetError` with the figures when ``estimate`` exceeds ``budget``."""
    if estimate.total > budget:
        largest = max(estimate.parts, key=estimate.parts.get)
        raise BudgetError(
            "memory",
            f"a solve over {estimate.determinants} determinants needs about "
            f"{format_bytes(estimate.total)} (largest part: {largest}, "
            f"{format_bytes(estimate.parts[largest])}) but the budget is "
            f"{format_bytes(budget)} (--memory)",
            needed=estimate.total,
            budget=budget,
            size=estimate.determinants,
        )


def estimate_memory(
    basis: str,
    n_orbitals: int,
    *,
    n_alpha=None,
    n_beta=None,
    n_electrons=None,
    nroots: int = 1,
    complex_values: bool = False,
    sz_conserved: bool = True,
) -> int:
    """Bytes a native solve of this size needs (before any irrep restriction).

    ``n_orbitals`` counts spatial orbitals for "restricted"/"unrestricted" and spin
    orbitals for "spin-orbital".

    >>> estimate_memory("restricted", 14, n_alpha=7, n_beta=7) > 10 * 3432**2 * 8
    True
    """
    itemsize = 16 if complex_values else 8
    if basis in ("restricted", "unrestricted"):
        if n_alpha is None or n_beta is None:
            if n_electrons is None:
                raise FieldError("n_electrons", "give n_alpha and n_beta, or n_electrons")
            n_alpha, n_beta = (n_electrons + 1) // 2, n_electrons // 2
        return two_string_memory(
            n_orbitals, n_alpha, n_beta, nroots=nroots, itemsize=itemsize, packed=not complex_values
        ).total
    if basis != "spin-orbital":
        raise FieldError("basis", f"expected restricted, unrestricted or spin-orbital, got {basis!r}")
    if n_electrons is None:
        if n_alpha is None or n_beta is None:
            raise FieldError("n_electrons", "give n_electrons (or n_alpha and n_beta)")
        n_electrons = n_alpha + n_beta
    n = n_orbitals // 2
    if sz_conserved:
        if n_alpha is None:
            n_alpha = (n_electrons + 1) // 2
        n_beta = n_electrons - n_alpha
        ndet = comb(n, n_alpha) * comb(n, n_beta)
        near = sum(
            comb(n, a) * comb(n, n_electrons - a) for a in (n_alpha - 1, n_alpha, n_alpha + 1) if 0 <= a <= n_electrons
        )
    else:
        ndet = near = comb(n_orbitals, n_electrons)
    return spin_orbital_memory(n_orbitals, n_electrons, ndet, near, nroots=nroots, itemsize=itemsize).total
