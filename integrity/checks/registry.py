"""Check results and the registry of checks.

Every check is a function ``check(ham, ctx) -> Result`` registered once, with
its public id, under :func:`register`. The registry owns the ids and their
order: checks run and are reported in the order they were registered (the
order :mod:`integrity.checks` imports the families in). A check builds its
result with :func:`passed`, :func:`failed`, :func:`warned` or
:func:`skipped`; the runner stamps the id on it, so an id is written once.

Value and limit. Every check that measures something reports ``value`` and
``limit`` in one unit and one direction, registered as ``fails_when``:
``"above"`` means the check fails exactly when ``value > limit`` (a
deviation, a count of problems), ``"below"`` exactly when ``value < limit``
(a lowest eigenvalue). A check registered with ``severity="warn"`` warns
instead of failing, on the same comparison. A failing message prints
``value`` with :func:`figure`, the same number the report carries.
"""

from __future__ import annotations

import math
import traceback
from collections.abc import Callable
from dataclasses import dataclass, field, replace
from typing import Any

from integrity.errors import IntegrityError
from integrity.io import DEFAULT_MEMORY

STATUSES = ("pass", "fail", "warn", "skip")
DIRECTIONS = ("above", "below")
#: said by a check that a field outside the fingerprint switched off: it warns instead of skipping
OUTSIDE_FINGERPRINT = "a field outside the fingerprint, so the checksum cannot tell whether it was removed or altered"
#: arrays a Location may point into: the two stored arrays, and the Fock matrix built from them
LOCATION_ARRAYS = ("one_electron", "two_electron", "fock")


@dataclass(frozen=True)
class Location:
    """Where a finding points: an element of an array, or a field of the file.

    ``array`` is ``one_electron``, ``two_electron`` or ``fock`` (the Fock matrix
    built from the file), ``index`` the element (dense chemist (p, q, r, s) for
    the two-electron array whatever its storage; (p, q) for matrices) and
    ``block`` the spin block (``alpha``/``beta`` for matrices of unrestricted
    files, ``aa``/``ab``/``bb`` for their two-electron array). Otherwise
    ``field`` names a field, as the file's container writes it
    (``references[fci]``, ``/orbitals@count``).

    >>> str(Location(array="two_electron", index=(0, 1, 4, 5), block="ab"))
    'two_electron ab[0, 1, 4, 5]'
    >>> Location(field="references[fci]").as_dict()
    {'field': 'references[fci]'}
    """

    array: str | None = None
    index: tuple[int, ...] | None = None
    block: str | None = None
    field: str | None = None

    def as_dict(self) -> dict[str, Any]:
        if self.field is not None:
            return {"field": self.field}
        out: dict[str, Any] = {"array": self.array, "index": [int(i) for i in self.index or ()]}
        if self.block is not None:
            out["block"] = self.block
        return out

    @classmethod
    def from_dict(cls, data: dict[str, Any]) -> Location:
        """The Location ``as_dict`` described (``from_dict(loc.as_dict()) == loc``)."""
        if "field" in data:
            return cls(field=data["field"])
        return cls(array=data["array"], index=tuple(int(i) for i in data["index"]), block=data.get("block"))

    def __str__(self) -> str:
        if self.field is not None:
            return self.field
        block = f" {self.block}" if self.block else ""
        return f"{self.array}{block}[{', '.join(str(int(i)) for i in self.index or ())}]"


def at_field(name: str | None) -> Location | None:
    """A Location naming a field (None stays None)."""
    return None if name is None else Location(field=name)


def at_element(array: str, index, block: str | None = None) -> Location:
    """A Location naming an array element; ``block`` '' means none."""
    return Location(array=array, index=tuple(int(i) for i in index), block=block or None)


@dataclass(frozen=True)
class Result:
    """One check's verdict: the measured ``value`` held against ``limit`` in the
    direction ``fails_when`` (stamped by the runner from the registry), the
    worst place ``where``, and a sentence to act on. ``details`` carries further
    figures (counts, energies, engines)."""

    id: str
    status: str
    message: str
    value: float | None = None
    limit: float | None = None
    where: Location | None = None
    details: dict[str, Any] = field(default_factory=dict)
    fails_when: str | None = None

    def as_dict(self) -> dict[str, Any]:
        out = {
            "id": self.id,
            "status": self.status,
            "value": self.value,
            "limit": self.limit,
            "fails_when": self.fails_when,
            "where": None if self.where is None else self.where.as_dict(),
            "message": self.message,
        }
        if self.details:
            out["details"] = self.details
        return out

    @classmethod
    def from_dict(cls, data: dict[str, Any]) -> Result:
        """The Result ``as_dict`` described (its ``as_dict()`` is ``data`` again)."""
        where = data.get("where")
        return cls(
            id=data["id"],
            status=data["status"],
            message=data["message"],
            value=data.get("value"),
            limit=data.get("limit"),
            where=None if where is None else Location.from_dict(where),
            details=dict(data.get("details") or {}),
            fails_when=data.get("fails_when"),
        )


def figure(value: float) -> str:
    """A value or limit as messages print it (three significant figures).

    >>> figure(1.0934e-3), figure(-1e-8)
    ('0.00109', '-1e-08')
    """
    return f"{value:.3g}"


def beyond(value: float | None, limit: float | None, fails_when: str | None) -> bool:
    """Whether ``value`` lies beyond ``limit`` in the direction ``fails_when`` (False when not comparable).

    >>> beyond(2e-10, 1e-10, "above"), beyond(-1e-3, -1e-8, "below"), beyond(None, 0.0, "above")
    (True, True, False)
    """
    if value is None or limit is None or fails_when is None:
        return False
    return value > limit if fails_when == "above" else value < limit


