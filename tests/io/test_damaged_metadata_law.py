"""A law over random damage to the JSON metadata of a valid file: ``integrity check``
exits 0, 1 or 2, never prints a traceback nor crashes a worker or a check (a damaged
file is a finding or refused by its reader), reports every file of the folder, and never
passes a damaged file whose fingerprinted content changed (a pass always carries the
original fingerprint: the stored checksum names the content that was approved).

Each example damages 8 copies of one fixture in 8 ways and checks them, with the intact
copy, in one run of the command: 40 examples, 320 damaged files.
"""

from __future__ import annotations

import json

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from integrity.cli import main
from integrity.energies import determinant_energy
from integrity.io import save
from integrity.model.fingerprint import fingerprint
from integrity.model.hamiltonian import Electrons, Reference
from integrity.testing import random_hamiltonian

pytestmark = pytest.mark.slow

COPIES = 8


def _fixture():
    """A file that passes every check: two orbitals, a stored checksum, an hf reference,
    parts of the core energy, a title and provenance."""
    ham = random_hamiltonian("restricted", 2, seed=3)
    ham = ham.replace(
        title="damage fixture",
        core_energy_parts={"nuclear_repulsion": 0.25, "frozen_core": 0.25},
        provenance={"producer": "law test"},
    )
    ham = ham.replace(
        references=(
            Reference(
                label="hf", method="hf", energy=float(determinant_energy(ham, ([0], [0]))), electrons=Electrons(1, 1)
            ),
        )
    )
    ham = ham.replace(checksum=fingerprint(ham))
    return ham, fingerprint(ham)


json_scalars = st.one_of(
    st.none(),
    st.booleans(),
    st.integers(min_value=-3, max_value=9),
    st.sampled_from([2**63, -(2**63) - 1, 10**400, 0.0, -0.0, 1e-320, 1e308]),
    st.floats(allow_nan=False, allow_infinity=False, width=64),
    st.text(max_size=6),
    st.sampled_from(["restricted", "chemist", "pairs", "D2h", "hartree", "integrity.hamiltonian"]),
)
json_values = st.recursive(
    json_scalars,
    lambda inner: st.one_of(st.lists(inner, max_size=3), st.dictionaries(st.text(max_size=4), inner, max_size=3)),
    max_leaves=6,
)
RAW_TOKENS = ["1e400", "-1e999", "9" * 400, "NaN", "Infinity", "[" * 5000 + "]" * 5000, "1.5e-400", "-0"]


def _paths(node, prefix=()):
    """Every (path, value) in a parsed document, containers included."""
    yield prefix, node
    if isinstance(node, dict):
        for key, value in node.items():
            yield from _paths(value, (*prefix, key))
    elif isinstance(node, list):
        for index, value in enumerate(node[:6]):
            yield from _paths(value, (*prefix, index))


@st.composite
def damaged_texts(draw, document: dict) -> str:
    """The document's text with one random change: a value replaced, a key removed or
    added, a container emptied, or a raw token json cannot write put in a number's place."""
    document = json.loads(json.dumps(document))
    places = [p for p, _ in _paths(document) if p]
    path = draw(st.sampled_from(places))
    parent = document
    for key in path[:-1]:
        parent = parent[key]
    last = path[-1]
    action = draw(st.sampled_from(["replace", "replace", "delete", "add", "raw", "wrap"]))
    if action == "delete":
        del parent[last]
    elif action == "add" and isinstance(parent, dict):
        parent[draw(st.text(min_size=1, max_size=5))] = draw(json_values)
    elif action == "wrap":
        parent[last] = [parent[last]]
    elif action == "raw":
        parent[last] = "@@RAW@@"
        return json.dumps(document).replace('"@@RAW@@"', draw(st.sampled_from(RAW_TOKENS)))
    else:
        parent[last] = draw(json_values)
    return json.dumps(document)


@pytest.fixture(scope="module")
def fixture(tmp_path_factory):
    ham, original = _fixture()
    folder = tmp_path_factory.mktemp("fixture")
    save(ham, folder / "intact.json", fingerprint_checksum=False)
    return json.loads((folder / "intact.json").read_text()), original


def test_the_fixture_passes_every_check(runner, fixture, tmp_path):
    document, original = fixture
    (tmp_path / "intact.json").write_text(json.dumps(document))
    result = runner.invoke(
        main, ["check", "--format", "json", "--jobs", "1", "--no-policy", "--no-cache", str(tmp_path)]
    )
    (report,) = json.loads(result.stdout)["files"]
    assert result.exit_code == 0 and report["status"] == "pass" and report["fingerprint"] == original
    statuses = {c["id"]: c["status"] for c in report["checks"]}
    assert "fail" not in statuses.values() and statuses["checksum"] == statuses["energy.hf"] == "pass", statuses


@settings(
    max_examples=40,
    derandomize=True,
    deadline=None,
    database=None,
    suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow, HealthCheck.data_too_large],
)
@given(data=st.data())
def test_damaged_metadata_never_crashes_the_check_nor_passes_with_changed_content(
    runner, fixture, tmp_path_factory, data
):
    document, original = fixture
    folder = tmp_path_factory.mktemp("damaged")
    (folder / "intact.json").write_text(json.dumps(document))
    for copy in range(COPIES):
        (folder / f"damaged-{copy}.json").write_text(data.draw(damaged_texts(document)))
    result = runner.invoke(main, ["check", "--format", "json", "--jobs", "1", "--no-policy", "--no-cache", str(folder)])
    assert result.exit_code in (0, 1, 2), (result.exit_code, result.output)
    assert "Traceback" not in result.stdout + result.stderr
    assert "internal error" not in result.stderr
    reports = {r["path"]: r for r in json.loads(result.stdout)["files"]}
    assert len(reports) == COPIES + 1
    assert reports[str(folder / "intact.json")]["status"] == "pass"
    for path, report in reports.items():
        assert report["status"] in ("pass", "fail", "unreadable")
        if report["status"] == "pass":
            assert report["fingerprint"] == original, (path, (folder / path).read_text()[:300])
        if report["status"] == "unreadable":  # refused by the reader, in one line, not by a crash
            assert "\n" not in report["error"] and len(report["error"]) < 600, report["error"]
            assert "worker process failed" not in report["error"], report["error"]
        for result in report.get("checks", ()):
            assert "the check itself failed" not in result["message"], (path, result["message"])
