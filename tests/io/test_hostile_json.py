"""JSON files built to break the reader: wrong types where the schema is the only guard,
numbers beyond binary64 or 64 bits, nesting deep enough to exhaust Python's stack,
arrays nested where a flat list belongs, repeated keys, symbolic links to nothing.
Each is written with plain json and must give a finding of the right check (``check``,
exit 1) or one line naming the field (``show``, exit 2), never a traceback.
"""

from __future__ import annotations

import json
import os

import pytest
from command_line import one_error_line
from plain_format import json_document, random_tree

from integrity.checks import check
from integrity.cli import main
from integrity.errors import ContainerError, FieldError
from integrity.io import load
from integrity.io.jsonfile import MAX_DEPTH
from integrity.io.schema import EXCERPT


def checked(runner, *paths, extra=()) -> tuple[int, list[dict]]:
    result = runner.invoke(
        main, ["check", "--format", "json", "--jobs", "1", "--no-policy", "--no-cache", *extra, *map(str, paths)]
    )
    assert "Traceback" not in result.output + result.stderr
    return result.exit_code, json.loads(result.stdout)["files"]


def result_of(report: dict, check_id: str) -> dict:
    return next(c for c in report["checks"] if c["id"] == check_id)


@pytest.fixture
def document(rng):
    return json_document(random_tree(rng, n=2, wide=False))


def written(tmp_path, text: str, name="h.json"):
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


def core_energy_as(document, token: str) -> str:
    """The document's text with core_energy written as ``token`` (text json cannot produce)."""
    document = dict(document, core_energy=0.125)
    text = json.dumps(document)
    assert text.count('"core_energy": 0.125') == 1
    return text.replace('"core_energy": 0.125', f'"core_energy": {token}')


SCHEMA_CASES = {
    "irreps an integer": (lambda d: d["orbitals"].update(irreps=3), "orbitals.irreps"),
    "point group a list": (lambda d: d["orbitals"].update(point_group=["C2v"]), "orbitals.point_group"),
    "an occupation an integer": (
        lambda d: d["references"][0]["occupation"].update(alpha=0),
        "references[0].occupation.alpha",
    ),
    "a shape holding true": (lambda d: d["one_electron"].update(shape=[2, True]), "one_electron.shape[1]"),
    "core energy parts a list": (lambda d: d.update(core_energy_parts=[1.0, 2.0]), "core_energy_parts"),
    "an orbital count of 400 digits": (lambda d: d["orbitals"].update(count=10**400), "orbitals.count"),
    "an electron count beyond 64 bits": (lambda d: d["electrons"].update(alpha=2**63), "electrons.alpha"),
}


@pytest.mark.slow
@pytest.mark.parametrize("name", list(SCHEMA_CASES))
def test_wrong_types_are_schema_findings_in_check_and_one_line_in_show(runner, tmp_path, document, name):
    mutate, field = SCHEMA_CASES[name]
    mutate(document)
    path = written(tmp_path, json.dumps(document))
    status, (report,) = checked(runner, path)
    assert status == 1 and report["status"] == "fail"
    schema = result_of(report, "schema")
    assert schema["status"] == "fail" and field in [p["field"] for p in schema["details"]["problems"]]
    line = one_error_line(runner, ["show", str(path)])
    assert line.startswith(f"error: {path}: {field}: "), line
    assert len(line) < 300
    for command in (["solve", str(path)], ["convert", str(path), str(tmp_path / "out.h5")]):
        assert field in one_error_line(runner, command)
    assert not (tmp_path / "out.h5").exists()


@pytest.mark.slow
@pytest.mark.parametrize("token", ["1e400", "-1e400", "9" * 400])
def test_a_number_beyond_binary64_in_metadata_is_a_schema_finding(runner, tmp_path, document, token):
    path = written(tmp_path, core_energy_as(document, token))
    _, (report,) = checked(runner, path)
    schema = result_of(report, "schema")
    assert schema["status"] == "fail" and schema["where"]["field"] == "core_energy"
    with pytest.raises(FieldError, match="core_energy"):
        load(path)


@pytest.mark.slow
def test_a_number_beyond_binary64_in_an_array_is_an_arrays_finite_finding(runner, tmp_path, document):
    document["two_electron"]["data"][5] = 0.125
    text = json.dumps(document).replace("0.125", "1e400", 1)
    path = written(tmp_path, text)
    _, (report,) = checked(runner, path)
    assert result_of(report, "schema")["status"] == "pass"
    finite = result_of(report, "arrays.finite")
    assert finite["status"] == "fail" and finite["where"]["array"] == "two_electron"
    assert finite["where"]["index"] == [0, 1, 0, 1]


@pytest.mark.slow
@pytest.mark.parametrize("token", ["NaN", "Infinity", "-Infinity"])
def test_non_json_tokens_stay_unreadable_with_their_position(runner, tmp_path, document, token):
    path = written(tmp_path, core_energy_as(document, token))
    status, (report,) = checked(runner, path)
    assert status == 2 and report["status"] == "unreadable"
    assert token.lstrip("-") in report["error"] and "column" in report["error"]


