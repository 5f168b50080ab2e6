"""Full CI of a Hamiltonian: the bridge from the model to :mod:`integrity.solver`.

The solver takes dense chemist arrays. A physicist file is read through the
view chem[p,q,r,s] = phys[p,r,q,s]; an antisymmetrized one through the plain
integrals it is equivalent to: with g = <pq||rs>/2 as physicist integrals,
1/2 sum g a+p a+q a_s a_r = 1/4 sum <pq||rs> a+p a+q a_s a_r, the same operator.
Spin-orbital files pass the irrep of each spatial orbital (its alpha spin
orbital's), which must equal its beta spin orbital's.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from integrity.errors import BudgetError, FieldError
from integrity.io import DEFAULT_MEMORY, format_bytes
from integrity.model.hamiltonian import Hamiltonian, Reference
from integrity.model.indexing import chemist_to_physicist, spin_orbital_index
from integrity.model.slabs import dense_chemist
from integrity.solver import FCIResult, solve_arrays
from integrity.solver.problems import sz_conserved

ENGINES = ("native", "pyscf", "both")


@dataclass(frozen=True)
class Sector:
    """Electron counts to solve for: (alpha, beta), or a total when S_z need not be fixed."""

    alpha: int | None
    beta: int | None

    @property
    def total(self) -> int:
        return (self.alpha or 0) + (self.beta or 0)


def solver_arrays(ham: Hamiltonian, memory: int = DEFAULT_MEMORY, need_irreps: bool = True):
    """(h1, eri as dense chemist, spatial irreps) for the solver, refusing what exceeds ``memory``.

    Irreps label every root when the file has them. Spin-orbital irreps that
    disagree between the alpha and beta spin orbitals of one spatial orbital
    are an error when an irrep is targeted (``need_irreps``); otherwise the
    roots go unlabelled.
    """
    two = ham.two_electron
    itemsize = np.dtype(two.array.dtype).itemsize
    blocks = 3 if ham.basis == "unrestricted" else 1
    dense_bytes = blocks * ham.n**4 * itemsize
    if not isinstance(two.array, np.ndarray) and dense_bytes > memory // 2:
        raise BudgetError(
            "two_electron",
            f"full CI needs the dense array in memory ({format_bytes(dense_bytes)}), "
            f"beyond half the budget of {format_bytes(memory)}",
            needed=dense_bytes,
            budget=memory,
        )
    eri = np.asarray(dense_chemist(two, ham.basis, ham.n))
    if two.antisymmetrized:
        eri = chemist_to_physicist(0.5 * eri)  # <pq||rs>/2 read as physicist, viewed as chemist
    try:
        irreps = spatial_irreps(ham)
    except FieldError:
        if need_irreps:
            raise
        irreps = None
    return np.asarray(ham.one_electron), eri, irreps


def spatial_irreps(ham: Hamiltonian):
    """Irreps per spatial orbital (spin-orbital files: each alpha/beta pair must agree)."""
    irreps = ham.orbitals.irreps
    if irreps is None or ham.basis != "spin-orbital":
        return None if irreps is None else list(irreps)
    layout, spatial = ham.orbitals.spin_layout, ham.n // 2
    alpha = [irreps[spin_orbital_index(p, 0, spatial, layout)] for p in range(spatial)]
    beta = [irreps[spin_orbital_index(p, 1, spatial, layout)] for p in range(spatial)]
    if alpha != beta:
        p = next(i for i in range(spatial) if alpha[i] != beta[i])
        raise FieldError(
            "orbitals.irreps",
            f"spatial orbital {p} has alpha irrep {alpha[p]} but beta irrep "
            f"{beta[p]}; spin orbitals of one spatial orbital share its irrep",
        )
    return alpha


def solve(
    ham: Hamiltonian,
    *,
    alpha: int | None = None,
    beta: int | None = None,
    electrons: int | None = None,
    roots: int = 1,
    two_s: int | None = None,
    irrep: int | None = None,
    root: int = 0,
    engine: str = "native",
    memory: int = DEFAULT_MEMORY,
    tol: float = 1e-9,
    max_iter: int = 200,
    progress=None,
) -> FCIResult:
    """Full-CI energies (hartree, core_energy included) of the lowest matching states.

    Electron counts default to the file's; give ``alpha`` and ``beta``, or
    ``electrons`` alone (for spin-orbital files whose Hamiltonian couples the
    spins). ``engine`` is "native" (this project's solver) or "pyscf";
    ``tol`` (energy accuracy, hartree), ``max_iter`` (Davidson iterations) and
    ``progress`` (a callable taking :class:`~integrity.solver.SolveProgress`)
    go to :func:`~integrity.solver.solve_arrays`.
    """
    if engine not in ("native", "pyscf"):
        raise FieldError("engine", f"expected 'native' or 'pyscf' here, got {engine!r}")
    if electrons is None and alpha is None and beta is None:
        alpha, beta = ham.electrons.alpha, ham.electrons.beta
    h1, eri, irreps = solver_arrays(ham, memory, need_irreps=irrep is not None)
    counts = {"n_alpha": alpha, "n_beta": beta} if electrons is None else {"n_electrons": electrons}
    if ham.basis == "spin-orbital" and electrons is None:
        counts = {"n_electrons": alpha + beta}
        if sz_conserved(h1, eri, ham.orbitals.spin_layout):
            counts |= {"n_alpha": alpha, "n_beta": beta}
    return solve_arrays(
        ham.basis,
        h1,
        eri,
        ham.core_energy,
        **counts,
        spin_layout=ham.orbitals.spin_layout,
        irreps=irreps,
        nroots=roots,
        two_s=two_s,
        irrep=irrep,
        root=root,
        engine=engine,
        memory=memory,
        tol=tol,
        max_iter=max_iter,
        progress=progress,
    )


def solve_reference(
    ham: Hamiltonian,
    ref: Reference,
    *,
    engine: str = "native",
    memory: int = DEFAULT_MEMORY,
    tol: float = 1e-9,
    max_iter: int = 200,
    progress=None,
) -> FCIResult:
    """The state an ``fci`` reference describes: its electrons, 2S, irrep and root."""
    electrons = ham.electrons_of(ref)
    return solve(
        ham,
        alpha=electrons.alpha,
        beta=electrons.beta,
        two_s=ref.two_s,
        irrep=ref.irrep,
        root=ref.root or 0,
        engine=engine,
        memory=memory,
        tol=tol,
        max_iter=max_iter,
        progress=progress,
    )
