"""A group's acceptance policy: ``integrity.toml``, or ``[tool.integrity]`` in ``pyproject.toml``.

The policy is found by walking up from a folder (the current one by default):
in each folder, ``integrity.toml`` first, then ``pyproject.toml`` when it has
a ``[tool.integrity]`` table (a ``pyproject.toml`` without one is passed by);
the first found wins, and with none the built-in defaults apply. The keys are
those of ``schemas/policy.schema.json``::

    only = ["schema", "two_electron.symmetry"]   # run just these (or: without = [...])
    strict = true
    memory = "8GiB"
    engine = "native"
    foreign = "note"
    jobs = 4
    timeout = 300                                 # seconds per file
    cache = ".integrity/verdicts.sqlite"          # relative to this file's folder
    scheduler = "tcp://head:8786"

    [tolerance]                                   # [tool.integrity.tolerance] in pyproject.toml
    "energy.hf" = 1e-8

    [files]
    include = ["hamiltonians/**"]
    exclude = ["hamiltonians/scratch/"]

A malformed policy is an :class:`~integrity.errors.FieldError` naming the file,
the line and the key (``pyproject.toml: line 14: tool.integrity.tolerance."energy.hf":
expected number, got 'tight'``).
"""

from __future__ import annotations

import math
import re
import sys
from dataclasses import dataclass, field
from pathlib import Path

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover - Python 3.10 reads TOML with the backport
    import tomli as tomllib

from integrity.errors import FieldError
from integrity.io import parse_bytes
from integrity.io.schema import schema_problems

POLICY_NAME = "integrity.toml"
PYPROJECT_NAME = "pyproject.toml"
_BARE_KEY = re.compile(r"[A-Za-z0-9_-]+")


@dataclass(frozen=True)
class Policy:
    """A policy as read: ``source`` is the file (None for the defaults), ``root`` its folder
    (globs and the cache path are relative to it); a key the file does not set is None."""

    source: str | None = None
    root: str = "."
    only: tuple[str, ...] | None = None
    without: tuple[str, ...] | None = None
    tolerance: dict[str, float] = field(default_factory=dict)
    memory: int | None = None
    engine: str | None = None
    strict: bool | None = None
    foreign: str | None = None
    include: tuple[str, ...] = ()
    exclude: tuple[str, ...] = ()
    jobs: int | None = None
    timeout: float | None = None
    cache: str | None = None
    scheduler: str | None = None


def find_policy(start=None) -> Path | None:
    """The policy file that governs ``start`` (default: the current folder), or None."""
    folder = Path(start or Path.cwd()).resolve()
    for candidate in (folder, *folder.parents):
        own = candidate / POLICY_NAME
        if own.is_file():
            return own
        project = candidate / PYPROJECT_NAME
        if project.is_file() and _declares_table(project):
            return project
    return None


def discover_policy(start=None) -> Policy:
    """The policy found from ``start`` (see :func:`find_policy`), or the defaults."""
    path = find_policy(start)
    return Policy() if path is None else load_policy(path)


def load_policy(path) -> Policy:
    """Read and validate a policy file (``integrity.toml``, or a ``pyproject.toml``'s table)."""
    from integrity.checks.registry import check_ids

    path = Path(_shown(path))
    text = _read_text(path)
    try:
        document = tomllib.loads(text)
    except tomllib.TOMLDecodeError as err:
        raise FieldError(None, f"not valid TOML: {err}", str(path)) from None
    prefix: tuple[str, ...] = ()
    if path.name == PYPROJECT_NAME:
        prefix = ("tool", "integrity")
        table = document.get("tool", {}).get("integrity") if isinstance(document.get("tool"), dict) else None
        if not isinstance(table, dict):
            raise FieldError("tool.integrity", "no [tool.integrity] table in this file", str(path))
    else:
        table = document
    where = _Locator(path, text, prefix)

    problems = schema_problems(table, name="policy")
    if problems:
        first = problems[0]
        more = f" ({len(problems) - 1} more problems in this file)" if len(problems) > 1 else ""
        raise where.error(first.path, _problem_text(first, table) + more)

    known = set(check_ids())
    for key in ("only", "without"):
        for index, name in enumerate(table.get(key, ())):
            if name not in known:
                raise where.error((key, index), _unknown_check(name), value=name)
    for name, limit in table.get("tolerance", {}).items():
        if name not in known:
            raise where.error(("tolerance", name), _unknown_check(name))
        if not math.isfinite(limit):
            raise where.error(("tolerance", name), f"a limit must be a finite positive number, got {limit!r}")
    timeout = table.get("timeout")
    if timeout is not None and not math.isfinite(timeout):
        raise where.error(("timeout",), f"expected a finite number of seconds (0: no limit), got {timeout!r}")
    memory = table.get("memory")
    if isinstance(memory, str):
        try:
            memory = parse_bytes(memory)
        except ValueError as err:
            raise where.error(("memory",), str(err)) from None

    root = path.parent.resolve()
    files = table.get("files", {})
    cache = table.get("cache")
    return Policy(
        source=str(path),
        root=str(root),
        only=_tuple(table.get("only")),
        without=_tuple(table.get("without")),
        tolerance={name: float(limit) for name, limit in table.get("tolerance", {}).items()},
        memory=memory,
        engine=table.get("engine"),
        strict=table.get("strict"),
        foreign=table.get("foreign"),
        include=tuple(files.get("include", ())),
        exclude=tuple(files.get("exclude", ())),
        jobs=table.get("jobs"),
        timeout=None if timeout is None else float(timeout),
        cache=None if cache is None else str(root / cache),
        scheduler=table.get("scheduler"),
    )


