"""What every subcommand shares: exit statuses, the error guard, signals, and option types.

Exit status: 0 success (every file passes); 1 at least one file failed a
check (or ``diagnose`` found a mismatch); 2 a file could not be read, the
command was used wrongly, or something unexpected went wrong; 130 interrupted
(Ctrl-C, SIGINT); 143 terminated (SIGTERM). Errors are one line on stderr
naming the file and the field; ``--debug`` shows the traceback instead.

SIGTERM is turned into :class:`Terminated`, a ``KeyboardInterrupt``, raised
wherever the program is, so the same clean-up runs as for Ctrl-C (an atomic
writer removes its temporary file). A second signal during that clean-up is
ignored.
"""

from __future__ import annotations

import contextlib
import functools
import math
import re
import signal
import threading
import warnings
from collections.abc import Mapping

import click

from integrity.cli.render import one_line
from integrity.errors import FieldError, IntegrityError
from integrity.io import DEFAULT_MEMORY, format_bytes, parse_bytes
from integrity.model.orbital_lists import parse_orbital_list, parse_per_spin, parse_signs

EXIT_OK, EXIT_FAILED, EXIT_UNUSABLE, EXIT_INTERRUPTED, EXIT_TERMINATED = 0, 1, 2, 130, 143
ENGINES = ("native", "pyscf", "both")


class Terminated(KeyboardInterrupt):
    """SIGTERM, raised where the program was so that clean-up runs as for Ctrl-C."""


def _interrupt(signum, frame):
    """The first SIGINT or SIGTERM raises; later ones are ignored so that the clean-up it starts can finish."""
    for name in ("SIGINT", "SIGTERM"):
        signal.signal(getattr(signal, name), signal.SIG_IGN)
    raise Terminated() if signum == signal.SIGTERM else KeyboardInterrupt()


@contextlib.contextmanager
def signals_as_interrupts():
    """While the block runs, SIGINT raises KeyboardInterrupt and SIGTERM :class:`Terminated` (main thread only)."""
    if threading.current_thread() is not threading.main_thread():
        yield
        return
    before = {name: signal.getsignal(getattr(signal, name)) for name in ("SIGINT", "SIGTERM")}
    for name in before:
        signal.signal(getattr(signal, name), _interrupt)
    try:
        yield
    finally:
        for name, handler in before.items():
            signal.signal(getattr(signal, name), handler)


def report_error(err: BaseException, debug: bool) -> int:
    """Print ``err`` as one line on stderr and return the exit status; re-raise what click or Python handle.

    ``ctx.exit`` and ``SystemExit`` pass through; a usage error is one line
    too (click's own rendering takes four); with ``debug`` every other error is
    re-raised for its traceback.
    """
    if isinstance(err, click.exceptions.Exit | SystemExit):
        raise err
    if isinstance(err, click.ClickException):
        hint = ""
        if isinstance(err, click.UsageError):
            ctx = err.ctx or click.get_current_context(silent=True)
            hint = f" ('{ctx.command_path} --help' lists the options)" if ctx is not None else ""
        click.echo(f"error: {one_line(err.format_message())}{hint}", err=True)
        return err.exit_code
    if isinstance(err, KeyboardInterrupt | click.Abort):
        terminated = isinstance(err, Terminated)
        click.echo("terminated" if terminated else "interrupted", err=True)
        return EXIT_TERMINATED if terminated else EXIT_INTERRUPTED
    if debug or not isinstance(err, Exception):
        raise err
    if isinstance(err, IntegrityError):
        click.echo(f"error: {one_line(str(err))}", err=True)
    else:  # a bug must not read as a verdict (exit 1)
        click.echo(
            f"error: internal error ({type(err).__name__}: {one_line(str(err))}); this is a bug in integrity, "
            "--debug shows the traceback",
            err=True,
        )
    return EXIT_UNUSABLE


def _debug(ctx) -> bool:
    return bool(ctx.find_root().params.get("debug"))


