"""The project's exception hierarchy.

Library code raises these; only ``integrity.cli.commands`` turns them into exit codes
(every :class:`IntegrityError` is exit status 2: the input could not be used
or the request was refused). A message always names the file (when there is
one) and the field, and says what was expected.

>>> err = FieldError("two_electron", "storage 'pairs' needs shape (10, 10), got (16, 16)")
>>> str(err)
"two_electron: storage 'pairs' needs shape (10, 10), got (16, 16)"
>>> str(err.in_file("h2.json"))
"h2.json: two_electron: storage 'pairs' needs shape (10, 10), got (16, 16)"
"""

from __future__ import annotations

__all__ = [
    "BudgetError",
    "ContainerError",
    "FieldError",
    "IntegrityError",
    "OutputError",
    "OverwriteError",
    "RefusedError",
    "UnsupportedError",
]


class IntegrityError(Exception):
    """Base of every error the project raises on purpose.

    ``path`` is the file concerned (or None), ``field`` the place inside it
    (a dotted or slashed path such as ``orbitals.count`` or
    ``references/hf/energy``), ``reason`` the human sentence.
    """

    def __init__(self, field: str | None, reason: str, path: str | None = None):
        self.field = field
        self.reason = reason
        self.path = path
        super().__init__(self._render())

    def _render(self) -> str:
        parts = [p for p in (self.path, self.field) if p]
        return ": ".join([*parts, self.reason])

    def __str__(self) -> str:
        return self._render()

    def in_file(self, path) -> IntegrityError:
        """Return this error with ``path`` attached (kept if already set)."""
        if self.path is None:
            self.path = str(path)
            self.args = (self._render(),)
        return self


class FieldError(IntegrityError, ValueError):
    """A field holds a value that breaks the format: wrong shape, dtype, range, type."""


class ContainerError(IntegrityError):
    """The file itself cannot be read: not HDF5, truncated, invalid JSON, unknown version."""


class OverwriteError(IntegrityError, FileExistsError):
    """The output exists and overwriting was not asked for."""


class OutputError(IntegrityError, OSError):
    """The output cannot be written: a missing or read-only folder, a full disk, a file-size limit.

    The message names the path and the operating system's reason (``strerror``).
    """


class RefusedError(IntegrityError):
    """An operation would lose or invent information and was not forced."""


class UnsupportedError(IntegrityError):
    """The request is valid but this code path (or engine) does not handle it."""


class BudgetError(IntegrityError, MemoryError):
    """A computation would need more memory than the budget allows.

    ``needed`` and ``budget`` are in bytes; ``size`` describes the space (e.g.
    the number of determinants) so callers can report figures.
    """

    def __init__(self, field, reason, path=None, *, needed=None, budget=None, size=None):
        self.needed = needed
        self.budget = budget
        self.size = size
        super().__init__(field, reason, path)
