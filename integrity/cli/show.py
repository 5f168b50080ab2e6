"""``integrity show FILE``: a short summary of one file."""

from __future__ import annotations

import click

from integrity.cli.options import format_option, guarded, memory_option
from integrity.cli.render import as_json, summary_text


@click.command(short_help="Summarize one file.")
@click.argument("file", type=click.Path(dir_okay=False))
@format_option("Text for people, JSON for programs.")
@memory_option("Largest array the file may declare.")
@guarded
def show(file, output_format, memory):
    """Summarize FILE: basis, counts, notation, storage, norms, fingerprint, references.

    \b
    Example:
      integrity show fixtures/good/lih_sto3g.h5
    """
    from integrity.io import load
    from integrity.model import summarize

    summary = summarize(load(file, memory=memory))
    if output_format == "json":
        click.echo(as_json({"path": file, **summary}))
    else:
        click.echo(summary_text(file, summary))
