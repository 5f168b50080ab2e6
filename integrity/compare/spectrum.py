"""Energies for the last rungs: full CI of each file's stated sector, determinant energies,
the constant by which two files differ, and the diagnosis of an energy difference.

Full CI is invariant under any rotation of the orbitals within the space: the
determinants of N electrons in n orthonormal orbitals span the same N-electron
space in every orthonormal basis of those orbitals, so the Hamiltonian
restricted to that space has the same eigenvalues (Source: Helgaker, Jørgensen
and Olsen, *Molecular Electronic-Structure Theory*, Wiley 2000, ch. 11 on
configuration-interaction theory, section 11.1, with the exponential
parametrization of orbital rotations of ch. 3 (from memory)). Two files whose
orbitals are rotated within the space therefore give
the same full-CI energies though their elements differ. A determinant's energy
is invariant only under rotations among its occupied orbitals and among its
virtual ones, so the Hartree-Fock energies agree only where the occupations
correspond.

A difference is explained with the hypotheses of :mod:`integrity.energies.diagnose`,
run both ways: which mistake in B reproduces A's energy, and which in A reproduces B's.
"""

from __future__ import annotations

from math import comb

import numpy as np

from integrity.compare.result import Energies
from integrity.energies.diagnose import diagnose
from integrity.energies.meanfield import determinant_energy, reference_occupation
from integrity.energies.solve import solve
from integrity.errors import IntegrityError
from integrity.model.hamiltonian import Hamiltonian, Reference

#: diagnose's full-CI solves converge energies to 1e-9 hartree, so a hypothesis is judged no finer than this
HYPOTHESIS_FLOOR = 1e-8
#: diagnose re-solves full CI for each of about twenty hypotheses; beyond this many determinants it
#: judges the determinant (hf) energies instead, which cost one Fock build each
DIAGNOSE_FCI_DETERMINANTS = 20_000


def hf_reference(ham: Hamiltonian) -> Reference | None:
    """The reference labelled ``hf``, else the first with method ``hf``, else None (lowest orbitals)."""
    labelled = [r for r in ham.references if r.label == "hf"]
    methods = [r for r in ham.references if r.method == "hf"]
    return (labelled or methods or [None])[0]


def _space(ham: Hamiltonian) -> int:
    """Determinants of the file's sector (a lower bound for spin-orbital files that couple the spins)."""
    per_spin = ham.orbitals.per_spin
    return comb(per_spin, ham.electrons.alpha) * comb(per_spin, ham.electrons.beta)


def _fci(ham: Hamiltonian, roots: int, tolerance: float, memory: int):
    try:
        result = solve(ham, roots=min(roots, max(1, _space(ham))), memory=memory, tol=min(1e-9, tolerance / 10))
    except IntegrityError as err:
        return None, err.reason
    return tuple(float(root.energy) for root in result.roots), None


def _hf(ham: Hamiltonian):
    try:
        energy = determinant_energy(ham, reference_occupation(ham, hf_reference(ham)))
    except IntegrityError as err:
        return None, err.reason
    return float(np.real(energy)), None


def file_energies(
    a: Hamiltonian, b: Hamiltonian, roots: int, tolerance: float, memory: int, names=("A", "B")
) -> Energies:
    """Full-CI roots and determinant energies of both files (None, with a note, where they cannot be had)."""
    values, notes = {}, []
    for name, ham in zip(names, (a, b), strict=True):
        finite = bool(np.all(np.isfinite(ham.one_electron))) and bool(np.all(np.isfinite(ham.two_electron.array)))
        if not finite:
            values[name] = (None, None)
            notes.append(f"{name} holds values that are not finite: no energies")
            continue
        fci, why = _fci(ham, roots, tolerance, memory)
        if why:
            notes.append(f"{name}: full CI not evaluated: {why}")
        hf, why = _hf(ham)
        if why:
            notes.append(f"{name}: determinant energy not evaluated: {why}")
        values[name] = (fci, hf)
    (fci_a, hf_a), (fci_b, hf_b) = values[names[0]], values[names[1]]
    return Energies(fci_a, fci_b, hf_a, hf_b, tuple(notes))


def spectra_agree(energies: Energies, tolerance: float) -> bool | None:
    """Whether the full-CI roots agree within ``tolerance`` (None when either is missing)."""
    if not energies.fci_a or not energies.fci_b:
        return None
    if len(energies.fci_a) != len(energies.fci_b):
        return False
    return bool(np.all(np.abs(np.subtract(energies.fci_b, energies.fci_a)) <= tolerance))


def named_constant(a: Hamiltonian, b: Hamiltonian, difference: float, tolerance: float, names=("A", "B")):
    """Sentences naming ``difference`` = core_B - core_A when it equals a stored part or a whole core energy."""
    found: dict[tuple[str, float], list[str]] = {}
    for name, ham in zip(names, (a, b), strict=True):
        for part, value in (ham.core_energy_parts or {}).items():
            if value != 0 and min(abs(difference - value), abs(difference + value)) <= tolerance:
                found.setdefault((part, float(value)), []).append(name)
    out = []
    for (part, value), holders in found.items():
        lacking = names[0] if abs(difference - value) <= tolerance else names[1]
        out.append(
            f"the difference is core_energy_parts.{part} = {value:.12g} (stored in {' and '.join(holders)}): "
            f"{lacking}'s core_energy lacks it, or the other counts it twice"
        )
    for name, ham, other in ((names[0], a, b), (names[1], b, a)):
        if ham.core_energy == 0 and other.core_energy != 0:
            out.append(f"{name} has no core energy: it holds the electronic energy only")
    return tuple(out)


def diagnosed(
    a: Hamiltonian, b: Hamiltonian, energies: Energies, tolerance: float, memory: int, names=("A", "B")
) -> list[str]:
    """diagnose's hypotheses that turn one file's energy into the other's, both ways (full-CI energies
    up to ``DIAGNOSE_FCI_DETERMINANTS`` determinants, determinant energies beyond)."""
    small = max(_space(a), _space(b)) <= DIAGNOSE_FCI_DETERMINANTS
    if energies.fci_a and energies.fci_b and small:
        method, computed = "fci", (energies.fci_a[0], energies.fci_b[0])
    elif energies.hf_a is not None and energies.hf_b is not None:
        method, computed = "hf", (None, None)  # diagnose's determinant is the lowest orbitals; let it compute
    else:
        return []
    expected = (
        (energies.fci_a[0], energies.fci_b[0]) if method == "fci" else (float(energies.hf_a), float(energies.hf_b))
    )
    out = []
    judged = max(tolerance, HYPOTHESIS_FLOOR)
    for this, other in ((1, 0), (0, 1)):
        ham = (a, b)[this]
        try:
            finding = diagnose(
                ham, expected=expected[other], method=method, tolerance=judged, memory=memory, computed=computed[this]
            )
        except IntegrityError:
            continue
        for hypothesis in finding.explanations:
            if hypothesis.name != "as stored":
                out.append(f"{names[this]} against {names[other]}'s {method} energy: {hypothesis.description}")
    return out
