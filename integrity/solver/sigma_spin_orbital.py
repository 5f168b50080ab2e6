"""Sigma ``H c`` over determinants that are single strings of spin orbitals.

The determinants are any sorted set ``S`` of strings of ``N`` electrons in ``m``
spin orbitals (all of them, one ``S_z`` sector, one irrep). With
``E_pq = a†_p a_q`` over spin orbitals and ``N > 0``::

    H = sum_pq h_pq E_pq + 1/2 sum_pqrs (pq|rs) (E_pq E_rs - delta_qr E_ps)
      = 1/2 sum_pqrs g_pqrs E_pq E_rs          (on N-electron states)
    g_pqrs = (pq|rs) + (k_pq delta_rs + delta_pq k_rs) / N,  k_pq = h_pq - 1/2 sum_r (pr|rq)

resolved through intermediate strings ``K`` (all ``N``-electron strings that
one ``E_rs`` reaches from ``S``, so ``sigma`` is exactly ``P_S H P_S c``)::

    D[rs, K] = sum_J <K|E_rs|J> c[J],   G = g @ D,   sigma[J] = 1/2 sum_pq,K <J|E_pq|K> G[pq, K]

Both steps use one list of entries ``<K|E_pq|J> = sign`` (then
``<J|E_qp|K> = sign``). No symmetry beyond Hermiticity is assumed, so the
arrays may couple alpha and beta or be an antisymmetrized case written in plain
form. Blocks of intermediates bound the scratch memory.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from integrity.solver.linalg import matmul
from integrity.solver.strings import occupation_matrix
from integrity.solver.tables import excitation_entries

__all__ = [
    "SpinOrbitalHamiltonian",
    "build_spin_orbital",
    "folded_pair_matrix",
    "intermediate_strings",
    "sigma_spin_orbital",
]


@dataclass(frozen=True)
class SpinOrbitalHamiltonian:
    """Precomputed data of :func:`sigma_spin_orbital`; energies exclude ``ecore``."""

    m: int
    n_electrons: int
    dtype: np.dtype
    determinants: np.ndarray
    n_intermediate: int
    entry_target: np.ndarray
    entry_pair: np.ndarray
    entry_adjoint_pair: np.ndarray
    entry_source: np.ndarray
    entry_sign: np.ndarray
    block_bounds: np.ndarray
    pair_matrix: np.ndarray
    diagonal: np.ndarray


def folded_pair_matrix(h, eri, n_electrons: int) -> np.ndarray:
    """``g[pq, rs] = (pq|rs) + (k_pq delta_rs + delta_pq k_rs) / N`` as an (m², m²) matrix.

    >>> g = folded_pair_matrix(np.eye(1), np.zeros((1, 1, 1, 1)), 1)
    >>> g.tolist()       # 1/2 g E E = 1/2 * 2 * N on one electron: h
    [[2.0]]
    """
    m = h.shape[0]
    k = h - 0.5 * np.einsum("prrq->pq", eri)
    eye = np.eye(m)
    g = eri + (np.einsum("pq,rs->pqrs", k, eye) + np.einsum("pq,rs->pqrs", eye, k)) / n_electrons
    return np.ascontiguousarray(g.reshape(m * m, m * m))


def intermediate_strings(determinants: np.ndarray, m: int) -> np.ndarray:
    """Sorted strings reachable from ``determinants`` by one ``E_pq`` (themselves included)."""
    if len(determinants) == 0:
        return determinants
    occupied = occupation_matrix(determinants, m).astype(bool)
    reached = [determinants]
    for p in range(m):
        for q in range(m):
            if p == q:
                continue
            ok = occupied[:, q] & ~occupied[:, p]
            reached.append((determinants[ok] ^ (np.int64(1) << q)) | (np.int64(1) << p))
    return np.unique(np.concatenate(reached))


def build_spin_orbital(
    h, eri, n_electrons: int, determinants: np.ndarray, *, intermediates: np.ndarray | None = None, block: int = 4096
) -> SpinOrbitalHamiltonian:
    """Precompute tables, folded integrals and the exact diagonal.

    ``intermediates`` defaults to every string one ``E_pq`` reaches; a caller who
    knows that fewer carry nonzero integrals may pass a smaller (sorted) set.
    """
    h = np.asarray(h)
    eri = np.asarray(eri)
    m = h.shape[0]
    dtype = np.result_type(h, eri, np.float64)
    determinants = np.asarray(determinants, dtype=np.int64)
    if intermediates is None:
        intermediates = intermediate_strings(determinants, m)
    target, p, q, source, sign = excitation_entries(intermediates, determinants, m)
    bounds = np.searchsorted(target, np.arange(0, len(intermediates) + block, block))
    bounds = np.unique(np.minimum(bounds, len(target)))
    pair_matrix = folded_pair_matrix(h, eri, n_electrons) if n_electrons else np.zeros((m * m, m * m), dtype=dtype)
    occ = occupation_matrix(determinants, m)
    coulomb = np.real(np.einsum("ppqq->pq", eri))
    exchange = np.real(np.einsum("pqqp->pq", eri))
    diagonal = occ @ np.real(np.diag(h)) + 0.5 * np.einsum("ip,pq,iq->i", occ, coulomb - exchange, occ)
    return SpinOrbitalHamiltonian(
        m=m,
        n_electrons=n_electrons,
        dtype=np.dtype(dtype),
        determinants=determinants,
        n_intermediate=len(intermediates),
        entry_target=target,
        entry_pair=p * m + q,
        entry_adjoint_pair=q * m + p,
        entry_source=source,
        entry_sign=sign.astype(np.float64),
        block_bounds=bounds,
        pair_matrix=pair_matrix.astype(dtype),
        diagonal=diagonal,
    )


def sigma_spin_orbital(op: SpinOrbitalHamiltonian, c: np.ndarray) -> np.ndarray:
    """``sigma = P_S H P_S c`` for ``c`` over ``op.determinants``.

    >>> from integrity.solver.strings import strings
    >>> h = np.array([[0.0, -1.0], [-1.0, 0.0]])
    >>> op = build_spin_orbital(h, np.zeros((2, 2, 2, 2)), 1, strings(2, 1))
    >>> sigma_spin_orbital(op, np.array([1.0, 0.0])).tolist()
    [0.0, -1.0]
    """
    dtype = np.result_type(op.dtype, c.dtype)
    c = np.asarray(c, dtype=dtype)
    out = np.zeros(len(op.determinants), dtype=dtype)
    if op.n_electrons == 0:
        return out
    npair = op.pair_matrix.shape[0]
    for lo, hi in zip(op.block_bounds[:-1], op.block_bounds[1:], strict=True):
        if hi == lo:
            continue
        target = op.entry_target[lo:hi]
        first = int(target[0])
        width = int(target[-1]) - first + 1
        local = target - first
        d = np.zeros((npair, width), dtype=dtype)
        d[op.entry_pair[lo:hi], local] = op.entry_sign[lo:hi] * c[op.entry_source[lo:hi]]
        g = matmul(op.pair_matrix, d)
        values = 0.5 * op.entry_sign[lo:hi] * g[op.entry_adjoint_pair[lo:hi], local]
        source = op.entry_source[lo:hi]
        out.real += np.bincount(source, weights=values.real, minlength=len(out))
        if np.iscomplexobj(out):
            out.imag += np.bincount(source, weights=values.imag, minlength=len(out))
    return out
