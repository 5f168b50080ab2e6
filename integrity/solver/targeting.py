"""Finding the lowest states that match a spin target, on top of Davidson.

Spin is not imposed on the space (determinants mix spins); instead::

    k = need (+ 2 when 2S is targeted)
    repeat: solve the lowest k roots (warm start from the last ones);
            make exactly degenerate roots spin- and irrep-pure;
            keep roots whose <S^2> is S(S+1) for the target S;
            stop when `need` of them are found, else double k
            (until the space or MAX_GROWTH * need is exhausted)

Spaces small enough to be diagonalised exactly give every root at once.
A root matches only when its ``<S^2>`` lies within ``PURITY`` of ``S(S+1)``
for the target ``S`` (an impure root, such as one of a degenerate pair whose
partner lies beyond the computed roots, never matches). Degenerate roots
(energies within ``DEGENERACY`` hartree) are rotated to diagonalise
``S^2 + IRREP_WEIGHT * irrep`` in their span, which makes them spin- and
irrep-pure; the reported residual norm of a rotated root is the bound
``sqrt((sum_j |U_jk| |r_j|)**2 + sum_j |U_jk|**2 (theta_j - e_k)**2)``.
Together with the spin-flip parity of :mod:`problems` (which removes every
state of the other S parity) this finds a singlet even when triplets lie lower.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from integrity.errors import FieldError
from integrity.solver.davidson import EXPLICIT_LIMIT, davidson
from integrity.solver.point_group import dominant_irrep
from integrity.solver.problems import Problem
from integrity.solver.spin import two_s_of

__all__ = ["DEGENERACY", "MAX_GROWTH", "PURITY", "States", "lowest_states"]

DEGENERACY = 1e-8
PURITY = 1e-4
IRREP_WEIGHT = 1e-3
MAX_GROWTH = 64


@dataclass(frozen=True)
class States:
    """Selected states (ascending energy, ``ecore`` excluded)."""

    energies: np.ndarray
    vectors: np.ndarray
    s_squared: list
    irreps: list
    residual_norms: np.ndarray
    converged: np.ndarray
    iterations: int
    roots_solved: int


def _clusters(energies: np.ndarray) -> list[np.ndarray]:
    breaks = np.flatnonzero(np.diff(energies) > DEGENERACY) + 1
    return np.split(np.arange(len(energies)), breaks)


def _irrep_matrix(rows: np.ndarray, labels: np.ndarray) -> np.ndarray:
    return (rows.conj() * labels) @ rows.T


def _purify(problem: Problem, energies, vectors, norms, converged):
    """Rotate degenerate groups; return energies, vectors, norms, converged, <S^2>, irreps."""
    energies, vectors = energies.copy(), vectors.copy()
    norms, converged = norms.copy(), converged.copy()
    can_rotate = problem.spin_square is not None or problem.det_irreps is not None
    for group in _clusters(energies):
        if len(group) < 2 or not can_rotate:
            continue
        rows = vectors[:, group].T
        operator = np.zeros((len(group), len(group)), dtype=complex)
        if problem.spin_square is not None:
            operator += problem.spin_square(rows)
        if problem.det_irreps is not None:
            operator += IRREP_WEIGHT * _irrep_matrix(rows, problem.det_irreps)
        off_diagonal = operator - np.diag(np.diag(operator))
        if np.max(np.abs(off_diagonal)) < 1e-10:
            continue
        if not np.iscomplexobj(vectors):
            operator = operator.real
        _, rotation = np.linalg.eigh(0.5 * (operator + operator.conj().T))
        weights = np.abs(rotation) ** 2
        theta = energies[group]
        new_energies = weights.T @ theta
        spread = np.sqrt(np.sum(weights * (theta[:, None] - new_energies[None, :]) ** 2, axis=0))
        new_norms = np.sqrt((np.abs(rotation).T @ norms[group]) ** 2 + spread**2)
        vectors[:, group] = vectors[:, group] @ rotation
        energies[group] = new_energies
        norms[group] = new_norms
        converged[group] = converged[group].all()
    s_squared = [None] * len(energies)
    if problem.spin_square is not None:
        s_squared = [float(np.real(problem.spin_square(vectors[:, [k]].T)[0, 0])) for k in range(len(energies))]
    irreps = [problem.irrep] * len(energies)
    if problem.det_irreps is not None:
        for k in range(len(energies)):
            weights = np.bincount(problem.det_irreps, weights=np.abs(vectors[:, k]) ** 2, minlength=8)
            irreps[k] = dominant_irrep(weights)
    order = np.argsort(energies, kind="stable")
    return (
        energies[order],
        vectors[:, order],
        norms[order],
        converged[order],
        [s_squared[i] for i in order],
        [irreps[i] for i in order],
    )


def _pure(s_squared) -> bool:
    if s_squared is None:
        return False
    s = two_s_of(s_squared) / 2
    return abs(s_squared - s * (s + 1)) <= PURITY


def lowest_states(
    problem: Problem,
    need: int,
    *,
    two_s=None,
    tol: float = 1e-6,
    max_iter: int = 200,
    require_memory=None,
    progress=None,
) -> States:
    """The lowest ``need`` states of ``problem``, those of spin ``two_s / 2`` when given.

    ``require_memory(k)`` is called before solving ``k`` roots: it returns the
    Davidson basis size to use (None: the default) or raises :class:`BudgetError`.
    Raises :class:`FieldError` when the space holds fewer
    matching states than needed. ``progress`` receives every Davidson
    :class:`~integrity.solver.davidson.Iteration`, numbered across restarts;
    ``max_iter`` bounds the iterations of each Davidson run.
    """
    if two_s is not None and problem.spin_square is None:
        raise FieldError("two_s", "this problem has no S^2 operator")
    cap = min(problem.ndet, MAX_GROWTH * need + 2)
    k = min(problem.ndet, need if two_s is None else need + 2)
    if two_s is not None and problem.ndet <= EXPLICIT_LIMIT:
        k = problem.ndet  # diagonalised exactly anyway: take every root
    guesses = None
    iterations = 0
    while True:
        max_space = require_memory(k) if require_memory is not None else None
        counted = None
        if progress is not None:
            done = iterations

            def counted(step, done=done):
                progress(replace(step, iteration=done + step.iteration))

        result = davidson(
            problem.matvec,
            problem.diagonal,
            k,
            tol=tol,
            max_iter=max_iter,
            guesses=guesses,
            project=problem.project,
            dtype=problem.dtype,
            progress=counted,
            max_space=max_space,
            pspace=problem.pspace,
        )
        iterations += result.iterations
        exhausted = len(result.energies) < k or k >= problem.ndet
        energies, vectors, norms, converged, s2, irreps = _purify(
            problem, result.energies, result.vectors, result.residual_norms, result.converged
        )
        if two_s is None:
            chosen = list(range(min(need, len(energies))))
        else:
            chosen = [i for i in range(len(energies)) if _pure(s2[i]) and two_s_of(s2[i]) == two_s][:need]
        if len(chosen) >= need:
            break
        if exhausted or k >= cap:
            found = len(chosen)
            what = "states" if two_s is None else f"states with 2S = {two_s}"
            spins = (
                ""
                if two_s is None
                else ("; <S^2> of the lowest roots: " + ", ".join("None" if v is None else f"{v:.4f}" for v in s2[:8]))
            )
            raise FieldError(
                "root" if two_s is None else "two_s",
                f"needed {need} {what} but found {found} among the lowest "
                f"{len(energies)} of {problem.ndet} determinants{spins}",
            )
        k = min(cap, 2 * k)
        guesses = vectors
    return States(
        energies=energies[chosen],
        vectors=vectors[:, chosen],
        s_squared=[s2[i] for i in chosen],
        irreps=[irreps[i] for i in chosen],
        residual_norms=norms[chosen],
        converged=converged[chosen],
        iterations=iterations,
        roots_solved=len(energies),
    )
