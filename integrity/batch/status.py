"""Which check each worker is in: a channel from the workers to the progress line.

A worker's :class:`~integrity.checks.CheckOptions` gets a :class:`Reporter` as
its ``progress``; the reporter puts ``(path, check_id, update)`` on a queue
kept by a manager process (a queue that can travel to any worker, forked by
the server or not), and a thread of this process hands each message to the
``show`` callback. ``update`` is None as a check starts, or the
:class:`~integrity.solver.SolveProgress` of a solve inside it. Messages are
hints for people: a full or broken queue drops them, it never stops a check.
"""

from __future__ import annotations

import multiprocessing
import queue
import threading
from collections.abc import Callable
from typing import Any

Show = Callable[[str, str, Any], None]


class Reporter:
    """The ``progress`` of one file's checks, reported under the path the user gave."""

    def __init__(self, channel, path: str):
        self.channel = channel
        self.path = path

    def __call__(self, _location: str, check_id: str, update: Any = None) -> None:
        try:
            self.channel.put_nowait((self.path, check_id, update))
        except Exception:  # a lost hint must never fail a check
            pass


class StatusChannel:
    """Carry workers' progress messages to ``show`` in this process until :meth:`close`."""

    def __init__(self, show: Show):
        self.show = show
        self.manager = multiprocessing.Manager()
        self.queue = self.manager.Queue(maxsize=1024)
        self.thread = threading.Thread(target=self._drain, name="integrity-status", daemon=True)
        self.thread.start()

    def reporter(self, path: str) -> Reporter:
        return Reporter(self.queue, path)

    def _drain(self) -> None:
        while True:
            try:
                message = self.queue.get()
            except (EOFError, OSError, queue.Empty):
                return
            if message is None:
                return
            try:
                self.show(*message)
            except Exception:  # a hint that cannot be shown is dropped
                pass

    def close(self) -> None:
        try:
            self.queue.put(None)
            self.thread.join(timeout=5)
        except (EOFError, OSError):
            pass
        self.manager.shutdown()
