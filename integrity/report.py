"""Rendering check reports: one line per passing file, one line per failing check; or JSON.

The JSON document follows ``schemas/report.schema.json``.
"""

from __future__ import annotations

from . import __version__

REPORT_FORMAT = "integrity.report"
REPORT_VERSION = 1


def _figure(value) -> str:
    return "-" if value is None else f"{value:.3g}"


def render_text(reports, strict: bool = False) -> str:
    lines = []
    for report in reports:
        if report.status == "error":
            lines.append(f"{report.path}: UNREADABLE: {report.error}")
            continue
        counted = [r for r in report.results if r.status != "skip"]
        skipped = len(report.results) - len(counted)
        warnings = [r for r in report.results if r.status == "warn"]
        if report.status == "pass":
            extra = f", {skipped} skipped" if skipped else ""
            if warnings:
                extra += f", {len(warnings)} warning(s): {', '.join(r.id for r in warnings)}"
            lines.append(f"{report.path}: pass ({len(counted)} checks{extra})")
            continue
        shown = [r for r in report.results if r.status == "fail" or (strict and r.status == "warn")]
        lines.append(f"{report.path}: FAIL ({len(shown)} of {len(counted)} checks)")
        for result in shown:
            where = f", at {result.where}" if result.where else ""
            lines.append(
                f"  {result.id}: {result.message} [value {_figure(result.value)}, limit {_figure(result.limit)}{where}]"
            )
        if not shown:
            lines.append("  the file could not be assembled into a Hamiltonian")
    return "\n".join(lines)


def report_document(reports, strict: bool = False) -> dict:
    """The JSON report (valid against schemas/report.schema.json)."""
    counts = {status: 0 for status in ("pass", "fail", "warn", "skip")}
    for report in reports:
        for result in report.results:
            counts[result.status] += 1
    return {
        "format": REPORT_FORMAT,
        "report_version": REPORT_VERSION,
        "tool": "integrity",
        "version": __version__,
        "strict": strict,
        "files": [report.as_dict() for report in reports],
        "summary": {
            "files": len(reports),
            "passed": sum(r.status == "pass" for r in reports),
            "failed": sum(r.status == "fail" for r in reports),
            "unreadable": sum(r.status == "error" for r in reports),
            "checks": counts,
        },
    }
