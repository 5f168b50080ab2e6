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

from integrity.errors import BudgetError, FieldError
from integrity.io.document import format_bytes
from integrity.solver.davidson import default_max_space
from integrity.solver.sigma_two_string import DEFAULT_BLOCK, block_bytes
from integrity.solver.string_hamiltonian import string_hamiltonian_bytes

__all__ = [
    "MemoryEstimate",
    "estimate_memory",
    "require_budget",
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


def _davidson_bytes(ndet: int, nroots: int, itemsize: int) -> int:
    return (2 * default_max_space(nroots) + 4 * nroots + 2) * ndet * itemsize


def two_string_memory(
    n: int,
    n_alpha: int,
    n_beta: int,
    *,
    nroots: int = 1,
    itemsize: int = 8,
    packed: bool = True,
    ndet: int | None = None,
    budget: int | None = None,
    block: int = DEFAULT_BLOCK,
) -> MemoryEstimate:
    """Estimate for restricted or unrestricted orbitals; ``ndet`` is the searched dimension.

    With a ``budget`` the beta block is shrunk (down to one string) until the
    total fits, when that is possible.
    """
    na, nb = comb(n, n_alpha), comb(n, n_beta)
    full = na * nb
    ndet = full if ndet is None else ndet
    npair = n * (n + 1) // 2 if packed else n * n
    nent_a = n_alpha * (n - n_alpha + 1)
    nent_b = n_beta * (n - n_beta + 1)
    parts = {
        "davidson": _davidson_bytes(ndet, nroots, itemsize),
        "sigma vectors": 6 * full * itemsize + 8 * full,
        "tables": 50 * (na * nent_a + nb * nent_b) + 8 * npair * nb,
        "string hamiltonians": string_hamiltonian_bytes(na, nent_a, itemsize)
        + string_hamiltonian_bytes(nb, nent_b, itemsize),
        "integrals": 4 * (npair * npair + n**4) * itemsize,
    }
    fixed = sum(parts.values())
    block = max(1, min(block, nb))
    if budget is not None:
        while block > 1 and fixed + block_bytes(npair, na, nent_a, block, itemsize) > budget:
            block //= 2
    parts["block scratch"] = block_bytes(npair, na, nent_a, block, itemsize)
    return MemoryEstimate(sum(parts.values()), parts, block, ndet)


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
    return MemoryEstimate(sum(parts.values()), parts, block, ndet)


def with_roots(estimate: MemoryEstimate, nroots: int, itemsize: int) -> MemoryEstimate:
    """The same estimate with the Davidson part redone for ``nroots`` roots.

    >>> e = spin_orbital_memory(4, 2, 6, 6)
    >>> with_roots(e, 3, 8).total > e.total
    True
    """
    parts = dict(estimate.parts)
    parts["davidson"] = _davidson_bytes(estimate.determinants, nroots, itemsize)
    return MemoryEstimate(sum(parts.values()), parts, estimate.block, estimate.determinants)


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
