"""Synthetic Hamiltonians with exact symmetry, for tests and benchmarks (not for physics).

Two-electron integrals are built the way real ones are, from orbital products
contracted with a positive kernel, but on a one-dimensional grid::

    (pq|rs) = sum_xy rho_pq(x) K(x, y) rho_rs(y),   rho_pq(x) = conj(phi_p(x)) phi_q(x)

K is a Gaussian kernel (positive entries, positive definite), so the pair
matrix is positive semidefinite, (pp|qq) >= 0 and (pq|qp) >= 0, and the
permutational symmetry is exact to rounding: 8-fold for real orbitals,
(pq|rs) = (rs|pq) = (qp|sr)* for complex ones. Unrestricted files use
separate alpha and beta orbitals, with ab = (pa qa|rb sb).

>>> ham = random_hamiltonian("restricted", 3, seed=1)
>>> ham.n, ham.two_electron.array.shape
(3, (3, 3, 3, 3))
"""

from __future__ import annotations

import numpy as np

from integrity.model.hamiltonian import Electrons, Hamiltonian, Orbitals, TwoElectron


def _kernel_factor(points: int) -> np.ndarray:
    grid = np.linspace(0.0, 1.0, points)
    kernel = np.exp(-((grid[:, None] - grid[None, :]) ** 2) / 0.05) + 1e-9 * np.eye(points)
    return np.linalg.cholesky(kernel)


def grid_orbitals(n: int, points: int, rng, complex_values: bool = False) -> np.ndarray:
    """(n, points) random orbitals on the grid, complex when asked."""
    phi = rng.standard_normal((n, points))
    if complex_values:
        phi = phi + 1j * rng.standard_normal((n, points))
    return phi / np.sqrt(points)


def coulomb(left: np.ndarray, right: np.ndarray, factor: np.ndarray) -> np.ndarray:
    """Chemist (pq|rs) with p, q from ``left`` orbitals and r, s from ``right``."""
    rho_left = np.einsum("px,qx->pqx", left.conj(), left) @ factor
    rho_right = np.einsum("px,qx->pqx", right.conj(), right) @ factor
    return np.einsum("pqk,rsk->pqrs", rho_left, rho_right)


def random_hermitian(n: int, rng, complex_values: bool = False) -> np.ndarray:
    matrix = rng.standard_normal((n, n))
    if complex_values:
        matrix = matrix + 1j * rng.standard_normal((n, n))
    return 0.5 * (matrix + matrix.conj().T)


def random_hamiltonian(
    basis: str,
    n: int,
    *,
    complex_values: bool = False,
    seed: int = 0,
    alpha: int | None = None,
    beta: int | None = None,
    points: int | None = None,
    core_energy: float = 0.5,
) -> Hamiltonian:
    """A restricted or unrestricted Hamiltonian with exact symmetry and a PSD pair matrix.

    ``n`` spatial orbitals; electron counts default to half filling.
    """
    rng = np.random.default_rng(seed)
    points = points or max(4, 2 * n)
    factor = _kernel_factor(points)
    alpha = (n + 1) // 2 if alpha is None else alpha
    beta = n // 2 if beta is None else beta
    if basis == "restricted":
        phi = grid_orbitals(n, points, rng, complex_values)
        h1 = random_hermitian(n, rng, complex_values)
        eri = coulomb(phi, phi, factor)
    elif basis == "unrestricted":
        phi_a = grid_orbitals(n, points, rng, complex_values)
        phi_b = grid_orbitals(n, points, rng, complex_values)
        h1 = np.stack([random_hermitian(n, rng, complex_values), random_hermitian(n, rng, complex_values)])
        eri = np.stack([coulomb(phi_a, phi_a, factor), coulomb(phi_a, phi_b, factor), coulomb(phi_b, phi_b, factor)])
    else:
        raise ValueError(f"random_hamiltonian builds restricted or unrestricted files, not {basis!r}")
    if not complex_values:
        h1, eri = h1.real.copy(), eri.real.copy()
    return Hamiltonian(
        Orbitals(n, basis), Electrons(alpha, beta), core_energy, h1, TwoElectron(eri, notation="chemist")
    )
