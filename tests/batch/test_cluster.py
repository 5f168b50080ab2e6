"""Judging on a Dask cluster: a real LocalCluster (a scheduler and two worker processes over TCP on loopback)."""

from __future__ import annotations

import json
import os
import signal
import sys
from pathlib import Path

import pytest
from delivery import damage, delivery, misbehaving

from integrity.batch import BatchRun, BatchSettings
from integrity.batch.cluster import DaskCluster
from integrity.cli import main

distributed = pytest.importorskip("distributed")

pytestmark = pytest.mark.slow


@pytest.fixture(scope="module")
def cluster():
    import dask

    # a file that kills a worker is given up after its second worker (the default is the fourth)
    with dask.config.set({"distributed.scheduler.allowed-failures": 1}):
        with distributed.LocalCluster(
            n_workers=2,
            threads_per_worker=1,
            processes=True,
            protocol="tcp",
            host="127.0.0.1",
            dashboard_address=None,
            silence_logs=50,
        ) as local:
            yield local


def test_the_cluster_gives_the_report_of_a_serial_run(in_tmp, runner, cluster):
    paths = delivery(in_tmp / "scan", 10)
    damage(paths[4])
    (in_tmp / "scan" / "cut.h5").write_bytes(Path(paths[0]).read_bytes()[:3000])
    serial = runner.invoke(main, ["check", "scan", "--format", "json", "--jobs", "1", "--no-policy"])
    remote = runner.invoke(
        main, ["check", "scan", "--format", "json", "--scheduler", cluster.scheduler_address, "--no-policy"]
    )
    assert serial.exit_code == remote.exit_code == 2, remote.output
    assert remote.stdout == serial.stdout
    statuses = [entry["status"] for entry in json.loads(remote.stdout)["files"]]
    assert statuses.count("fail") == 1 and statuses.count("unreadable") == 1


def test_a_worker_killed_mid_run_loses_no_file_and_duplicates_none(in_tmp, cluster):
    paths = delivery(in_tmp / "scan", 24)
    serial = [entry.as_dict() for entry in BatchRun(paths, BatchSettings(jobs=1))]
    with distributed.Client(cluster.scheduler_address, set_as_default=False) as client:
        victim = sorted(client.run(os.getpid).values())[0]
        killed = []

        def kill_once(done, total, failures, path):
            if done == 3 and not killed:
                os.kill(victim, signal.SIGKILL)
                killed.append(victim)

        executor = DaskCluster(cluster.scheduler_address, timeout=None, client=client)
        run = BatchRun(paths, BatchSettings(scheduler=cluster.scheduler_address), executor=executor, progress=kill_once)
        remote = [entry.as_dict() for entry in run]
        executor.close()
        client.wait_for_workers(2)
    assert killed == [victim]
    assert [entry["path"] for entry in remote] == paths
    assert remote == serial


def test_a_worker_that_cannot_see_the_file_says_so(tmp_path, cluster):
    missing = str(tmp_path / "elsewhere" / "scan_000.h5")
    (entry,) = BatchRun([missing], BatchSettings(scheduler=cluster.scheduler_address))
    assert entry.status == "unreadable"
    assert "the Dask worker tcp://127.0.0.1:" in entry.error and f"cannot see {missing}" in entry.error
    assert "shared with this machine at the same path" in entry.error


def test_a_file_that_hangs_every_worker_ends_unreadable(in_tmp, cluster):
    paths = delivery(in_tmp / "scan", 2)
    hang = in_tmp / "scan" / "scan_hang.h5"
    os.replace(paths[1], hang)
    settings = BatchSettings(scheduler=cluster.scheduler_address, timeout=2)
    executor = DaskCluster(cluster.scheduler_address, timeout=2, task=misbehaving)
    try:
        good, hung = BatchRun([paths[0], str(hang)], settings, executor=executor)
    finally:
        executor.close()
    assert good.status == "pass"
    assert hung.status == "unreadable"
    assert "the HDF5 library crashed or hung reading it: every Dask worker that took it died" in hung.error


def test_without_dask_the_scheduler_option_says_how_to_install_it(in_tmp, runner, monkeypatch):
    delivery(in_tmp / "scan", 1)
    monkeypatch.setitem(sys.modules, "distributed", None)
    result = runner.invoke(main, ["check", "scan", "--scheduler", "tcp://127.0.0.1:1", "--no-policy"])
    assert result.exit_code == 2
    assert "pip install 'integrity[cluster]'" in result.stderr
