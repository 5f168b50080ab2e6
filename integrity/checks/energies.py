"""Energies the file must reproduce: ``energy.hf`` (the reference determinant,
from Fock matrices) and ``energy.fci`` (full CI, by our solver and on request pyscf's).

A reference missed is explained through :func:`integrity.energies.diagnose.likely_causes`."""

from __future__ import annotations

import numpy as np

from integrity.checks.registry import Result, at_field, failed, passed, register, skipped, warned
from integrity.energies.diagnose import likely_causes
from integrity.energies.meanfield import determinant_energy, reference_occupation
from integrity.energies.solve import solve_reference
from integrity.errors import BudgetError, FieldError, UnsupportedError
from integrity.io import format_bytes


def _tolerance(ref, ctx):
    return ref.tolerance if ref.tolerance is not None else ctx.limit


@register("energy.hf", limit=1e-6, needs_finite=True)
def check_hf(ham, ctx) -> Result:
    """The reference-determinant energy against each hf reference."""
    refs = [r for r in ham.references if r.method == "hf"]
    if not refs:
        return skipped("no hf reference stored")
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
    missed = abs(worst["difference"]) > worst["tolerance"]
    details = {"references": rows}
    if not missed:
        return passed(
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
    return failed(
        f"reference {ref.label!r} says {ref.energy:.10f} but the determinant gives "
        f"{worst['computed']:.10f} (difference {worst['difference']:.3g}, limit {worst['tolerance']:.3g}); "
        f"{cause}",
        value=abs(worst["difference"]),
        limit=worst["tolerance"],
        where=at_field(f"references[{ref.label}]"),
        details=details,
    )


def _engines(ctx):
    return ("native", "pyscf") if ctx.engine == "both" else (ctx.engine,)


def _solve_one(ham, ref, engine, ctx):
    result = solve_reference(
        ham,
        ref,
        engine=engine,
        memory=ctx.memory,
        tol=ctx.convergence,
        max_iter=ctx.max_iterations,
        progress=ctx.progress if engine == "native" else None,
    )
    state = result.roots[0]
    return {
        "engine": engine,
        "energy": state.energy,
        "two_s": state.two_s,
        "s_squared": state.s_squared,
        "irrep": state.irrep,
        "iterations": result.iterations,
        "residual": state.residual_norm,
        "converged": state.converged,
        "determinants": result.determinants,
        "notes": list(result.notes),
    }


@register("energy.fci", limit=1e-6, needs_finite=True)
def check_fci(ham, ctx) -> Result:
    """Full CI against each fci reference: solved energy, difference, 2S and irrep found, engine."""
    refs = [r for r in ham.references if r.method == "fci"]
    if not refs:
        return skipped("no fci reference stored")
    rows, problems = [], []
    for ref in refs:
        tolerance = _tolerance(ref, ctx)
        try:
            solved = [_solve_one(ham, ref, engine, ctx) for engine in _engines(ctx)]
        except BudgetError as err:
            size = f"{err.size} determinants, " if err.size else ""
            needed = f"an estimated {format_bytes(err.needed)}" if err.needed else "more memory"
            return skipped(
                f"reference {ref.label!r}: {size}{needed} against the budget of "
                f"{format_bytes(err.budget or ctx.memory)} (--memory): {err.reason}",
                details={"determinants": err.size, "estimate": err.needed, "budget": err.budget},
            )
        except UnsupportedError as err:
            return skipped(f"reference {ref.label!r}: {err.reason}")
        except FieldError as err:
            return skipped(f"reference {ref.label!r} cannot be solved: {err}")
        first = solved[0]
        difference = ref.energy - first["energy"]
        row = {
            "label": ref.label,
            "expected": ref.energy,
            "difference": difference,
            "tolerance": tolerance,
            "solutions": solved,
        }
        rows.append(row)
        if abs(difference) > tolerance:
            problems.append((abs(difference) - tolerance, ref, first, difference, tolerance, "mismatch"))
        if len(solved) == 2 and abs(solved[0]["energy"] - solved[1]["energy"]) > tolerance:
            gap = abs(solved[0]["energy"] - solved[1]["energy"])
            problems.append((gap, ref, first, solved[1]["energy"] - solved[0]["energy"], tolerance, "engines"))
        if ref.two_s is not None and first["two_s"] is not None and first["two_s"] != ref.two_s:
            problems.append((1.0, ref, first, difference, tolerance, "spin"))
    details = {"references": rows}
    worst_value = max(abs(r["difference"]) for r in rows)
    unconverged = [(row, s) for row in rows for s in row["solutions"] if not s["converged"]]
    if unconverged:  # the energy is not the full-CI one: neither a pass nor a failure can be claimed
        row, solution = max(unconverged, key=lambda item: item[1]["residual"])
        iterations = "" if solution["iterations"] is None else f" after {solution['iterations']} iterations"
        return warned(
            f"reference {row['label']!r}: full CI ({solution['engine']}) did not converge: residual norm "
            f"{solution['residual']:.2e}{iterations}, energy {solution['energy']:.10f} "
            f"(difference {row['difference']:.3g}, limit {row['tolerance']:.3g}); "
            "raise --max-iterations or loosen --convergence",
            value=abs(row["difference"]),
            limit=row["tolerance"],
            where=at_field(f"references[{row['label']}]"),
            details=details,
        )
    if not problems:
        engines = " and ".join(_engines(ctx))
        return passed(
            f"{len(rows)} fci reference(s) reproduced by {engines}; largest difference {worst_value:.3g}",
            value=worst_value,
            limit=rows[0]["tolerance"],
            details=details,
        )
    _, ref, first, difference, tolerance, kind = max(problems, key=lambda item: item[0])
    found = f"2S = {first['two_s']}" if first["two_s"] is not None else "2S not determinable"
    if kind == "engines":
        message = (
            f"reference {ref.label!r}: the engines disagree by {abs(difference):.3g} "
            f"(native {first['energy']:.10f}); one of them is wrong for this Hamiltonian"
        )
    elif kind == "spin":
        message = f"reference {ref.label!r}: the state found has {found}, not 2S = {ref.two_s}"
    else:
        hints = likely_causes(ham, ref.label, first["energy"], tolerance, ctx.memory)
        notes = [note for note in first["notes"] if "not conserved" in note]
        cause = "; ".join(hints + notes) or "the integrals, the electron counts or the reference disagree"
        message = (
            f"reference {ref.label!r} says {ref.energy:.10f} but full CI ({first['engine']}, {found}) "
            f"gives {first['energy']:.10f} (difference {difference:.3g}, limit {tolerance:.3g}); {cause}"
        )
    return failed(
        message,
        value=abs(difference),
        limit=tolerance,
        where=at_field(f"references[{ref.label}]"),
        details=details,
    )
