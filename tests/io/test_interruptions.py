"""SIGKILL sent to real ``convert``, ``wrap`` and ``build`` processes: the target is absent or complete,
the input unchanged, and the temporary file a kill leaves is ignored by ``check`` and removed by the
next write into the folder.

Whatever moment a kill lands, the assertions must hold; the delays are drawn from a seeded generator
only to spread the kills over the run (:mod:`integrity.testing.interruptions`).
"""

from __future__ import annotations

import shutil
import signal
import subprocess
import sys

import numpy as np
import pytest
from locations import GOOD
from paused_write import PAUSED, wait_for

from integrity.cli import main
from integrity.io.atomic import host_name, part_owner
from integrity.testing.interruptions import (
    COMMANDS,
    kill_once,
    measure,
    prepare,
    previous_file,
    sha256,
    temporaries,
)


@pytest.mark.slow
def test_the_temporary_file_of_a_killed_write_is_ignored_by_check_and_removed_by_the_next_write(tmp_path, runner):
    folder = tmp_path / "data"
    folder.mkdir()
    source = folder / "in.h5"
    shutil.copy(GOOD / "lih_sto3g.h5", source)
    digest = sha256(source)
    out = folder / "out.json"
    marker = tmp_path / "paused"
    process = subprocess.Popen(
        [sys.executable, "-c", PAUSED, str(marker), "convert", str(source), str(out)],
        stdout=subprocess.DEVNULL,
        stderr=subprocess.PIPE,
    )
    wait_for(marker, process)  # the temporary file is written and about to be synced
    process.send_signal(signal.SIGKILL)
    process.communicate(timeout=60)

    (left,) = temporaries(folder)
    assert part_owner(left) == (host_name(), process.pid)
    assert not out.exists() and sha256(source) == digest

    report = runner.invoke(main, ["check", str(folder)])
    assert report.exit_code == 0, report.output
    assert ".part" not in report.output and "in.h5" in report.output

    again = runner.invoke(main, ["convert", str(source), str(out)])
    assert again.exit_code == 0, again.output
    assert temporaries(folder) == [] and sorted(p.name for p in folder.iterdir()) == ["in.h5", "out.json"]


@pytest.fixture(scope="module")
def measured(tmp_path_factory):
    """Each command's scenario, its uncut run time and the checksum an uncut run writes."""
    found = {}
    for command in COMMANDS:
        scenario = prepare(command, tmp_path_factory.mktemp(command), size=12)
        timing = measure(scenario)
        found[command] = (scenario, timing, None if command == "build" else timing.checksum)
    return found


@pytest.mark.slow
@pytest.mark.parametrize("replacing", [False, True], ids=["new", "overwrite"])
@pytest.mark.parametrize("command", COMMANDS)
def test_a_kill_at_a_random_moment_leaves_no_half_file_and_nothing_the_next_run_keeps(measured, command, replacing):
    scenario, timing, checksum = measured[command]
    rng = np.random.default_rng([COMMANDS.index(command), replacing])
    delay = timing.draw_delay(rng, in_write=replacing)
    previous = previous_file(scenario) if replacing else None
    outcome = kill_once(scenario, delay, checksum, previous=previous)
    assert outcome.target in (("previous", "complete") if replacing else ("absent", "complete")), outcome
    assert not outcome.input_changed
    assert outcome.next_run_status == 0, outcome.next_run_error
    assert outcome.parts_after_next_run == []
    assert all(part_owner(name) is not None for name in outcome.parts_after_kill)
