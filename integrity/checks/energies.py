"""Energies that need no diagonalization: the reference determinant, and the Brillouin condition."""

from __future__ import annotations

import numpy as np

from ..diagnose import likely_causes
from ..meanfield import determinant_energy, fock_matrices, reference_occupation
from .registry import Result, register, skipped


def _tolerance(ref, ctx):
    return ref.tolerance if ref.tolerance is not None else ctx.limit


@register("energy.hf", limit=1e-6, needs_finite=True)
def check_hf(ham, ctx) -> Result:
    """The reference-determinant energy against each hf reference."""
    refs = [r for r in ham.references if r.method == "hf"]
    if not refs:
        return skipped("energy.hf", "no hf reference stored")
    rows, worst = [], None
    for ref in refs:
        occupation = reference_occupation(ham, ref)
        energy = determinant_energy(ham, occupation)
        computed = float(np.real(energy))
        difference = ref.energy - computed
        tolerance = _tolerance(ref, ctx)
        row = {
            "label": ref.label,
            "computed": computed,
            "expected": ref.energy,
            "difference": difference,
            "tolerance": tolerance,
            "occupation": [list(occupation[0]), list(occupation[1])],
        }
        if np.iscomplexobj(energy):
            row["imaginary"] = float(np.imag(energy))
        rows.append(row)
        if worst is None or abs(difference) - tolerance > abs(worst["difference"]) - worst["tolerance"]:
            worst = row | {"ref": ref}
    failed = abs(worst["difference"]) > worst["tolerance"]
    details = {"references": rows}
    if not failed:
        return Result(
            "energy.hf",
            "pass",
            f"{len(rows)} hf reference(s) reproduced; largest difference {abs(worst['difference']):.3g}",
            value=abs(worst["difference"]),
            limit=worst["tolerance"],
            details=details,
        )
    ref = worst["ref"]
    hints = likely_causes(ham, ref.label, worst["computed"], worst["tolerance"], ctx.memory)
    cause = "; ".join(hints) or (
        "the integrals, the occupation or the reference energy disagree (see two_electron.notation and electrons.count)"
    )
    return Result(
        "energy.hf",
        "fail",
        f"reference {ref.label!r} says {ref.energy:.10f} but the determinant gives "
        f"{worst['computed']:.10f} (difference {worst['difference']:.3g}, limit {worst['tolerance']:.3g}); "
        f"{cause}",
        value=abs(worst["difference"]),
        limit=worst["tolerance"],
        where=f"references[{ref.label}]",
        details=details,
    )


def brillouin_blocks(ham, occupation):
    """(name, matrix block) whose vanishing is the stationarity of the determinant.

    Closed shell, unrestricted and spin-orbital: F^s_ia for each spin s,
    occupied i and virtual a. Restricted open shell (alpha occupies D + S,
    beta D): (F^a + F^b)_dv, F^b_ds and F^a_sv.
    """
    fock_a, fock_b = fock_matrices(ham, occupation)
    n = ham.n
    alpha, beta = (np.asarray(o, dtype=int) for o in occupation)
    if ham.basis == "restricted" and set(beta.tolist()) != set(alpha.tolist()):
        doubly = np.intersect1d(alpha, beta)
        singly = np.setdiff1d(np.union1d(alpha, beta), doubly)
        empty = np.setdiff1d(np.arange(n), np.union1d(alpha, beta))
        return [
            ("(Fa+Fb) doubly-virtual", (fock_a + fock_b)[np.ix_(doubly, empty)], doubly, empty),
            ("Fb doubly-singly", fock_b[np.ix_(doubly, singly)], doubly, singly),
            ("Fa singly-virtual", fock_a[np.ix_(singly, empty)], singly, empty),
        ]
    if ham.basis == "spin-orbital":
        occupied = np.union1d(alpha, beta)
        virtual = np.setdiff1d(np.arange(n), occupied)
        return [("F occupied-virtual", fock_a[np.ix_(occupied, virtual)], occupied, virtual)]
    out = []
    for name, fock, occupied in (("Fa", fock_a, alpha), ("Fb", fock_b, beta)):
        virtual = np.setdiff1d(np.arange(n), occupied)
        out.append((f"{name} occupied-virtual", fock[np.ix_(occupied, virtual)], occupied, virtual))
    return out


@register("orbitals.canonical", limit=1e-6, needs_finite=True)
def check_canonical(ham, ctx) -> Result:
    """Brillouin: max |F_ia| over occupied i and virtual a, when the orbitals claim to be canonical."""
    if not ham.orbitals.canonical:
        return skipped("orbitals.canonical", "the file does not claim canonical orbitals")
    ref = next((r for r in ham.references if r.method == "hf"), None)
    occupation = reference_occupation(ham, ref)
    worst, where = 0.0, None
    for name, block, rows, cols in brillouin_blocks(ham, occupation):
        if block.size and np.abs(block).max() > worst:
            i, a = np.unravel_index(int(np.argmax(np.abs(block))), block.shape)
            worst, where = float(np.abs(block).max()), f"{name} ({rows[i]}, {cols[a]})"
    if worst > ctx.limit:
        return Result(
            "orbitals.canonical",
            "fail",
            f"the Brillouin condition fails: |F| = {worst:.3g} at {where} (limit {ctx.limit:.3g}); "
            "the orbitals are not the SCF's for this occupation, or the integrals are altered",
            value=worst,
            limit=ctx.limit,
            where=where,
        )
    return Result(
        "orbitals.canonical", "pass", f"Brillouin holds: max |F_ia| = {worst:.3g}", value=worst, limit=ctx.limit
    )
