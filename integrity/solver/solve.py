"""Full CI of a Hamiltonian given as integral arrays: the one entry point.

``solve_arrays`` picks the sector, builds the native problem (or calls
pyscf), finds the lowest states that match the targets and reports them::

    result = solve_arrays("restricted", h1, eri, ecore, n_alpha=5, n_beta=5)
    result.roots[0].energy          # hartree, ecore included

Sector rules. Restricted and unrestricted input take ``n_alpha`` and
``n_beta``, or ``n_electrons`` alone, which means ``n_alpha - n_beta = two_s``
when 2S is targeted and the lowest ``|n_alpha - n_beta|`` otherwise.
Spin-orbital input takes ``n_electrons`` (or ``n_alpha + n_beta``); when the
Hamiltonian conserves ``S_z`` it is solved in one ``n_alpha`` sector chosen by
the same rule, otherwise in the whole ``n_electrons`` space (and ``n_alpha``
may not be given). Roots are counted inside that space.

Targets. ``root`` counts matching states from 0 (lowest); the result holds
matching states ``root .. root + nroots - 1``. ``irrep`` restricts the space to
determinants of that irrep (needs ``irreps``). ``two_s`` keeps states whose
``<S^2>`` is ``S(S+1)``: see :mod:`targeting`; for restricted orbitals with
``n_alpha == n_beta`` the search is also confined to the spin-flip parity
``(-1)**S``. Unrestricted input cannot be checked for 2S: the target is
ignored and a note says so.

Convergence. ``tol`` is the energy accuracy in hartree; Davidson stops when
each residual norm is below ``sqrt(tol) / 30``, which bounds the energy error
by ``|r|**2 / gap = tol / (900 gap)``, under ``tol`` for any gap above 1.2 mhartree.
A Davidson run stops after ``max_iter`` iterations; its roots then carry
``converged = False`` and the residual norm reached.

Progress. ``progress(SolveProgress)`` is called after every Davidson
iteration of the native engine (energies with ``ecore``, residual norms,
seconds since the solve started).
"""

from __future__ import annotations

import math
import time
from collections.abc import Callable
from dataclasses import dataclass, replace

import numpy as np

from integrity.errors import FieldError
from integrity.solver.davidson import default_max_space
from integrity.solver.integrals import require_arrays, spin_blocks, sz_coupling
from integrity.solver.memory import fitting_space, with_roots
from integrity.solver.parallel import single_threaded_blas
from integrity.solver.point_group import require_irreps
from integrity.solver.problems import spin_orbital_problem, sz_conserved, two_string_problem
from integrity.solver.pyscf_engine import pyscf_arrays, pyscf_states
from integrity.solver.spin import two_s_of
from integrity.solver.targeting import lowest_states

__all__ = ["ENGINES", "FCIResult", "Root", "SolveProgress", "solve_arrays"]

ENGINES = ("native", "pyscf")


@dataclass(frozen=True)
class Root:
    """One state: energy in hartree with ``ecore``; ``s_squared``/``two_s`` None if unknown."""

    energy: float
    s_squared: float | None
    two_s: int | None
    irrep: int | None
    residual_norm: float
    converged: bool

    def as_dict(self) -> dict:
        return {
            "energy": self.energy,
            "two_s": self.two_s,
            "s_squared": self.s_squared,
            "irrep": self.irrep,
            "residual": self.residual_norm,
            "converged": self.converged,
        }


@dataclass(frozen=True)
class SolveProgress:
    """One Davidson iteration of a running solve: energies in hartree (``ecore`` included)."""

    iteration: int
    energies: tuple[float, ...]
    residual_norms: tuple[float, ...]
    residual_tolerance: float
    elapsed: float
    determinants: int


