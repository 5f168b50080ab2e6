"""Check results, the registry of checks, and the runner.

Every check is a function ``check(ham, ctx) -> Result`` registered under a
stable public id. The runner resolves the limit for each check, runs them all,
and turns an unexpected exception inside one check into that check's ``fail``
so the others still run. A file passes when no check fails; ``warn`` fails a
file only in strict mode.
"""

from __future__ import annotations

import traceback
from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any

from ..io import DEFAULT_MEMORY

STATUSES = ("pass", "fail", "warn", "skip")


@dataclass(frozen=True)
class Result:
    """One check's verdict: the measured ``value`` held against ``limit``, the
    worst place ``where`` (index tuple or field), and a sentence to act on.
    ``details`` carries further figures (counts, energies, engines)."""

    id: str
    status: str
    message: str
    value: float | None = None
    limit: float | None = None
    where: str | None = None
    details: dict[str, Any] = field(default_factory=dict)

    def as_dict(self) -> dict[str, Any]:
        out = {
            "id": self.id,
            "status": self.status,
            "value": self.value,
            "limit": self.limit,
            "where": self.where,
            "message": self.message,
        }
        if self.details:
            out["details"] = self.details
        return out


@dataclass(frozen=True)
class Context:
    """What a check may use besides the Hamiltonian: its limit, the memory
    budget (bytes), the FCI engine, and the opened document (or None when
    the Hamiltonian came from memory)."""

    limit: float | None
    memory: int = DEFAULT_MEMORY
    engine: str = "native"
    document: Any = None
    box_bytes: int = 2**20
    build_error: Any = None
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


def outcome(check_id: str, failed: bool, message: str, **figures) -> Result:
    """A pass or fail Result (the most common shape)."""
    return Result(check_id, "fail" if failed else "pass", message, **figures)


def skipped(check_id: str, why: str, **figures) -> Result:
    return Result(check_id, "skip", why, **figures)


def run_one(spec: CheckSpec, ham, ctx: Context) -> Result:
    """Run one check; an exception becomes this check's fail with the error text."""
    try:
        result = spec.function(ham, ctx)
    except Exception as err:  # a check must never stop the others
        frame = traceback.extract_tb(err.__traceback__)[-1]
        return Result(
            spec.id,
            "fail",
            f"the check itself failed: {type(err).__name__}: {err} (at {frame.filename.split('/')[-1]}:{frame.lineno})",
        )
    return result
