"""Rendering for people: every result type as text, and every JSON document the CLI prints.

Text is one line per fact; a JSON document is ``json.dumps`` of a result's
``as_dict()``. Nothing here computes: it formats what the library returned.
"""

from __future__ import annotations

import json
from pathlib import Path


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
        signs = f", signs {step['signs']}" if "signs" in step else ""
        signs += ", alpha and beta exchanged" if step.get("exchange_spins") else ""
        lines.append(f"{step['step']}: {step['from']} -> {step['to']}{signs}{dropped}{changed}")
        if step["step"] == "reduce":
            lines += _reduce_details(step)
    lines.append(f"wrote {out_path} ({result.hamiltonian.checksum})")
    return "\n".join(lines)


def _reduce_details(step) -> list[str]:
    """The orbitals a reduce step froze, kept and discarded, the energy folded in, the references."""
    lines = [f"  frozen {step['frozen']}, active {step['active']}, discarded {step.get('discarded', 'none')}"]
    lines.append(f"  frozen-core energy {step['frozen_core_energy']:.12g} hartree added to core_energy")
    for label, orbitals in step.get("open_frozen", {}).items():
        lines.append(f"  frozen although not filled in {label}: {orbitals} (allowed; that reference was dropped)")
    if step.get("dropped_references"):
        lines.append(f"  references dropped (they belong to the old space): {', '.join(step['dropped_references'])}")
    if step.get("recomputed_references"):
        lines.append(f"  references recomputed by full CI: {', '.join(step['recomputed_references'])}")
    return lines


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


def _yes_no(holds) -> str:
    return {True: "yes", False: "no", None: "undecided"}[holds]


def relabel_command(comparison, out_name: str | None = None) -> str:
    """The ``integrity convert`` call that makes A look like B, from a comparison's relabelling."""
    relabelling, side = comparison.relabelling, comparison.a
    path = Path(side.label)
    out_name = out_name or f"{path.stem}_relabelled{path.suffix or '.h5'}"
    words = ["integrity convert", side.label, out_name]
    if relabelling.basis != side.basis:
        words += ["--basis", relabelling.basis]
    if relabelling.spin_layout is not None:
        words += ["--spin-layout", relabelling.spin_layout]
    words += ["--orbital-order", relabelling.order_text, "--orbital-signs", relabelling.signs_text]
    if relabelling.exchange_spins:
        words.append("--exchange-spins")
    return " ".join(words)


def _side_text(name, side) -> str:
    return (
        f"{name}  {side.label}: {side.orbitals} {side.basis} orbitals, {side.alpha} alpha {side.beta} beta, "
        f"core energy {side.core_energy:.10g}, {side.notation} {side.storage} ({side.fingerprint[:19]}...)"
    )


def _energy_rows(energies) -> list[str]:
    lines = [f"  {'':<12}{'A / hartree':>20}{'B / hartree':>20}{'B - A':>12}"]
    count = max(len(energies.fci_a or ()), len(energies.fci_b or ()))
    for index in range(count):
        a = energies.fci_a[index] if energies.fci_a and index < len(energies.fci_a) else None
        b = energies.fci_b[index] if energies.fci_b and index < len(energies.fci_b) else None
        lines.append(_energy_row(f"fci root {index}", a, b))
    lines.append(_energy_row("hf", energies.hf_a, energies.hf_b))
    return lines


def _energy_row(name, a, b) -> str:
    def cell(value):
        return f"{'-':>20}" if value is None else f"{value:>20.10f}"

    gap = "-" if a is None or b is None else f"{b - a:.2e}"
    return f"  {name:<12}{cell(a)}{cell(b)}{gap:>12}"


def comparison_text(comparison) -> str:
    """The verdict, each rung tried with its evidence, then the relabelling, constant, energies, reasons."""
    verdict = "equivalent" if comparison.equivalent else "not equivalent"
    lines = [
        _side_text("A", comparison.a),
        _side_text("B", comparison.b),
        f"rung {comparison.rung} of 6: {comparison.title} ({verdict}; --accept {comparison.accept}, "
        f"tolerance {comparison.tolerance:g})",
    ]
    if comparison.common_form:
        lines.append(f"  compared as {comparison.common_form}")
    for step in comparison.steps:
        lines.append(f"  {step.rung} {step.name:<10} {_yes_no(step.holds):<9} {step.evidence}")
    relabelling = comparison.relabelling
    if relabelling is not None and not relabelling.is_identity:
        exchange = ", after exchanging alpha and beta" if relabelling.exchange_spins else ""
        lines += [
            f"relabelling: B's orbital p is A's orbital order[p] times signs[p]{exchange} "
            f"({relabelling.basis} orbitals{', alpha/beta' if '/' in relabelling.order_text else ''})",
            f"  order  {relabelling.order_text}",
            f"  signs  {relabelling.signs_text}",
            f"  apply  {relabel_command(comparison)}",
        ]
    if comparison.constant is not None:
        lines.append(f"constant: B - A = {comparison.constant.difference:.12g} hartree")
        lines += [f"  {text}" for text in comparison.constant.named]
    if comparison.energies is not None:
        lines.append("energies:")
        lines += _energy_rows(comparison.energies)
        lines += [f"  note: {note}" for note in comparison.energies.notes]
    if comparison.reasons:
        lines.append("likeliest reasons:")
        lines += [f"  - {reason}" for reason in comparison.reasons]
    lines += [f"note: {note}" for note in comparison.notes]
    return "\n".join(lines)
