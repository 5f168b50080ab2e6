"""Many files on one machine: worker processes, input order, isolation from crashes and hangs, Ctrl-C."""

from __future__ import annotations

import json
import os
import signal
import subprocess
import sys

import pytest
from delivery import damage, delivery, misbehaving
from locations import DAMAGED, GOOD

from integrity.batch import BatchRun, BatchSettings, InProcess, LocalProcesses
from integrity.checks.report import FileReport
from integrity.cli import main
from integrity.io.schema import schema_problems


@pytest.mark.slow
def test_two_workers_give_the_report_of_one_fingerprints_included(runner):
    damaged = ["lih_perturbed_element.h5", "h4_chain_truncated.h5", "hubbard_ring6_nan.h5", "lih_stale_checksum.json"]
    paths = [str(GOOD), *(str(DAMAGED / name) for name in damaged)]
    serial = runner.invoke(main, ["check", *paths, "--format", "json", "--jobs", "1", "--no-policy"])
    parallel = runner.invoke(main, ["check", *paths, "--format", "json", "--jobs", "2", "--no-policy"])
    assert serial.exit_code == parallel.exit_code == 2
    assert parallel.stdout == serial.stdout
    report = json.loads(parallel.stdout)
    assert schema_problems(report, name="report") == []
    assert [entry["status"] for entry in report["files"][-4:]] == ["fail", "unreadable", "fail", "fail"]
    assert sum(entry["fingerprint"] is not None for entry in report["files"]) == 15


@pytest.mark.slow
def test_text_verdicts_come_in_input_order_from_two_workers(in_tmp, runner):
    paths = delivery(in_tmp / "scan", 12)
    damage(paths[3])
    result = runner.invoke(main, ["check", "scan", "--jobs", "2", "--no-policy"])
    assert result.exit_code == 1
    heads = [line.split(":")[0] for line in result.stdout.splitlines() if not line.startswith(" ")]
    assert heads == [os.path.join("scan", os.path.basename(p)) for p in paths]
    assert result.stderr == ""  # no progress line when stderr is not a terminal


def test_each_worker_gets_its_share_of_the_memory(in_tmp):
    delivery(in_tmp, 1)
    settings = BatchSettings(jobs=4)
    assert BatchRun([in_tmp], settings).worker_options().memory == settings.options.memory // 4


@pytest.mark.slow
def test_a_crash_or_hang_costs_one_file_and_the_batch_goes_on(in_tmp):
    paths = delivery(in_tmp / "scan", 4)
    crash = in_tmp / "scan" / "scan_crash.h5"
    hang = in_tmp / "scan" / "scan_hang.json"
    os.replace(paths[1], hang)
    os.replace(paths[2], crash)
    executor = LocalProcesses(2, timeout=3, task=misbehaving)
    try:
        run = BatchRun([in_tmp / "scan"], BatchSettings(jobs=2, timeout=3), executor=executor)
        entries = {os.path.basename(entry.path): entry for entry in run}
    finally:
        executor.close()
    assert entries["scan_000.h5"].status == entries["scan_003.json"].status == "pass"
    crashed, hung = entries["scan_crash.h5"], entries["scan_hang.json"]
    assert crashed.status == hung.status == "unreadable"
    assert "the HDF5 library crashed reading it (the worker process died: killed by SIGSEGV)" in crashed.error
    assert "reading or checking it hung: no verdict within the limit of 3 s per file (--timeout" in hung.error


def test_the_library_can_judge_in_this_process(in_tmp):
    paths = delivery(in_tmp, 3)
    entries = list(BatchRun(paths, BatchSettings(), executor=InProcess()))
    assert [e.path for e in entries] == paths and all(isinstance(e, FileReport) for e in entries)


@pytest.mark.slow
def test_ctrl_c_stops_the_workers_and_keeps_the_verdicts_already_printed(in_tmp):
    delivery(in_tmp / "scan", 150)
    command = [sys.executable, "-m", "integrity", "check", "scan", "--jobs", "2", "--no-policy"]
    with subprocess.Popen(command, cwd=in_tmp, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True) as process:
        first = process.stdout.readline()  # the workers are judging
        workers = _workers(process.pid)
        process.send_signal(signal.SIGINT)
        rest, err = process.stdout.read(), process.stderr.read()
        process.wait(timeout=120)
    if process.returncode == 0:
        pytest.skip("the run finished before the interrupt arrived")
    assert process.returncode == 130, err
    lines = [first, *rest.splitlines()]
    assert 1 <= len(lines) < 150 and len(set(lines)) == len(lines)
    assert all(": pass (" in line for line in lines)
    assert f"interrupted: {len(lines)} of 150 files judged" in err
    assert "Traceback" not in err
    assert workers and not [pid for pid in workers if _alive(pid)]


def test_an_interrupted_json_run_reports_the_files_judged_so_far(in_tmp, runner, monkeypatch):
    delivery(in_tmp / "scan", 6)
    calls = []
    real_wait = InProcess.wait

    def wait_then_interrupt(self):
        calls.append(1)
        if len(calls) == 4:
            raise KeyboardInterrupt
        return real_wait(self)

    monkeypatch.setattr(InProcess, "wait", wait_then_interrupt)
    monkeypatch.setattr("integrity.batch.execute.make_executor", lambda *args, **kwargs: InProcess())
    result = runner.invoke(main, ["check", "scan", "--format", "json", "--no-policy"])
    assert result.exit_code == 130
    report = json.loads(result.stdout)
    assert report["interrupted"] is True and schema_problems(report, name="report") == []
    assert [entry["path"] for entry in report["files"]] == [
        f"scan/scan_00{i}.{'h5' if i % 2 == 0 else 'json'}" for i in range(3)
    ]
    assert "interrupted: 3 of 6 files judged" in result.stderr


def _workers(pid: int) -> list[int]:
    """The worker processes of the run ``pid``: children of its children (the fork server's), from /proc."""
    parents = {}
    for entry in os.listdir("/proc"):
        if entry.isdigit():
            parent = _parent(int(entry))
            if parent is not None:
                parents[int(entry)] = parent
    children = {child for child, parent in parents.items() if parent == pid}
    return [process for process, parent in parents.items() if parent in children]


def _parent(pid: int) -> int | None:
    try:
        with open(f"/proc/{pid}/stat") as handle:
            return int(handle.read().rsplit(")", 1)[1].split()[1])
    except OSError:
        return None


def _alive(pid: int) -> bool:
    """Running, and not a zombie waiting to be reaped."""
    try:
        with open(f"/proc/{pid}/stat") as handle:
            return handle.read().rsplit(")", 1)[1].split()[0] != "Z"
    except OSError:
        return False
