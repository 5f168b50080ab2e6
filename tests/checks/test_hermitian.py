"""one_electron.hermitian fails on h_pq != conj(h_qp) and its `where` names the element.

Two damaged fixtures carry the fault and nothing else: a real file with one
element altered, and a complex file whose lower triangle was filled from the
upper one without conjugation. The check reports the largest deviation, the
first of its pair in row order (p <= q), and repairing the one fault makes
the file pass every check.
"""

from __future__ import annotations

import json

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from locations import DAMAGED

from integrity.checks import check
from integrity.cli import main
from integrity.io import load
from integrity.model import fingerprint
from integrity.testing.hamiltonians import random_hamiltonian

CHECK = "one_electron.hermitian"
ALTERED = DAMAGED / "lih_one_electron_altered.h5"
UNCONJUGATED = DAMAGED / "lih_complex_unconjugated_triangle.json"
#: (file, the element the check must name) for each fixture
CASES = [pytest.param(path, index, id=path.stem) for path, index in [(ALTERED, [2, 5]), (UNCONJUGATED, [0, 2])]]


def _result(report, check_id=CHECK):
    return next(r for r in report.results if r.id == check_id)


def _repaired(ham, h):
    fixed = ham.replace(one_electron=h)
    return fixed.replace(checksum=fingerprint(fixed))


@pytest.mark.parametrize(("path", "index"), CASES)
def test_the_check_fails_and_where_names_the_element_through_the_api(path, index):
    report = check(path)
    assert report.status == "fail"
    assert [r.id for r in report.failures] == [CHECK]
    result = _result(report)
    assert result.where.as_dict() == {"array": "one_electron", "index": index}
    h = np.asarray(load(path).one_electron)
    p, q = index
    assert result.value == pytest.approx(abs(h[p, q] - np.conj(h[q, p])), rel=1e-12)
    assert result.value > result.limit == 1e-10


@pytest.mark.slow
@pytest.mark.parametrize(("path", "index"), CASES)
def test_the_json_report_of_the_check_command_names_the_element(runner, path, index):
    result = runner.invoke(main, ["check", str(path), "--format", "json", "--no-policy", "--jobs", "1"])
    assert result.exit_code == 1, result.output
    entry = json.loads(result.stdout)["files"][0]
    assert entry["status"] == "fail"
    found = next(c for c in entry["checks"] if c["id"] == CHECK)
    assert found["status"] == "fail"
    assert found["where"] == {"array": "one_electron", "index": index}
    assert [c["id"] for c in entry["checks"] if c["status"] == "fail"] == [CHECK]


def test_the_altered_real_element_is_the_only_fault():
    ham = load(ALTERED)
    h = np.array(ham.one_electron)
    assert abs(h[2, 5] - h[5, 2]) == pytest.approx(1e-6, rel=1e-6)
    h[2, 5] = h[5, 2]
    assert check(_repaired(ham, h)).status == "pass"


def test_the_complex_file_breaks_only_conjugation_and_the_largest_break_is_where():
    ham = load(UNCONJUGATED)
    h = np.asarray(ham.one_electron)
    assert ham.is_complex
    assert np.array_equal(h, h.T)  # mirrored as if real: symmetric, not Hermitian
    deviation = np.abs(h - h.conj().T)
    upper = np.triu(deviation, 1)
    assert np.count_nonzero(upper == upper.max()) == 1  # a unique largest element: `where` is defined
    assert [int(i) for i in np.unravel_index(np.argmax(upper), upper.shape)] == [0, 2]
    hermitian = np.triu(h) + np.triu(h, 1).conj().T
    assert check(_repaired(ham, hermitian)).status == "pass"


@settings(max_examples=40, deadline=None)
@given(
    basis=st.sampled_from(["restricted", "unrestricted"]),
    n=st.integers(1, 5),
    complex_values=st.booleans(),
    seed=st.integers(0, 10**6),
    data=st.data(),
    magnitude=st.floats(1e-8, 1.0),
)
def test_one_altered_element_is_caught_and_where_points_at_its_pair(basis, n, complex_values, seed, data, magnitude):
    ham = random_hamiltonian(basis, n, complex_values=complex_values, seed=seed)
    p, q = data.draw(st.integers(0, n - 1)), data.draw(st.integers(0, n - 1))
    imaginary = complex_values and data.draw(st.booleans())
    if p == q and not imaginary:
        return  # a real change of a diagonal element keeps h Hermitian
    block = data.draw(st.sampled_from([0, 1])) if basis == "unrestricted" else None
    h = np.array(ham.one_electron)
    (h[block] if block is not None else h)[p, q] += magnitude * (1j if imaginary else 1.0)
    result = _result(check(ham.replace(one_electron=h), only=(CHECK,)))
    assert result.status == "fail"
    assert result.where.array == "one_electron"
    assert result.where.index == (min(p, q), max(p, q))
    assert result.where.block == {0: "alpha", 1: "beta"}.get(block)
    expected = 2 * magnitude if p == q else magnitude  # h_pp - conj(h_pp) doubles an imaginary change
    assert result.value == pytest.approx(expected, rel=1e-6, abs=1e-12)
