"""Rendering for people: every result type as text, and every JSON document the CLI prints.

Text is one line per fact; a JSON document is ``json.dumps`` of a result's
``as_dict()``. Nothing here computes: it formats what the library returned.
"""

from __future__ import annotations

import json


def as_json(document) -> str:
    """A JSON document, indented; NaN and infinities are refused (they are not JSON)."""
    return json.dumps(document, indent=2, allow_nan=False)


def _figure(value) -> str:
    return "-" if value is None else f"{value:.3g}"


def file_report_text(report, strict: bool = False) -> str:
    """One line for a passing file; for a failing one, one line per failing check."""
    if report.status == "unreadable":
        return f"{report.path}: unreadable: {report.error}"
    counted = [r for r in report.results if r.status != "skip"]
    skipped = len(report.results) - len(counted)
    warnings = [r for r in report.results if r.status == "warn"]
    if report.status == "pass":
        extra = f", {skipped} skipped" if skipped else ""
        if warnings:
            extra += f", {len(warnings)} warning(s): {', '.join(r.id for r in warnings)}"
        return f"{report.path}: pass ({_checks(len(counted))}{extra})"
    shown = [r for r in report.results if r.status == "fail" or (strict and r.status == "warn")]
    lines = [f"{report.path}: fail ({len(shown)} of {_checks(len(counted))})"]
    for result in shown:
        where = f", at {result.where}" if result.where is not None else ""
        lines.append(
            f"  {result.id}: {result.message} [value {_figure(result.value)}, limit {_figure(result.limit)}{where}]"
        )
    if not shown:
        lines.append("  the file could not be assembled into a Hamiltonian")
    return "\n".join(lines)


def _checks(count: int) -> str:
    return f"{count} check" + ("" if count == 1 else "s")


def batch_text(batch) -> str:
    """Every file's report, in input order."""
    return "\n".join(file_report_text(report, batch.strict) for report in batch.files)


def check_list_text(specs) -> str:
    """``integrity check --list``: id, summary and default limit of every check."""
    lines = []
    for spec in specs:
        limit = "" if spec.limit is None else f" (limit {spec.limit:g})"
        lines.append(f"{spec.id:<24}{spec.summary}{limit}")
    return "\n".join(lines)


def solve_text(path, results) -> str:
    """Energies, 2S, <S^2>, irrep and residual of each root, per engine."""
    lines = [str(path)]
    for result in results:
        counts = (
            f"{result.n_alpha} alpha, {result.n_beta} beta"
            if result.n_alpha is not None
            else f"{result.n_electrons} electrons"
        )
        lines.append(
            f"  {result.engine}: {counts}, {result.determinants} determinants"
            + (f", {result.iterations} iterations" if result.iterations is not None else "")
        )
        lines.append(f"  {'root':>6} {'energy / hartree':>20} {'2S':>4} {'<S^2>':>10} {'irrep':>6} {'residual':>10}")
        for index, root in enumerate(result.roots):
            two_s = "-" if root.two_s is None else str(root.two_s)
            s2 = "-" if root.s_squared is None else f"{root.s_squared:.6f}"
            irrep = "-" if root.irrep is None else str(root.irrep)
            flag = "" if root.converged else "  (not converged)"
            lines.append(
                f"  {index:>6} {root.energy:>20.10f} {two_s:>4} {s2:>10} {irrep:>6} {root.residual_norm:>10.1e}{flag}"
            )
        lines += [f"  note: {note}" for note in result.notes]
    return "\n".join(lines)


def progress_text(update) -> str:
    """One status line of a running full-CI solve (a :class:`~integrity.solver.SolveProgress`)."""
    energies = " ".join(f"{e:.8f}" for e in update.energies[:3]) + (" ..." if len(update.energies) > 3 else "")
    residual = max(update.residual_norms) if update.residual_norms else 0.0
    return (
        f"full CI: iteration {update.iteration}, E = {energies}, residual {residual:.1e} "
        f"(target {update.residual_tolerance:.1e}), {update.elapsed:.0f} s"
    )


