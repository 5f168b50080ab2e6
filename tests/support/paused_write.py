"""A real ``integrity`` process paused in the middle of a write, for signal and kill tests.

``PAUSED`` is a script: ``python -c PAUSED MARKER ARGS...`` runs ``integrity ARGS...`` with
``os.fsync`` replaced by one that writes MARKER and sleeps, so the process waits with its
temporary file written and not yet published, whatever the machine's load.
"""

from __future__ import annotations

import time

PAUSED = """
import os, pathlib, sys, time
marker = pathlib.Path(sys.argv[1])

def paused_sync(fd):
    marker.write_text("paused")
    time.sleep(600)

os.fsync = paused_sync
from integrity.cli import main
main(sys.argv[2:], prog_name="integrity")
"""


def wait_for(path, process, limit=300.0):
    """Until ``path`` exists (the process reached the pause); the limit only stops a broken test."""
    start = time.monotonic()
    while not path.exists():
        if process.poll() is not None:
            raise AssertionError(f"the process ended before the pause: {process.communicate()}")
        if time.monotonic() - start > limit:
            process.kill()
            raise AssertionError("the process never reached the pause")
        time.sleep(0.05)
