"""``integrity check PATH...``: judge files and folders of Hamiltonian files."""

from __future__ import annotations

import sys
import threading
from dataclasses import replace

import click
from click.core import ParameterSource

from integrity.cli.options import (
    EXIT_INTERRUPTED,
    EXIT_OK,
    engine_option,
    format_option,
    guarded,
    memory_option,
    parse_tolerances,
    solver_options,
)
from integrity.cli.render import as_json, batch_entry_text, batch_progress_text, check_list_text


class _ExistingOrLink(click.Path):
    """An existing path, or a symbolic link to nothing: that one is judged (and reported
    unreadable, naming its target) rather than refused as a usage error."""

    def convert(self, value, param, ctx):
        from integrity.io.discovery import is_dangling_link

        if is_dangling_link(value):
            return value
        return super().convert(value, param, ctx)


def _list_checks(ctx, param, value):
    """Eager ``--list``: print the catalogue and stop, before PATH is required."""
    if not value or ctx.resilient_parsing:
        return
    from integrity.checks import REGISTRY, check_ids

    click.echo(check_list_text(REGISTRY[i] for i in check_ids()))
    ctx.exit(EXIT_OK)


@click.command(short_help="Check Hamiltonian files and folders.")
@click.argument("paths", nargs=-1, required=True, type=_ExistingOrLink(exists=True))
@format_option("Text for people, JSON (schemas/report.schema.json) for programs.")
@click.option("--only", multiple=True, metavar="ID", help="Run this check and no others not named (repeatable).")
@click.option("--without", multiple=True, metavar="ID", help="Leave this check out (repeatable).")
@click.option(
    "--tolerance",
    multiple=True,
    metavar="ID=VALUE",
    callback=parse_tolerances,
    help="Limit for one check, e.g. energy.hf=1e-8 (repeatable); --list shows the side of 0 each takes.",
)
@engine_option("Full-CI engine for energy.fci; both: a disagreement fails.")
@memory_option("Memory budget of the run (each of N local workers gets 1/N); larger arrays are checked in blocks.")
@click.option("--strict/--no-strict", default=None, help="A warning fails the file (default: the policy's, else no).")
@click.option(
    "--foreign",
    type=click.Choice(["note", "refuse"]),
    default=None,
    help="A JSON/HDF5 file without the marker format = integrity.hamiltonian: pass it over with a note, "
    "or refuse it as unreadable (default: the policy's, else refuse).",
)
@click.option(
    "--jobs",
    type=click.IntRange(min=1),
    default=None,
    metavar="N",
    help="Worker processes on this machine [default: the policy's, else the number of cores].",
)
@click.option(
    "--timeout",
    type=click.FloatRange(min=0),
    default=None,
    metavar="SECONDS",
    help="Time limit per file; a file that overruns it (or crashes its reader) is unreadable. "
    "0: no limit [default: the policy's, else 600].",
)
@click.option("--cache", type=click.Path(dir_okay=False), default=None, metavar="FILE", help="Result cache (SQLite).")
@click.option("--no-cache", is_flag=True, help="Use no result cache, even if the policy names one.")
@click.option("--scheduler", default=None, metavar="ADDRESS", help="Judge on a Dask cluster, e.g. tcp://head:8786.")
@click.option(
    "--policy",
    "policy_file",
    type=click.Path(exists=True, dir_okay=False),
    default=None,
    metavar="FILE",
    help="Follow this policy file instead of searching for integrity.toml / pyproject.toml.",
)
@click.option("--no-policy", is_flag=True, help="Follow no policy file: built-in defaults and the options given.")
@solver_options
@click.option("--quiet", "-q", is_flag=True, help="No progress line and no notes on stderr.")
@click.option(
    "--list",
    is_flag=True,
    expose_value=False,
    is_eager=True,
    callback=_list_checks,
    help="List the check ids with their limits and exit.",
)
@guarded
def check(
    paths,
    output_format,
    only,
    without,
    tolerance,
    engine,
    memory,
    strict,
    foreign,
    jobs,
    timeout,
    cache,
    no_cache,
    scheduler,
    policy_file,
    no_policy,
    max_iterations,
    convergence,
    quiet,
):
    """Check Hamiltonian files; folders are searched for *.h5, *.hdf5 and *.json.

    Prints each file's verdict as soon as it and the files before it are
    done: one line per passing file and, for a failing file, one line per
    failing check with its value, limit, where and likely cause. Exit status
    0 all pass, 1 a file failed, 2 a file could not be read, 130 interrupted.

    The policy file (integrity.toml, or [tool.integrity] in pyproject.toml,
    found walking up from the current folder) sets defaults for these options;
    an option given here wins.

    \b
    Examples:
      integrity check fixtures/good
      integrity check run.h5 --only energy.hf --tolerance energy.hf=1e-8
      integrity check data/ --format json > report.json
      integrity check release/ --jobs 8 --cache verdicts.sqlite
    """
    from integrity.batch import BatchRun, Policy, discover_policy, load_policy, settle
    from integrity.io import find_files

    if policy_file and no_policy:
        raise click.UsageError("give --policy FILE or --no-policy, not both")
    if cache and no_cache:
        raise click.UsageError("give --cache FILE or --no-cache, not both")
    if not find_files(paths):
        raise click.UsageError("no *.h5, *.hdf5 or *.json files under the paths given")
    policy = Policy() if no_policy else (load_policy(policy_file) if policy_file else discover_policy())
    source = click.get_current_context().get_parameter_source
    settings = settle(
        policy,
        only=only,
        without=without,
        tolerance=tolerance,
        memory=None if source("memory") == ParameterSource.DEFAULT else memory,
        engine=None if source("engine") == ParameterSource.DEFAULT else engine,
        strict=strict,
        foreign=foreign,
        jobs=jobs,
        timeout=timeout,
        cache=cache,
        no_cache=no_cache,
        scheduler=scheduler,
    )
    settings = replace(
        settings, options=replace(settings.options, convergence=convergence, max_iterations=max_iterations)
    )
    note = (lambda line: None) if quiet else (lambda line: click.echo(line, err=True))
    if settings.policy is not None:
        note(f"policy: {settings.policy}")

    progress = None if quiet or not sys.stderr.isatty() else _Progress()
    run = BatchRun(paths, settings, warn=note, progress=progress, status=None if progress is None else progress.status)
    if progress is not None:
        progress.start(run.total)
    text = output_format == "text"
    entries, counts = [], {"pass": 0, "fail": 0, "unreadable": 0}
    interrupted = False

    def take(entry):
        if progress is not None:
            progress.clear()
        if text:
            click.echo(batch_entry_text(entry, settings.options.strict))
        else:
            entries.append(entry)
        status = getattr(entry, "status", None)
        if status is not None:
            counts[status] += 1

    verdicts = iter(run)
    try:
        for entry in verdicts:
            take(entry)
    except KeyboardInterrupt:
        interrupted = True
        verdicts.close()  # stops the workers
        for entry in run.finished_early():
            take(entry)
    finally:
        if progress is not None:
            progress.finish()
    if not text:
        click.echo(as_json(_batch(entries, settings, interrupted).as_dict()))
    if interrupted:
        done = sum(counts.values())
        click.echo(f"interrupted: {done} of {run.total} files judged; the others have no verdict", err=True)
        raise SystemExit(EXIT_INTERRUPTED)
    raise SystemExit(2 if counts["unreadable"] else 1 if counts["fail"] else 0)


