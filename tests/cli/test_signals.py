"""Ctrl-C and SIGTERM sent to a real ``integrity`` process in the middle of a write: exit 130 or 143, one word
on stderr (not click's "Aborted!"), no temporary file left, no output, the input untouched.

The process is paused at a known moment (the temporary file is written and about to be synced: the
sync is replaced by one that leaves a marker and sleeps), so the signal arrives while the half-written
file exists, whatever the machine's load.
"""

from __future__ import annotations

import hashlib
import shutil
import signal
import subprocess
import sys

import pytest
from locations import GOOD
from paused_write import PAUSED, wait_for


def _digest(path):
    return hashlib.sha256(path.read_bytes()).hexdigest()


@pytest.mark.slow
@pytest.mark.parametrize(
    ("signum", "status", "word"),
    [(signal.SIGINT, 130, "interrupted"), (signal.SIGTERM, 143, "terminated")],
    ids=["SIGINT", "SIGTERM"],
)
@pytest.mark.parametrize("command", ["convert", "wrap"])
def test_a_signal_during_a_write_leaves_no_part_file_and_exits_with_its_status(tmp_path, command, signum, status, word):
    source = tmp_path / "in.h5"
    shutil.copy(GOOD / "lih_sto3g.h5", source)
    if command == "wrap":
        import numpy as np

        from integrity.io import load

        ham = load(source)
        source = tmp_path / "ints.npz"
        np.savez(source, one_electron=ham.one_electron, two_electron=ham.two_electron.array)
        args = ["wrap", str(source), str(tmp_path / "out.json"), "--notation", "chemist", "--alpha", "2", "--beta", "2"]
        args += ["--basis", "restricted", "--core-energy", "0"]
    else:
        args = ["convert", str(source), str(tmp_path / "out.json"), "--basis", "spin-orbital"]
    before = _digest(source)
    marker = tmp_path / "paused"
    process = subprocess.Popen(
        [sys.executable, "-c", PAUSED, str(marker), *args],
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
        cwd=tmp_path,
    )
    wait_for(marker, process)
    assert list(tmp_path.glob(".out.json.*.part")), "the write had not begun"
    process.send_signal(signum)
    out, err = process.communicate(timeout=300)
    assert process.returncode == status, (out, err)
    assert err == f"{word}\n"
    assert "Aborted" not in out + err and "Traceback" not in err
    assert not list(tmp_path.glob("*.part")) and not list(tmp_path.glob(".*.part"))
    assert not (tmp_path / "out.json").exists()
    assert _digest(source) == before
