"""Malformed files are refused with one clear message naming the file and the field.

Every file here is written from scratch with plain ``json`` or ``h5py`` from a
random valid tree, then broken in one place. Each is checked twice: through
``integrity.load`` (an IntegrityError subclass naming the field) and through
``integrity show`` (exit status 2, nothing on stdout, one line on stderr).
"""

from __future__ import annotations

import json
import re
import tracemalloc
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path

import h5py
import numpy as np
import pytest
from plain_format import (
    json_document,
    random_tree,
    write_plain_hdf5,
    write_plain_json,
)

from integrity.cli import main
from integrity.errors import BudgetError, ContainerError, FieldError, IntegrityError
from integrity.io import load


@dataclass(frozen=True)
class Case:
    """One broken file: how to make it, and what its message must name."""

    name: str
    container: str  # "json" or "h5"
    make: Callable[[Path, np.random.Generator], Path]
    fragments: tuple[str, ...]  # each must appear in the message
    error: type = IntegrityError
    marks: tuple = ()


CASES: list[Case] = []


def _get(tree, dotted):
    node = tree
    parts = dotted.split(".")
    for part in parts[:-1]:
        node = node[int(part)] if isinstance(node, list) else node[part]
    return node, parts[-1]


def delete(dotted):
    def mutate(tree):
        node, key = _get(tree, dotted)
        del node[key]

    return mutate


def put(dotted, value):
    def mutate(tree):
        node, key = _get(tree, dotted)
        node[int(key) if isinstance(node, list) else key] = value

    return mutate


def tree_case(
    name,
    mutate,
    json_field,
    h5_field,
    *,
    tree=None,
    also=(),
    error=IntegrityError,
    containers=("json", "h5"),
    json_marks=(),
    h5_marks=(),
):
    """A fault expressible in both containers: mutate a random valid tree, write it plainly."""
    options = {"optional": True} | (tree or {})

    def maker(container):
        def make(folder: Path, rng) -> Path:
            content = random_tree(rng, **options)
            mutate(content)
            path = folder / f"broken.{container}"
            if container == "json":
                write_plain_json(content, path, indent=1)
            else:
                write_plain_hdf5(content, path, booleans="bool")
            return path

        return make

    for container, field, marks in (("json", json_field, json_marks), ("h5", h5_field, h5_marks)):
        if container in containers:
            CASES.append(Case(name, container, maker(container), (field, *also), error, marks))


def json_case(name, fragments, *, doc=None, text=None, tree=None, error=IntegrityError, marks=()):
    """A fault only JSON can have: change the encoded document or the text itself."""
    options = {"optional": True} | (tree or {})

    def make(folder: Path, rng) -> Path:
        document = json_document(random_tree(rng, **options))
        if doc is not None:
            doc(document)
        body = json.dumps(document, indent=1)
        if text is not None:
            body = text(body)
        path = folder / "broken.json"
        path.write_text(body, encoding="utf-8")
        return path

    CASES.append(Case(name, "json", make, tuple(fragments), error, marks))


def h5_case(name, fragments, edit, *, error=IntegrityError, marks=()):
    """A fault only HDF5 can have: write a valid file plainly, then damage it."""

    def make(folder: Path, rng) -> Path:
        path = folder / "broken.h5"
        write_plain_hdf5(random_tree(rng, optional=True), path)
        edit(path, rng)
        return path

    CASES.append(Case(name, "h5", make, tuple(fragments), error, marks))


# identity and version
tree_case(
    "unknown format_version",
    put("format_version", 2),
    "format_version",
    "/@format_version",
    error=ContainerError,
    also=("2",),
)
tree_case(
    "another format",
    put("format", "chemistry.molecule"),
    "format",
    "/@format",
    error=ContainerError,
    also=("chemistry.molecule",),
)
tree_case("energy unit not hartree", put("energy_unit", "eV"), "energy_unit", "/@energy_unit", also=("eV",))
# required fields
for dotted, location in [
    ("format_version", "/@format_version"),
    ("energy_unit", "/@energy_unit"),
    ("orbitals", "/orbitals"),
    ("orbitals.count", "/orbitals@count"),
    ("orbitals.basis", "/orbitals@basis"),
    ("electrons.alpha", "/electrons@alpha"),
    ("core_energy", "/@core_energy"),
    ("one_electron", "/one_electron"),
    ("two_electron.notation", "/two_electron@notation"),
]:
    tree_case(f"missing {dotted}", delete(dotted), dotted, location)
