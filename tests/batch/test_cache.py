"""The result cache: warm equals cold, content not time decides, damage and locks are bypassed, writers lose nothing."""

from __future__ import annotations

import json
import multiprocessing
import os
import sqlite3
from pathlib import Path

import pytest
from delivery import damage, delivery, write_entries

from integrity.batch import BatchRun, BatchSettings, InProcess, ResultCache
from integrity.batch.cache import settings_digest
from integrity.cli import main


class ListingInProcess(InProcess):
    """Judges in this process and remembers which files it was given."""

    def __init__(self):
        super().__init__()
        self.judged: list[str] = []

    def submit(self, job):
        self.judged.append(job.path)
        super().submit(job)


def run(paths, cache, **settings):
    executor = ListingInProcess()
    entries = list(BatchRun(paths, BatchSettings(cache=str(cache), **settings), executor=executor))
    return [entry.as_dict() for entry in entries], executor.judged


@pytest.mark.slow
def test_a_warm_run_gives_the_cold_report_without_judging_anything(in_tmp, runner):
    paths = delivery(in_tmp / "scan", 6)
    damage(paths[2])
    arguments = ["check", "scan", "--format", "json", "--cache", "verdicts.sqlite", "--jobs", "2", "--no-policy"]
    cold = runner.invoke(main, arguments)
    warm = runner.invoke(main, arguments)
    assert cold.exit_code == warm.exit_code == 1
    assert warm.stdout == cold.stdout
    assert json.loads(warm.stdout)["files"][2]["status"] == "fail"

    report, judged = run(paths, in_tmp / "verdicts.sqlite", jobs=2)
    assert judged == []  # every verdict came from the cache: no file's data was opened
    assert [entry["path"] for entry in report] == paths


def test_a_new_modification_time_keeps_the_entry_a_changed_byte_does_not(in_tmp):
    paths = delivery(in_tmp, 3)
    cache = in_tmp / "verdicts.sqlite"
    first, judged = run(paths, cache)
    assert judged == paths
    os.utime(paths[0], (1e9, 1e9))
    os.utime(paths[1], (2e9, 2e9))
    again, judged = run(paths, cache)
    assert judged == [] and again == first
    damage(paths[1])
    changed, judged = run(paths, cache)
    assert judged == [paths[1]]
    assert changed[1]["status"] == "fail" and changed[0] == first[0] and changed[2] == first[2]


def test_a_hit_is_reported_under_the_path_given_now(in_tmp):
    (original,) = delivery(in_tmp / "a", 1)
    copy = in_tmp / "b" / "renamed.h5"
    copy.parent.mkdir()
    copy.write_bytes(Path(original).read_bytes())
    cache = in_tmp / "verdicts.sqlite"
    run([original], cache)
    report, judged = run([str(copy)], cache)
    assert judged == [] and report[0]["path"] == str(copy)


def test_other_settings_are_other_entries(in_tmp):
    paths = delivery(in_tmp, 2)
    cache = in_tmp / "verdicts.sqlite"
    run(paths, cache)
    from integrity.checks import CheckOptions

    _, judged = run(paths, cache, options=CheckOptions(strict=True))
    assert judged == paths
    assert settings_digest({"a": 1, "b": [2]}) == settings_digest({"b": [2], "a": 1})


def test_a_file_that_is_not_a_cache_is_reported_and_bypassed(in_tmp):
    paths = delivery(in_tmp, 2)
    cache = in_tmp / "verdicts.sqlite"
    cache.write_bytes(b"these are not the verdicts you are looking for" * 100)
    warnings = []
    executor = ListingInProcess()
    settings = BatchSettings(cache=str(cache))
    report = list(BatchRun(paths, settings, executor=executor, warn=warnings.append))
    assert executor.judged == paths and [e.status for e in report] == ["pass", "pass"]
    assert len(warnings) == 1 and "not a usable cache" in warnings[0] and "checking without it" in warnings[0]
    assert cache.read_bytes().startswith(b"these are not")  # left as found


def test_a_damaged_entry_is_never_trusted(in_tmp):
    paths = delivery(in_tmp, 2)
    cache = in_tmp / "verdicts.sqlite"
    first, _ = run(paths, cache)
    with sqlite3.connect(cache) as connection:
        connection.execute("UPDATE verdicts SET outcome = replace(outcome, '\"pass\"', '\"fail\"')")
    warnings = []
    executor = ListingInProcess()
    again = [
        e.as_dict() for e in BatchRun(paths, BatchSettings(cache=str(cache)), executor=executor, warn=warnings.append)
    ]
    assert executor.judged == paths and again == first
    assert "does not match its own digest" in warnings[0]


def test_a_locked_cache_is_reported_and_bypassed(in_tmp):
    paths = delivery(in_tmp, 2)
    cache = in_tmp / "verdicts.sqlite"
    run(paths, cache)
    holder = sqlite3.connect(cache, isolation_level=None)
    try:
        holder.execute("PRAGMA locking_mode=EXCLUSIVE")
        holder.execute("BEGIN EXCLUSIVE")
        holder.execute("DELETE FROM verdicts WHERE 0")
        warnings = []
        store = ResultCache(cache, warn=warnings.append, busy_seconds=0.1)
        assert not store.usable and "locked by another process" in warnings[0]
    finally:
        holder.close()


@pytest.mark.slow
def test_the_command_line_says_when_the_cache_is_bypassed(in_tmp, runner):
    delivery(in_tmp / "scan", 1)
    (in_tmp / "verdicts.sqlite").write_text("not a database")
    result = runner.invoke(main, ["check", "scan", "--cache", "verdicts.sqlite", "--jobs", "1", "--no-policy"])
    assert result.exit_code == 0
    assert "cache verdicts.sqlite: not a usable cache" in result.stderr


@pytest.mark.slow
def test_two_processes_writing_at_once_lose_nothing(tmp_path):
    path = str(tmp_path / "verdicts.sqlite")
    ResultCache(path).close()
    context = multiprocessing.get_context("forkserver")
    barrier = context.Barrier(2)
    names = [[f"a{i}" for i in range(300)], [f"b{i}" for i in range(300)]]
    processes = [context.Process(target=write_entries, args=(path, part, barrier)) for part in names]
    for process in processes:
        process.start()
    for process in processes:
        process.join(timeout=300)
    assert [process.exitcode for process in processes] == [0, 0]
    with ResultCache(path) as store:
        for name in names[0] + names[1]:
            found = store.get(f"sha256:{name}", "settings", name)
            assert found is not None and found["outcome"]["report"]["path"] == name
