"""Check results and the registry of checks.

Every check is a function ``check(ham, ctx) -> Result`` registered once, with
its public id, under :func:`register`. The registry owns the ids and their
order: checks run and are reported in the order they were registered (the
order :mod:`integrity.checks` imports the families in). A check builds its
result with :func:`passed`, :func:`failed`, :func:`warned` or
:func:`skipped`; the runner stamps the id on it, so an id is written once.
"""

from __future__ import annotations

import traceback
from collections.abc import Callable
from dataclasses import dataclass, field, replace
from typing import Any

from integrity.io import DEFAULT_MEMORY

STATUSES = ("pass", "fail", "warn", "skip")
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
    """One check's verdict: the measured ``value`` held against ``limit``, the
    worst place ``where``, and a sentence to act on. ``details`` carries further
    figures (counts, energies, engines)."""

    id: str
    status: str
    message: str
    value: float | None = None
    limit: float | None = None
    where: Location | None = None
    details: dict[str, Any] = field(default_factory=dict)

    def as_dict(self) -> dict[str, Any]:
        out = {
            "id": self.id,
            "status": self.status,
            "value": self.value,
            "limit": self.limit,
            "where": None if self.where is None else self.where.as_dict(),
            "message": self.message,
        }
        if self.details:
            out["details"] = self.details
        return out


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
    id: str
    function: Callable
    limit: float | None
    summary: str
    needs_hamiltonian: bool = True
    #: skipped when the arrays hold NaN or infinities (a NaN compares false with every limit)
    needs_finite: bool = False


REGISTRY: dict[str, CheckSpec] = {}


def register(check_id: str, *, limit: float | None = None, needs_hamiltonian: bool = True, needs_finite: bool = False):
    """Register a check function under ``check_id`` with its default limit."""

    def decorate(function):
        summary = (function.__doc__ or "").strip().splitlines()[0] if function.__doc__ else ""
        REGISTRY[check_id] = CheckSpec(check_id, function, limit, summary, needs_hamiltonian, needs_finite)
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
    """Run one check; an exception becomes this check's fail with the error text."""
    try:
        result = spec.function(ham, ctx)
    except Exception as err:  # a check must never stop the others
        frame = traceback.extract_tb(err.__traceback__)[-1]
        result = failed(
            f"the check itself failed: {type(err).__name__}: {err} (at {frame.filename.split('/')[-1]}:{frame.lineno})"
        )
    return replace(result, id=spec.id)