tree_case("missing two_electron", delete("two_electron"), "two_electron", "/two_electron", also=("missing",))
# wrong types
tree_case("count as a string", put("orbitals.count", "2"), "orbitals.count", "/orbitals@count", also=("'2'",))
tree_case("electrons as a float", put("electrons.alpha", 1.0), "electrons.alpha", "/electrons@alpha", also=("1.0",))
tree_case("core energy as a boolean", put("core_energy", True), "core_energy", "/@core_energy", also=("True",))
tree_case(
    "reference energy as a string",
    put("references.0.energy", "low"),
    "references[0].energy",
    "/references/hf@energy",
    also=("low",),
)
# values out of range
tree_case("zero orbitals", put("orbitals.count", 0), "orbitals.count", "/orbitals@count")
tree_case("negative electrons", put("electrons.beta", -1), "electrons.beta", "/electrons@beta", also=("-1",))
tree_case(
    "negative tolerance",
    put("references.0.tolerance", -1e-6),
    "references[0].tolerance",
    "/references/hf@tolerance",
    also=("-1e-06",),
)
tree_case(
    "irrep of a reference beyond 7",
    put("references.1.irrep", 8),
    "references[1].irrep",
    "/references/fci@irrep",
    also=("8",),
)
# bad enumerations
for dotted, value, location in [
    ("orbitals.basis", "general", "/orbitals@basis"),
    ("two_electron.notation", "dirac", "/two_electron@notation"),
    ("two_electron.storage", "sparse", "/two_electron@storage"),
    ("orbitals.point_group", "C3v", "/orbitals@point_group"),
    ("two_electron.interaction", "yukawa", "/two_electron@interaction"),
]:
    tree_case(f"{dotted} {value}", put(dotted, value), dotted, location, also=(value,))
