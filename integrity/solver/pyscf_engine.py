"""pyscf's FCI as a second, independent engine.

* restricted: ``pyscf.fci.direct_spin1``; with an irrep target,
  ``pyscf.fci.direct_spin1_symm`` with ``orbsym`` = the orbital irreps and
  ``wfnsym`` = the target (pyscf's D2h ids use the same XOR product).
* unrestricted: ``pyscf.fci.direct_uhf``; an irrep target is met by selecting
  roots whose weight lies in that irrep (pyscf lists strings in the same
  ascending order as :mod:`strings`).
* spin-orbital: mapped to restricted (alpha and beta blocks equal) or
  unrestricted form when nothing couples alpha and beta; otherwise
  :class:`UnsupportedError` says why.
* complex values: refused unless every imaginary part is exactly zero.

A 2S target is met by solving more roots and keeping those whose
``pyscf.fci.spin_op.spin_square0`` gives ``S(S+1)``, doubling the root count
until enough are found (degenerate roots are first rotated to diagonalise
``S^2`` from ``pyscf.fci.spin_op.contract_ss``). Residual norms are recomputed
with pyscf's own sigma (``contract_2e``).
"""

from __future__ import annotations

from dataclasses import dataclass
from math import comb

import numpy as np

from integrity.errors import FieldError, UnsupportedError
from integrity.solver.integrals import spin_blocks
from integrity.solver.point_group import dominant_irrep, string_irreps
from integrity.solver.spin import two_s_of
from integrity.solver.strings import strings

__all__ = ["PyscfStates", "pyscf_arrays", "pyscf_states"]

_DEGENERACY = 1e-8
_PURITY = 1e-4


@dataclass(frozen=True)
class PyscfStates:
    """Selected pyscf states; energies exclude ``ecore``."""

    energies: np.ndarray
    s_squared: list
    irreps: list
    residual_norms: np.ndarray
    converged: np.ndarray
    determinants: int
    roots_solved: int


def _real(field: str, array: np.ndarray) -> np.ndarray:
    if np.iscomplexobj(array):
        if np.any(array.imag != 0):
            largest = float(np.max(np.abs(array.imag)))
            raise UnsupportedError(
                field, f"pyscf's FCI solvers take real integrals; imaginary parts up to {largest:.3e} were found"
            )
        return np.ascontiguousarray(array.real)
    return array


def pyscf_arrays(basis: str, h1, eri, layout: str | None):
    """Map the input to ``(basis, h1, eri)`` pyscf can take (real, restricted or unrestricted)."""
    h1 = _real("one_electron", np.asarray(h1))
    eri = _real("two_electron", np.asarray(eri))
    if basis != "spin-orbital":
        return basis, h1, eri
    blocks, reason = spin_blocks(h1, eri, layout)
    if blocks is None:
        raise UnsupportedError("two_electron", f"pyscf needs separate alpha and beta blocks: {reason}")
    ha, hb, gaa, gab, gbb = blocks
    if np.array_equal(ha, hb) and np.array_equal(gaa, gbb) and np.array_equal(gaa, gab):
        return "restricted", ha, gaa
    return "unrestricted", np.array([ha, hb]), np.array([gaa, gab, gbb])


def _solver_and_args(basis, h1, eri, n, nelec, irreps, irrep, tol, max_iter):
    from pyscf import fci

    if basis == "restricted":
        if irrep is not None:
            solver = fci.direct_spin1_symm.FCI()
            kwargs = {"orbsym": np.asarray(irreps), "wfnsym": int(irrep)}
        else:
            solver = fci.direct_spin1.FCI()
            kwargs = {}
        args = (h1, eri, n, nelec)
    else:
        solver = fci.direct_uhf.FCISolver()
        kwargs = {}
        args = ((h1[0], h1[1]), (eri[0], eri[1], eri[2]), n, nelec)
    solver.conv_tol = min(1e-10, 0.1 * tol)
    solver.max_cycle = max_iter
    solver.verbose = 0
    return solver, args, kwargs


def _sigma(basis, h1, eri, n, nelec, c):
    from pyscf import fci

    module = fci.direct_spin1 if basis == "restricted" else fci.direct_uhf
    if basis == "restricted":
        absorbed = module.absorb_h1e(h1, eri, n, nelec, 0.5)
    else:
        absorbed = module.absorb_h1e((h1[0], h1[1]), (eri[0], eri[1], eri[2]), n, nelec, 0.5)
    return module.contract_2e(absorbed, c, n, nelec)