@pytest.mark.slow
@pytest.mark.parametrize("where", ["title", "electrons", "data"])
def test_json_nested_a_hundred_thousand_deep_is_refused_without_recursion(runner, tmp_path, document, where):
    deep = "[" * 100_000 + "]" * 100_000
    text = json.dumps(document | {"title": "@@"}).replace('"@@"', deep)
    if where != "title":
        text = json.dumps(document).replace('"alpha": 1', f'"alpha": {deep}', 1)
    if where == "data":
        text = json.dumps(document).replace('"data": [', f'"data": [{deep}, ', 1)
    path = written(tmp_path, text)
    with pytest.raises(ContainerError, match=f"nested deeper than {MAX_DEPTH} levels at line 1, column"):
        load(path)
    status, (report,) = checked(runner, path)
    assert status == 2 and "nested deeper" in report["error"]


def test_nesting_within_the_bound_and_brackets_inside_strings_are_read(tmp_path, document):
    document["provenance"]["note"] = "[[[[" * 40 + "{{{" * 40
    document["provenance"]["history"].append({"step": "x", "nested": [[[[[[[[1]]]]]]]]})
    path = written(tmp_path, json.dumps(document))
    assert load(path).provenance["note"].startswith("[[[[")


@pytest.mark.slow
def test_a_nested_list_where_a_flat_one_belongs_is_reported_briefly_and_fully_in_json(runner, tmp_path, rng):
    document = json_document(random_tree(rng, n=4, wide=False))
    data = document["two_electron"]["data"]
    document["two_electron"]["data"] = [data[i : i + 4] for i in range(0, len(data), 4)]  # 64 lists of 4
    path = written(tmp_path, json.dumps(document))
    _, (report,) = checked(runner, path)
    schema = result_of(report, "schema")
    problems = schema["details"]["problems"]
    assert len(problems) == 64 and schema["value"] == 64.0  # every problem listed, not "and 59 more"
    for problem in problems:
        assert problem["field"].startswith("two_electron.data[")
        quoted = problem["reason"].split("got ", 1)[1]
        assert len(quoted) <= EXCERPT
    line = one_error_line(runner, ["show", str(path)])
    assert len(line) < 300 and "two_electron.data[0]" in line
    text = runner.invoke(main, ["check", "--jobs", "1", "--no-policy", "--no-cache", str(path)]).stdout
    assert "and 59 more" in text and len(text) < 2000


@pytest.mark.slow
def test_a_repeated_key_is_refused_naming_the_key(runner, tmp_path, document):
    text = json.dumps(document)
    text = text[:-1] + ', "title": "second"}'
    assert text.count('"title"') == 2
    path = written(tmp_path, text)
    status, (report,) = checked(runner, path)
    assert status == 2 and "'title' appears twice" in report["error"]
    assert "'title' appears twice" in one_error_line(runner, ["show", str(path)])


# ------------------------------------------------------------------ symbolic links to nothing


@pytest.mark.slow
def test_a_dangling_link_named_on_the_command_line_is_reported_with_its_target(runner, tmp_path, document):
    good = written(tmp_path, json.dumps(document), "good.json")
    link = tmp_path / "gone.json"
    os.symlink(tmp_path / "moved-away.json", link)
    status, reports = checked(runner, link, good)
    assert status == 2
    by_path = {r["path"]: r for r in reports}
    assert by_path[str(link)]["status"] == "unreadable"
    assert "symbolic link to" in by_path[str(link)]["error"] and "moved-away.json" in by_path[str(link)]["error"]
    assert by_path[str(good)]["checks"], "the other file was judged"


@pytest.mark.slow
def test_a_dangling_link_met_in_a_folder_is_reported_not_skipped(runner, tmp_path, document):
    folder = tmp_path / "batch"
    folder.mkdir()
    written(folder, json.dumps(document), "a.json")
    os.symlink(folder / "nowhere.h5", folder / "b.h5")
    status, reports = checked(runner, folder)
    assert status == 2 and len(reports) == 2
    (gone,) = [r for r in reports if r["path"].endswith("b.h5")]
    assert gone["status"] == "unreadable" and "nowhere.h5, which does not exist" in gone["error"]
    assert check(folder / "b.h5").status == "unreadable"


@pytest.mark.slow
def test_a_nul_character_in_a_provenance_key_is_a_schema_finding(runner, tmp_path, document):
    document["provenance"]["ab\x00cd"] = 1
    path = written(tmp_path, json.dumps(document))
    status, (report,) = checked(runner, path)
    schema = result_of(report, "schema")
    assert status == 1 and schema["status"] == "fail" and "NUL" in schema["message"]


@pytest.mark.slow
def test_a_400_digit_integer_among_array_values_is_a_schema_finding(runner, tmp_path, document):
    document["two_electron"]["data"][3] = -(10**400)
    path = written(tmp_path, json.dumps(document))
    _, (report,) = checked(runner, path)
    schema = result_of(report, "schema")
    assert schema["status"] == "fail" and schema["where"]["field"] == "two_electron.data[3]"
    assert "64-bit" in one_error_line(runner, ["show", str(path)])