@dataclass(frozen=True)
class FCIResult:
    """What a solve found, with the size of the space and the memory estimate (bytes).

    ``iterations`` (Davidson iterations summed over restarts) and
    ``memory_estimate`` are None for the pyscf engine. ``two_s_checked`` is None
    when no 2S was asked, True when every root was verified to have it, False
    when it could not be checked (unrestricted orbitals).
    """

    engine: str
    roots: tuple[Root, ...]
    iterations: int | None
    determinants: int
    memory_estimate: int | None
    notes: tuple[str, ...]
    n_alpha: int | None
    n_beta: int | None
    n_electrons: int
    two_s_checked: bool | None = None

    @property
    def energies(self) -> list[float]:
        """Root energies in hartree (``ecore`` included), ascending."""
        return [root.energy for root in self.roots]

    def as_dict(self) -> dict:
        return {
            "engine": self.engine,
            "alpha": self.n_alpha,
            "beta": self.n_beta,
            "electrons": self.n_electrons,
            "determinants": self.determinants,
            "iterations": self.iterations,
            "memory_estimate": self.memory_estimate,
            "notes": list(self.notes),
            "roots": [root.as_dict() for root in self.roots],
        }


@dataclass(frozen=True)
class Request:
    """A solve with its sector resolved and its arguments checked, as both engines take it.

    ``need`` is root + nroots (matching states to find); ``spin_target`` the
    2S actually enforced (None for unrestricted input); ``notes`` collects
    what the solve reports.
    """

    basis: str
    h1: np.ndarray
    eri: np.ndarray
    ecore: float
    n_alpha: int | None
    n_beta: int | None
    total: int
    layout: str | None
    conserving: bool
    irreps: object
    irrep: int | None
    need: int
    root: int
    two_s: int | None
    spin_target: int | None
    tol: float
    max_iter: int
    memory: int
    notes: list
    progress: Callable | None = None


def residual_tolerance(tol: float) -> float:
    """Residual norm below which a root counts as converged for energy accuracy ``tol``.

    >>> round(residual_tolerance(1e-9), 10)
    1.05e-06
    """
    return math.sqrt(tol) / 30.0


def _count(field: str, value, low: int, high: int) -> int:
    if not isinstance(value, (int, np.integer)) or isinstance(value, bool):
        raise FieldError(field, f"expected an integer, got {value!r}")
    if not low <= value <= high:
        raise FieldError(field, f"expected {low} <= {field} <= {high}, got {value}")
    return int(value)


def _split(total: int, n: int, two_s):
    """``(n_alpha, n_beta)`` for ``total`` electrons: ``n_alpha - n_beta = two_s`` or minimal."""
    difference = two_s if two_s is not None else total % 2
    if (total - difference) % 2:
        raise FieldError("two_s", f"2S = {two_s} is impossible with {total} electrons")
    n_alpha, n_beta = (total + difference) // 2, (total - difference) // 2
    if n_alpha > n or n_beta < 0:
        raise FieldError("two_s", f"2S = {two_s} needs {n_alpha} alpha electrons in {n} orbitals")
    return n_alpha, n_beta


def _two_string_sector(n, n_alpha, n_beta, n_electrons, two_s):
    if n_alpha is None and n_beta is None:
        if n_electrons is None:
            raise FieldError("n_electrons", "give n_alpha and n_beta, or n_electrons")
        total = _count("n_electrons", n_electrons, 0, 2 * n)
        return _split(total, n, two_s)
    if (n_alpha is None or n_beta is None) and n_electrons is not None:
        known = n_alpha if n_alpha is not None else n_beta
        other = _count("n_electrons", n_electrons, 0, 2 * n) - known
        n_alpha, n_beta = (known, other) if n_alpha is not None else (other, known)
    if n_alpha is None or n_beta is None:
        raise FieldError("n_alpha", "give both n_alpha and n_beta (or n_electrons)")
    n_alpha = _count("n_alpha", n_alpha, 0, n)
    n_beta = _count("n_beta", n_beta, 0, n)
    if n_electrons is not None and n_electrons != n_alpha + n_beta:
        raise FieldError("n_electrons", f"{n_electrons} differs from n_alpha + n_beta = {n_alpha + n_beta}")
    return n_alpha, n_beta


def _require_reachable(two_s, total: int, n: int):
    """Refuse a 2S that no state of ``total`` electrons in ``n`` orbitals per spin has: 2S <= min(N, 2n - N)."""
    if two_s is None:
        return
    _count("two_s", two_s, 0, 10**6)
    highest = min(total, 2 * n - total)
    if two_s > highest:
        raise FieldError(
            "two_s",
            f"no state with 2S = {two_s} exists for {total} electrons in {n} orbitals per spin "
            f"(at most 2S = {highest})",
        )