def _result(status: str, message: str, **figures) -> Result:
    return Result("", status, message, **figures)


def passed(message: str, **figures) -> Result:
    return _result("pass", message, **figures)


def failed(message: str, **figures) -> Result:
    return _result("fail", message, **figures)


def warned(message: str, **figures) -> Result:
    return _result("warn", message, **figures)


def skipped(message: str, **figures) -> Result:
    return _result("skip", message, **figures)


def judged(bad: bool, message: str, **figures) -> Result:
    """``failed`` when ``bad``, else ``passed`` (the most common shape)."""
    return _result("fail" if bad else "pass", message, **figures)


@dataclass(frozen=True)
class Context:
    """What a check may use besides the Hamiltonian: its limit, the memory
    budget (bytes), the FCI engine and its settings, and the opened document
    (or None when the Hamiltonian came from memory)."""

    limit: float | None
    memory: int = DEFAULT_MEMORY
    engine: str = "native"
    document: Any = None
    box_bytes: int = 2**20
    build_error: Any = None
    #: full-CI settings: energy accuracy (hartree), Davidson iterations, and a
    #: callable taking each :class:`~integrity.solver.SolveProgress` (or None)
    convergence: float = 1e-9
    max_iterations: int = 200
    progress: Callable | None = None
    #: results shared between checks of one run (e.g. symmetry deviations)
    cache: dict = field(default_factory=dict, compare=False)


@dataclass(frozen=True)
class CheckSpec:
    """A registered check: its function, default limit, the direction it fails in, and its summary."""

    id: str
    function: Callable
    limit: float | None
    summary: str
    needs_hamiltonian: bool = True
    #: skipped when the arrays hold NaN or infinities (a NaN compares false with every limit)
    needs_finite: bool = False
    #: "above": fails exactly when value > limit; "below": exactly when value < limit
    fails_when: str = "above"
    #: "fail", or "warn" for a check whose finding is a warning, never a failure
    severity: str = "fail"
    #: whether --tolerance may set the limit (False: the limit is a count of problems, fixed at 0)
    tunable: bool = True

    @property
    def rule(self) -> str:
        """The comparison in words, e.g. ``fails when value > 1e-10``; a check without a limit counts problems."""
        verb = "fails" if self.severity == "fail" else "warns"
        sign = ">" if self.fails_when == "above" else "<"
        if self.limit is None:
            return f"{verb} when value {sign} 0, a count of problems"
        return f"{verb} when value {sign} {self.limit:g}"

    def limit_problem(self, limit) -> str | None:
        """Why ``limit`` cannot be this check's limit (None when it can): finite, on the documented side of 0."""
        if not self.tunable:
            return f"{self.id} has no limit to set; it counts problems and fails on the first"
        if isinstance(limit, bool) or not isinstance(limit, int | float) or not math.isfinite(limit):
            return f"the limit of {self.id} must be a finite number, got {limit!r}"
        if self.fails_when == "above" and limit < 0:
            return f"{self.id} {self.rule}, so its limit is 0 or positive (default {self.limit:g}), got {limit:g}"
        if self.fails_when == "below" and limit > 0:
            return f"{self.id} {self.rule}, so its limit is 0 or negative (default {self.limit:g}), got {limit:g}"
        return None


REGISTRY: dict[str, CheckSpec] = {}


def register(
    check_id: str,
    *,
    limit: float | None = None,
    fails_when: str = "above",
    severity: str = "fail",
    needs_hamiltonian: bool = True,
    needs_finite: bool = False,
):
    """Register a check function under ``check_id`` with its default limit and direction.

    A check registered without a limit (None) counts problems: it fails when the
    count exceeds 0, and ``--tolerance`` cannot change that.
    """
    if fails_when not in DIRECTIONS:
        raise ValueError(f"fails_when must be one of {DIRECTIONS}, got {fails_when!r}")
    if severity not in ("fail", "warn"):
        raise ValueError(f"severity must be 'fail' or 'warn', got {severity!r}")

    def decorate(function):
        summary = (function.__doc__ or "").strip().splitlines()[0] if function.__doc__ else ""
        REGISTRY[check_id] = CheckSpec(
            check_id,
            function,
            limit,
            summary,
            needs_hamiltonian,
            needs_finite,
            fails_when,
            severity,
            tunable=limit is not None,
        )
        return function

    return decorate


def check_ids() -> list[str]:
    """Every registered check id, in report order.

    >>> import integrity.checks
    >>> check_ids()[:3]
    ['schema', 'arrays.shape', 'arrays.finite']
    """
    return list(REGISTRY)


def run_one(spec: CheckSpec, ham, ctx: Context) -> Result:
    """Run one check; an exception becomes this check's fail with the error text (an
    IntegrityError names the field it is about; any other is a bug of the check)."""
    try:
        result = spec.function(ham, ctx)
    except IntegrityError as err:  # the file holds what the check cannot use: a finding naming the field
        result = failed(f"cannot be judged: {err}", where=at_field(err.field))
    except Exception as err:  # a check must never stop the others
        frame = traceback.extract_tb(err.__traceback__)[-1]
        result = failed(
            f"the check itself failed: {type(err).__name__}: {err} (at {frame.filename.split('/')[-1]}:{frame.lineno})"
        )
    return stamp(spec, result)


def stamp(spec: CheckSpec, result: Result) -> Result:
    """The result with its check's id and direction."""
    return replace(result, id=spec.id, fails_when=spec.fails_when)
