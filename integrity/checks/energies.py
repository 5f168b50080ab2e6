"""Energies the file must reproduce: ``energy.hf`` (the reference determinant,
from Fock matrices) and ``energy.fci`` (full CI, by our solver and on request pyscf's).

A reference missed is explained through :func:`integrity.energies.diagnose.likely_causes`."""

from __future__ import annotations

import numpy as np

from integrity.checks.registry import (
    OUTSIDE_FINGERPRINT,
    Result,
    at_field,
    failed,
    figure,
    passed,
    register,
    skipped,
    warned,
)
from integrity.energies.diagnose import common_offset, likely_causes, offset_text
from integrity.energies.meanfield import determinant_energy, reference_occupation
from integrity.energies.solve import solve_reference
from integrity.errors import BudgetError, FieldError, UnsupportedError
from integrity.io import format_bytes


def _tolerance(ref, ctx):
    return ref.tolerance if ref.tolerance is not None else ctx.limit


def _margin(row) -> float:
    """How far a reference is beyond its tolerance (negative: within it)."""
    return abs(row["difference"]) - row["tolerance"]


def _missing(method: str) -> Result:
    return warned(
        f"not run: no {method} reference stored (references is {OUTSIDE_FINGERPRINT}); the {method} energy "
        "was not verified",
        where=at_field("references"),
    )


def _loosened(rows, ctx) -> list[str]:
    """Labels of references that pass only because their own tolerance is looser than the limit."""
    return [row["label"] for row in rows if row["tolerance"] > ctx.limit and abs(row["difference"]) > ctx.limit]


def _loosened_warning(labels, rows, text: str, ctx) -> Result:
    worst = max(rows, key=_margin)
    fields = ", ".join(f"references[{label}].tolerance" for label in labels)
    return warned(
        f"{text}, but only within the references' own tolerance ({fields}, outside the fingerprint): "
        f"{', '.join(repr(label) for label in labels)} differ by more than the limit {ctx.limit:g}",
        value=abs(worst["difference"]),
        limit=worst["tolerance"],
        where=at_field(f"references[{labels[0]}].tolerance"),
        details={"references": rows},
    )


def hf_rows(ham, ctx) -> list[dict]:
    """One row per hf reference: the determinant energy, the difference (reference - computed), the tolerance."""
    if "hf rows" not in ctx.cache:
        rows = []
        for ref in (r for r in ham.references if r.method == "hf"):
            occupation = reference_occupation(ham, ref)
            energy = determinant_energy(ham, occupation)
            computed = float(np.real(energy))
            row = {
                "label": ref.label,
                "computed": computed,
                "expected": ref.energy,
                "difference": ref.energy - computed,
                "tolerance": _tolerance(ref, ctx),
                "occupation": [list(occupation[0]), list(occupation[1])],
            }
            if np.iscomplexobj(energy):
                row["imaginary"] = float(np.imag(energy))
            rows.append(row)
        ctx.cache["hf rows"] = rows
    return ctx.cache["hf rows"]


def _cause(ham, ref, computed, tolerance, ctx, differences) -> str | None:
    """The likely cause of a missed reference: a constant every reference shares, or diagnose's hypotheses."""
    offset = common_offset(differences, tolerance)
    if offset is not None:
        return offset_text(ham, offset, len(differences), tolerance)
    return "; ".join(likely_causes(ham, ref.label, computed, tolerance, ctx.memory)) or None


def _difference_text(difference: float) -> str:
    """|difference| as the report's value, then the signed difference."""
    return f"|difference| {figure(abs(difference))}, reference - computed = {difference:+.3g}"


