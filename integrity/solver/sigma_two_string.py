"""Sigma ``H c`` for restricted and unrestricted orbitals over the whole ``c[Ia, Ib]`` matrix.

The solver itself uses :mod:`sigma_blocked` (the same scheme by irrep blocks,
on worker threads); this unblocked, single-threaded form is kept as the
reference the tests compare it against.

A CI vector is a matrix ``c[Ia, Ib]`` over alpha strings ``strings(n, n_alpha)``
and beta strings ``strings(n, n_beta)``; the determinant is
``|Ia, Ib> = A†(Ia) B†(Ib) |0>`` (all alpha creators left of the beta ones).
The Hamiltonian (without ``ecore``) splits as::

    H = H_a + H_b + sum_pqrs (pq|rs)_ab E^a_pq E^b_rs

``H_a``, ``H_b`` act on one string only and are matrices over strings
(:mod:`string_hamiltonian`), so ``sigma = H_a @ c + c @ H_b.T + sigma_ab``.
The alpha-beta part is the dense-matrix-product scheme, one block of beta
target strings ``i`` at a time::

    B[rs, i, Ja] = sum_Jb <Ib_i|E^b_rs|Jb> c[Ja, Jb]        (gather, beta table)
    G[pq, i, Ja] = sum_rs (pq|rs)_ab B[rs, i, Ja]            (one GEMM)
    sigma[Ia, Ib_i] += sum_pq sum_Ja <Ia|E^a_pq|Ja> G[pq, i, Ja]   (gather, alpha table)

For real integrals with ``(pq|rs) = (qp|rs) = (pq|sr)`` the pairs are packed
(``p >= q``) and ``E_pq`` becomes ``E_pq + E_qp``, which cuts the GEMM by ~4.
Each ``(pair, target string)`` has at most one source string, so both gathers
are plain fancy indexing (no scatter-add): the beta gather copies rows of
``[c | -c | 0].T`` so that the sign and the empty entries come for free, and the
alpha gather reads ``G`` through the alpha table of each target string.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from integrity.solver.integrals import pair_symmetric
from integrity.solver.linalg import matmul
from integrity.solver.string_hamiltonian import string_hamiltonian
from integrity.solver.strings import occupation_matrix, strings
from integrity.solver.tables import ExcitationTable, excitation_table

__all__ = [
    "DEFAULT_BLOCK",
    "TwoStringHamiltonian",
    "block_bytes",
    "build_two_string",
    "sigma_two_string",
]

DEFAULT_BLOCK = 16
"""Beta target strings per block of the alpha-beta contraction (tuned on 2 cores)."""


@dataclass(frozen=True)
class TwoStringHamiltonian:
    """Everything sigma needs, precomputed; energies exclude ``ecore``."""

    n: int
    n_alpha: int
    n_beta: int
    dtype: np.dtype
    h_alpha: object
    h_beta: object
    pair_matrix: np.ndarray
    alpha_pair: np.ndarray
    alpha_source: np.ndarray
    alpha_sign: np.ndarray
    beta_gather: np.ndarray
    diagonal: np.ndarray
    block: int

    @property
    def shape(self) -> tuple[int, int]:
        """``(number of alpha strings, number of beta strings)``."""
        return self.diagonal.shape


def block_bytes(npair: int, n_alpha_strings: int, nent: int, block: int, itemsize: int) -> int:
    """Scratch of one alpha-beta block: B and G (npair x block x na), gathered G and offsets."""
    return ((2 * npair + nent) * itemsize + 2 * nent * 8) * n_alpha_strings * block


def _packed_pair_matrix(eri_ab: np.ndarray, n: int) -> np.ndarray:
    p, q = np.tril_indices(n)
    order = np.argsort(p * (p + 1) // 2 + q)
    p, q = p[order], q[order]
    return np.ascontiguousarray(eri_ab[p, q][:, p, q])


def _beta_gather(table: ExcitationTable, nstr: int) -> np.ndarray:
    """``[c | -c | 0].T[gather[rs, Ib]] = <Ib|E_rs|Jb> c[:, Jb]`` (the zero row if none)."""
    gather = np.full((table.npair, nstr), 2 * nstr, dtype=np.int64)
    target = np.broadcast_to(np.arange(nstr)[:, None], table.pair.shape)
    gather[table.pair, target] = np.where(table.sign > 0, table.source, table.source + nstr)
    return gather


def build_two_string(
    h_alpha, h_beta, eri_aa, eri_ab, eri_bb, n_alpha: int, n_beta: int, *, block: int = DEFAULT_BLOCK
) -> TwoStringHamiltonian:
    """Precompute string Hamiltonians, tables and the pair matrix for :func:`sigma_two_string`.

    For restricted orbitals pass the same arrays for alpha and beta and
    ``eri_aa = eri_ab = eri_bb = eri``.
    """
    n = h_alpha.shape[0]
    dtype = np.result_type(h_alpha, h_beta, eri_aa, eri_ab, eri_bb, np.float64)
    packed = dtype == np.float64 and pair_symmetric(eri_ab)
    same = n_alpha == n_beta and h_alpha is h_beta and eri_aa is eri_bb
    ha = string_hamiltonian(h_alpha, eri_aa, n, n_alpha)
    hb = ha if same else string_hamiltonian(h_beta, eri_bb, n, n_beta)
    alpha_table = excitation_table(n, n_alpha, packed=packed)
    beta_table = alpha_table if n_alpha == n_beta else excitation_table(n, n_beta, packed=packed)
    nb = len(beta_table.sign)
    if packed:
        pair_matrix = _packed_pair_matrix(eri_ab, n)
    else:
        pair_matrix = np.ascontiguousarray(eri_ab.reshape(n * n, n * n), dtype=dtype)
    alpha_sign = alpha_table.sign.astype(np.float64)[:, None, :]
    diag_a = np.real(ha.diagonal())
    diag_b = np.real(hb.diagonal())
    coulomb_ab = np.real(np.einsum("ppqq->pq", eri_ab))
    occ_a = occupation_matrix(strings(n, n_alpha), n)
    occ_b = occupation_matrix(strings(n, n_beta), n)
    diagonal = diag_a[:, None] + diag_b[None, :] + occ_a @ coulomb_ab @ occ_b.T
    return TwoStringHamiltonian(
        n=n,
        n_alpha=n_alpha,
        n_beta=n_beta,
        dtype=np.dtype(dtype),
        h_alpha=ha,
        h_beta=hb,
        pair_matrix=pair_matrix,
        alpha_pair=alpha_table.pair,
        alpha_source=alpha_table.source,
        alpha_sign=alpha_sign,
        beta_gather=_beta_gather(beta_table, nb),
        diagonal=diagonal,
        block=max(1, min(block, nb)),
    )


def sigma_two_string(op: TwoStringHamiltonian, c: np.ndarray) -> np.ndarray:
    """``sigma = H c`` for ``c`` of shape ``op.shape`` (energies without ``ecore``).

    >>> h = np.array([[0.0, -1.0], [-1.0, 0.0]]); eri = np.zeros((2, 2, 2, 2))
    >>> eri[0, 0, 0, 0] = eri[1, 1, 1, 1] = 4.0
    >>> op = build_two_string(h, h, eri, eri, eri, 1, 1)
    >>> sigma_two_string(op, np.eye(2)).tolist()
    [[4.0, -2.0], [-2.0, 4.0]]
    """
    dtype = np.result_type(op.dtype, c.dtype)
    c = np.asarray(c, dtype=dtype)
    out = _string_product(op.h_alpha, c)
    out += _string_product(op.h_beta, c.T).T
    if op.alpha_pair.shape[1] and op.n_beta:
        _add_alpha_beta(op, c, out)
    return out


def _string_product(matrix, c):
    """``matrix @ c`` for a dense or sparse string Hamiltonian."""
    if isinstance(matrix, np.ndarray):
        return matmul(matrix, c)
    return matrix @ c


def _add_alpha_beta(op: TwoStringHamiltonian, c: np.ndarray, out: np.ndarray) -> None:
    na, nb = c.shape
    npair = op.pair_matrix.shape[0]
    nent = op.alpha_pair.shape[1]
    # Rows of source_t are beta strings: the beta gather copies whole rows of length na.
    source_t = np.zeros((2 * nb + 1, na), dtype=c.dtype)
    source_t[:nb] = c.T
    np.negative(c.T, out=source_t[nb : 2 * nb])
    dtype = np.result_type(c.dtype, op.pair_matrix.dtype)
    b_buffer = np.empty(npair * op.block * na, dtype=c.dtype)
    g_buffer = np.empty(npair * op.block * na, dtype=dtype)
    x_buffer = np.empty(na * nent * op.block, dtype=dtype)
    offsets = {}
    for start in range(0, nb, op.block):
        width = min(op.block, nb - start)
        if width not in offsets:
            # G[pq, i, Ja] sits at pq * width * na + i * na + Ja in the flat block.
            offsets[width] = (op.alpha_pair * (width * na) + op.alpha_source)[:, :, None] + np.arange(
                width, dtype=np.int64
            ) * na
        gathered = b_buffer[: npair * width * na].reshape(npair, width, na)
        np.take(source_t, op.beta_gather[:, start : start + width], axis=0, out=gathered, mode="clip")
        contracted = g_buffer[: npair * width * na]
        matmul(op.pair_matrix, gathered.reshape(npair, width * na), out=contracted.reshape(npair, width * na))
        rows = x_buffer[: na * nent * width].reshape(na, nent, width)
        np.take(contracted, offsets[width], out=rows, mode="clip")
        out[:, start : start + width] += np.matmul(op.alpha_sign, rows)[:, 0, :]
