"""Davidson–Liu eigensolver for the lowest roots of a Hermitian operator.

The operator is known only through ``matvec(v) = H v`` and its exact diagonal
``diagonal[i] = H[i, i]``. One iteration with basis ``V`` (orthonormal columns)
and ``W = H V``::

    theta, y = eigh(V^H W)                 # Rayleigh–Ritz, ascending
    x_i = V y_i,   r_i = W y_i - theta_i x_i
    t_i = r_i / (theta_i - diagonal)        # diagonal (Davidson) preconditioner
    V  <- [V, orthonormalised t_i]          # for every root with |r_i| >= tol

A root is converged when ``|r_i| < tol`` (its energy error is then at most
``|r_i|**2 / gap``). When ``V`` would exceed ``max_space`` columns it is
collapsed onto the current Ritz vectors and the previous ones. The start is
deterministic: unit vectors on the smallest diagonal elements, ties broken by
lower index, each plus one fixed pseudo-random vector of norm ``ADMIXTURE``
(seeded). The admixture matters: a determinant with few open shells has no
component of high spin (nor of other irreps), and without it states the
start cannot reach would stay invisible however low they lie.

With a *P-space* (``pspace = (indices, H_PP)``: the exact Hamiltonian over a
few hundred determinants, usually those of lowest diagonal) the start
vectors are the lowest eigenvectors of ``H_PP`` and the preconditioner
``M = theta - H0`` uses ``H_PP`` on those determinants and the diagonal
elsewhere; the correction is Olsen's,
``t = M^-1 r - eps M^-1 x`` with ``eps = (x, M^-1 r) / (x, M^-1 x)``, which
keeps it from falling back onto ``x`` when ``M`` is nearly exact (Source: J. Olsen,
P. Jørgensen, J. Simons, Chem. Phys. Lett. 169, 463 (1990) (from memory)).

An optional ``project(v)`` (an orthogonal projector that commutes with H, for
example onto one spin-flip parity) is applied to every new basis vector, which
confines the search to its range. Spaces of at most ``explicit_limit``
dimensions are diagonalised exactly instead.

>>> a = np.diag([3.0, 1.0, 2.0]) + 0.1
>>> result = davidson(lambda v: a @ v, np.diag(a).copy(), 2)
>>> np.allclose(result.energies, np.linalg.eigvalsh(a)[:2]), result.converged.tolist()
(True, [True, True])
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from integrity.errors import FieldError
from integrity.solver.linalg import matmul

__all__ = ["EXPLICIT_LIMIT", "DavidsonResult", "Iteration", "PSpace", "davidson", "default_max_space", "lowest_indices"]

EXPLICIT_LIMIT = 200
"""Spaces this small are diagonalised exactly (``matvec`` on every basis vector)."""

ADMIXTURE = 1e-3
"""Norm of the fixed pseudo-random vector added to every unit start vector."""

ADMIXTURE_SEED = 20240601

_LINDEP = 1e-8


@dataclass(frozen=True)
class DavidsonResult:
    """Lowest eigenpairs found: ``vectors[:, i]`` belongs to ``energies[i]``."""

    energies: np.ndarray
    vectors: np.ndarray
    iterations: int
    residual_norms: np.ndarray
    converged: np.ndarray


@dataclass(frozen=True)
class Iteration:
    """What one Davidson iteration reached: Ritz values and residual norms of the roots sought."""

    iteration: int
    energies: np.ndarray
    residual_norms: np.ndarray
    tolerance: float
    basis_size: int


def default_max_space(nroots: int) -> int:
    """Largest basis kept before a collapse: ``8 + 4 * (nroots - 1)``.

    The collapse keeps the previous Ritz vectors beside the current ones, so a
    small basis costs no iterations (N2 CAS(10,10): 12 iterations with 6, 8, 10
    or 12 vectors) and saves memory: the basis and its images are most of it.

    >>> default_max_space(1), default_max_space(3)
    (8, 16)
    """
    return 8 + 4 * (nroots - 1)


def _adjoint(rows: np.ndarray) -> np.ndarray:
    """Complex conjugate of row vectors, without a copy when they are real."""
    return rows.conj() if np.iscomplexobj(rows) else rows


def _orthonormalise(t: np.ndarray, basis: np.ndarray) -> np.ndarray | None:
    """``t`` made orthogonal to the rows of ``basis`` and normalised, or None."""
    norm = np.linalg.norm(t)
    if norm == 0.0:
        return None
    t = t / norm
    for _ in range(2):
        if len(basis):
            t = t - matmul(matmul(_adjoint(basis), t), basis)
    norm = np.linalg.norm(t)
    if norm < _LINDEP:
        return None
    return t / norm


def lowest_indices(values: np.ndarray, count: int) -> np.ndarray:
    """Indices of the ``count`` smallest values, ascending, ties by lower index (as a stable argsort).

    Linear time: a partition finds the threshold, only the candidates are sorted.

    >>> lowest_indices(np.array([3.0, 1.0, 2.0, 1.0]), 3).tolist()
    [1, 3, 2]
    """
    values = np.asarray(values)
    count = min(count, len(values))
    if count == 0:
        return np.zeros(0, dtype=np.int64)
    if count >= len(values):
        return np.argsort(values, kind="stable")
    threshold = np.partition(values, count - 1)[count - 1]
    candidates = np.flatnonzero(values <= threshold)
    order = np.lexsort((candidates, values[candidates]))
    return candidates[order[:count]]


class PSpace:
    """``H_PP`` over the determinants ``indices``, diagonalised once: ``H_PP = U diag(values) U^H``."""

    def __init__(self, indices, matrix):
        self.indices = np.asarray(indices, dtype=np.int64)
        self.values, self.vectors = np.linalg.eigh(np.asarray(matrix))

    def inverse(self, theta: float, v: np.ndarray, diagonal: np.ndarray) -> np.ndarray:
        """``(theta - H0)^-1 v``: ``H_PP`` on the P determinants, the diagonal elsewhere."""
        shift = theta - diagonal
        shift[np.abs(shift) < 1e-8] = 1e-8
        out = v / shift
        gap = theta - self.values
        gap[np.abs(gap) < 1e-8] = 1e-8
        u = self.vectors
        out[self.indices] = u @ ((u.conj().T @ v[self.indices]) / gap)
        return out

    def start(self, n: int, count: int, dtype) -> list:
        """The lowest ``count`` eigenvectors of ``H_PP``, embedded in the whole space."""
        out = []
        for k in range(min(count, len(self.values))):
            t = np.zeros(n, dtype=dtype)
            t[self.indices] = self.vectors[:, k]
            out.append(t)
        return out


def _start_vectors(diagonal, count, project, dtype, guesses=None, pspace=None) -> np.ndarray:
    """Up to ``count`` orthonormal (projected) start vectors as rows: guesses, P-space vectors, unit vectors."""
    n = len(diagonal)
    found = []
    candidates = [] if guesses is None else list(np.asarray(guesses, dtype=dtype).T)
    order = lowest_indices(diagonal, count + (0 if guesses is None else len(candidates)))
    admixture = np.random.default_rng(ADMIXTURE_SEED).standard_normal(n)
    admixture *= ADMIXTURE / np.linalg.norm(admixture)
    if guesses is None and pspace is not None:
        candidates = [t + admixture.astype(dtype) for t in pspace.start(n, count, dtype)]
    position = 0
    while len(found) < count:
        if candidates:
            t = candidates.pop(0)
        elif position < n:
            if position >= len(order):
                order = lowest_indices(diagonal, 2 * len(order) + 1)
            t = admixture.astype(dtype)
            t[order[position]] += 1.0
            position += 1
        else:
            break
        if project is not None:
            t = project(t)
        t = _orthonormalise(t, np.array(found, dtype=dtype).reshape(len(found), n))
        if t is not None:
            found.append(t)
    return np.array(found, dtype=dtype).reshape(len(found), n)


def _collapse_coefficients(y, previous, size, limit):
    """Orthonormal subspace coefficients spanning the Ritz vectors and the previous ones.

    Keeping the previous Ritz vectors with the current ones on a collapse keeps
    the search direction (as in LOBPCG) and avoids the slow restarts of a plain
    collapse. At most ``limit`` columns; the current Ritz vectors come first.
    """
    k = y.shape[1]
    if previous is None or limit <= k:
        return y
    padded = np.zeros((size, previous.shape[1]), dtype=y.dtype)
    padded[: previous.shape[0]] = previous
    padded = padded - y @ (y.conj().T @ padded)
    kept = [y]
    for column in padded.T[: limit - k]:
        column = column - np.hstack(kept) @ (np.hstack(kept).conj().T @ column)
        norm = np.linalg.norm(column)
        if norm > 1e-6:
            kept.append((column / norm)[:, None])
    return np.hstack(kept)


def _explicit(matvec, diagonal, nroots, project, dtype) -> DavidsonResult:
    basis = _start_vectors(diagonal, len(diagonal), project, dtype)
    images = np.array([matvec(v) for v in basis], dtype=dtype).reshape(basis.shape)
    small = matmul(_adjoint(basis), images.T)
    theta, y = np.linalg.eigh(0.5 * (small + small.conj().T))
    k = min(nroots, len(theta))
    x = matmul(y[:, :k].T, basis)
    residual = matmul(y[:, :k].T, images) - theta[:k, None] * x
    norms = np.linalg.norm(residual, axis=1)
    return DavidsonResult(theta[:k], x.T, 1, norms, np.ones(k, dtype=bool))


def davidson(
    matvec,
    diagonal,
    nroots: int,
    *,
    tol: float = 1e-8,
    max_iter: int = 200,
    max_space: int | None = None,
    guesses=None,
    project=None,
    dtype=np.float64,
    explicit_limit: int = EXPLICIT_LIMIT,
    progress=None,
    pspace: PSpace | None = None,
) -> DavidsonResult:
    """Lowest ``nroots`` eigenpairs of the Hermitian operator ``matvec``.

    Fewer roots come back when the (projected) space has fewer dimensions.
    ``guesses`` (columns) are tried before the unit-vector start.
    ``progress(Iteration)`` is called after every iteration. After
    ``max_iter`` iterations the current vectors come back with ``converged``
    False where the residual is still above ``tol``.
    """
    diagonal = np.asarray(diagonal, dtype=np.float64)
    n = len(diagonal)
    if nroots < 1:
        raise FieldError("nroots", f"need at least one root, got {nroots}")
    if n == 0:
        raise FieldError("determinants", "the space holds no determinant")
    if n <= explicit_limit:
        return _explicit(matvec, diagonal, nroots, project, dtype)
    max_space = max(default_max_space(nroots) if max_space is None else max_space, 2 * nroots)
    start = _start_vectors(diagonal, min(n, 2 * nroots), project, dtype, guesses, pspace)
    nroots = min(nroots, len(start))
    basis = np.empty((max_space, n), dtype=dtype)  # row j is basis vector j
    images = np.empty_like(basis)  # images[j] = H basis[j]
    size = len(start)
    basis[:size] = start
    del start
    for j in range(size):
        images[j] = matvec(basis[j])
    small = matmul(_adjoint(basis[:size]), images[:size].T)
    iterations = 0
    previous = None
    while True:
        iterations += 1
        theta, y = np.linalg.eigh(0.5 * (small + small.conj().T))
        k = min(nroots, size)
        theta, y = theta[:k], y[:, :k]
        ritz = matmul(y.T, basis[:size])
        residual = matmul(y.T, images[:size])  # the Ritz images, made residuals in place
        for i in range(k):
            residual[i] -= theta[i] * ritz[i]
        norms = np.linalg.norm(residual, axis=1)
        converged = norms < tol
        if progress is not None:
            progress(Iteration(iterations, theta.copy(), norms.copy(), tol, size))
        if converged.all() or iterations >= max_iter:
            break
        corrections = []
        for i in np.flatnonzero(~converged):
            if pspace is None:
                shift = theta[i] - diagonal
                shift[np.abs(shift) < 1e-8] = 1e-8
                t = residual[i] / shift
            else:
                t = pspace.inverse(theta[i], residual[i], diagonal)
                mx = pspace.inverse(theta[i], ritz[i], diagonal)
                scale = np.vdot(ritz[i], mx)
                if abs(scale) > 1e-14:
                    t -= (np.vdot(ritz[i], t) / scale) * mx
                del mx
            if project is not None:
                t = project(t)
            corrections.append(t)
        del residual
        if size + len(corrections) > max_space:
            keep = _collapse_coefficients(y, previous, size, max_space - len(corrections))
            basis[: keep.shape[1]] = matmul(keep.T, basis[:size])
            images[: keep.shape[1]] = matmul(keep.T, images[:size])
            small = keep.conj().T @ small @ keep
            y = np.eye(keep.shape[1], k, dtype=dtype)  # the Ritz vectors lead the new basis
            size = keep.shape[1]
        previous = y
        added = 0
        for t in corrections:
            t = _orthonormalise(t, basis[: size + added])
            if t is None:
                continue
            basis[size + added] = t
            images[size + added] = matvec(t)
            added += 1
        if added == 0:
            break
        new = slice(size, size + added)
        block = matmul(_adjoint(basis[: size + added]), images[new].T)
        grown = np.zeros((size + added, size + added), dtype=dtype)
        grown[:size, :size] = small
        grown[:, new] = block
        grown[new, :size] = block[:size].conj().T
        small = grown
        size += added
    return DavidsonResult(theta, ritz.T, iterations, norms, converged)