tree_case(
    "spin_layout mixed",
    put("orbitals.spin_layout", "mixed"),
    "orbitals.spin_layout",
    "/orbitals@spin_layout",
    tree={"basis": "spin-orbital", "n": 2},
    also=("mixed",),
)
# cross-field rules of the orbitals
tree_case(
    "spin-orbital without spin_layout",
    delete("orbitals.spin_layout"),
    "orbitals.spin_layout",
    "/orbitals@spin_layout",
    tree={"basis": "spin-orbital", "n": 2},
)
tree_case(
    "restricted with a spin_layout",
    put("orbitals.spin_layout", "blocked"),
    "orbitals",
    "/orbitals",
    also=("spin_layout",),
)
tree_case(
    "odd number of spin orbitals",
    lambda t: None,
    "orbitals.count",
    "/orbitals@count",
    tree={"basis": "spin-orbital", "n": 3},
    also=("even",),
)
tree_case(
    "irreps of the wrong length", put("orbitals.irreps", [0, 1, 1]), "orbitals.irreps", "/orbitals/irreps", also=("3",)
)
tree_case(
    "irrep beyond the point group", put("orbitals.irreps", [0, 4]), "orbitals.irreps", "irreps", also=("C2v", "4")
)
# shapes, storage and notation
tree_case(
    "one_electron of the wrong shape",
    lambda t: t.update(one_electron=np.zeros((3, 3))),
    "one_electron",
    "/one_electron",
    also=("(2, 2)", "(3, 3)"),
)
tree_case(
    "pairs of the wrong shape",
    lambda t: t["two_electron"].update(array=np.zeros((16, 16))),
    "two_electron",
    "/two_electron",
    tree={"n": 4, "storage": "pairs"},
    also=("storage 'pairs' needs shape (10, 10) for 4 orbitals, got (16, 16)",),
)
tree_case(
    "unique of the wrong length",
    lambda t: t["two_electron"].update(array=np.zeros(5)),
    "two_electron",
    "/two_electron",
    tree={"n": 2, "storage": "unique"},
    also=("(6,)", "(5,)"),
)
tree_case(
    "packed physicist",
    put("two_electron.notation", "physicist"),
    "two_electron.notation",
    "/two_electron@notation",
    tree={"storage": "pairs"},
    also=("chemist",),
)
tree_case(
    "packed complex",
    lambda t: t["two_electron"].update(array=t["two_electron"]["array"] * (1 + 1j)),
    "two_electron.storage",
    "/two_electron@storage",
    tree={"storage": "pairs"},
    also=("complex",),
)
tree_case(
    "unique unrestricted",
    lambda t: t["two_electron"].update(storage="unique"),
    "two_electron.storage",
    "/two_electron@storage",
    tree={"basis": "unrestricted", "storage": "pairs"},
    also=("unique",),
)
tree_case(
    "antisymmetrized chemist",
    put("two_electron.antisymmetrized", True),
    "two_electron.notation",
    "/two_electron@notation",
    tree={"basis": "spin-orbital", "n": 2},
    also=("physicist",),
)
# references and checksum
tree_case(
    "duplicate reference labels",
    put("references.1.label", "hf"),
    "references[1].label",
    "",
    also=("hf", "unique"),
    containers=("json",),
)
tree_case(
    "occupation index out of range",
    put("references.0.occupation.alpha", [5]),
    "references[0].occupation.alpha",
    "/references/hf/occupation/alpha",
    also=("5",),
)
tree_case(
    "an orbital occupied twice",
    put("references.0.occupation.alpha", [0, 0]),
    "references[0].occupation.alpha",
    "/references/hf/occupation/alpha",
    also=("unique",),
)
tree_case(
    "a negative occupation index",
    put("references.0.occupation.alpha", [-1]),
    "references[0].occupation.alpha",
    "/references/hf/occupation/alpha",
    also=("minimum 0",),
)
tree_case(
    "an irrep beyond 7", put("orbitals.irreps", [0, 9]), "orbitals.irreps", "/orbitals/irreps", also=("maximum 7",)
)
tree_case("malformed checksum", put("checksum", "sha256:XYZ"), "checksum", "/@checksum", also=("sha256:XYZ",))
tree_case(
    "a misspelt key",
    lambda t: t.update(core_enrgy=t["core_energy"]),
    "core_enrgy",
    "/@core_enrgy",
    also=("unexpected",),
)

# JSON only
# with indent=1, line 4 is ' "energy_unit": "hartree",'; without its comma the parser stops at
# the next key, line 5, column 2
json_case(
    "invalid JSON syntax",
    ["line 5, column 2", "delimiter"],
    text=lambda s: s.replace('"hartree",', '"hartree"', 1),
    error=ContainerError,
)
json_case(
    "a NaN token",
    ["NaN"],
    text=lambda s: re.sub(r'"core_energy": [^,]+', '"core_energy": NaN', s),
    error=ContainerError,
)
json_case(
    "an Infinity token",
    ["Infinity"],
    text=lambda s: re.sub(r'"energy": [^,\n]+', '"energy": -Infinity', s, count=1),
    error=ContainerError,
)
json_case(
    "a duplicate key",
    ["core_energy", "twice"],
    error=ContainerError,
    text=lambda s: s.replace('"core_energy":', '"core_energy": 1.5, "core_energy":', 1),
)
json_case("data shorter than the shape", ["one_electron.data", "4", "3"], doc=lambda d: d["one_electron"]["data"].pop())
json_case(
    "a string among the numbers",
    ["two_electron.data[5]", "'x'"],
    doc=lambda d: d["two_electron"]["data"].__setitem__(5, "x"),
)
json_case(
    "complex values with only 'real'",
    ["one_electron", "imag"],
    doc=lambda d: d["one_electron"].update(real=d["one_electron"].pop("data")),
)
json_case(
    "complex values with 'real' and 'data'",
    ["two_electron", "real"],
    doc=lambda d: d["two_electron"].update(real=list(d["two_electron"]["data"])),
)
json_case("a shape that is not a list", ["one_electron.shape"], doc=lambda d: d["one_electron"].update(shape="2x2"))
json_case("a top-level list", ["object"], text=lambda s: f"[{s}]", error=ContainerError)
json_case(
    "a million orbitals declared in JSON",
    ["one_electron", "1000000000000"],
    doc=lambda d: d["one_electron"].update(shape=[10**6, 10**6]),
)


