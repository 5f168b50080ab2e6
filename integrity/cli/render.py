"""Rendering for people: every result type as text, and every JSON document the CLI prints.

Text is one line per fact; a JSON document is ``json.dumps`` of a result's
``as_dict()``. Nothing here computes: it formats what the library returned.

Whatever came from a file or the command line (paths, titles, labels,
messages quoting them) passes through :func:`printable` before it is printed:
control characters (a newline in a file name), format characters (a
right-to-left override) and lone surrogates (undecodable bytes of a name)
are written as Python escapes, so a report line stays one line and printing
never fails on a text the terminal cannot encode. JSON documents hold no NaN
or infinity (they are not JSON): a non-finite number is written as null.
"""

from __future__ import annotations

import json
import math
import unicodedata
from pathlib import Path

import numpy as np

#: character categories written as escapes: control, format, surrogate, line and paragraph separators
ESCAPED_CATEGORIES = frozenset({"Cc", "Cf", "Cs", "Zl", "Zp"})


def printable(text) -> str:
    """``text`` with control, format and surrogate characters written as escapes.

    >>> printable("h2\\n.h5"), printable("bad\\udcff"), printable("ok é")
    ('h2\\\\n.h5', 'bad\\\\udcff', 'ok é')
    """
    text = str(text)
    if text.isprintable():
        return text
    return "".join(
        char.encode("unicode_escape").decode("ascii") if unicodedata.category(char) in ESCAPED_CATEGORIES else char
        for char in text
    )


def one_line(text) -> str:
    """A message as one printable line: runs of white space (line breaks too) become one space.

    >>> one_line("Unknown basis format or basis name\\nnonsense")
    'Unknown basis format or basis name nonsense'
    """
    return printable(" ".join(str(text).split()))


def finite_json(value):
    """``value`` with every non-finite float as None and NumPy scalars as Python ones (what JSON can hold).

    >>> finite_json({"a": [1.5, float("inf")], "b": np.float64("nan"), "c": np.int64(3)})
    {'a': [1.5, None], 'b': None, 'c': 3}
    """
    if isinstance(value, dict):
        return {str(k): finite_json(v) for k, v in value.items()}
    if isinstance(value, list | tuple):
        return [finite_json(v) for v in value]
    if isinstance(value, bool | np.bool_):
        return bool(value)
    if isinstance(value, np.integer):
        return int(value)
    if isinstance(value, float | np.floating):
        return float(value) if math.isfinite(value) else None
    return value


def as_json(document) -> str:
    """A JSON document, indented; non-finite numbers become null."""
    return json.dumps(finite_json(document), indent=2, allow_nan=False)


def _figure(value) -> str:
    return "-" if value is None else f"{value:.3g}"


def _plural(count: int, word: str) -> str:
    """``1 check``, ``2 checks``."""
    return f"{count} {word}" + ("" if count == 1 else "s")


def file_report_text(report, strict: bool = False) -> str:
    """One line for a passing file; for a failing one, one line per failing check."""
    path = printable(report.path)
    if report.status == "unreadable":
        return f"{path}: unreadable: {one_line(report.error)}"
    counted = [r for r in report.results if r.status != "skip"]
    skipped = len(report.results) - len(counted)
    warnings = [r for r in report.results if r.status == "warn"]
    if report.status == "pass":
        extra = f", {skipped} skipped" if skipped else ""
        if warnings:
            extra += f", {_plural(len(warnings), 'warning')}: {', '.join(r.id for r in warnings)}"
        return f"{path}: pass ({_plural(len(counted), 'check')}{extra})"
    shown = [r for r in report.results if r.status == "fail" or (strict and r.status == "warn")]
    lines = [f"{path}: fail ({len(shown)} of {_plural(len(counted), 'check')})"]
    for result in shown:
        where = f", at {printable(result.where)}" if result.where is not None else ""
        lines.append(
            f"  {result.id}: {one_line(result.message)} "
            f"[value {_figure(result.value)}, limit {_figure(result.limit)}{where}]"
        )
    if not shown:
        lines.append("  the file could not be assembled into a Hamiltonian")
    return "\n".join(lines)


