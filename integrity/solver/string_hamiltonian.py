"""The Hamiltonian of one spin species as a matrix over its occupation strings.

For one species (``E_pq = a†_p a_q`` of that spin only)::

    H_1 = sum_pq h_pq E_pq + 1/2 sum_pqrs (pq|rs) (E_pq E_rs - delta_qr E_ps)
        = sum_pq k_pq E_pq + 1/2 sum_pqrs (pq|rs) E_pq E_rs,
    k_pq = h_pq - 1/2 sum_r (pr|rq)

and the product is resolved through the excitation table (``tables``)::

    <I|E_pq E_rs|J> = sum_K <I|E_pq|K> <K|E_rs|J>

where ``K`` runs over the sources of row ``I`` and ``J`` over the sources of
row ``K``: every term is one table entry times another, so the matrix is
assembled with no search. This is the alpha-alpha (or beta-beta) block of a
two-string CI problem; only ``h = h†`` and ``(pq|rs) = conj((qp|sr))`` are used.

>>> h = np.array([[0.0, -1.0], [-1.0, 0.0]])
>>> string_hamiltonian(h, np.zeros((2, 2, 2, 2)), 2, 1).tolist()
[[0.0, -1.0], [-1.0, 0.0]]
"""

from __future__ import annotations

import numpy as np
import scipy.sparse

from integrity.solver.tables import excitation_table

__all__ = ["DENSE_STRING_LIMIT", "string_hamiltonian", "string_hamiltonian_bytes"]

DENSE_STRING_LIMIT = 6000
"""String spaces up to this size get a dense matrix; larger ones a CSR matrix."""

_TERMS_PER_BLOCK = 4_000_000


def string_hamiltonian_bytes(nstr: int, nent: int, itemsize: int, scratch: bool = True) -> int:
    """Bytes held by the matrix (dense, or CSR estimated from the table width), with the build scratch."""
    scratch = min(_TERMS_PER_BLOCK, nstr * nent * nent) * (8 + 2 * itemsize) * 3 if scratch else 0
    if nstr <= DENSE_STRING_LIMIT:
        return nstr * nstr * itemsize + scratch
    return nstr * min(nstr, nent * nent) * (itemsize + 8) * 2 + scratch


def string_hamiltonian(h, eri, n: int, k: int, members=None):
    """``<I|H_1|J>`` over ``strings(n, k)``: dense ndarray or ``scipy.sparse.csr_array``.

    With ``members`` (indices into ``strings(n, k)``) only the block
    ``<members[i]|H_1|members[j]>`` is built (for one irrep's strings).
    Dense when it has at most ``DENSE_STRING_LIMIT`` rows. dtype follows the integrals.

    >>> h = np.diag([1.0, 2.0])
    >>> eri = np.zeros((2, 2, 2, 2)); eri[0, 0, 1, 1] = eri[1, 1, 0, 0] = 0.5
    >>> string_hamiltonian(h, eri, 2, 2).tolist()
    [[3.5]]
    """
    h = np.asarray(h)
    eri = np.asarray(eri)
    dtype = np.result_type(h, eri, np.float64)
    table = excitation_table(n, k)
    nent = table.sign.shape[1]
    members = np.arange(len(table.sign), dtype=np.int64) if members is None else np.asarray(members, dtype=np.int64)
    nstr = len(members)
    column = np.full(len(table.sign), -1, dtype=np.int64)
    column[members] = np.arange(nstr)
    dense = nstr <= DENSE_STRING_LIMIT
    kmat = h - 0.5 * np.einsum("prrq->pq", eri)
    rows = np.repeat(np.arange(nstr, dtype=np.int64), nent)
    one_body = (table.sign[members] * kmat.reshape(-1)[table.pair[members]]).reshape(-1)
    pieces = [_kept(rows, column[table.source[members]].reshape(-1), one_body)]
    g = eri.reshape(n * n, n * n)
    block = max(1, _TERMS_PER_BLOCK // max(1, nent * nent))
    for start in range(0, nstr, block):
        stop = min(nstr, start + block)
        first = members[start:stop]
        middle = table.source[first]  # K, shape (b, e)
        second_pair = table.pair[middle]  # (b, e, e)
        values = g[table.pair[first][:, :, None], second_pair]
        values = values * (0.5 * table.sign[first][:, :, None] * table.sign[middle])
        target = np.broadcast_to(np.arange(start, stop)[:, None, None], values.shape)
        pieces.append(_kept(target.reshape(-1), column[table.source[middle]].reshape(-1), values.reshape(-1)))
    if dense:
        return _accumulate_dense(pieces, nstr, dtype)
    return _accumulate_sparse(pieces, nstr, dtype)


def _kept(target, source, values):
    """Drop the terms whose source string lies outside the block (``source == -1``)."""
    keep = source >= 0
    if keep.all():
        return target, source, values
    return target[keep], source[keep], values[keep]


def _accumulate_dense(pieces, nstr: int, dtype) -> np.ndarray:
    out = np.zeros(nstr * nstr, dtype=dtype)
    for target, source, values in pieces:
        flat = target * nstr + source
        out.real += np.bincount(flat, weights=values.real, minlength=nstr * nstr)
        if np.iscomplexobj(out):
            out.imag += np.bincount(flat, weights=values.imag, minlength=nstr * nstr)
    return out.reshape(nstr, nstr)


def _accumulate_sparse(pieces, nstr: int, dtype):
    total = scipy.sparse.csr_array((nstr, nstr), dtype=dtype)
    for target, source, values in pieces:
        part = scipy.sparse.coo_array((values.astype(dtype), (target, source)), shape=(nstr, nstr)).tocsr()
        total = total + part
    total.sum_duplicates()
    total.eliminate_zeros()
    return total
