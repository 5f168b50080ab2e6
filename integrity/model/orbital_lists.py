"""Orbital lists and sign lists as people type them.

Orbital list
    0-based orbital indices separated by commas; ``a-b`` is the inclusive
    range a, a+1, ..., b. Spaces are ignored. ``0-3,7`` is 0, 1, 2, 3, 7.
    Order is kept (an orbital order is a list, not a set).
Sign list
    one ``+`` or ``-`` per orbital; commas and spaces are ignored, so
    ``+-++`` and ``+,-,+,+`` are the same list.
Per spin
    for unrestricted files either form may be given twice separated by ``/``,
    alpha first: ``2,0,1/0,2,1``; one list alone applies to both spins.

>>> parse_orbital_list("0-3, 7")
(0, 1, 2, 3, 7)
>>> format_orbital_list([0, 1, 2, 3, 7, 5, 6])
'0-3,7,5,6'
>>> parse_signs("+-+"), format_signs((1, -1, 1))
((1, -1, 1), '+-+')
>>> parse_per_spin("2,0,1/0,2,1", parse_orbital_list, "orbital_order")
((2, 0, 1), (0, 2, 1))
>>> parse_orbital_list("3-1")
Traceback (most recent call last):
...
integrity.errors.FieldError: orbitals: '3-1' is not a range: the first index must not exceed the last
"""

from __future__ import annotations

import re
from collections.abc import Callable, Sequence

from integrity.errors import FieldError

_ITEM = re.compile(r"^(\d+)(?:-(\d+))?$")


def parse_orbital_list(text: str, field: str = "orbitals") -> tuple[int, ...]:
    """The indices an orbital list names, in the order written (see the module docstring)."""
    cleaned = "".join(str(text).split())
    if not cleaned:
        raise FieldError(field, "empty orbital list; expected indices such as 0-3,7")
    out: list[int] = []
    for item in cleaned.split(","):
        match = _ITEM.match(item)
        if match is None:
            raise FieldError(field, f"{item!r} is not an orbital index or a range a-b (0-based, e.g. 0-3,7)")
        first = int(match.group(1))
        last = int(match.group(2)) if match.group(2) is not None else first
        if last < first:
            raise FieldError(field, f"{item!r} is not a range: the first index must not exceed the last")
        out.extend(range(first, last + 1))
    return tuple(out)


def format_orbital_list(indices: Sequence[int]) -> str:
    """Text :func:`parse_orbital_list` reads back as ``indices``: runs of three or more as ranges."""
    parts = []
    values = [int(i) for i in indices]
    start = 0
    while start < len(values):
        end = start
        while end + 1 < len(values) and values[end + 1] == values[end] + 1:
            end += 1
        if end - start >= 2:
            parts.append(f"{values[start]}-{values[end]}")
        else:
            parts.extend(str(v) for v in values[start : end + 1])
        start = end + 1
    return ",".join(parts)


def parse_signs(text: str, field: str = "signs") -> tuple[int, ...]:
    """+1 and -1 for each ``+`` and ``-`` (commas and spaces ignored)."""
    cleaned = "".join(str(text).replace(",", " ").split())
    if not cleaned or set(cleaned) - {"+", "-"}:
        raise FieldError(field, f"expected one + or - per orbital, such as +-++, got {text!r}")
    return tuple(1 if c == "+" else -1 for c in cleaned)


def format_signs(signs: Sequence[int]) -> str:
    """One ``+`` or ``-`` per orbital."""
    return "".join("+" if s > 0 else "-" for s in signs)


def parse_per_spin(text: str, parse: Callable[[str, str], tuple], field: str) -> tuple | tuple[tuple, tuple]:
    """One list, or two separated by ``/`` (alpha, then beta)."""
    pieces = str(text).split("/")
    if len(pieces) == 1:
        return parse(pieces[0], field)
    if len(pieces) == 2:
        return parse(pieces[0], f"{field}.alpha"), parse(pieces[1], f"{field}.beta")
    raise FieldError(field, f"expected one list, or two separated by '/' (alpha/beta), got {text!r}")