def _batch(entries, settings, interrupted):
    from integrity.checks.report import BatchReport, FileReport

    return BatchReport(
        files=[e for e in entries if isinstance(e, FileReport)],
        strict=settings.options.strict,
        policy=settings.policy,
        passed_over=[e for e in entries if not isinstance(e, FileReport)],
        interrupted=interrupted,
    )


class _Progress:
    """The progress line on stderr (a terminal only): files done, failures so far, and the file
    and check a worker is in (the file finished last between reports). Workers' reports arrive
    on another thread, hence the lock."""

    def __init__(self):
        self.bar = None
        self.failures = 0
        self.lock = threading.Lock()

    def start(self, total: int) -> None:
        self.bar = click.progressbar(
            length=total,
            label="checking",
            file=sys.stderr,
            show_pos=True,
            show_eta=False,
            item_show_func=lambda item: item,
        )
        self.bar.__enter__()

    def __call__(self, done: int, total: int, failures: int, path: str) -> None:
        with self.lock:
            self.failures = failures
            if self.bar is not None:
                self.bar.update(done - self.bar.pos, batch_progress_text(failures, path))

    def status(self, path: str, check_id: str, update=None) -> None:
        with self.lock:
            if self.bar is not None:
                self.bar.current_item = batch_progress_text(self.failures, path, check_id, update)
                self.bar.render_progress()

    def clear(self) -> None:
        """Erase the progress line before a verdict is printed (it is drawn again on the next file)."""
        with self.lock:
            if self.bar is not None and sys.stdout.isatty():
                sys.stderr.write("\r\033[K")
                sys.stderr.flush()

    def finish(self) -> None:
        with self.lock:
            if self.bar is not None:
                self.bar.__exit__(None, None, None)
                self.bar = None
