"""Every good fixture passes; every damaged one fails exactly the checks fixtures/README.md names."""

from __future__ import annotations

import json

import pytest
from locations import FIXTURES

from integrity.checks import check

pytestmark = pytest.mark.slow  # regenerates or checks whole fixtures

MANIFEST = json.loads((FIXTURES / "manifest.json").read_text())
#: warnings a good fixture may carry, with the reason fixtures/README.md gives
ALLOWED_WARNINGS = {"good/hubbard_ring6_u4.json": {"two_electron.notation"}}

GOOD = [e for e in MANIFEST["files"] if e["fault"] is None]
DAMAGED = [e for e in MANIFEST["files"] if e["fault"] is not None]


def test_the_readme_lists_every_file_of_the_manifest():
    readme = (FIXTURES / "README.md").read_text()
    for entry in MANIFEST["files"]:
        assert f"`{entry['file']}`" in readme
        for check_id in entry["fails"]:
            if check_id != "(unreadable)":
                assert f"`{check_id}`" in readme


def test_the_manifest_names_every_file_in_the_fixture_folders():
    on_disk = {str(p.relative_to(FIXTURES)) for p in FIXTURES.glob("*/*") if p.suffix in (".h5", ".json")}
    assert on_disk == {e["file"] for e in MANIFEST["files"]}


@pytest.mark.parametrize("entry", GOOD, ids=[e["file"] for e in GOOD])
def test_a_good_fixture_passes_every_check(entry):
    report = check(FIXTURES / entry["file"])
    assert report.status == "pass", [r.message for r in report.failures]
    warned = {r.id for r in report.results if r.status == "warn"}
    assert warned <= ALLOWED_WARNINGS.get(entry["file"], set())


@pytest.mark.parametrize("entry", DAMAGED, ids=[e["file"] for e in DAMAGED])
def test_a_damaged_fixture_fails_exactly_the_checks_the_readme_names(entry):
    report = check(FIXTURES / entry["file"])
    if entry["fails"] == ["(unreadable)"]:
        assert report.status == "unreadable"
        assert entry["message_mentions"] in report.error
        return
    assert report.status == "fail"
    assert sorted(r.id for r in report.failures) == sorted(entry["fails"])
    messages = " ".join(r.message + " " + (str(r.where) if r.where else "") for r in report.failures)
    assert entry["message_mentions"] in messages
