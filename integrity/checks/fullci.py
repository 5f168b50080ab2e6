"""energy.fci: every fci reference reproduced by full CI, our solver's (and pyscf's on request)."""

from __future__ import annotations

from ..diagnose import likely_causes
from ..errors import BudgetError, FieldError, UnsupportedError
from ..fullci import solve_reference
from ..io import format_bytes
from .registry import Result, register, skipped


def _tolerance(ref, ctx):
    return ref.tolerance if ref.tolerance is not None else ctx.limit


def _engines(ctx):
    return ("native", "pyscf") if ctx.engine == "both" else (ctx.engine,)


def _solve_one(ham, ref, engine, ctx):
    result = solve_reference(ham, ref, engine=engine, memory=ctx.memory)
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
        return skipped("energy.fci", "no fci reference stored")
    rows, problems = [], []
    for ref in refs:
        tolerance = _tolerance(ref, ctx)
        try:
            solved = [_solve_one(ham, ref, engine, ctx) for engine in _engines(ctx)]
        except BudgetError as err:
            size = f"{err.size} determinants, " if err.size else ""
            needed = f"an estimated {format_bytes(err.needed)}" if err.needed else "more memory"
            return skipped(
                "energy.fci",
                f"reference {ref.label!r}: {size}{needed} against the budget of "
                f"{format_bytes(err.budget or ctx.memory)} (--memory): {err.reason}",
                details={"determinants": err.size, "estimate": err.needed, "budget": err.budget},
            )
        except UnsupportedError as err:
            return skipped("energy.fci", f"reference {ref.label!r}: {err.reason}")
        except FieldError as err:
            return skipped("energy.fci", f"reference {ref.label!r} cannot be solved: {err}")
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
    if not problems:
        engines = " and ".join(_engines(ctx))
        return Result(
            "energy.fci",
            "pass",
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
    return Result(
        "energy.fci",
        "fail",
        message,
        value=abs(difference),
        limit=tolerance,
        where=f"references[{ref.label}]",
        details=details,
    )