def guarded(command):
    """Turn every error into one line on stderr and exit status 2; Ctrl-C into 130, SIGTERM into 143.

    Library warnings (pyscf's, numpy's) are not printed: what matters reaches
    the user as an error or as the command's own output.
    """

    @functools.wraps(command)
    def wrapper(*args, **kwargs):
        ctx = click.get_current_context()
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                return command(*args, **kwargs)
        except BaseException as err:
            ctx.exit(report_error(err, _debug(ctx)))

    return wrapper


def in_option_words(text: str, names: Mapping[str, str]) -> str:
    """A library message with its Python argument names replaced by the options they come from.

    Only names that cannot be English words (they hold an underscore) are replaced.

    >>> in_option_words("give n_electrons only, not n_alpha", {"n_electrons": "--electrons", "n_alpha": "--alpha"})
    'give --electrons only, not --alpha'
    """
    for name, option in names.items():
        if "_" in name:
            text = re.sub(rf"(?<![\w-]){re.escape(name)}(?![\w-])", option, text)
    return text


@contextlib.contextmanager
def options_named(names: Mapping[str, str]):
    """A FieldError about a request (not a file) whose field is an option's argument becomes a usage error
    naming the option."""
    try:
        yield
    except FieldError as err:
        if err.path is None and err.field in names:
            raise click.UsageError(f"{names[err.field]}: {in_option_words(err.reason, names)}") from None
        raise


class MemorySize(click.ParamType):
    """A memory size such as 512MiB or 4GiB: finite, at least one byte."""

    name = "size"

    def convert(self, value, param, ctx):
        if isinstance(value, int) and not isinstance(value, bool) and value >= 1:
            return value
        try:
            return parse_bytes(str(value))
        except ValueError as err:
            self.fail(str(err), param, ctx)


class Number(click.ParamType):
    """A finite float, optionally positive (> 0) or non-negative; NaN, infinities and overflows are refused."""

    def __init__(self, minimum: str | None = None):
        self.minimum = minimum  # None, "positive" or "non-negative"
        self.name = {"positive": "positive number", "non-negative": "number >= 0"}.get(minimum, "number")

    def convert(self, value, param, ctx):
        try:
            number = float(value)
        except (TypeError, ValueError):
            self.fail(f"{value!r} is not a number", param, ctx)
        if not math.isfinite(number):
            self.fail(f"{value!r} is not a finite number", param, ctx)
        if self.minimum == "positive" and not number > 0:
            self.fail(f"{value!r} must be greater than 0", param, ctx)
        if self.minimum == "non-negative" and number < 0:
            self.fail(f"{value!r} must not be negative", param, ctx)
        return number


MEMORY = MemorySize()
FINITE = Number()
POSITIVE = Number("positive")
NON_NEGATIVE = Number("non-negative")


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
    """``ID=VALUE`` pairs into a dict; a value must be finite and on the side of 0 its check documents."""
    from integrity.checks import REGISTRY

    out = {}
    for text in values:
        name, sep, number = text.partition("=")
        name = name.strip()
        try:
            if not sep:
                raise ValueError
            value = float(number)
        except ValueError:
            raise click.BadParameter(f"expected ID=VALUE such as energy.hf=1e-8, got {text!r}") from None
        if not math.isfinite(value):
            raise click.BadParameter(f"a limit must be a finite number, got {text!r}")
        spec = REGISTRY.get(name)
        if spec is None:
            raise click.BadParameter(f"unknown check id {name!r}; 'integrity check --list' shows them")
        problem = spec.limit_problem(value)
        if problem:
            raise click.BadParameter(problem)
        out[name] = value
    return out


def memory_option(help_text: str):
    return click.option(
        "--memory", type=MEMORY, default=str(DEFAULT_MEMORY), show_default=format_bytes(DEFAULT_MEMORY), help=help_text
    )


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


def require_new_output(out, overwrite: bool, inputs=()) -> None:
    """The output guard of every command that writes, run before any work: OUT's extension, then
    :func:`integrity.io.atomic.require_output` (not an input, not a dangling link, not existing
    without --overwrite, a folder that takes a new file)."""
    from integrity.io import container_of
    from integrity.io.atomic import require_output

    container_of(out)
    require_output(out, overwrite=overwrite, inputs=inputs)


def overwrite_option():
    return click.option("--overwrite", is_flag=True, help="Replace OUT if it exists (never the input).")
