"""The fuzzer: mutations are reproducible and honest about what they change; a seeded run finds nothing.

The run over a few hundred cases (``test_a_seeded_run_gives_no_case_of``) is the
suite's share of ``python bench/fuzz.py``: every good fixture unchanged, then
random (fixture, mutation, seed) triples from a fixed seed, each judged by
``integrity check --format json`` in a forked child.
"""

from __future__ import annotations

import json

import numpy as np
import pytest
from locations import GOOD

from integrity.testing.fuzz import PROBLEMS, Case, Summary, judge_output, plan, run_cases
from integrity.testing.mutations import (
    EITHER,
    FAIL,
    MUTATIONS,
    PASS,
    bytes_expect,
    changed_expect,
    mutations_for,
    orbit,
    removal_expect,
)

FIXTURES = sorted(p for p in GOOD.iterdir() if p.suffix in (".h5", ".json"))
SEEDED_CASES = 200
SEED = 20261203


def _report(status: str) -> str:
    return json.dumps({"files": [{"path": "x", "status": status, "checks": []}]})


@pytest.mark.parametrize("name", sorted(MUTATIONS))
def test_a_mutation_writes_the_same_bytes_from_the_same_triple(name, tmp_path):
    fixture = next(p for p in FIXTURES if name in {m.name for m in mutations_for(p)})
    first, second = tmp_path / "a" / fixture.name, tmp_path / "b" / fixture.name
    first.parent.mkdir()
    second.parent.mkdir()
    damage = MUTATIONS[name].apply(fixture, first, 7)
    assert MUTATIONS[name].apply(fixture, second, 7) == damage
    assert damage.expect in (FAIL, EITHER, PASS)
    if fixture.suffix == ".json" or name not in ("repack", "equivalent_types"):
        assert first.read_bytes() == second.read_bytes()  # HDF5 files written anew carry no clock here


@pytest.mark.parametrize("name", ["perturb_element", "perturb_orbit", "flip_value_bytes", "change_core_energy"])
def test_numeric_mutations_change_the_bytes_and_must_fail(name, tmp_path):
    for fixture in FIXTURES:
        target = tmp_path / f"{name}-{fixture.name}"
        damage = MUTATIONS[name].apply(fixture, target, 3)
        assert damage.expect == FAIL
        assert target.read_bytes() != fixture.read_bytes()


def test_every_container_has_mutations_of_every_kind_asked_for():
    json_names = {m.name for m in mutations_for("x.json")}
    hdf5_names = {m.name for m in mutations_for("x.h5")}
    both = {"flip_bytes", "zero_run", "truncate", "nonfinite", "deep_nesting", "long_string", "bad_text"}
    both |= {"huge_size", "negative_size", "mismatched_shape", "perturb_element", "perturb_orbit"}
    both |= {"change_electrons", "change_core_energy", "change_reference", "identity"}
    assert both <= json_names & hdf5_names
    assert {"delete_key", "retype_value", "duplicate_key", "reorder_keys"} <= json_names
    hdf5_only = {"delete_attribute", "retype_attribute", "soft_link", "hard_link_cycle", "external_link"}
    assert hdf5_only | {"external_storage", "huge_chunked", "repack"} <= hdf5_names


@pytest.mark.parametrize("notation", ["chemist", "physicist"])
def test_an_orbit_is_closed_under_the_symmetry_it_stands_for(notation, rng):
    for _ in range(20):
        index = tuple(int(i) for i in rng.integers(0, 4, 4))
        images = dict(orbit(index, notation, False))
        for image in images:
            assert set(dict(orbit(image, notation, False))) == set(images)
        assert all(sign == 1 for sign in images.values())


def test_an_antisymmetrized_orbit_carries_the_signs_of_the_exchanges():
    images = dict(orbit((0, 1, 2, 3), "physicist", True))
    assert images[(1, 0, 2, 3)] == -1 and images[(0, 1, 3, 2)] == -1 and images[(1, 0, 3, 2)] == 1
    assert images[(2, 3, 0, 1)] == 1


def test_expectations_follow_the_stakes_of_the_field():
    assert removal_expect(("electrons", "alpha"), 2) == FAIL
    assert removal_expect(("title",), "x") == EITHER
    assert removal_expect(("core_energy_parts", "frozen_core"), 0.0) == EITHER
    assert removal_expect(("core_energy_parts", "frozen_core"), -1.5) == FAIL
    assert changed_expect(("orbitals", "count"), 6, 6.0) == FAIL  # 1.0 is refused where an integer is required
    assert changed_expect(("core_energy",), 0.0, 0) == EITHER  # an integer is accepted where a number is
    assert changed_expect(("provenance", "basis"), "sto-3g", 3) == EITHER
    assert changed_expect(("provenance", "basis"), "sto-3g", [3]) == FAIL
    assert changed_expect(("references", 0, "energy"), -1.0, -1.1) == FAIL
    assert changed_expect(("references", 0, "energy"), -1.0, -1.0 + 1e-9) == EITHER


def test_json_bytes_are_judged_by_the_value_they_parse_to():
    good = b'{"title": "a", "core_energy": 1.5}'
    assert bytes_expect(good, b'{"title": "a", "core_energy": 15e-1}')[0] == PASS
    assert bytes_expect(good, b'{"title": "b", "core_energy": 1.5}')[0] == EITHER
    assert bytes_expect(good, b'{"title": "a", "core_energy": 1.6}')[0] == FAIL
    assert bytes_expect(good, b'{"title": "a", "core_energy": NaN}')[0] == FAIL
    assert bytes_expect(good, b'{"title": "a", "title": "a", "core_energy": 1.5}')[0] == FAIL
    assert bytes_expect(good, b'{"title": "a", "core_energy": 1.5')[0] == FAIL