def _require_two_s(two_s, n_alpha, n_beta, n):
    if two_s is None:
        return
    _require_reachable(two_s, n_alpha + n_beta, n)
    if two_s < abs(n_alpha - n_beta) or (two_s - (n_alpha - n_beta)) % 2:
        raise FieldError(
            "two_s",
            f"no state with 2S = {two_s} exists with n_alpha = {n_alpha}, "
            f"n_beta = {n_beta} (2S must be >= |n_alpha - n_beta| with the "
            "same parity)",
        )


def _roots(states, first: int, s_squared_known: bool, two_s_known: bool) -> tuple[Root, ...]:
    """The roots from ``first`` on; 2S only when ``two_s_known`` (S_z conserved: the states have a spin)."""
    out = []
    for i in range(first, len(states.energies)):
        s2 = states.s_squared[i] if s_squared_known else None
        out.append(
            Root(
                energy=float(states.energies[i]),
                s_squared=s2,
                two_s=None if s2 is None or not two_s_known else two_s_of(s2),
                irrep=states.irreps[i],
                residual_norm=float(states.residual_norms[i]),
                converged=bool(states.converged[i]),
            )
        )
    return tuple(out)


def _spin_orbital_sector(h1, eri, m, layout, n_alpha, n_beta, n_electrons, two_s):
    """``(total, n_alpha, n_beta, conserving, notes)`` for spin-orbital input."""
    if layout not in ("interleaved", "blocked"):
        raise FieldError(
            "spin_layout", f"spin-orbital input needs spin_layout 'interleaved' or 'blocked', got {layout!r}"
        )
    if n_electrons is None and n_alpha is not None and n_beta is not None:
        n_electrons = n_alpha + n_beta
    if n_electrons is None:
        raise FieldError("n_electrons", "spin-orbital input needs n_electrons")
    total = _count("n_electrons", n_electrons, 0, m)
    if not sz_conserved(h1, eri, layout):
        if n_alpha is not None or n_beta is not None:
            raise FieldError(
                "n_alpha",
                "the Hamiltonian couples alpha and beta spin orbitals, "
                "so n_alpha is not conserved; give n_electrons only",
            )
        return (
            total,
            None,
            None,
            False,
            [
                "S_z is not conserved: solved in the whole N-electron space; 2S is undetermined "
                "(the states need not have a total spin)"
            ],
        )
    if n_alpha is None and n_beta is None:
        n_alpha, n_beta = _split(total, m // 2, two_s)
    else:
        if n_alpha is not None and n_beta is not None and n_alpha + n_beta != total:
            raise FieldError("n_electrons", f"{total} differs from n_alpha + n_beta = {n_alpha + n_beta}")
        n_alpha = total - n_beta if n_alpha is None else n_alpha
        n_alpha = _count("n_alpha", n_alpha, 0, m // 2)
        n_beta = _count("n_beta", total - n_alpha, 0, m // 2)
    notes = [f"S_z is conserved: solved with n_alpha = {n_alpha}, n_beta = {n_beta}"]
    coupling = sz_coupling(h1, eri, layout)
    if coupling > 0:
        notes.append(f"S_z-changing elements up to {coupling:.1e} were treated as zero")
    return total, n_alpha, n_beta, True, notes


def solve_arrays(
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
    nroots: int = 1,
    two_s=None,
    irrep=None,
    root: int = 0,
    engine: str = "native",
    memory: int = 4 * 2**30,
    tol: float = 1e-9,
    max_iter: int = 200,
    progress: Callable | None = None,
) -> FCIResult:
    """Lowest ``nroots`` matching states (from ``root`` on) of one Hamiltonian.

    ``basis`` is "restricted", "unrestricted" or "spin-orbital" (then
    ``spin_layout`` is "interleaved" or "blocked"); ``memory`` is the budget in
    bytes for the native engine, which raises :class:`BudgetError` beyond it;
    ``tol`` the energy accuracy (hartree) and ``max_iter`` the Davidson
    iterations allowed; ``progress`` a callable taking :class:`SolveProgress`.

    >>> h = np.array([[0.0, -1.0], [-1.0, 0.0]]); eri = np.zeros((2, 2, 2, 2))
    >>> eri[0, 0, 0, 0] = eri[1, 1, 1, 1] = 4.0
    >>> result = solve_arrays("restricted", h, eri, n_alpha=1, n_beta=1, nroots=2)
    >>> [round(r.energy, 10) for r in result.roots], [r.two_s for r in result.roots]
    ([-0.8284271247, 0.0], [0, 2])
    """
    if engine not in ENGINES:
        raise FieldError("engine", f"expected one of {ENGINES}, got {engine!r}")
    nroots = _count("nroots", nroots, 1, 10**6)
    root = _count("root", root, 0, 10**9)
    if not (isinstance(tol, (int, float)) and tol > 0):
        raise FieldError("tol", f"expected a positive energy tolerance, got {tol!r}")
    max_iter = _count("max_iter", max_iter, 1, 10**6)
    h1, eri, n = require_arrays(basis, h1, eri)
    layout = spin_layout if basis == "spin-orbital" else None
    irreps = require_irreps(irreps, n // 2 if layout else n, irrep)
    if basis == "spin-orbital":
        total, n_alpha, n_beta, conserving, notes = _spin_orbital_sector(
            h1, eri, n, layout, n_alpha, n_beta, n_electrons, two_s
        )
    else:
        n_alpha, n_beta = _two_string_sector(n, n_alpha, n_beta, n_electrons, two_s)
        total, conserving, notes = n_alpha + n_beta, True, []
    per_spin = n // 2 if basis == "spin-orbital" else n
    if conserving:
        _require_two_s(two_s, n_alpha, n_beta, per_spin)
    else:
        _require_reachable(two_s, total, per_spin)
        if two_s is not None and (two_s - total) % 2:
            raise FieldError("two_s", f"2S = {two_s} has the wrong parity for {total} electrons")
    spin_target = two_s
    if two_s is not None and basis == "unrestricted":
        notes.append("two_s not checked: unrestricted orbitals (no alpha-beta overlap)")
        spin_target = None
    request = Request(
        basis=basis,
        h1=h1,
        eri=eri,
        ecore=float(np.real(ecore)),
        n_alpha=n_alpha,
        n_beta=n_beta,
        total=total,
        layout=layout,
        conserving=conserving,
        irreps=irreps,
        irrep=irrep,
        need=root + nroots,
        root=root,
        two_s=two_s,
        spin_target=spin_target,
        tol=tol,
        max_iter=max_iter,
        memory=memory,
        notes=notes,
        progress=progress,
    )
    if engine == "pyscf":
        return _solve_pyscf(request)
    with single_threaded_blas():  # the two sigma threads are the parallelism; see parallel.py
        return _solve_native(request)


def _solve_native(req: Request) -> FCIResult:
    notes = req.notes
    blocks = None
    if req.basis == "spin-orbital" and req.conserving:
        blocks, _ = spin_blocks(req.h1, req.eri, req.layout)
    if blocks is not None:
        # alpha and beta spin orbitals do not mix: the two-string (blocked) solver applies
        ha, hb, gaa, gab, gbb = blocks
        notes.append("alpha and beta blocks solved as two strings")
        problem = two_string_problem(
            "unrestricted",
            np.array([ha, hb]),
            np.array([gaa, gab, gbb]),
            req.n_alpha,
            req.n_beta,
            irreps=req.irreps,
            irrep=req.irrep,
            nroots=req.need,
            budget=req.memory,
            spin_square=True,
        )
    elif req.basis == "spin-orbital":
        problem = spin_orbital_problem(
            req.h1,
            req.eri,
            req.total,
            req.layout,
            n_alpha=req.n_alpha if req.conserving else None,
            irreps=req.irreps,
            irrep=req.irrep,
            nroots=req.need,
            budget=req.memory,
        )
    else:
        parity = None
        if req.spin_target is not None and req.basis == "restricted" and req.n_alpha == req.n_beta:
            parity = -1 if (req.spin_target // 2) % 2 else 1
            notes.append(f"searched the spin-flip parity {parity:+d} subspace (S {'odd' if parity < 0 else 'even'})")
        problem = two_string_problem(
            req.basis,
            req.h1,
            req.eri,
            req.n_alpha,
            req.n_beta,
            irreps=req.irreps,
            irrep=req.irrep,
            parity=parity,
            nroots=req.need,
            budget=req.memory,
        )
    notes.extend(problem.notes)

    chosen = {}

    def require_memory(k):
        chosen["space"] = fitting_space(problem.memory, k, problem.dtype.itemsize, req.memory)
        chosen["estimate"] = with_roots(problem.memory, k, problem.dtype.itemsize, chosen["space"])
        return chosen["space"]

    started = time.perf_counter()

    def report(step):
        req.progress(
            SolveProgress(
                iteration=step.iteration,
                energies=tuple(float(e) + req.ecore for e in step.energies),
                residual_norms=tuple(float(r) for r in step.residual_norms),
                residual_tolerance=float(step.tolerance),
                elapsed=time.perf_counter() - started,
                determinants=problem.ndet,
            )
        )

    states = lowest_states(
        problem,
        req.need,
        two_s=req.spin_target,
        tol=residual_tolerance(req.tol),
        max_iter=req.max_iter,
        require_memory=require_memory,
        progress=report if req.progress is not None else None,
    )
    if chosen.get("space", 0) < default_max_space(states.roots_solved):
        notes.append(f"Davidson basis held to {chosen['space']} vectors to fit the memory budget")
    if not states.converged.all():
        worst = float(np.max(states.residual_norms))
        notes.append(
            f"not converged: residual norm {worst:.2e} (needed < {residual_tolerance(req.tol):.2e}) "
            f"after {states.iterations} iterations"
        )
    if states.roots_solved > req.need:
        notes.append(f"solved {states.roots_solved} roots to find {req.need} with 2S = {req.spin_target}")
    if req.basis == "unrestricted":
        notes.append("<S^2> not available: unrestricted orbitals")
    return _result(
        req,
        "native",
        states,
        spin_known=req.basis != "unrestricted",
        determinants=problem.ndet,
        iterations=states.iterations,
        memory_estimate=chosen.get("estimate", problem.memory).total,
        checked=req.spin_target is not None,
    )


def _result(req: Request, engine, states, *, spin_known, determinants, iterations, memory_estimate, checked):
    """The FCIResult of either engine: ecore added, roots from ``req.root`` on."""
    states = _with_ecore(states, req.ecore)
    return FCIResult(
        engine=engine,
        roots=_roots(states, req.root, spin_known, spin_known and req.conserving),
        iterations=iterations,
        determinants=determinants,
        memory_estimate=memory_estimate,
        notes=tuple(req.notes),
        n_alpha=req.n_alpha,
        n_beta=req.n_beta,
        n_electrons=req.total,
        two_s_checked=None if req.two_s is None else checked,
    )


def _with_ecore(states, ecore):
    return replace(states, energies=states.energies + ecore)


def _solve_pyscf(req: Request) -> FCIResult:
    # pyscf checks the blocks and manages its own memory
    mapped, h1p, erip = pyscf_arrays(req.basis, req.h1, req.eri, req.layout)
    if req.basis == "spin-orbital":
        req.notes.append(f"spin-orbital input passed to pyscf as {mapped} orbitals")
    checked = req.spin_target is not None and mapped == "restricted"
    states = pyscf_states(
        mapped,
        h1p,
        erip,
        req.n_alpha,
        req.n_beta,
        need=req.need,
        two_s=req.spin_target if checked else None,
        irreps=req.irreps,
        irrep=req.irrep,
        tol=req.tol,
        max_iter=req.max_iter,
    )
    if mapped == "unrestricted" and req.basis == "spin-orbital" and req.two_s is not None:
        req.notes.append("two_s not checked: pyscf takes these alpha and beta blocks as unrestricted")
    return _result(
        req,
        "pyscf",
        states,
        spin_known=mapped == "restricted",
        determinants=states.determinants,
        iterations=None,
        memory_estimate=None,
        checked=checked,
    )
