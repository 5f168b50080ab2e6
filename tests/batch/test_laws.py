"""Laws of the batch pieces that hold for every input: report round trips, glob matching, settings digests."""

from __future__ import annotations

import json

import pytest
from hypothesis import given
from hypothesis import strategies as st

from integrity.batch.cache import settings_digest
from integrity.batch.globs import FileRules, compile_glob
from integrity.checks.registry import Location, Result
from integrity.checks.report import FileReport, PassedOver

names = st.text(alphabet="abcdefghijklmnopqrstuvwxyz0123456789_-", min_size=1, max_size=8)
paths = st.lists(names, min_size=1, max_size=4).map("/".join)
numbers = st.one_of(st.none(), st.floats(allow_nan=False, allow_infinity=False))
locations = st.one_of(
    st.none(),
    st.builds(Location, field=names),
    st.builds(
        Location,
        array=st.sampled_from(["one_electron", "two_electron", "fock"]),
        index=st.lists(st.integers(0, 50), min_size=2, max_size=4).map(tuple),
        block=st.sampled_from([None, "alpha", "ab"]),
    ),
)
results = st.builds(
    Result,
    id=st.sampled_from(["schema", "checksum", "two_electron.symmetry", "energy.fci"]),
    status=st.sampled_from(["pass", "fail", "warn", "skip"]),
    message=st.text(min_size=1, max_size=40),
    value=numbers,
    limit=numbers,
    where=locations,
    details=st.dictionaries(names, st.one_of(st.integers(), st.text(max_size=5), numbers), max_size=3),
    fails_when=st.sampled_from([None, "above", "below"]),
)
reports = st.builds(
    FileReport,
    path=paths,
    status=st.sampled_from(["pass", "fail", "unreadable"]),
    results=st.lists(results, max_size=5),
    fingerprint=st.one_of(st.none(), st.just("sha256:" + "ab" * 32)),
    error=st.one_of(st.none(), st.text(min_size=1, max_size=30)),
)


@pytest.mark.slow
@given(reports)
def test_a_report_comes_back_from_its_dict_and_from_json(report):
    assert FileReport.from_dict(report.as_dict()) == report
    through_json = FileReport.from_dict(json.loads(json.dumps(report.as_dict())))
    assert json.dumps(through_json.as_dict()) == json.dumps(report.as_dict())


@given(paths, st.text(min_size=1, max_size=30))
def test_a_passed_over_entry_comes_back_from_its_dict(path, reason):
    entry = PassedOver(path, reason)
    assert PassedOver.from_dict(entry.as_dict()) == entry


@given(paths)
def test_a_literal_path_matches_itself_and_its_name_matches_anywhere(path):
    assert compile_glob(path).match(path)
    name = path.rsplit("/", 1)[-1]
    assert compile_glob(name).match(path)
    assert compile_glob("**").match(path)


@given(paths, names)
def test_a_folder_glob_matches_everything_under_it_and_nothing_beside_it(path, other):
    folder = path.split("/")[0]
    assert compile_glob(f"{folder}/").match(f"{folder}/{other}")
    assert not compile_glob(f"/{folder}/").match(f"{folder}{other}/x")


@given(paths)
def test_a_star_does_not_cross_folders(path):
    parts = path.split("/")
    pattern = "/".join(["*"] * len(parts))
    assert compile_glob(pattern).match(path)
    if len(parts) > 2:  # (a lone "*" has no "/": it matches a name in any folder)
        assert not compile_glob("/".join(["*"] * (len(parts) - 1))).match(path)


@given(paths)
def test_exclude_wins_over_include(path):
    rules = FileRules(".", include=(path,), exclude=(path,))
    assert rules.passed_over(path) is not None
    assert FileRules(".", include=(path,)).passed_over(path) is None


@given(st.dictionaries(names, st.one_of(st.integers(), names), max_size=6))
def test_the_settings_digest_ignores_key_order(settings):
    backwards = dict(reversed(list(settings.items())))
    assert settings_digest(settings) == settings_digest(backwards)