@register("energy.hf", limit=1e-6, needs_finite=True)
def check_hf(ham, ctx) -> Result:
    """|reference - determinant energy| of each hf reference (the worst against its tolerance)."""
    if not any(r.method == "hf" for r in ham.references):
        return _missing("hf")
    rows = hf_rows(ham, ctx)
    worst = max(rows, key=_margin)
    details = {"references": rows}
    value, limit = abs(worst["difference"]), worst["tolerance"]
    if value <= limit:
        text = f"{len(rows)} hf reference(s) reproduced; largest |difference| {figure(value)}"
        loosened = _loosened(rows, ctx)
        if loosened:
            return _loosened_warning(loosened, rows, text, ctx)
        return passed(text, value=value, limit=limit, details=details)
    ref = ham.reference(worst["label"])
    cause = _cause(ham, ref, worst["computed"], limit, ctx, [row["difference"] for row in rows])
    if cause is None:
        cause = (
            "the integrals, the occupation or the reference energy disagree (see two_electron.notation and "
            "electrons.count)"
        )
        if len(rows) == 1 and any(r.method == "fci" for r in ham.references):
            cause += "; energy.fci tells whether the fci references are off by the same constant"
    return failed(
        f"reference {ref.label!r} says {ref.energy:.10f} but the determinant gives {worst['computed']:.10f} "
        f"({_difference_text(worst['difference'])}, limit {figure(limit)}); {cause}",
        value=value,
        limit=limit,
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
    """|reference - full CI| of each fci reference, or the gap between engines (the worst against its tolerance)."""
    refs = [r for r in ham.references if r.method == "fci"]
    if not refs:
        return _missing("fci")
    rows, problems, spins = [], [], []
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
        problems.append((abs(difference), tolerance, ref, first, difference, "mismatch"))
        if len(solved) == 2:
            gap = solved[1]["energy"] - solved[0]["energy"]
            problems.append((abs(gap), tolerance, ref, first, gap, "engines"))
        if ref.two_s is not None and first["two_s"] is not None and first["two_s"] != ref.two_s:
            spins.append((ref, first))
    details = {"references": rows}
    value, limit, ref, first, difference, kind = max(problems, key=lambda item: item[0] - item[1])
    found = f"2S = {first['two_s']}" if first["two_s"] is not None else "2S undetermined"
    unconverged = [(row, s) for row in rows for s in row["solutions"] if not s["converged"]]
    if unconverged:  # the energy is not the full-CI one: neither a pass nor a failure can be claimed
        row, solution = max(unconverged, key=lambda item: item[1]["residual"])
        iterations = "" if solution["iterations"] is None else f" after {solution['iterations']} iterations"
        return warned(
            f"reference {row['label']!r}: full CI ({solution['engine']}) did not converge: residual norm "
            f"{solution['residual']:.2e}{iterations}, energy {solution['energy']:.10f} "
            f"({_difference_text(row['difference'])}, limit {figure(row['tolerance'])}); "
            "raise --max-iterations or loosen --convergence",
            value=abs(row["difference"]),
            limit=row["tolerance"],
            where=at_field(f"references[{row['label']}]"),
            details=details,
        )
    if value <= limit:
        engines = " and ".join(_engines(ctx))
        text = f"{len(rows)} fci reference(s) reproduced by {engines}; largest |difference| {figure(value)}"
        if spins:
            ref, first = spins[0]
            return warned(
                f"{text}, but reference {ref.label!r} states 2S = {ref.two_s} and the state found has "
                f"2S = {first['two_s']}",
                value=value,
                limit=limit,
                where=at_field(f"references[{ref.label}].two_s"),
                details=details,
            )
        loosened = _loosened(rows, ctx)
        if loosened:
            return _loosened_warning(loosened, rows, text, ctx)
        return passed(text, value=value, limit=limit, details=details)
    if kind == "engines":
        message = (
            f"reference {ref.label!r}: the engines disagree by {figure(value)} (native {first['energy']:.10f}, "
            f"limit {figure(limit)}); one of them is wrong for this Hamiltonian"
        )
    else:
        differences = [row["difference"] for row in rows] + [row["difference"] for row in hf_rows(ham, ctx)]
        notes = [note for note in first["notes"] if "not conserved" in note]
        explained = [text for text in [_cause(ham, ref, first["energy"], limit, ctx, differences)] if text]
        cause = "; ".join(explained + notes) or "the integrals, the electron counts or the reference disagree"
        message = (
            f"reference {ref.label!r} says {ref.energy:.10f} but full CI ({first['engine']}, {found}) "
            f"gives {first['energy']:.10f} ({_difference_text(difference)}, limit {figure(limit)}); {cause}"
        )
    return failed(
        message,
        value=value,
        limit=limit,
        where=at_field(f"references[{ref.label}]"),
        details=details,
    )