def batch_text(batch) -> str:
    """Every file's report, in input order, then the files passed over."""
    lines = [file_report_text(report, batch.strict) for report in batch.files]
    return "\n".join(lines + [passed_over_text(entry) for entry in batch.passed_over])


def passed_over_text(entry) -> str:
    """A file a run did not judge, and why."""
    return f"{entry.path}: passed over: {entry.reason}"


def batch_entry_text(entry, strict: bool = False) -> str:
    """One entry of a batch run as it finishes: a file's report, or a file passed over."""
    if hasattr(entry, "reason"):
        return passed_over_text(entry)
    return file_report_text(entry, strict)


def batch_progress_text(failures: int, path: str, check_id: str | None = None, update=None) -> str:
    """What the progress line shows after the bar and the count: failures so far, then the file
    finished last or, while a worker reports, the file and check it is in (and its solve)."""
    text = f"{failures} not passed  {printable(path)}"
    if check_id is not None:
        text += f": {check_id}"
    if update is not None:
        text += f", {progress_text(update)}"
    return text


def check_list_text(specs) -> str:
    """``integrity check --list``: id, summary, and when each check fails (the direction of its limit)."""
    lines = []
    for spec in specs:
        rule = spec.rule
        lines.append(f"{spec.id:<24}{spec.summary} ({rule})")
    return "\n".join(lines)


def _irrep_label(irrep, names) -> str:
    if irrep is None:
        return "-"
    if names and 0 <= irrep < len(names):
        return names[irrep]
    return str(irrep)


def solve_text(path, results, irrep_names=None) -> str:
    """Energies, 2S, <S^2>, irrep and residual of each root, per engine; irreps by name when the file names them."""
    lines = [printable(path)]
    for result in results:
        counts = (
            f"{result.n_alpha} alpha, {result.n_beta} beta"
            if result.n_alpha is not None
            else f"{result.n_electrons} electrons"
        )
        lines.append(
            f"  {result.engine}: {counts}, {result.determinants} determinants"
            + (f", {_plural(result.iterations, 'iteration')}" if result.iterations is not None else "")
        )
        lines.append(f"  {'root':>6} {'energy / hartree':>20} {'2S':>4} {'<S^2>':>10} {'irrep':>6} {'residual':>10}")
        for index, root in enumerate(result.roots):
            two_s = "-" if root.two_s is None else str(root.two_s)
            s2 = "-" if root.s_squared is None else f"{root.s_squared:.6f}"
            irrep = _irrep_label(root.irrep, irrep_names)
            flag = "" if root.converged else "  (not converged)"
            lines.append(
                f"  {index:>6} {root.energy:>20.10f} {two_s:>4} {s2:>10} {irrep:>6} {root.residual_norm:>10.1e}{flag}"
            )
        lines += [f"  note: {one_line(note)}" for note in result.notes]
    return "\n".join(lines)


def progress_text(update) -> str:
    """One status line of a running full-CI solve (a :class:`~integrity.solver.SolveProgress`)."""
    energies = " ".join(f"{e:.8f}" for e in update.energies[:3]) + (" ..." if len(update.energies) > 3 else "")
    residual = max(update.residual_norms) if update.residual_norms else 0.0
    return (
        f"full CI: iteration {update.iteration}, E = {energies}, residual {residual:.1e} "
        f"(target {update.residual_tolerance:.1e}), {update.elapsed:.0f} s"
    )


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
    lines.append(f"wrote {printable(out_path)} ({result.hamiltonian.checksum})")
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


