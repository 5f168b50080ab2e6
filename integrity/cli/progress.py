"""Status lines on a terminal while long work runs: one line on stderr, rewritten in place.

Shown only when stderr is a terminal and not ``--quiet``, and only once the
work has run for ``DELAY`` seconds (a quick solve prints nothing). The text
comes from :mod:`integrity.cli.render`.
"""

from __future__ import annotations

import sys
import time

from integrity.cli.render import progress_text

__all__ = ["DELAY", "StatusLine", "solve_status"]

DELAY = 3.0
"""Seconds of work before the first status line appears."""


class StatusLine:
    """Writes status lines to ``stream`` in place (carriage return), then clears the line."""

    def __init__(self, stream, delay: float = DELAY):
        self.stream = stream
        self.delay = delay
        self.started = time.monotonic()
        self.width = 0

    def show(self, text: str) -> None:
        if time.monotonic() - self.started < self.delay:
            return
        columns = _columns()
        text = text[: columns - 1] if columns else text
        self.stream.write("\r" + text.ljust(self.width))
        self.stream.flush()
        self.width = len(text)

    def close(self) -> None:
        if self.width:
            self.stream.write("\r" + " " * self.width + "\r")
            self.stream.flush()
            self.width = 0

    def solve(self, update) -> None:
        """A callback for :func:`integrity.solver.solve_arrays` (``progress``)."""
        self.show(progress_text(update))


def _columns() -> int:
    try:
        import shutil

        return shutil.get_terminal_size((0, 0)).columns
    except OSError:  # pragma: no cover
        return 0


def _terminal(quiet: bool) -> StatusLine | None:
    stream = sys.stderr
    if quiet or not stream.isatty():
        return None
    return StatusLine(stream)


def solve_status(quiet: bool = False) -> StatusLine | None:
    """A status line for ``integrity solve``, or None when nothing should be shown."""
    return _terminal(quiet)