# HDF5 only
def _replace_dataset(name, values):
    def edit(path, rng):
        with h5py.File(path, "r+") as handle:
            attrs = dict(handle[name].attrs)
            del handle[name]
            dataset = handle.create_dataset(name, data=values(rng))
            dataset.attrs.update(attrs)

    return edit


h5_case(
    "a float32 dataset",
    ["/one_electron", "float32"],
    _replace_dataset("one_electron", lambda rng: rng.standard_normal((2, 2)).astype(np.float32)),
)
h5_case(
    "an integer dataset",
    ["/two_electron", "int64"],
    _replace_dataset("two_electron", lambda rng: rng.integers(0, 9, size=(2, 2, 2, 2))),
)
h5_case(
    "a text file named .h5",
    ["not an HDF5 file"],
    lambda path, rng: path.write_text("format: integrity.hamiltonian\n" * 20),
    error=ContainerError,
)
h5_case("an empty file", ["not an HDF5 file"], lambda path, rng: path.write_bytes(b""), error=ContainerError)
h5_case(
    "a truncated file",
    ["truncated"],
    lambda path, rng: path.write_bytes(path.read_bytes()[: path.stat().st_size // 2]),
    error=ContainerError,
)
h5_case("a missing two_electron dataset", ["/two_electron", "missing"], lambda path, rng: _delete(path, "two_electron"))
h5_case(
    "a missing occupation dataset",
    ["/references/hf/occupation", "beta"],
    lambda path, rng: _delete(path, "references/hf/occupation/beta"),
)


def _delete(path, name):
    with h5py.File(path, "r+") as handle:
        del handle[name]


def _declare_a_million_orbitals(path, rng):
    """Datasets with a huge shape and nothing written: chunked, so nothing is allocated."""
    n = 10**6
    with h5py.File(path, "r+") as handle:
        handle["orbitals"].attrs["count"] = n
        del handle["orbitals/irreps"]
        for name, shape, chunks in (("one_electron", (n, n), (64, 64)), ("two_electron", (n, n, n, n), (1, 1, 8, 8))):
            attrs = dict(handle[name].attrs)
            del handle[name]
            handle.create_dataset(name, shape=shape, dtype="<f8", chunks=chunks).attrs.update(attrs)
        del handle["references"]


h5_case(
    "a million orbitals",
    ["/one_electron", "(1000000, 1000000)", "TiB", "--memory"],
    _declare_a_million_orbitals,
    error=BudgetError,
)


def _params():
    for case in CASES:
        yield pytest.param(case, id=f"{case.container}: {case.name}", marks=case.marks)


def test_there_are_at_least_thirty_distinct_faults_in_each_container():
    names = {"json": set(), "h5": set()}
    for case in CASES:
        names[case.container].add(case.name)
    assert len(names["json"]) >= 30 and len(names["h5"]) >= 30


@pytest.mark.parametrize("case", list(_params()))
def test_a_malformed_file_is_refused_naming_the_field(tmp_path, rng, case, runner):
    path = case.make(tmp_path, rng)
    with pytest.raises(IntegrityError) as caught:
        load(path)
    error = caught.value
    assert isinstance(error, case.error), f"{type(error).__name__} is not a {case.error.__name__}"
    message = str(error)
    assert message.startswith(f"{path}: "), message
    body = message[len(f"{path}: ") :]
    for fragment in case.fragments:
        assert fragment in body, f"{fragment!r} not in {body!r}"
    assert "\n" not in message

    result = runner.invoke(main, ["show", str(path)])
    assert result.exit_code == 2, result.output
    assert result.stdout == ""
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1, result.stderr
    assert lines[0] == f"error: {message}"


def test_a_million_orbitals_are_refused_without_allocating_the_arrays(tmp_path, rng):
    path = tmp_path / "huge.h5"
    write_plain_hdf5(random_tree(rng), path)
    _declare_a_million_orbitals(path, rng)
    assert path.stat().st_size < 10**6
    tracemalloc.start()
    try:
        with pytest.raises(BudgetError) as caught:
            load(path)
        _, peak = tracemalloc.get_traced_memory()
    finally:
        tracemalloc.stop()
    assert peak < 50 * 2**20, f"{peak} bytes were allocated while refusing the file"
    error = caught.value
    assert error.field == "/one_electron"
    assert error.needed == 8 * 10**12 and error.budget == 4 * 2**30
    assert not isinstance(error, FieldError)


def test_a_genuine_file_beyond_the_memory_budget_is_refused_naming_the_size(tmp_path, rng, runner):
    path = tmp_path / "five.h5"
    write_plain_hdf5(random_tree(rng, n=5, wide=False), path)
    result = runner.invoke(main, ["show", str(path), "--memory", "4KiB"])
    assert result.exit_code == 2
    assert "/two_electron" in result.stderr and "(5, 5, 5, 5)" in result.stderr
    assert f"{5**4 * 8 / 2**10:.3g} KiB" in result.stderr  # 625 float64 values
    assert runner.invoke(main, ["show", str(path), "--memory", "1MiB"]).exit_code == 0


@pytest.mark.parametrize(
    ("mutate", "location"),
    [
        pytest.param(put("orbitals.irreps", [0, 4]), "/orbitals/irreps", id="irrep beyond C2v"),
        pytest.param(put("orbitals.irreps", [0, 9]), "/orbitals/irreps", id="irrep beyond 7"),
        pytest.param(
            put("references.0.occupation.alpha", [-1]), "/references/hf/occupation/alpha", id="negative occupation"
        ),
    ],
)
def test_an_element_of_a_small_hdf5_dataset_is_located_in_that_dataset(tmp_path, rng, mutate, location):
    tree = random_tree(rng)
    mutate(tree)
    write_plain_hdf5(tree, tmp_path / "h.h5")
    with pytest.raises(FieldError) as caught:
        load(tmp_path / "h.h5")
    assert caught.value.field in (location, f"{location}[0]", f"{location}[1]"), caught.value.field


@pytest.mark.parametrize("token", ["NaN", "Infinity"])
def test_a_nan_token_is_reported_with_its_line_and_column(tmp_path, rng, token):
    text = json.dumps(json_document(random_tree(rng)), indent=1)
    text = re.sub(r'"core_energy": [^,]+', f'"core_energy": {token}', text)
    (tmp_path / "h.json").write_text(text)
    with pytest.raises(ContainerError, match=r"line \d+, column \d+"):
        load(tmp_path / "h.json")


def test_a_duplicate_key_is_reported_with_its_line_and_column(tmp_path, rng):
    text = json.dumps(json_document(random_tree(rng)), indent=1)
    text = text.replace('"core_energy":', '"core_energy": 1.5, "core_energy":', 1)
    (tmp_path / "h.json").write_text(text)
    with pytest.raises(ContainerError, match=r"line \d+, column \d+"):
        load(tmp_path / "h.json")


def test_show_reports_finite_norms_for_values_near_the_float_range_limit(tmp_path, rng, runner):
    tree = random_tree(rng, n=3, wide=False)
    tree["one_electron"] = tree["one_electron"] * 1e300
    tree["two_electron"]["array"] = tree["two_electron"]["array"] * 1e300
    write_plain_hdf5(tree, tmp_path / "big.h5")
    result = runner.invoke(main, ["show", str(tmp_path / "big.h5")])
    assert result.exit_code == 0, result.exception
    assert "inf" not in result.stdout


def test_a_json_text_beyond_the_memory_budget_is_refused_before_it_is_parsed(tmp_path, rng):
    path = tmp_path / "h.json"
    write_plain_json(random_tree(rng, n=4), path)
    size = path.stat().st_size
    with pytest.raises(BudgetError) as caught:
        load(path, memory=size)  # parsing needs a few bytes of memory per byte of text
    assert str(path) in str(caught.value) and caught.value.budget == size
    assert load(path, memory=100 * size).n == 4


def test_a_json_text_beyond_the_memory_budget_is_refused_naming_the_file(tmp_path, rng, runner):
    path = tmp_path / "h.json"
    write_plain_json(random_tree(rng, n=4), path)
    result = runner.invoke(main, ["show", str(path), "--memory", "1KiB"])
    assert result.exit_code == 2
    assert str(path) in result.stderr
