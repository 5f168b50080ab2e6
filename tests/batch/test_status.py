"""Which file and check a worker is in reaches the parent (the progress line of `integrity check`)."""

from __future__ import annotations

import threading

import pytest
from locations import GOOD

from integrity.batch import BatchRun, BatchSettings
from integrity.checks import CheckOptions
from integrity.cli.render import batch_progress_text
from integrity.solver import SolveProgress


@pytest.mark.slow
def test_workers_report_every_check_in_order_and_the_solve_inside_energy_fci():
    # the Hubbard ring's space is large enough for Davidson iterations; the other's is solved directly
    files = [str(GOOD / "hubbard_ring6_u4.json"), str(GOOD / "lih_sto3g.h5")]
    heard: dict[str, list] = {path: [] for path in files}
    lock = threading.Lock()

    def show(path, check_id, update):
        with lock:
            heard[path].append((check_id, update))

    entries = list(BatchRun(files, BatchSettings(jobs=2), status=show))
    assert [entry.status for entry in entries] == ["pass", "pass"]
    chosen = CheckOptions().chosen()
    for path in files:
        starts = [check_id for check_id, update in heard[path] if update is None]
        assert starts == chosen, path
    solves = [(check_id, update) for check_id, update in heard[files[0]] if update is not None]
    assert solves and all(c == "energy.fci" and isinstance(u, SolveProgress) for c, u in solves)
    assert all(u.iteration >= 1 and u.determinants > 0 for c, u in solves)


@pytest.mark.slow
def test_no_channel_without_a_listener():
    run = BatchRun([str(GOOD / "lih_sto3g.h5")], BatchSettings(jobs=1))
    assert [entry.status for entry in run] == ["pass"]


def test_the_progress_line_names_file_check_and_iteration():
    update = SolveProgress(3, (-7.88,), (1e-3,), 1e-5, 2.0, 100)
    line = batch_progress_text(1, "scan/a\nb.h5", "energy.fci", update)
    assert line.startswith("1 not passed  scan/a\\nb.h5: energy.fci, full CI: iteration 3")
    assert "\n" not in line
