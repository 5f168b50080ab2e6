"""``integrity check PATH...``: judge files and folders of Hamiltonian files."""

from __future__ import annotations

from dataclasses import replace

import click

from integrity.cli.options import (
    EXIT_OK,
    engine_option,
    format_option,
    guarded,
    memory_option,
    parse_tolerances,
    solver_options,
)
from integrity.cli.progress import check_status
from integrity.cli.render import as_json, batch_text, check_list_text


def _list_checks(ctx, param, value):
    """Eager ``--list``: print the catalogue and stop, before PATH is required."""
    if not value or ctx.resilient_parsing:
        return
    from integrity.checks import REGISTRY, check_ids

    click.echo(check_list_text(REGISTRY[i] for i in check_ids()))
    ctx.exit(EXIT_OK)


@click.command(short_help="Check Hamiltonian files and folders.")
@click.argument("paths", nargs=-1, required=True, type=click.Path(exists=True))
@format_option("Text for people, JSON (schemas/report.schema.json) for programs.")
@click.option("--only", multiple=True, metavar="ID", help="Run this check and no others not named (repeatable).")
@click.option("--without", multiple=True, metavar="ID", help="Leave this check out (repeatable).")
@click.option(
    "--tolerance",
    multiple=True,
    metavar="ID=VALUE",
    callback=parse_tolerances,
    help="Limit for one check, e.g. energy.hf=1e-8 (repeatable).",
)
@engine_option("Full-CI engine for energy.fci; both: a disagreement fails.")
@memory_option("Memory budget; larger arrays are checked block by block.")
@click.option("--strict", is_flag=True, help="A warning fails the file.")
@solver_options
@click.option("--quiet", is_flag=True, help="No progress line on the terminal.")
@click.option(
    "--list",
    is_flag=True,
    expose_value=False,
    is_eager=True,
    callback=_list_checks,
    help="List the check ids with their limits and exit.",
)
@guarded
def check(paths, output_format, only, without, tolerance, engine, memory, strict, max_iterations, convergence, quiet):
    """Check Hamiltonian files; folders are searched for *.h5, *.hdf5 and *.json.

    Prints one line per passing file and, for a failing file, one line per
    failing check with its value, limit, where and likely cause. Exit status
    0 all pass, 1 a file failed, 2 a file could not be read.

    \b
    Examples:
      integrity check fixtures/good
      integrity check run.h5 --only energy.hf --tolerance energy.hf=1e-8
      integrity check data/ --format json > report.json
    """
    from integrity.checks import BatchReport, CheckOptions, check_paths
    from integrity.io import find_files

    if not find_files(paths):
        raise click.UsageError("no *.h5, *.hdf5 or *.json files under the paths given")
    options = CheckOptions(
        only=tuple(only) or None,
        without=tuple(without),
        tolerances=tolerance,
        memory=memory,
        engine=engine,
        strict=strict,
        convergence=convergence,
        max_iterations=max_iterations,
    )
    options.chosen()  # an unknown id is refused before any file is read
    status = check_status(quiet)
    if status is not None:
        options = replace(options, progress=status.check)
    try:
        batch = BatchReport(check_paths(paths, options), strict=strict)
    finally:
        if status is not None:
            status.close()
    click.echo(as_json(batch.as_dict()) if output_format == "json" else batch_text(batch))
    raise SystemExit(batch.exit_status)