@pytest.mark.parametrize(
    ("expect", "status", "stdout", "stderr", "verdict"),
    [
        (FAIL, 1, _report("fail"), "", "ok"),
        (FAIL, 2, _report("unreadable"), "error: x.h5: /orbitals@count: not an integer", "ok"),
        (FAIL, 0, _report("pass"), "", "silent_pass"),
        (EITHER, 0, _report("pass"), "", "ok"),
        (PASS, 1, _report("fail"), "", "false_alarm"),
        (FAIL, 2, "", "error: internal error (KeyError: 'x'); this is a bug in integrity", "traceback"),
        (FAIL, 70, "", "Traceback (most recent call last):", "traceback"),
        (FAIL, 2, "", "error: internal error (MemoryError: )", "memory"),
        (EITHER, 1, "not json", "", "traceback"),
    ],
)
def test_an_outcome_is_judged_by_status_output_and_expectation(expect, status, stdout, stderr, verdict):
    assert judge_output(expect, status, stdout, stderr)[0] == verdict


def test_a_plan_is_the_same_from_the_same_seed_and_starts_with_the_good_files():
    first = plan(FIXTURES, 60, seed=5)
    assert first == plan(FIXTURES, 60, seed=5)
    assert first != plan(FIXTURES, 60, seed=6)
    assert [c.mutation for c in first[: len(FIXTURES)]] == ["identity"] * len(FIXTURES)
    assert len({c.mutation for c in first}) > 10


@pytest.mark.slow
def test_a_child_that_hangs_is_killed_and_counted(tmp_path, monkeypatch):
    import integrity.testing.fuzz as fuzz

    def sleep_forever(target):
        import time

        time.sleep(3600)

    monkeypatch.setattr(fuzz, "_run_check", sleep_forever)
    cases = [Case(str(FIXTURES[0]), "identity", 0)]
    outcomes = list(run_cases(cases, time_limit=0.5, folder=tmp_path))
    assert [o.verdict for o in outcomes] == ["hang"]


def test_a_child_that_runs_out_of_memory_is_counted(tmp_path, monkeypatch):
    import integrity.testing.fuzz as fuzz

    def allocate(target):
        return np.ones(2**31).sum()  # 16 GiB, beyond the limit

    monkeypatch.setattr(fuzz, "_run_check", allocate)
    cases = [Case(str(FIXTURES[0]), "identity", 0)]
    outcomes = list(run_cases(cases, memory_limit=2**30, folder=tmp_path))
    assert [o.verdict for o in outcomes] == ["memory"]


@pytest.fixture(scope="module")
def seeded_run():
    summary = Summary()
    for outcome in run_cases(plan(FIXTURES, SEEDED_CASES, SEED), workers=2):
        summary.add(outcome)
    return summary


def _listed(outcomes) -> str:
    return "\n".join(f"{o.verdict} {o.case.name}: {o.damage}: {o.reason}" for o in outcomes)


@pytest.mark.slow
def test_the_seeded_run_judges_every_case(seeded_run):
    assert seeded_run.cases == SEEDED_CASES
    assert seeded_run.expected[FAIL] > SEEDED_CASES // 2  # most cases must fail: the run tests something
    # every bad verdict is asserted below (traceback and hang together)
    assert set(PROBLEMS) == {"memory", "silent_pass", "false_alarm", "harness", "traceback", "hang"}


@pytest.mark.slow
@pytest.mark.parametrize("verdict", ["false_alarm", "harness"])
def test_a_seeded_run_gives_no_case_of(verdict, seeded_run):
    found = [o for o in seeded_run.problems if o.verdict == verdict]
    assert not found, _listed(found)


@pytest.mark.slow
def test_a_seeded_run_gives_no_traceback_and_no_hang(seeded_run):
    # One test for both: a reader that follows a soft link to the root ends in a RecursionError
    # or in the time limit, depending on the machine's speed; either is a failure.
    found = [o for o in seeded_run.problems if o.verdict in ("traceback", "hang")]
    assert not found, _listed(found)


@pytest.mark.slow
def test_a_seeded_run_gives_no_memory_blow_up(seeded_run):
    found = [o for o in seeded_run.problems if o.verdict == "memory"]
    assert not found, _listed(found)


@pytest.mark.slow
def test_a_seeded_run_gives_no_silent_pass(seeded_run):
    found = [o for o in seeded_run.problems if o.verdict == "silent_pass"]
    assert not found, _listed(found)


@pytest.mark.slow
def test_a_file_on_which_the_hdf5_library_hangs_is_contained_by_the_commands_time_limit(tmp_path):
    # 36 zeroed bytes in the global heap: reading any variable-length string attribute loops
    # inside libhdf5, where no Python code runs. The child hangs; the real command, which reads
    # each file in a worker process, reports it unreadable within --timeout and goes on.
    case = Case(str(GOOD / "h4_chain_stretched_uhf.h5"), "zero_run", 1794433039)
    (outcome,) = run_cases([case], time_limit=5, folder=tmp_path)
    assert outcome.verdict == "contained", outcome.reason
    assert "the HDF5 library hung reading it" in outcome.reason
    summary = Summary()
    summary.add(outcome)
    assert summary.problems == []
