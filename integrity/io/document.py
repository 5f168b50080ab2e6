"""An opened file: what the schema sees, what the model is built from, and where things are.

A :class:`Document` is what a reader returns before any judgement is made:
``tree`` is the metadata as the schema validates it (the JSON text itself, or
the HDF5 groups, attributes and dataset descriptors), ``content`` the logical
content (see :mod:`integrity.io.content`), and ``locate`` turns a path into
the file into the name a user should look for. Lazy HDF5 arrays stay
readable until the document is closed.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any

from integrity.errors import BudgetError

DEFAULT_MEMORY = 4 * 2**30


@dataclass
class Document:
    """``content`` is decoded on first use, so a schema check can run on ``tree``
    before any array is read. Use as a context manager: an HDF5 file stays open
    until the document is closed."""

    path: str
    container: str  # "hdf5" or "json"
    tree: dict[str, Any]
    locate: Callable[[tuple], str]
    decoder: Callable[[], dict[str, Any]] = field(repr=False)
    #: problems the reader found outside the tree, as (path, message): a soft link to nothing
    notes: list[tuple[tuple, str]] = field(default_factory=list)
    closer: Callable[[], None] = field(default=lambda: None, repr=False)
    _content: dict[str, Any] | None = field(default=None, init=False, repr=False)

    @property
    def content(self) -> dict[str, Any]:
        if self._content is None:
            self._content = self.decoder()
        return self._content

    @property
    def schema_entry(self) -> str:
        """The schema entry point for this container."""
        return "hdf5_tree" if self.container == "hdf5" else "json_document"

    def close(self) -> None:
        self.closer()

    def __enter__(self) -> Document:
        return self

    def __exit__(self, *exc) -> None:
        self.close()


def format_bytes(count: float) -> str:
    """Bytes in binary units, three significant figures.

    >>> format_bytes(3 * 2**30), format_bytes(8e24)
    ('3 GiB', '7.28e+12 TiB')
    """
    for unit, size in (("TiB", 2**40), ("GiB", 2**30), ("MiB", 2**20), ("KiB", 2**10)):
        if count >= size:
            return f"{count / size:.3g} {unit}"
    return f"{int(count)} B"


def parse_bytes(text: str) -> int:
    """Parse a memory size such as ``512MiB``, ``4GiB``, ``2GB`` or ``1000000``.

    >>> parse_bytes("512MiB"), parse_bytes("4GiB"), parse_bytes("1.5 GB")
    (536870912, 4294967296, 1500000000)

    NaN, infinities (``inf``, ``1e400``) and sizes below one byte (``0.5``) are refused.
    """
    units = {
        "": 1,
        "b": 1,
        "k": 10**3,
        "kb": 10**3,
        "kib": 2**10,
        "m": 10**6,
        "mb": 10**6,
        "mib": 2**20,
        "g": 10**9,
        "gb": 10**9,
        "gib": 2**30,
        "t": 10**12,
        "tb": 10**12,
        "tib": 2**40,
    }
    cleaned = text.strip().lower().replace(" ", "")
    number = cleaned.rstrip("kmgtib")
    unit = cleaned[len(number) :]
    try:
        value = float(number)
    except ValueError:
        raise ValueError(f"{text!r} is not a memory size such as 512MiB or 4GiB") from None
    if unit not in units or not math.isfinite(value) or value <= 0:
        raise ValueError(f"{text!r} is not a memory size such as 512MiB or 4GiB")
    size = value * units[unit]
    if not math.isfinite(size) or size < 1:
        raise ValueError(f"{text!r} is not a memory size of at least one byte (such as 512MiB or 4GiB)")
    return int(size)


def require_declared_size(field_name: str, shape, itemsize: int, memory: int) -> None:
    """Refuse, before allocating, an array whose declared size is beyond the budget."""
    count = 1
    for extent in shape:
        count *= int(extent)
    needed = count * itemsize
    if needed > memory:
        raise BudgetError(
            field_name,
            f"declared shape {tuple(int(s) for s in shape)} holds {format_bytes(needed)}, beyond the "
            f"memory budget of {format_bytes(memory)}; raise the budget (--memory) if the file is genuine",
            needed=needed,
            budget=memory,
            size=count,
        )
