"""``integrity compare A B``: are two files the same Hamiltonian, and if not, how do they differ?"""

from __future__ import annotations

import click

from integrity.cli.options import EXIT_FAILED, format_option, guarded, memory_option
from integrity.cli.render import as_json, comparison_text

ACCEPTABLE = ("identical", "tolerance", "relabel", "constant", "spectrum")


@click.command(short_help="Are two files the same Hamiltonian?")
@click.argument("first", metavar="A", type=click.Path(exists=True, dir_okay=False))
@click.argument("second", metavar="B", type=click.Path(exists=True, dir_okay=False))
@click.option(
    "--tolerance",
    type=click.FloatRange(min=0, min_open=True),
    default=1e-10,
    show_default=True,
    help="Largest difference of an element, constant or energy that still counts as equal (hartree).",
)
@click.option(
    "--roots", type=click.IntRange(min=1), default=3, show_default=True, help="Full-CI roots compared (rung 5)."
)
@click.option(
    "--accept",
    type=click.Choice(ACCEPTABLE),
    default="relabel",
    show_default=True,
    help="The last rung that still exits 0.",
)
@click.option(
    "--search-limit",
    type=click.IntRange(min=1),
    default=20_000,
    show_default=True,
    help="Orbital assignments the relabelling search may try before it gives up.",
)
@memory_option("Largest array a file may declare; budget for full CI.")
@format_option("Text for people, JSON (schemas/comparison.schema.json) for programs.")
@guarded
def compare(first, second, tolerance, roots, accept, search_limit, memory, output_format):
    """Compare the Hamiltonians in files A and B (any container, notation, storage or basis)
    and report the first rung that holds, with its evidence:

    \b
      1 identical    the same fingerprint
      2 tolerance    every element and constant within --tolerance
      3 relabel      equal after reordering and sign-flipping orbitals (and
                     exchanging alpha and beta); prints the order and signs
                     that `integrity convert` applies
      4 constant     only core_energy differs; names the stored part it equals
      5 spectrum     elements differ, lowest full-CI energies agree (rotated orbitals)
      6 different    which blocks differ, the energy difference, likeliest reasons

    Exit status 0 when the rung is --accept or better, 1 otherwise, 2 when a
    file cannot be read.

    \b
    Examples:
      integrity compare fixtures/compare/halden_water_631g_cas66.h5 fixtures/compare/quill_water_631g_cas66.json
      integrity compare ours.h5 theirs.json --accept spectrum --roots 5
    """
    from integrity.compare import compare as compare_files

    comparison = compare_files(
        first, second, tolerance=tolerance, roots=roots, accept=accept, memory=memory, search_limit=search_limit
    )
    click.echo(as_json(comparison.as_dict()) if output_format == "json" else comparison_text(comparison))
    if not comparison.equivalent:
        raise SystemExit(EXIT_FAILED)
