"""One eigenproblem of the native solver: the searched space and its operators.

A :class:`Problem` is the record the targeting step works on: a space of
``ndet`` determinants (one ``(n_alpha, n_beta)`` or ``S_z`` sector, optionally
only the determinants of one irrep), the exact diagonal, ``matvec`` (sigma
on that space) and, when they exist, a projector and the ``S^2`` matrix in a
set of vectors. Vectors are flat arrays over the searched determinants.

Two-string problems (restricted, unrestricted) hold a vector as the blocks
``c[Ga, Gb]`` of the target irrep (:mod:`irrep_blocks`; one block ``c[Ia, Ib]``
without a target) and sigma works on those blocks only. For restricted
orbitals with ``n_alpha == n_beta`` a spin-flip parity may be imposed:
swapping alpha and beta strings maps ``c`` to ``c.T`` and a state of spin
``S`` to ``(-1)**S`` times itself, so ``(c + parity * c.T) / 2`` keeps only
even (parity +1) or odd (parity -1) ``S``.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from integrity.errors import FieldError
from integrity.solver.davidson import PSpace, lowest_indices
from integrity.solver.integrals import pair_symmetric, spin_labels, spin_orbital_integrals, sz_coupling
from integrity.solver.irrep_blocks import block_layout
from integrity.solver.memory import (
    MemoryEstimate,
    fitting_space,
    require_budget,
    spin_orbital_memory,
    two_string_memory,
)
from integrity.solver.point_group import spin_orbital_irreps, string_irreps
from integrity.solver.sigma_blocked import build_blocked, sigma_blocked
from integrity.solver.sigma_spin_orbital import (
    build_spin_orbital,
    intermediate_strings,
    sigma_spin_orbital,
)
from integrity.solver.slater_condon import determinant_list, hamiltonian_matrix
from integrity.solver.spin import (
    spin_orbital_raising,
    spin_square_matrix_blocked,
    spin_square_matrix_spin_orbital,
)
from integrity.solver.strings import strings

__all__ = [
    "PSPACE_SIZE",
    "SZ_TOLERANCE",
    "Problem",
    "spin_orbital_problem",
    "sz_conserved",
    "two_string_problem",
]

PSPACE_SIZE = 400
"""Determinants treated exactly in the Davidson preconditioner and start (a few hundred is common practice)."""

SZ_TOLERANCE = 1e-14
"""S_z-changing elements up to this size (relative to the largest) count as zero."""


@dataclass(frozen=True)
class Problem:
    """The searched space and its operators; energies exclude ``ecore``."""

    ndet: int
    dtype: np.dtype
    diagonal: np.ndarray
    matvec: Callable
    project: Callable | None
    spin_square: Callable | None
    det_irreps: np.ndarray | None
    memory: MemoryEstimate
    notes: tuple
    irrep: int | None = None
    pspace: PSpace | None = None


def _irrep_selection(labels: np.ndarray, irrep):
    if irrep is None:
        return None
    keep = np.flatnonzero(labels.ravel() == irrep)
    if len(keep) == 0:
        raise FieldError("irrep", f"no determinant of this sector has irrep {irrep}")
    return keep


def two_string_problem(
    basis: str,
    h1,
    eri,
    n_alpha: int,
    n_beta: int,
    *,
    irreps=None,
    irrep=None,
    parity=None,
    nroots: int = 1,
    budget: int | None = None,
    spin_square: bool | None = None,
) -> Problem:
    """Restricted or unrestricted problem in the sector ``(n_alpha, n_beta)``.

    With orbital ``irreps`` and a target ``irrep`` the vectors hold only the
    blocks of that irrep (:mod:`irrep_blocks`) and sigma works on them alone.
    ``S^2`` is available for restricted orbitals, or when ``spin_square`` says
    that alpha and beta orbitals of one index share a spatial function.
    """
    n = h1.shape[-1]
    if basis == "restricted":
        ha = hb = h1
        gaa = gab = gbb = eri
    else:
        ha, hb = h1[0], h1[1]
        gaa, gab, gbb = eri[0], eri[1], eri[2]
    if parity is not None and (basis != "restricted" or n_alpha != n_beta):
        raise FieldError("two_s", "spin-flip parity needs restricted orbitals and n_alpha == n_beta")
    dtype = np.result_type(h1, eri, np.float64)
    layout = block_layout(n, n_alpha, n_beta, irreps, irrep)
    estimate = two_string_memory(
        n,
        n_alpha,
        n_beta,
        nroots=nroots,
        itemsize=np.dtype(dtype).itemsize,
        packed=dtype == np.float64 and pair_symmetric(gab),
        layout=layout,
    )
    if budget is not None:
        fitting_space(estimate, nroots, np.dtype(dtype).itemsize, budget)
    op = build_blocked(ha, hb, gaa, gab, gbb, layout)

    def flip(v):
        return 0.5 * (v + parity * layout.transpose(v))

    def matvec(v):
        out = sigma_blocked(op, v)
        return flip(out) if parity is not None else out

    def spin_square_matrix(rows):
        return spin_square_matrix_blocked(rows, layout)

    if spin_square is None:
        spin_square = basis == "restricted"

    pspace = _pspace(basis, h1, eri, layout, op.diagonal) if layout.size > PSPACE_SIZE else None
    labels = None
    if irreps is not None and irrep is None:  # whole sector: label each determinant to report root irreps
        labels = (
            string_irreps(strings(n, n_alpha), irreps)[:, None] ^ string_irreps(strings(n, n_beta), irreps)[None, :]
        ).ravel()
    notes = []
    if irrep is not None:
        notes.append(f"space restricted to irrep {irrep}: {layout.size} of {layout.full_size} determinants")
    return Problem(
        ndet=layout.size,
        dtype=op.dtype,
        diagonal=op.diagonal,
        matvec=matvec,
        project=flip if parity is not None else None,
        spin_square=spin_square_matrix if spin_square else None,
        det_irreps=labels,
        memory=estimate,
        notes=tuple(notes),
        irrep=None if irrep is None else int(irrep),
        pspace=pspace,
    )


def _pspace(basis, h1, eri, layout, diagonal) -> PSpace:
    """``H_PP`` over the ``PSPACE_SIZE`` determinants of lowest diagonal (Slater–Condon rules)."""
    chosen = np.sort(lowest_indices(diagonal, PSPACE_SIZE))
    offsets = np.array([b.offset for b in layout.blocks])
    block = np.searchsorted(offsets, chosen, side="right") - 1
    alpha_strings = strings(len(layout.orbital_irreps), layout.n_alpha)
    beta_strings = strings(len(layout.orbital_irreps), layout.n_beta)
    dets = np.empty(len(chosen), dtype=np.int64)
    for k, b in enumerate(layout.blocks):
        mine = block == k
        row, col = np.divmod(chosen[mine] - b.offset, b.cols)
        a = alpha_strings[layout.alpha.members(b.alpha_irrep)[row]]
        c = beta_strings[layout.beta.members(b.beta_irrep)[col]]
        dets[mine] = a | (c << np.int64(len(layout.orbital_irreps)))
    h, g = spin_orbital_integrals(basis, h1, eri, layout="blocked")
    return PSpace(chosen, hamiltonian_matrix(h, g, dets))


def sz_conserved(h, eri, layout: str) -> bool:
    """True when no element that changes ``S_z`` exceeds ``SZ_TOLERANCE`` (relative)."""
    scale = max(1.0, float(np.max(np.abs(h), initial=0.0)), float(np.max(np.abs(eri), initial=0.0)))
    return sz_coupling(h, eri, layout) <= SZ_TOLERANCE * scale


def _has_mixed_pairs(eri, layout: str) -> bool:
    spin = spin_labels(eri.shape[0], layout)
    mixed = spin[:, None] != spin[None, :]
    return bool(np.any(eri[mixed]) or np.any(eri[:, :, mixed]))


def spin_orbital_problem(
    h,
    eri,
    n_electrons: int,
    layout: str,
    *,
    n_alpha=None,
    irreps=None,
    irrep=None,
    nroots: int = 1,
    budget: int | None = None,
) -> Problem:
    """Spin-orbital problem: all ``n_electrons`` strings, or one ``n_alpha`` sector."""
    m = h.shape[0]
    dets = determinant_list(m, n_electrons, layout=layout, n_alpha=n_alpha)
    labels = None
    if irreps is not None:
        labels = string_irreps(dets, spin_orbital_irreps(irreps, layout))
    if irrep is not None:
        keep = _irrep_selection(labels, irrep)
        full_count = len(dets)
        dets, labels = dets[keep], labels[keep]
    if n_alpha is None and irrep is None:
        intermediates = dets
        near = len(dets)
    elif n_alpha is not None and not _has_mixed_pairs(eri, layout):
        intermediates = determinant_list(m, n_electrons, layout=layout, n_alpha=n_alpha)
        near = len(intermediates)
    else:
        intermediates = intermediate_strings(dets, m)
        near = len(intermediates)
    dtype = np.result_type(h, eri, np.float64)
    estimate = spin_orbital_memory(m, n_electrons, len(dets), near, nroots=nroots, itemsize=np.dtype(dtype).itemsize)
    if budget is not None:
        require_budget(estimate, budget)
    op = build_spin_orbital(h, eri, n_electrons, dets, intermediates=intermediates, block=estimate.block)
    raising = spin_orbital_raising(dets, m, layout)

    def matvec(v):
        return sigma_spin_orbital(op, v)

    def spin_square(rows):
        return spin_square_matrix_spin_orbital(rows, dets, m, layout, raising=raising)

    notes = []
    if irrep is not None:
        notes.append(f"space restricted to irrep {irrep}: {len(dets)} of {full_count} determinants")
    return Problem(
        ndet=len(dets),
        dtype=op.dtype,
        diagonal=op.diagonal,
        matvec=matvec,
        project=None,
        spin_square=spin_square,
        det_irreps=labels,
        memory=estimate,
        notes=tuple(notes),
    )
