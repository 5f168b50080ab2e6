"""Fock matrices and the energy of one determinant, straight from the integrals.

For occupied alpha orbitals A and beta orbitals B of a restricted file
(chemist notation, h and (pq|rs) over spatial orbitals)::

    F^a_pq = h_pq + sum_{j in A} [(pq|jj) - (pj|jq)] + sum_{j in B} (pq|jj)
    F^b_pq = h_pq + sum_{j in B} [(pq|jj) - (pj|jq)] + sum_{j in A} (pq|jj)
    E      = core_energy + 1/2 sum_{i in A} (h_ii + F^a_ii) + 1/2 sum_{i in B} (h_ii + F^b_ii)

Unrestricted files use h^a, h^b, the aa and bb blocks for same-spin terms and
the ab block (pa qa|rb sb) for the cross terms. Spin-orbital files have one
occupied set O (spin-orbital indices) and F_pq = h_pq + sum_{j in O}
[(pq|jj) - (pj|jq)]; antisymmetrized ones F_pq = h_pq + sum_{j in O} <pj||qj>.

The two-electron array is read slab by slab, so an HDF5 dataset larger than
memory works.
"""

from __future__ import annotations

import numpy as np

from integrity.errors import FieldError
from integrity.model.hamiltonian import Hamiltonian, Reference
from integrity.model.indexing import spin_of_spin_orbitals
from integrity.model.slabs import chemist_slabs, spin_blocks


def default_occupation(ham: Hamiltonian, alpha: int, beta: int) -> tuple[tuple[int, ...], tuple[int, ...]]:
    """Lowest-index orbitals of each spin (spin-orbital files: lowest alpha and beta spin orbitals)."""
    if ham.basis == "spin-orbital":
        spins = spin_of_spin_orbitals(ham.n, ham.orbitals.spin_layout)
        alphas = np.flatnonzero(spins == 0)[:alpha]
        betas = np.flatnonzero(spins == 1)[:beta]
        return tuple(int(i) for i in alphas), tuple(int(i) for i in betas)
    return tuple(range(alpha)), tuple(range(beta))


def reference_occupation(ham: Hamiltonian, ref: Reference | None):
    """The occupation a reference describes: its own, or the default for its electron counts."""
    if ref is not None and ref.occupation is not None:
        return ref.occupation
    electrons = ham.electrons if ref is None else ham.electrons_of(ref)
    return default_occupation(ham, electrons.alpha, electrons.beta)


def fock_matrices(ham: Hamiltonian, occupation) -> tuple[np.ndarray, np.ndarray]:
    """(F^alpha, F^beta) for the given occupied (alpha, beta) orbital indices.

    Spin-orbital files return the single spin-orbital Fock matrix twice.
    """
    alpha = np.asarray(occupation[0], dtype=int)
    beta = np.asarray(occupation[1], dtype=int)
    n = ham.n
    _require_indices(ham, alpha, beta)
    h = np.asarray(ham.one_electron)
    two = ham.two_electron
    antisym = bool(two.antisymmetrized)
    dtype = np.result_type(h.dtype, two.array.dtype)
    if ham.basis == "spin-orbital":
        occ = np.union1d(alpha, beta)
        fock = h.astype(dtype, copy=True)
        for p0, slab in chemist_slabs(two.array, two.notation, two.storage, n, antisymmetrized=antisym):
            rows = slice(p0, p0 + len(slab))
            if antisym:
                # <pj||qj>: the stored physicist array, summed over j in O
                fock[rows] += np.einsum("pjqj->pq", slab[:, occ][:, :, :, occ]) if len(occ) else 0
            else:
                fock[rows] += _coulomb(slab, occ) - _exchange(slab, occ)
        return fock, fock
    blocks = spin_blocks(two, ham.basis)
    if ham.basis == "restricted":
        h_a = h_b = h
        same_a = same_b = cross = blocks[0]
    else:
        h_a, h_b = h[0], h[1]
        same_a, cross, same_b = blocks
    fock_a = h_a.astype(dtype, copy=True)
    fock_b = h_b.astype(dtype, copy=True)
    for p0, slab in chemist_slabs(same_a, two.notation, two.storage, n):
        rows = slice(p0, p0 + len(slab))
        fock_a[rows] += _coulomb(slab, alpha) - _exchange(slab, alpha)
        if ham.basis == "restricted":
            fock_a[rows] += _coulomb(slab, beta)
            fock_b[rows] += _coulomb(slab, beta) - _exchange(slab, beta) + _coulomb(slab, alpha)
    if ham.basis == "unrestricted":
        for p0, slab in chemist_slabs(same_b, two.notation, two.storage, n):
            rows = slice(p0, p0 + len(slab))
            fock_b[rows] += _coulomb(slab, beta) - _exchange(slab, beta)
        occupied_alpha = set(alpha.tolist())
        for p0, slab in chemist_slabs(cross, two.notation, two.storage, n):
            rows = slice(p0, p0 + len(slab))
            fock_a[rows] += _coulomb(slab, beta)  # sum_{j in B} (pa qa|jb jb)
            for local, j in enumerate(range(p0, p0 + len(slab))):
                if j in occupied_alpha:
                    fock_b += slab[local, j]  # (ja ja|pb qb)
    return fock_a, fock_b


def _coulomb(slab, occ):
    """sum_{j in occ} slab[p, q, j, j]."""
    if len(occ) == 0:
        return 0
    return np.einsum("pqjj->pq", slab[:, :, occ][:, :, :, occ])


def _exchange(slab, occ):
    """sum_{j in occ} slab[p, j, j, q]."""
    if len(occ) == 0:
        return 0
    return np.einsum("pjjq->pq", slab[:, occ][:, :, occ])


def _require_indices(ham, alpha, beta):
    for spin, indices in (("alpha", alpha), ("beta", beta)):
        if len(indices) and (indices.min() < 0 or indices.max() >= ham.n):
            raise FieldError(
                f"occupation.{spin}", f"orbital indices must lie in 0..{ham.n - 1}, got {indices.tolist()}"
            )


def determinant_energy(ham: Hamiltonian, occupation) -> complex | float:
    """Total energy (with core_energy) of the determinant with the given occupied orbitals.

    Real for a Hermitian Hamiltonian; complex input returns a complex number
    whose imaginary part measures non-Hermiticity.
    """
    alpha = np.asarray(occupation[0], dtype=int)
    beta = np.asarray(occupation[1], dtype=int)
    fock_a, fock_b = fock_matrices(ham, (alpha, beta))
    h = np.asarray(ham.one_electron)
    if ham.basis == "spin-orbital":
        occ = np.union1d(alpha, beta)
        value = 0.5 * (np.trace(h[np.ix_(occ, occ)]) + np.trace(fock_a[np.ix_(occ, occ)]))
    else:
        h_a, h_b = (h, h) if ham.basis == "restricted" else (h[0], h[1])
        value = 0.5 * (
            np.sum(np.diag(h_a)[alpha])
            + np.sum(np.diag(fock_a)[alpha])
            + np.sum(np.diag(h_b)[beta])
            + np.sum(np.diag(fock_b)[beta])
        )
    value = ham.core_energy + value
    return complex(value) if np.iscomplexobj(value) else float(value)