def _tuple(values) -> tuple[str, ...] | None:
    return None if values is None else tuple(values)


def _unknown_check(name: str) -> str:
    return f"unknown check id {name!r}; `integrity check --list` names the checks"


def _problem_text(problem, table) -> str:
    if problem.rule == "additionalProperties":
        return "unknown key; " + _known_keys(problem.path)
    nested = table.get("tolerance", {}).get(problem.path[1]) if problem.path[:1] == ("tolerance",) else None
    if len(problem.path) == 2 and isinstance(nested, dict) and nested:
        example = f"{problem.path[1]}.{next(iter(nested))}"
        return f'{problem.message}; a check id holds a dot, so quote it: "{example}" = ...'
    return problem.message


def _known_keys(path: tuple) -> str:
    from integrity.io.schema import load_schema

    schema = load_schema("policy")
    node = schema
    for key in path[:-1]:
        node = node.get("properties", {}).get(key, {})
    names = list(node.get("properties", {}))
    return "known keys here: " + ", ".join(names) if names else "no keys are allowed here"


def _read_text(path: Path) -> str:
    try:
        return path.read_bytes().decode("utf-8")
    except UnicodeDecodeError as err:
        raise FieldError(None, f"not UTF-8 text (byte {err.start}); a policy file is TOML", str(path)) from None
    except OSError as err:
        raise FieldError(None, f"cannot read the policy file ({err.strerror})", str(path)) from None


def _declares_table(path: Path) -> bool:
    """Whether a pyproject.toml has a [tool.integrity] table (a malformed one is reported by loading it)."""
    try:
        document = tomllib.loads(path.read_bytes().decode("utf-8"))
    except (OSError, UnicodeDecodeError, tomllib.TOMLDecodeError):
        return "[tool.integrity" in path.read_text(errors="replace")
    tool = document.get("tool")
    return isinstance(tool, dict) and "integrity" in tool


class _Locator:
    """Lines of keys in a TOML text, to name where a problem is.

    TOML parsers keep no positions, so this reads the text the way a person
    would: table headers ``[a.b]`` and key lines ``key = ...`` (dotted and
    quoted keys included). A key inside an inline table or array is found as
    the first line, from its parent's line on, that names it.
    """

    def __init__(self, path: Path, text: str, prefix: tuple[str, ...]):
        self.path = path
        self.prefix = prefix
        self.lines = text.splitlines()
        self.known: dict[tuple[str, ...], int] = {}
        table: tuple[str, ...] = ()
        for number, raw in enumerate(self.lines, start=1):
            line = raw.strip()
            if line.startswith("["):
                inner = line.lstrip("[").split("]")[0]
                table = _split_key(inner)
                self.known.setdefault(table, number)
                continue
            key, sep, _ = _partition_key(line)
            if sep:
                self.known.setdefault((*table, *_split_key(key)), number)

    def line_of(self, path: tuple, value=None) -> int | None:
        full = (*self.prefix, *(str(p) for p in path if not isinstance(p, int)))
        below = [number for key, number in self.known.items() if key[: len(full)] == full]
        if below and value is None:
            return min(below)
        for cut in range(len(full), 0, -1):
            start = self.known.get(full[:cut])
            if start is None:
                continue
            if cut == len(full) and value is None:
                return start
            wanted = [f'"{value}"', f"'{value}'"] if value is not None else _spellings(full[-1])
            for number in range(start, len(self.lines) + 1):
                if any(token in self.lines[number - 1] for token in wanted):
                    return number
            return start
        return None

    def error(self, path: tuple, reason: str, value=None) -> FieldError:
        key = _render_key((*self.prefix, *path))
        line = self.line_of(path, value)
        where = f"line {line}: {key}" if line is not None else key
        return FieldError(where, reason, str(self.path))


def _spellings(key: str) -> list[str]:
    quoted = [f'"{key}"', f"'{key}'"]
    return quoted if not _BARE_KEY.fullmatch(key) else [*quoted, f"{key} =", f"{key}="]


def _partition_key(line: str) -> tuple[str, str, str]:
    """``key = value`` into key, ``=``, value, minding quotes in the key."""
    quote = None
    for i, char in enumerate(line):
        if quote:
            if char == quote:
                quote = None
        elif char in "\"'":
            quote = char
        elif char == "=":
            return line[:i].strip(), "=", line[i + 1 :]
        elif char == "#":
            break
    return line, "", ""


def _split_key(text: str) -> tuple[str, ...]:
    """A dotted TOML key into its parts (``a."b.c".d`` is a, b.c, d)."""
    parts, current, quote = [], "", None
    for char in text.strip():
        if quote:
            if char == quote:
                quote = None
            else:
                current += char
        elif char in "\"'":
            quote = char
        elif char == ".":
            parts.append(current.strip())
            current = ""
        else:
            current += char
    parts.append(current.strip())
    return tuple(p for p in parts if p)


def _render_key(path: tuple) -> str:
    """A key path as TOML writes it: ``tool.integrity.tolerance."energy.hf"``, ``only[1]``."""
    out = ""
    for part in path:
        if isinstance(part, int):
            out += f"[{part}]"
            continue
        text = part if _BARE_KEY.fullmatch(part) else f'"{part}"'
        out += f".{text}" if out else text
    return out or "(table)"


def policy_source_text(policy: Policy) -> str | None:
    """How a report names the policy file: relative to the current folder when under it."""
    return None if policy.source is None else _shown(policy.source)


def _shown(path) -> str:
    """A path as messages write it: relative to the current folder when under it, else absolute."""
    source = Path(path).resolve()
    try:
        return str(source.relative_to(Path.cwd().resolve()))
    except ValueError:
        return str(source)