def conversion_plan_text(out_path, size: dict) -> str:
    """What a conversion is about to write: the arrays' size against the input's."""
    from integrity.io import format_bytes

    ratio = size["output"] / size["input"] if size["input"] else float("inf")
    factor = f"{ratio:.3g}x the input's {format_bytes(size['input'])}" if math.isfinite(ratio) else "from nothing"
    return f"writing {printable(out_path)}: arrays of {format_bytes(size['output'])} ({factor})"


def _hypothesis_line(h, explained: bool) -> str:
    text = f"    {h.name}: {one_line(h.description)}"
    if h.energy is not None:
        return text + (f" ({h.energy:.10f})" if explained else f" -> {h.energy:.10f}")
    return text + (f" ({one_line(h.note)})" if h.note else "")


def diagnosis_text(diagnosis, path: str) -> str:
    """Plain-text report of a diagnosis."""
    head = (
        f"{printable(path)}: expected {diagnosis.expected:.10f}, the file gives {diagnosis.computed:.10f} "
        f"({diagnosis.method}; difference {diagnosis.difference:.3g}, tolerance {diagnosis.tolerance:.3g})"
    )
    if diagnosis.matches:
        return head + "\n  the energy matches as stored"
    lines = [head]
    explanations = diagnosis.explanations
    if explanations:
        lines.append("  hypotheses that reproduce the expected energy:")
        lines += [_hypothesis_line(h, True) for h in explanations]
    else:
        lines.append("  no hypothesis reproduces the expected energy; tried:")
        lines += [_hypothesis_line(h, False) for h in diagnosis.hypotheses[1:]]
    return "\n".join(lines)


def _value_text(value) -> str:
    """A provenance value on one line: numbers as they are, text escaped, atom lines joined by '; '."""
    if isinstance(value, str):
        return printable("; ".join(line.strip() for line in value.splitlines() if line.strip()))
    return printable(value)


def _history_text(step) -> str:
    if not isinstance(step, dict):
        return printable(step)
    head = " ".join(str(step[k]) for k in ("date", "step") if k in step)
    move = f" {step.get('from')} -> {step.get('to')}" if "from" in step or "to" in step else ""
    extra = ", ".join(
        f"{k} {v}" for k, v in step.items() if k not in ("date", "step", "from", "to", "tool", "fingerprint_changed")
    )
    tool = f" ({step['tool']})" if "tool" in step else ""
    changed = ", new fingerprint" if step.get("fingerprint_changed") else ""
    return printable(f"{head}{move}{tool}{changed}" + (f"; {extra}" if extra else ""))


def summary_text(path: str, summary: dict) -> str:
    """Plain-text rendering of ``integrity show``, one fact per line."""
    orb = summary["orbitals"]
    lines = [printable(path)]

    def row(name, text):
        lines.append(f"  {name:<13}{text}")

    if summary["title"]:
        row("title", printable(summary["title"]))
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
    if orb.get("irrep_names") and orb["irreps"] is not None:
        row("irrep names", printable(" ".join(orb["irrep_names"])))
    row("electrons", f"{summary['electrons']['alpha']} alpha, {summary['electrons']['beta']} beta")
    parts = ", ".join(f"{printable(k)} {v:.10g}" for k, v in summary["core_energy_parts"].items())
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
        extra = "".join(
            f", {k} {printable(ref[k])}" for k in ("two_s", "irrep", "root", "electrons", "tolerance") if k in ref
        )
        row(
            "references" if i == 0 else "",
            f"{printable(ref['label'])}: {printable(ref['method'])} {ref['energy']:.10f} hartree{extra}",
        )
    provenance = summary.get("provenance") or {}
    for i, (key, value) in enumerate(provenance.items()):
        row("provenance" if i == 0 else "", f"{printable(key)}: {_value_text(value)}")
    for i, step in enumerate(summary.get("history") or []):
        row("history" if i == 0 else "", f"{i + 1}. {_history_text(step)}")
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
        f"{name}  {printable(side.label)}: {side.orbitals} {side.basis} orbitals, {side.alpha} alpha {side.beta} beta, "
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