def _spin_rotate(vectors, energies, n, nelec):
    """Diagonalise S^2 inside groups of degenerate roots (pyscf's S^2 operator)."""
    from pyscf.fci import spin_op

    breaks = np.flatnonzero(np.diff(energies) > _DEGENERACY) + 1
    for group in np.split(np.arange(len(energies)), breaks):
        if len(group) < 2:
            continue
        images = [spin_op.contract_ss(vectors[i], n, nelec).ravel() for i in group]
        matrix = np.array([[vectors[i].ravel() @ images[j] for j in range(len(group))] for i in range(len(group))])
        _, rotation = np.linalg.eigh(0.5 * (matrix + matrix.T))
        rotated = np.einsum("kij,kl->lij", np.array([vectors[i] for i in group]), rotation)
        for position, i in enumerate(group):
            vectors[i] = rotated[position]
    return vectors


def pyscf_states(
    basis: str,
    h1,
    eri,
    n_alpha: int,
    n_beta: int,
    *,
    need: int,
    two_s=None,
    irreps=None,
    irrep=None,
    tol: float = 1e-9,
    max_iter: int = 200,
) -> PyscfStates:
    """The lowest ``need`` states matching ``two_s`` and ``irrep`` (restricted or unrestricted)."""
    n = h1.shape[-1]
    nelec = (n_alpha, n_beta)
    det_irreps = None
    if irreps is not None:
        det_irreps = (
            string_irreps(strings(n, n_alpha), irreps)[:, None] ^ string_irreps(strings(n, n_beta), irreps)[None, :]
        )
    ndet = comb(n, n_alpha) * comb(n, n_beta)
    space = ndet if irrep is None else int(np.sum(det_irreps == irrep))
    if space == 0:
        raise FieldError("irrep", f"no determinant of this sector has irrep {irrep}")
    selecting = (two_s is not None and basis == "restricted") or (irrep is not None and basis != "restricted")
    k = min(space, need + 2 if selecting else need)
    while True:
        solver, args, kwargs = _solver_and_args(
            basis, h1, eri, n, nelec, irreps, irrep if basis == "restricted" else None, tol, max_iter
        )
        solve_space = space if basis == "restricted" else ndet
        count = min(k, solve_space)
        energies, vectors = solver.kernel(*args, nroots=count, **kwargs)
        energies = np.atleast_1d(np.asarray(energies, dtype=float))
        vectors = [np.asarray(v) for v in vectors] if count > 1 else [np.asarray(vectors)]
        converged = np.atleast_1d(np.asarray(solver.converged, dtype=bool))
        converged = np.broadcast_to(converged, energies.shape).copy()
        if basis == "restricted":
            vectors = _spin_rotate(vectors, energies, n, nelec)
        s_squared, labels, norms = [], [], []
        for e, c in zip(energies, vectors, strict=True):
            residual = _sigma(basis, h1, eri, n, nelec, c) - e * c
            norms.append(float(np.linalg.norm(residual)))
            if basis == "restricted":
                from pyscf.fci import spin_op

                s_squared.append(float(spin_op.spin_square0(c, n, nelec)[0]))
            else:
                s_squared.append(None)
            if det_irreps is not None:
                weights = np.bincount(det_irreps.ravel(), weights=np.abs(c.ravel()) ** 2, minlength=8)
                labels.append(dominant_irrep(weights))
            else:
                labels.append(None)
        chosen = []
        for i in range(len(energies)):
            spin_ok = (
                two_s is None
                or basis != "restricted"
                or (
                    abs(s_squared[i] - (two_s_of(s_squared[i]) / 2) * (two_s_of(s_squared[i]) / 2 + 1)) <= _PURITY
                    and two_s_of(s_squared[i]) == two_s
                )
            )
            irrep_ok = irrep is None or labels[i] == irrep
            if spin_ok and irrep_ok:
                chosen.append(i)
        chosen = chosen[:need]
        if len(chosen) >= need:
            break
        if count >= solve_space:
            raise FieldError(
                "two_s" if two_s is not None else "root",
                f"pyscf found {len(chosen)} matching states among all {count}, needed {need}",
            )
        k = min(solve_space, 2 * k)
    return PyscfStates(
        energies=energies[chosen],
        s_squared=[s_squared[i] for i in chosen],
        irreps=[labels[i] for i in chosen],
        residual_norms=np.array(norms)[chosen],
        converged=converged[chosen],
        determinants=space,
        roots_solved=len(energies),
    )
