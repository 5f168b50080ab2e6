"""The slow, obviously right solver: the Hamiltonian matrix by the Slater–Condon rules, and ``eigh``.

Determinants are spin-orbital strings (bit ``p`` set = spin orbital ``p``
occupied, creators in ascending order on the vacuum). Matrix elements follow
the Slater–Condon rules with explicit fermionic signs, for plain chemist
integrals over spin orbitals (``H = sum h_pq a†p aq + 1/2 sum (pq|rs) a†p a†r as aq``)::

    <I|H|I> = sum_{p in I} h_pp + 1/2 sum_{p, q in I} [(pp|qq) - (pq|qp)]
    <I|H|J> = sign * (h_pq + sum_{r in J} [(pq|rr) - (pr|rq)])     I = a†p aq J
    <I|H|J> = sign * ((pq|rs) - (ps|rq))                         I = a†p a†r as aq J

with ``sign = <I|a†p aq|J>`` or ``<I|a†p a†r as aq|J>`` (``p < r``, ``q < s``)
found by applying the operators one at a time. Restricted and unrestricted
arrays are expanded to spin orbitals first (:func:`spin_orbital_integrals`).
Only for a few thousand determinants: beyond ``max_determinants`` a
:class:`BudgetError` is raised.

>>> h = np.array([[0.0, -1.0], [-1.0, 0.0]]); eri = np.zeros((2, 2, 2, 2))
>>> eri[0, 0, 0, 0] = eri[1, 1, 1, 1] = 4.0
>>> result = slater_condon_solve("restricted", h, eri, 0.0, n_alpha=1, n_beta=1)
>>> np.round(result.energies, 10).tolist()     # U/2 - sqrt(U²/4 + 4t²), 0, U, ...
[-0.8284271247, 0.0, 4.0, 4.8284271247]
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from integrity.errors import BudgetError, FieldError
from integrity.solver.integrals import (
    alpha_index,
    beta_index,
    require_arrays,
    spin_orbital_integrals,
)
from integrity.solver.point_group import spin_orbital_irreps, string_irreps
from integrity.solver.strings import (
    annihilate,
    annihilate_many,
    create,
    create_many,
    popcount,
    strings,
)

__all__ = [
    "MAX_DENSE_DETERMINANTS",
    "SlaterCondonResult",
    "dense_spin_square",
    "determinant_list",
    "hamiltonian_matrix",
    "slater_condon_solve",
]

MAX_DENSE_DETERMINANTS = 4000


@dataclass(frozen=True)
class SlaterCondonResult:
    """All (or the lowest ``nroots``) eigenpairs; energies include ``ecore``."""

    energies: np.ndarray
    vectors: np.ndarray
    determinants: np.ndarray
    s_squared: np.ndarray | None
    irreps: np.ndarray | None


def determinant_list(
    m: int, n_electrons: int, *, layout: str = "blocked", n_alpha=None, irreps=None, irrep=None
) -> np.ndarray:
    """Sorted spin-orbital strings of ``n_electrons`` in ``m``, optionally filtered.

    ``n_alpha`` keeps determinants with that many alpha electrons (``layout``
    says which spin orbitals are alpha); ``irrep`` keeps those of that irrep
    (``irreps`` are the spatial orbital irreps).

    >>> determinant_list(4, 2, layout="interleaved", n_alpha=1).tolist()
    [3, 6, 9, 12]
    """
    dets = strings(m, n_electrons)
    if n_alpha is not None:
        mask = np.int64(sum(1 << int(a) for a in alpha_index(m // 2, layout)))
        dets = dets[popcount(dets & mask) == n_alpha]
    if irrep is not None:
        dets = dets[string_irreps(dets, spin_orbital_irreps(irreps, layout)) == irrep]
    return dets


def _bit_index(single_bits: np.ndarray) -> np.ndarray:
    """Position of the only set bit of each element."""
    return popcount(single_bits - 1)


def _lowest_two(bits: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    low = bits & -bits
    rest = bits ^ low
    return _bit_index(low), _bit_index(rest & -rest)


def _apply(ops, strs):
    """Apply ``[(kind, orbital array), ...]`` right to left; kind 'a' or 'c'. Return sign."""
    sign = np.ones(strs.shape, dtype=np.int64)
    for kind, orb in reversed(ops):
        strs, s = (annihilate_many if kind == "a" else create_many)(strs, orb)
        sign *= s
    return sign


def hamiltonian_matrix(h, eri, dets: np.ndarray) -> np.ndarray:
    """``<I|H|J>`` over the spin-orbital determinants ``dets`` (no ``ecore``)."""
    h = np.asarray(h)
    eri = np.asarray(eri)
    m = h.shape[0]
    dets = np.asarray(dets, dtype=np.int64)
    d = len(dets)
    dtype = np.result_type(h, eri, np.float64)
    out = np.zeros((d, d), dtype=dtype)
    occ = ((dets[:, None] >> np.arange(m)) & 1).astype(np.float64)
    coulomb = np.einsum("ppqq->pq", eri)
    exchange = np.einsum("pqqp->pq", eri)
    out[np.arange(d), np.arange(d)] = occ @ np.diag(h) + 0.5 * np.einsum("ip,pq,iq->i", occ, coulomb - exchange, occ)
    one_body_mean = np.einsum("pqrr->pqr", eri) - np.einsum("prrq->pqr", eri)
    for start in range(0, d, 256):
        rows = np.arange(start, min(d, start + 256))
        diff = dets[rows, None] ^ dets[None, :]
        excitation = popcount(diff)
        i, j = np.nonzero(excitation == 2)
        i = rows[i]
        created = dets[i] & ~dets[j]
        removed = dets[j] & ~dets[i]
        p, q = _bit_index(created), _bit_index(removed)
        sign = _apply([("c", p), ("a", q)], dets[j])
        mean = np.einsum("kr,kr->k", one_body_mean[p, q], occ[j])
        out[i, j] = sign * (h[p, q] + mean)
        i, j = np.nonzero(excitation == 4)
        i = rows[i]
        created = dets[i] & ~dets[j]
        removed = dets[j] & ~dets[i]
        p, r = _lowest_two(created)
        q, s = _lowest_two(removed)
        sign = _apply([("c", p), ("c", r), ("a", s), ("a", q)], dets[j])
        out[i, j] = sign * (eri[p, q, r, s] - eri[p, s, r, q])
    return out


def dense_spin_square(dets: np.ndarray, m: int, layout: str) -> np.ndarray:
    """The ``S^2`` matrix over ``dets``: ``S_- S_+ + S_z^2 + S_z``, operator by operator.

    ``S_+ = sum_i a†_{alpha i} a_{beta i}``; assumes the alpha and beta spin
    orbitals of one spatial index share a spatial function.

    >>> np.round(dense_spin_square(np.array([0b0110, 0b1001]), 4, "interleaved"), 12).tolist()
    [[1.0, 1.0], [1.0, 1.0]]
    """
    n = m // 2
    pairs = list(zip(alpha_index(n, layout).tolist(), beta_index(n, layout).tolist(), strict=True))
    raised: dict[int, int] = {}
    entries = []
    for column, det in enumerate(np.asarray(dets).tolist()):
        for up, down in pairs:
            middle, first = annihilate(det, down)
            new, second = create(middle, up)
            if first * second:
                entries.append((raised.setdefault(new, len(raised)), column, first * second))
    plus = np.zeros((len(raised), len(dets)))
    for row, column, value in entries:
        plus[row, column] += value
    alpha_mask = sum(1 << a for a, _ in pairs)
    sz = np.array([0.5 * (2 * (d & alpha_mask).bit_count() - d.bit_count()) for d in np.asarray(dets).tolist()])
    return plus.T @ plus + np.diag(sz * sz + sz)


def _sector(basis, n_alpha, n_beta, n_electrons):
    if basis == "spin-orbital":
        if n_electrons is None:
            if n_alpha is None or n_beta is None:
                raise FieldError("n_electrons", "spin-orbital input needs n_electrons (or n_alpha and n_beta)")
            n_electrons = n_alpha + n_beta
        return n_electrons, n_alpha
    if n_alpha is None or n_beta is None:
        raise FieldError("n_alpha", "restricted and unrestricted input need n_alpha and n_beta")
    return n_alpha + n_beta, n_alpha


def slater_condon_solve(
    basis: str,
    h1,
    eri,
    ecore: float = 0.0,
    *,
    n_alpha=None,
    n_beta=None,
    n_electrons=None,
    spin_layout=None,
    irreps=None,
    irrep=None,
    nroots=None,
    max_determinants: int = MAX_DENSE_DETERMINANTS,
) -> SlaterCondonResult:
    """Diagonalise the full Hamiltonian of one sector (all roots unless ``nroots``).

    Restricted and unrestricted input fix ``(n_alpha, n_beta)``; spin-orbital input
    fixes ``n_electrons`` and, when given, ``n_alpha``. ``<S^2>`` is None for
    unrestricted input (no alpha–beta overlap is known).
    """
    h1, eri, _ = require_arrays(basis, h1, eri)
    layout = spin_layout or "blocked"
    h, g = spin_orbital_integrals(basis, h1, eri, layout)
    m = h.shape[0]
    total, alpha = _sector(basis, n_alpha, n_beta, n_electrons)
    if not 0 <= total <= m:
        raise FieldError("n_electrons", f"need 0..{m} electrons in {m} spin orbitals, got {total}")
    dets = determinant_list(m, total, layout=layout, n_alpha=alpha, irreps=irreps, irrep=irrep)
    if len(dets) > max_determinants:
        itemsize = np.dtype(h.dtype).itemsize
        raise BudgetError(
            "determinants",
            f"the dense reference takes at most {max_determinants} determinants, this space has {len(dets)}",
            needed=3 * len(dets) ** 2 * itemsize,
            budget=3 * max_determinants**2 * itemsize,
            size=len(dets),
        )
    if len(dets) == 0:
        raise FieldError("irrep", "no determinant of the requested sector and irrep exists")
    matrix = hamiltonian_matrix(h, g, dets)
    energies, vectors = np.linalg.eigh(matrix)
    if nroots is not None:
        energies, vectors = energies[:nroots], vectors[:, :nroots]
    s_squared = None
    if basis != "unrestricted":
        s2 = dense_spin_square(dets, m, layout)
        s_squared = np.real(np.einsum("ik,ij,jk->k", vectors.conj(), s2, vectors))
    labels = None
    if irreps is not None:
        det_irreps = string_irreps(dets, spin_orbital_irreps(irreps, layout))
        weights = np.array(
            [[np.sum(np.abs(vectors[det_irreps == g_, k]) ** 2) for g_ in range(8)] for k in range(vectors.shape[1])]
        )
        labels = np.argmax(weights, axis=1)
    return SlaterCondonResult(energies + ecore, vectors, dets, s_squared, labels)
