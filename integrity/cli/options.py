"""What every subcommand shares: exit statuses, the error guard, and option types.

Exit status: 0 success (every file passes); 1 at least one file failed a
check (or ``diagnose`` found a mismatch); 2 a file could not be read, the
command was used wrongly, or something unexpected went wrong; 130 interrupted.
Errors are one line on stderr naming the file and the field; ``--debug``
shows the traceback instead.
"""

from __future__ import annotations

import functools
import math

import click

from integrity.errors import FieldError, IntegrityError
from integrity.io import DEFAULT_MEMORY, parse_bytes
from integrity.model.orbital_lists import parse_orbital_list, parse_per_spin, parse_signs

EXIT_OK, EXIT_FAILED, EXIT_UNUSABLE, EXIT_INTERRUPTED = 0, 1, 2, 130
ENGINES = ("native", "pyscf", "both")


def guarded(command):
    """Turn every error into one line on stderr and exit status 2; Ctrl-C into 130."""

    @functools.wraps(command)
    def wrapper(*args, **kwargs):
        ctx = click.get_current_context()
        debug = bool(ctx.find_root().params.get("debug"))
        try:
            return command(*args, **kwargs)
        except (click.ClickException, click.exceptions.Exit, click.Abort):
            raise
        except KeyboardInterrupt:
            click.echo("interrupted", err=True)
            ctx.exit(EXIT_INTERRUPTED)
        except IntegrityError as err:
            if debug:
                raise
            click.echo(f"error: {err}", err=True)
            ctx.exit(EXIT_UNUSABLE)
        except Exception as err:  # a bug must not read as a verdict (exit 1)
            if debug:
                raise
            text = " ".join(str(err).split())
            click.echo(
                f"error: internal error ({type(err).__name__}: {text}); this is a bug in integrity, "
                "--debug shows the traceback",
                err=True,
            )
            ctx.exit(EXIT_UNUSABLE)

    return wrapper


class MemorySize(click.ParamType):
    """A memory size such as 512MiB or 4GiB."""

    name = "size"

    def convert(self, value, param, ctx):
        if isinstance(value, int):
            return value
        try:
            return parse_bytes(value)
        except ValueError as err:
            self.fail(str(err), param, ctx)


MEMORY = MemorySize()


class OrbitalText(click.ParamType):
    """An orbital list (``0-3,7``), an orbital order, or signs (``+-+``); orders and signs may
    be given per spin as ``alpha/beta``. Parsed by :mod:`integrity.model.orbital_lists`."""

    def __init__(self, kind: str):
        self.kind = kind
        self.name = {"list": "list", "order": "order", "signs": "signs"}[kind]

    def convert(self, value, param, ctx):
        if not isinstance(value, str):
            return value
        try:
            if self.kind == "list":
                return parse_orbital_list(value, self.name)
            parse = parse_signs if self.kind == "signs" else parse_orbital_list
            return parse_per_spin(value, parse, self.name)
        except FieldError as err:
            self.fail(err.reason, param, ctx)


ORBITAL_LIST = OrbitalText("list")
ORBITAL_ORDER = OrbitalText("order")
ORBITAL_SIGNS = OrbitalText("signs")


def parse_tolerances(ctx, param, values) -> dict[str, float]:
    """``ID=VALUE`` pairs into a dict; a value must be a positive finite number."""
    out = {}
    for text in values:
        name, sep, number = text.partition("=")
        try:
            if not sep:
                raise ValueError
            value = float(number)
        except ValueError:
            raise click.BadParameter(f"expected ID=VALUE such as energy.hf=1e-8, got {text!r}") from None
        if not (math.isfinite(value) and value > 0):
            raise click.BadParameter(f"a tolerance must be a positive finite number, got {text!r}")
        out[name.strip()] = value
    return out


def memory_option(help_text: str):
    return click.option("--memory", type=MEMORY, default=str(DEFAULT_MEMORY), show_default="4GiB", help=help_text)


def format_option(help_text: str = "Text for people, JSON for programs."):
    return click.option(
        "--format",
        "output_format",
        type=click.Choice(["text", "json"]),
        default="text",
        show_default=True,
        help=help_text,
    )


def engine_option(help_text: str):
    return click.option("--engine", type=click.Choice(ENGINES), default="native", show_default=True, help=help_text)


def solver_options(func):
    """``--max-iterations`` and ``--convergence`` of the full-CI solver."""
    func = click.option(
        "--convergence",
        type=click.FloatRange(min=0.0, min_open=True),
        default=1e-9,
        show_default=True,
        metavar="HARTREE",
        help="Energy accuracy a full-CI root must reach.",
    )(func)
    return click.option(
        "--max-iterations",
        type=click.IntRange(min=1),
        default=200,
        show_default=True,
        help="Davidson iterations before a full-CI solve gives up (it then says so).",
    )(func)


def overwrite_option():
    return click.option("--overwrite", is_flag=True, help="Replace OUT if it exists (never the input).")
