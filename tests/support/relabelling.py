"""Relabel orbitals the plain way, to judge the library's relabelling and its search.

A relabelling (order π, signs s) is the orbital rotation by the signed
permutation matrix U with U[π(p), p] = s_p (new orbital p = s_p times old
orbital π(p)), so h' = U^T h U and g'_pqrs = sum_abcd U_ap U_bq U_cr U_ds g_abcd
(chemist). Written from that definition with einsum, not from the library.
"""

from __future__ import annotations

import dataclasses

import numpy as np

from integrity.energies.meanfield import reference_occupation
from integrity.model.hamiltonian import Electrons, Hamiltonian, TwoElectron


def signed_permutation(order, signs) -> np.ndarray:
    """U with U[order[p], p] = signs[p]."""
    n = len(order)
    u = np.zeros((n, n))
    u[np.asarray(order), np.arange(n)] = np.asarray(signs, dtype=float)
    return u


def rotate(h, g, left, right=None):
    """(U^T h U, g rotated): chemist g, ``left`` on its first pair of indices, ``right`` on the second."""
    right = left if right is None else right
    return left.T @ h @ left, np.einsum("ap,bq,cr,ds,abcd->pqrs", left, left, right, right, g, optimize=True)


def relabelled(ham: Hamiltonian, order, signs, *, beta_order=None, beta_signs=None, exchange=False) -> Hamiltonian:
    """``ham`` (dense chemist, restricted, unrestricted or spin-orbital) relabelled by (π, s).

    Unrestricted files take ``beta_order``/``beta_signs`` (default: the alpha ones) and
    ``exchange`` (alpha and beta exchanged first: h^a <-> h^b, aa <-> bb, ab'[p,q,r,s] = ab[r,s,p,q]).
    Irreps and reference occupations follow the orbitals; electron counts swap with ``exchange``.
    """
    h = np.asarray(ham.one_electron)
    g = np.asarray(ham.two_electron.array)
    u_a = signed_permutation(order, signs)
    if ham.basis == "unrestricted":
        if exchange:
            h = np.stack([h[1], h[0]])
            g = np.stack([g[2], g[1].transpose(2, 3, 0, 1), g[0]])
        u_b = signed_permutation(
            order if beta_order is None else beta_order, signs if beta_signs is None else beta_signs
        )
        h_a, aa = rotate(h[0], g[0], u_a)
        h_b, bb = rotate(h[1], g[2], u_b)
        _, ab = rotate(h[0], g[1], u_a, u_b)
        h, g = np.stack([h_a, h_b]), np.stack([aa, ab, bb])
    else:
        h, g = rotate(h, g, u_a)
    electrons = Electrons(ham.electrons.beta, ham.electrons.alpha) if exchange else ham.electrons
    irreps = ham.orbitals.irreps
    if irreps is not None:
        irreps = tuple(int(irreps[i]) for i in order)
    inverse_a = {int(old): new for new, old in enumerate(order)}
    inverse_b = {int(old): new for new, old in enumerate(order if beta_order is None else beta_order)}
    references = []
    for ref in ham.references:
        if ref.occupation is None and ref.method == "hf":  # the lowest orbitals, stated explicitly
            ref = dataclasses.replace(ref, occupation=reference_occupation(ham, ref))
        if ref.occupation is not None:
            alpha, beta = ref.occupation
            if exchange:
                alpha, beta = beta, alpha
            occupation = (tuple(sorted(inverse_a[i] for i in alpha)), tuple(sorted(inverse_b[i] for i in beta)))
            ref = dataclasses.replace(ref, occupation=occupation)
        references.append(ref)
    return ham.replace(
        orbitals=dataclasses.replace(ham.orbitals, irreps=irreps),
        electrons=electrons,
        one_electron=h,
        two_electron=TwoElectron(g, "chemist"),
        references=tuple(references),
        checksum=None,
    )
