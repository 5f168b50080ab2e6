"""The runner: a crashing check fails alone, NaN skips the numeric checks, broken files still get a verdict."""

from __future__ import annotations

import pytest
from locations import FIXTURES

from integrity.checks import check
from integrity.checks.registry import REGISTRY
from integrity.testing.hamiltonians import random_hamiltonian


def test_an_error_inside_one_check_becomes_its_fail_and_the_others_still_run(monkeypatch):
    spec = REGISTRY["two_electron.symmetry"]

    def broken(ham, ctx):
        raise ZeroDivisionError("deliberately")

    monkeypatch.setitem(REGISTRY, "two_electron.symmetry", spec.__class__(**{**spec.__dict__, "function": broken}))
    report = check(random_hamiltonian("restricted", 3, seed=1))
    results = {r.id: r for r in report.results}
    assert results["two_electron.symmetry"].status == "fail"
    assert "ZeroDivisionError: deliberately" in results["two_electron.symmetry"].message
    assert results["two_electron.positive"].status == "pass"
    assert report.status == "fail"


def test_nan_values_skip_the_numeric_checks_and_say_why():
    report = check(FIXTURES / "damaged" / "hubbard_ring6_nan.h5")
    results = {r.id: r for r in report.results}
    assert results["arrays.finite"].status == "fail"
    for check_id in ("two_electron.symmetry", "energy.fci", "energy.hf"):
        assert results[check_id].status == "skip"
    assert "NaN" in results["two_electron.symmetry"].message


def test_a_file_that_cannot_be_assembled_still_gets_a_verdict(tmp_path):
    import json

    document = json.loads((FIXTURES / "good" / "water_sto3g.json").read_text())
    document["two_electron"]["shape"] = [7, 7, 49]
    path = tmp_path / "bad.json"
    path.write_text(json.dumps(document))
    report = check(path)
    results = {r.id: r for r in report.results}
    assert report.status == "fail"
    assert results["arrays.shape"].status == "fail"
    assert "(7, 7, 7, 7)" in results["arrays.shape"].message
    assert results["energy.hf"].status == "skip"


@pytest.mark.parametrize("missing", ["one_electron", "two_electron"])
def test_a_missing_array_makes_the_file_unreadable(tmp_path, missing):
    import json

    document = json.loads((FIXTURES / "good" / "water_sto3g.json").read_text())
    del document[missing]
    path = tmp_path / "bad.json"
    path.write_text(json.dumps(document))
    report = check(path)
    assert report.status == "unreadable"
    assert missing in report.error
