"""``integrity diagnose FILE``: why an energy does not match."""

from __future__ import annotations

import click

from integrity.cli.options import EXIT_FAILED, FINITE, POSITIVE, format_option, guarded, memory_option, options_named
from integrity.cli.render import as_json, diagnosis_text


@click.command(short_help="Explain why an energy does not match.")
@click.argument("file", type=click.Path(dir_okay=False))
@click.option("--expected", type=FINITE, help="The energy someone expected (hartree, finite).")
@click.option("--reference", "label", metavar="LABEL", help="Explain a stored reference instead.")
@click.option(
    "--method",
    type=click.Choice(["hf", "fci"]),
    help="What the expected energy is: the determinant (hf) or full CI (default fci).",
)
@click.option("--tolerance", type=POSITIVE, default=1e-6, show_default=True, help="Hartree (finite, > 0).")
@memory_option("Memory budget.")
@format_option()
@guarded
def diagnose(file, expected, label, method, tolerance, memory, output_format):
    """Explain why FILE does not give an expected energy: each known mistake is re-enacted
    (notation, alpha/beta swap, electron count, spin state, constants, factor of two, layout).
    Exit status 0 when the energy matches as stored, 1 when it does not.

    \b
    Examples:
      integrity diagnose fixtures/damaged/n2_core_energy_dropped.json --reference fci
      integrity diagnose run.h5 --expected -1.137270 --method fci
    """
    from integrity.energies import diagnose as explain
    from integrity.io import load

    if (expected is None) == (label is None):
        raise click.UsageError("give --expected E or --reference LABEL")
    ham = load(file, memory=memory)
    with options_named({"expected": "--expected", "method": "--method"}):
        finding = explain(ham, expected=expected, reference=label, method=method, tolerance=tolerance, memory=memory)
    if output_format == "json":
        click.echo(as_json({"path": file, **finding.as_dict()}))
    else:
        click.echo(diagnosis_text(finding, file))
    if not finding.matches:
        raise SystemExit(EXIT_FAILED)
