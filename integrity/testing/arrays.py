"""Model and random Hamiltonians in the project's array conventions.

Restricted Hubbard model on ``L`` sites (chemist notation, hartree-free units)::

    h[i, j] = -t   for nearest neighbours (ring when periodic)
    eri[i, i, i, i] = U                      # H = -t sum c†c + U sum n_up n_down

Random Hamiltonians are Hermitian with the symmetries the solver may assume:
``random_restricted`` has the real 8-fold symmetry (a positive semidefinite
pair matrix ``(pq|rs) = sum_k L[pq, k] L[rs, k]`` over packed pairs, so the
Coulomb energy is non-negative), ``rotate_orbitals`` applies a unitary
``u`` (``phi'_p = sum_a phi_a u[a, p]``), after which complex arrays keep only the
4-fold symmetry.

>>> h, eri = hubbard(2, t=1.0, u=4.0)
>>> h.tolist(), float(eri[0, 0, 0, 0]), float(eri[0, 0, 1, 1])
([[0.0, -1.0], [-1.0, 0.0]], 4.0, 0.0)
"""

from __future__ import annotations

import numpy as np

from integrity.model.indexing import unpack_pairs

__all__ = [
    "hubbard",
    "hund_pair",
    "random_restricted",
    "random_unitary",
    "random_unrestricted",
    "restrict_to_irreps",
    "rotate_orbitals",
]


def hubbard(sites: int, *, t: float = 1.0, u: float = 0.0, periodic: bool = False):
    """``(h1, eri)`` of the Hubbard chain (or ring when ``periodic`` and ``sites > 2``)."""
    h = np.zeros((sites, sites))
    for i in range(sites - 1):
        h[i, i + 1] = h[i + 1, i] = -t
    if periodic and sites > 2:
        h[0, sites - 1] = h[sites - 1, 0] = -t
    eri = np.zeros((sites,) * 4)
    for i in range(sites):
        eri[i, i, i, i] = u
    return h, eri


def hund_pair(u: float = 1.0, v: float = 0.6, k: float = 0.15):
    """Two degenerate orbitals: (00|00) = (11|11) = u, (00|11) = v, exchange (01|01) = (01|10) = k.

    With one alpha and one beta electron its levels, found by hand in the four
    S_z = 0 determinants, are the triplet v - k, the open-shell singlet v + k and
    the closed-shell singlets u - k and u + k (k couples |0a0b> and |1a1b>).

    >>> h, eri = hund_pair()
    >>> float(eri[0, 1, 1, 0]), h.shape
    (0.15, (2, 2))
    """
    eri = np.zeros((2, 2, 2, 2))
    eri[0, 0, 0, 0] = eri[1, 1, 1, 1] = u
    eri[0, 0, 1, 1] = eri[1, 1, 0, 0] = v
    for p, q, r, s in ((0, 1, 0, 1), (0, 1, 1, 0), (1, 0, 0, 1), (1, 0, 1, 0)):
        eri[p, q, r, s] = k
    return np.zeros((2, 2)), eri


def random_restricted(n: int, rng: np.random.Generator, *, scale: float = 1.0, spread: float = 0.0):
    """Random real ``(h1, eri)`` with 8-fold symmetry; ``eri`` as a PSD pair matrix.

    ``spread`` adds orbital energies ``linspace(-spread, spread, n)`` to the
    diagonal of ``h1``, which makes the spectrum molecule-like (a dominant
    reference determinant) and Davidson converge quickly.

    >>> h, eri = random_restricted(3, np.random.default_rng(0))
    >>> swaps = [(1, 0, 2, 3), (0, 1, 3, 2), (2, 3, 0, 1)]
    >>> all(np.allclose(eri, eri.transpose(s)) for s in swaps)
    True
    """
    h = rng.standard_normal((n, n)) * scale
    h = 0.5 * (h + h.T) + np.diag(np.linspace(-spread, spread, n))
    npair = n * (n + 1) // 2
    factor = rng.standard_normal((npair, npair)) * scale
    return h, unpack_pairs(factor @ factor.T / npair, n)


def random_unrestricted(n: int, rng: np.random.Generator, *, scale: float = 1.0, spread: float = 0.0):
    """Random real unrestricted ``(h1, eri)`` of shapes (2, n, n) and (3, n, n, n, n).

    The alpha-beta block is symmetric within each pair but not under ``pq <-> rs``.
    """
    ha, gaa = random_restricted(n, rng, scale=scale, spread=spread)
    hb, gbb = random_restricted(n, rng, scale=scale, spread=spread)
    npair = n * (n + 1) // 2
    left = rng.standard_normal((npair, npair)) * scale
    right = left + 0.3 * scale * rng.standard_normal((npair, npair))
    gab = unpack_pairs(left @ right.T / npair, n)
    return np.array([ha, hb]), np.array([gaa, gab, gbb])


def random_unitary(n: int, rng: np.random.Generator, *, complex_values: bool = True):
    """A random unitary (orthogonal when ``complex_values`` is False) ``n x n`` matrix."""
    a = rng.standard_normal((n, n))
    if complex_values:
        a = a + 1j * rng.standard_normal((n, n))
    q, r = np.linalg.qr(a)
    return q * (np.diag(r) / np.abs(np.diag(r)))


def rotate_orbitals(h, eri, u):
    """Integrals in the rotated orbitals ``phi'_p = sum_a phi_a u[a, p]``.

    ``h'[p, q] = sum u*[a, p] h[a, b] u[b, q]`` and
    ``(pq|rs)' = sum u*[a, p] u[b, q] u*[c, r] u[d, s] (ab|cd)``.
    """
    uc = u.conj()
    h2 = uc.T @ h @ u
    g = np.einsum("abcd,ap->pbcd", eri, uc)
    g = np.einsum("pbcd,bq->pqcd", g, u)
    g = np.einsum("pqcd,cr->pqrd", g, uc)
    g = np.einsum("pqrd,ds->pqrs", g, u)
    return h2, g


def restrict_to_irreps(h, eri, irreps):
    """Zero the elements that orbital irreps forbid: ``h[p, q]`` unless ``g_p == g_q``,
    ``(pq|rs)`` unless ``g_p ^ g_q ^ g_r ^ g_s == 0``.

    >>> h, eri = restrict_to_irreps(np.ones((2, 2)), np.ones((2, 2, 2, 2)), [0, 1])
    >>> h.tolist(), float(eri[0, 1, 0, 0]), float(eri[0, 1, 1, 0])
    ([[1.0, 0.0], [0.0, 1.0]], 0.0, 1.0)
    """
    g = np.asarray(irreps)
    h = np.where(g[:, None] == g[None, :], h, 0.0)
    allowed = (g[:, None, None, None] ^ g[None, :, None, None] ^ g[None, None, :, None] ^ g[None, None, None, :]) == 0
    return h, np.where(allowed, eri, 0.0)
