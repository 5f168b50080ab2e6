"""Provenance history entries: one per conversion step.

Each entry is a dict with the keys ``step``, ``from``, ``to``, ``tool``
(``"integrity <version>"``), ``date`` (``YYYY-MM-DD``, stamped by :func:`dated`,
so a caller can fix it: the conversion's date, never a clock read deep inside) and
``fingerprint_changed`` (whether the fingerprint after the step differs from
the one before it), plus step-specific keys such as
``dropped_max_deviation`` (the largest difference dropped by a packing or
basis step) and ``forced`` (the drop exceeded the tolerance and was allowed).

>>> entry = step_entry("notation", "chemist", "physicist", fingerprint_changed=False)
>>> entry["step"], entry["from"], entry["to"], entry["tool"].startswith("integrity ")
('notation', 'chemist', 'physicist', True)
"""

from __future__ import annotations

import datetime
import math
from collections.abc import Iterable

from integrity._version import __version__
from integrity.errors import FieldError
from integrity.model.hamiltonian import Hamiltonian


def tool_name() -> str:
    """The ``tool`` recorded in history entries, e.g. ``integrity 0.1.0``."""
    return f"integrity {__version__}"


def _finite_or_text(value):
    """A float for JSON: finite floats as they are, others as text ('inf', 'nan')."""
    if isinstance(value, float) and not math.isfinite(value):
        return repr(value)
    return value


def step_entry(step: str, source, target, *, fingerprint_changed: bool, **extra) -> dict:
    """A history entry for one step from ``source`` to ``target``.

    ``extra`` keys are added as they are (non-finite floats become text, since
    JSON has no NaN or infinity).
    """
    entry = {
        "step": step,
        "from": source,
        "to": target,
        "tool": tool_name(),
        "fingerprint_changed": bool(fingerprint_changed),
    }
    for key, value in extra.items():
        entry[key] = _finite_or_text(value)
    return entry


def today() -> str:
    """Today's date in UTC, YYYY-MM-DD: the default wherever a date is recorded."""
    return datetime.datetime.now(datetime.timezone.utc).strftime("%Y-%m-%d")


def dated(entries: Iterable[dict], date: str | None = None) -> list[dict]:
    """The entries with ``date`` set (today, UTC, when None); a date must read YYYY-MM-DD.

    >>> dated([{"step": "notation"}], "2026-01-31")
    [{'step': 'notation', 'date': '2026-01-31'}]
    """
    date = today() if date is None else date
    try:
        datetime.date.fromisoformat(date)
    except (TypeError, ValueError):
        raise FieldError("date", f"expected a date YYYY-MM-DD, got {date!r}") from None
    return [entry | {"date": date} for entry in entries]


def with_history(ham: Hamiltonian, entries: Iterable[dict]) -> Hamiltonian:
    """``ham`` with ``entries`` appended to ``provenance.history`` and no checksum.

    The checksum is cleared so that :func:`integrity.io.save` writes the
    fingerprint of the converted content; other provenance keys are kept.
    """
    entries = list(entries)
    provenance = dict(ham.provenance) if ham.provenance is not None else {}
    if entries:
        provenance["history"] = [*provenance.get("history", ()), *entries]
    return ham.replace(provenance=provenance or ham.provenance, checksum=None)