def check_progress_text(path, check_id, update=None) -> str:
    """Where a running check is: file, check and, inside a solve, its status."""
    where = f"{path}: {check_id}"
    return where if update is None else f"{where}: {progress_text(update)}"


def conversion_text(result, out_path) -> str:
    """One line per conversion step, then the file written and its checksum."""
    lines = []
    for step in result.steps:
        dropped = f", dropped up to {step['dropped_max_deviation']:.3g}" if "dropped_max_deviation" in step else ""
        changed = " (new fingerprint)" if step.get("fingerprint_changed") else ""
        lines.append(f"{step['step']}: {step['from']} -> {step['to']}{dropped}{changed}")
    lines.append(f"wrote {out_path} ({result.hamiltonian.checksum})")
    return "\n".join(lines)


def diagnosis_text(diagnosis, path: str) -> str:
    """Plain-text report of a diagnosis."""
    head = (
        f"{path}: expected {diagnosis.expected:.10f}, the file gives {diagnosis.computed:.10f} "
        f"({diagnosis.method}; difference {diagnosis.difference:.3g}, tolerance {diagnosis.tolerance:.3g})"
    )
    if diagnosis.matches:
        return head + "\n  the energy matches as stored"
    lines = [head]
    explanations = diagnosis.explanations
    if explanations:
        lines.append("  hypotheses that reproduce the expected energy:")
        lines += [
            f"    {h.name}: {h.description}" + (f" ({h.energy:.10f})" if h.energy is not None else "")
            for h in explanations
        ]
    else:
        lines.append("  no hypothesis reproduces the expected energy; tried:")
        lines += [
            f"    {h.name}: {h.description}" + (f" -> {h.energy:.10f}" if h.energy is not None else f" ({h.note})")
            for h in diagnosis.hypotheses[1:]
        ]
    return "\n".join(lines)


def summary_text(path: str, summary: dict) -> str:
    """Plain-text rendering, one fact per line."""
    orb = summary["orbitals"]
    lines = [str(path)]

    def row(name, text):
        lines.append(f"  {name:<13}{text}")

    if summary["title"]:
        row("title", summary["title"])
    details = [f"{orb['count']} {orb['basis']}"]
    if orb["spin_layout"]:
        details.append(f"{orb['spin_layout']} layout")
    if orb["point_group"]:
        details.append(f"point group {orb['point_group']}")
    if orb["irreps"] is not None:
        details.append("irreps " + " ".join(map(str, orb["irreps"])))
    if orb["canonical"]:
        details.append("canonical")
    row("orbitals", ", ".join(details))
    row("electrons", f"{summary['electrons']['alpha']} alpha, {summary['electrons']['beta']} beta")
    parts = ", ".join(f"{k} {v:.10g}" for k, v in summary["core_energy_parts"].items())
    row("core energy", f"{summary['core_energy']:.10g} hartree" + (f" ({parts})" if parts else ""))
    one = summary["one_electron"]
    row("one-electron", f"{tuple(one['shape'])} {one['dtype']}, norm {one['norm']:.6g}, max |h| {one['max_abs']:.6g}")
    two = summary["two_electron"]
    flags = f"{two['notation']} {two['storage']}" + (", antisymmetrized" if two["antisymmetrized"] else "")
    row(
        "two-electron",
        f"{flags} {tuple(two['shape'])} {two['dtype']}, {two['interaction']}, "
        f"norm {two['norm (dense)']:.6g}, max |g| {two['max_abs']:.6g}",
    )
    row("fingerprint", f"{summary['fingerprint']} ({summary['checksum']})")
    if not summary["references"]:
        row("references", "none")
    for i, ref in enumerate(summary["references"]):
        extra = "".join(f", {k} {ref[k]}" for k in ("two_s", "irrep", "root", "electrons") if k in ref)
        row("references" if i == 0 else "", f"{ref['label']}: {ref['method']} {ref['energy']:.10f} hartree{extra}")
    return "\n".join(lines)
