"""The fixture generator reproduces the committed fixtures, fingerprint for fingerprint."""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest

from integrity.io import load

FIXTURES = Path(__file__).resolve().parents[1] / "fixtures"


@pytest.fixture(scope="module")
def regenerated(tmp_path_factory):
    out = tmp_path_factory.mktemp("fixtures")
    subprocess.run([sys.executable, str(FIXTURES / "generate.py"), "--out", str(out)], check=True, capture_output=True)
    return out


def test_the_generator_writes_the_same_manifest_and_readme(regenerated):
    assert json.loads((regenerated / "manifest.json").read_text()) == json.loads(
        (FIXTURES / "manifest.json").read_text()
    )
    assert (regenerated / "README.md").read_text() == (FIXTURES / "README.md").read_text()


def _readable(entry):
    return entry["fails"] != ["(unreadable)"]


@pytest.mark.parametrize(
    "entry", json.loads((FIXTURES / "manifest.json").read_text())["files"], ids=lambda e: e["file"]
)
def test_each_regenerated_file_has_the_committed_fingerprint(regenerated, entry):
    committed, fresh = FIXTURES / entry["file"], regenerated / entry["file"]
    if not _readable(entry):
        assert fresh.read_bytes() == committed.read_bytes()
        return
    from integrity.fingerprint import fingerprint

    old, new = load(committed), load(fresh)
    assert fingerprint(new) == fingerprint(old)
    assert new.checksum == old.checksum
    assert [(r.label, r.energy) for r in new.references] == [(r.label, r.energy) for r in old.references]
    if committed.suffix == ".json":
        assert fresh.read_bytes() == committed.read_bytes()
