"""docs/format.md is the format's contract: it documents every schema property, and its
worked example is right.

The worked example is read out of the document itself (the marked code blocks and the digest
table), so the document, the schema and the code cannot drift apart unnoticed: the JSON file is
written exactly as printed, the HDF5 file is written from it with plain h5py following the
document's mapping table, both are checked by the command line, and the header bytes, the
part-by-part digests and the fingerprint are recomputed with json, struct and hashlib alone.
The energies are checked against the closed form of a two-orbital, two-electron full CI (the
Hartree-Fock determinant mixed with the doubly excited one through the exchange integral;
Source: Szabo and Ostlund, *Modern Quantum Chemistry*, minimal-basis H2, chapter 4 (from memory)).
"""

from __future__ import annotations

import hashlib
import json
import math
import re
import struct
from pathlib import Path

import h5py
import numpy as np
import pytest
from documents import FORMAT, example, example_text, marked_block, read, write_example_hdf5, write_example_json
from locations import SCHEMAS

from integrity.cli import main

SCHEMA = SCHEMAS / "hamiltonian.schema.json"
ENTRY_POINTS = ("json_document", "hdf5_tree")


def document() -> str:
    return read(FORMAT)


def digest_table(text: str) -> list[tuple[int, str]]:
    """(length, SHA-256) of each row of the table marked ``worked-example:digests``."""
    start = text.index("<!-- worked-example:digests -->")
    rows = re.findall(r"^\| parts? 1[^|]*\| (\d+) \| `([0-9a-f]{64})` \|$", text[start:], re.MULTILINE)
    assert len(rows) == 4, f"expected 4 digest rows (parts 1, 1-2, 1-3, 1-4), found {rows}"
    return [(int(length), digest) for length, digest in rows]


# ---------------------------------------------------------------- every schema property is documented


def schema_properties(schema: dict) -> dict[str, set[str]]:
    """Every property name under any ``properties`` in the schema, mapped to where it occurs.

    Walks all of ``$defs`` recursively (``allOf``, ``if``/``then``, ``items``, nested
    objects), so both entry points, ``json_document`` and ``hdf5_tree``, are covered.
    """
    found: dict[str, set[str]] = {}

    def walk(node, where: str) -> None:
        if isinstance(node, dict):
            for key, value in node.items():
                if key == "properties" and isinstance(value, dict):
                    for name, sub in value.items():
                        found.setdefault(name, set()).add(where)
                        walk(sub, f"{where}/{name}")
                else:
                    walk(value, f"{where}/{key}")
        elif isinstance(node, list):
            for i, item in enumerate(node):
                walk(item, f"{where}[{i}]")

    for name, definition in schema["$defs"].items():
        walk(definition, f"#/$defs/{name}")
    return found


def undocumented(names, text: str) -> list[str]:
    """The names that never appear in the text as `name` in backticks."""
    return sorted(name for name in names if f"`{name}`" not in text)


SCHEMA_PROPERTIES = schema_properties(json.loads(SCHEMA.read_text(encoding="utf-8")))


@pytest.mark.parametrize("name", sorted(SCHEMA_PROPERTIES))
def test_every_schema_property_is_documented(name):
    assert not undocumented([name], document()), (
        f"schema property {name!r} (at {sorted(SCHEMA_PROPERTIES[name])[0]}) is not documented in "
        f"docs/format.md as `{name}`"
    )


def test_the_walk_reaches_both_entry_points_and_nested_rules():
    walked = {where.split("/")[2] for places in SCHEMA_PROPERTIES.values() for where in places}
    assert set(ENTRY_POINTS) <= walked
    # nested: array parts, reference fields inside items, the HDF5 descriptor, a property named in an if/then rule
    for name in ("real", "imag", "two_s", "label", "dtype", "antisymmetrized", "history", "occupation"):
        assert name in SCHEMA_PROPERTIES


def test_an_undocumented_property_would_be_caught():
    text = "the field `count` and the field `basis`"
    assert undocumented(["count", "basis", "colour"], text) == ["colour"]
    assert undocumented(["count"], "count without backticks") == ["count"]


def schema_constants(schema: dict) -> set[str]:
    """Every string the schema allows by ``enum`` or ``const`` (basis names, notations, point groups, ...)."""
    found: set[str] = set()

    def walk(node) -> None:
        if isinstance(node, dict):
            for key, value in node.items():
                if key == "enum":
                    found.update(v for v in value if isinstance(v, str))
                elif key == "const" and isinstance(value, str):
                    found.add(value)
                else:
                    walk(value)
        elif isinstance(node, list):
            for item in node:
                walk(item)

    walk(schema["$defs"])
    return found


@pytest.mark.parametrize("value", sorted(schema_constants(json.loads(SCHEMA.read_text(encoding="utf-8")))))
def test_every_allowed_value_of_the_schema_is_documented(value):
    text = document()
    assert f"`{value}`" in text or f'"{value}"' in text, f"{value!r} is allowed by the schema but not in docs/format.md"


# ---------------------------------------------------------------- the worked example, independently


def header_of(doc: dict) -> bytes:
    """Part 1 as the document's recipe states it."""
    orbitals = doc["orbitals"]
    header = {
        "format_version": doc["format_version"],
        "orbitals": {
            "count": orbitals["count"],
            "basis": orbitals["basis"],
            "spin_layout": orbitals.get("spin_layout"),
            "point_group": orbitals.get("point_group"),
            "irreps": orbitals.get("irreps"),
        },
        "electrons": {"alpha": doc["electrons"]["alpha"], "beta": doc["electrons"]["beta"]},
    }
    return json.dumps(header, sort_keys=True, separators=(",", ":"), ensure_ascii=False).encode("utf-8")


def parts_of(doc: dict) -> list[bytes]:
    """The four parts, with struct alone (the example is real, restricted, dense chemist)."""
    one, two = doc["one_electron"], doc["two_electron"]
    assert (two["notation"], two["storage"], doc["orbitals"]["basis"]) == ("chemist", "dense", "restricted")
    return [
        header_of(doc),
        struct.pack("<d", doc["core_energy"]),
        struct.pack(f"<{len(one['data'])}d", *one["data"]),
        struct.pack(f"<{len(two['data'])}d", *two["data"]),
    ]


def test_the_printed_header_bytes_follow_the_recipe():
    printed = marked_block(document(), "worked-example:header").encode("utf-8")
    assert printed == header_of(example())
    assert f"Part 1 is these {len(printed)} bytes" in document()


def test_the_printed_part_bytes_and_digests_follow_the_recipe():
    text = " ".join(document().split())
    parts = parts_of(example())
    assert f"`{parts[1].hex()}`" in text, "part 2 (core_energy) bytes"
    assert f"`{parts[2].hex()}`" in text, "part 3 (one_electron) bytes"
    hashed = b""
    for part, (length, printed) in zip(parts, digest_table(document()), strict=True):
        hashed += part
        assert (len(hashed), hashlib.sha256(hashed).hexdigest()) == (length, printed)
    fingerprint = "sha256:" + hashlib.sha256(hashed).hexdigest()
    assert example()["checksum"] == fingerprint
    assert f"so the fingerprint is `{fingerprint}`" in text


def test_the_project_computes_the_same_header_and_fingerprint(tmp_path):
    from integrity.io import load
    from integrity.model.fingerprint import fingerprint, header_bytes

    path = tmp_path / "h2.json"
    ham = load(write_example_json(path))
    assert header_bytes(ham) == marked_block(document(), "worked-example:header").encode("utf-8")
    assert fingerprint(ham) == example()["checksum"]


def test_the_example_energies_are_the_two_determinant_closed_form():
    doc = example()
    h = doc["one_electron"]["data"]
    g = doc["two_electron"]["data"]  # (pq|rs) at 8p + 4q + 2r + s
    core = doc["core_energy"]
    h00, h11 = h[0], h[3]
    j00, j11, k = g[0], g[15], g[0b0101]
    hf = core + 2 * h00 + j00
    delta = 0.5 * ((2 * h11 + j11) - (2 * h00 + j00))
    fci = hf + delta - math.sqrt(delta**2 + k**2)
    energies = {ref["method"]: ref["energy"] for ref in doc["references"]}
    assert energies["hf"] == pytest.approx(hf, abs=1e-12)
    assert energies["fci"] == pytest.approx(fci, abs=1e-12)
    # Source: Szabo and Ostlund, Modern Quantum Chemistry (1989), chapter 4: E_hf = -1.1167,
    # correlation -0.0206 (from memory). Looser than half a unit because the document's
    # example stores integrals rounded to 4 decimals, and each rounding moves the energies.
    assert hf == pytest.approx(-1.1167, abs=1e-3)
    assert fci - hf == pytest.approx(-0.0206, abs=2e-4)


# ---------------------------------------------------------------- the example as files, checked by the CLI


def checked(runner, *paths) -> dict:
    result = runner.invoke(main, ["check", "--format", "json", *map(str, paths)])
    assert result.exit_code in (0, 1), result.output
    return json.loads(result.stdout)


@pytest.mark.slow
def test_the_example_passes_every_check_in_both_containers(runner, tmp_path):
    json_path, hdf5_path = tmp_path / "h2.json", tmp_path / "h2.h5"
    write_example_json(json_path)
    write_example_hdf5(hdf5_path)
    report = checked(runner, json_path, hdf5_path)
    for file in report["files"]:
        statuses = {check["id"]: check["status"] for check in file["checks"]}
        assert file["status"] == "pass" and set(statuses.values()) == {"pass"}, (file["path"], statuses)
        assert file["fingerprint"] == example()["checksum"]


def dense_to_physicist(data: list[float], n: int) -> list[float]:
    """phys[p, q, r, s] = chem[p, r, q, s], element by element."""
    return [data[((p * n + r) * n + q) * n + s] for p in range(n) for q in range(n) for r in range(n) for s in range(n)]


def pairs_from_dense(data: list[float], n: int) -> list[float]:
    """M[I(p,q), I(r,s)] = (pq|rs), p >= q, r >= s, with I(p, q) = p(p+1)/2 + q."""
    pairs = [(p, q) for p in range(n) for q in range(p + 1)]
    assert [p * (p + 1) // 2 + q for p, q in pairs] == list(range(len(pairs)))
    return [data[((p * n + q) * n + r) * n + s] for p, q in pairs for r, s in pairs]


def unique_from_pairs(matrix: list[float], size: int) -> list[float]:
    """u[K(I, J)] = M[I, J], I >= J, K(I, J) = I(I+1)/2 + J: the lower triangle row by row."""
    return [matrix[i * size + j] for i in range(size) for j in range(i + 1)]


def test_the_printed_packed_forms_follow_the_index_formulas():
    doc = example()
    n = doc["orbitals"]["count"]
    npair = n * (n + 1) // 2
    pairs = json.loads(marked_block(document(), "worked-example:pairs"))
    unique = json.loads(marked_block(document(), "worked-example:unique"))
    assert pairs == {"shape": [npair, npair], "data": pairs_from_dense(doc["two_electron"]["data"], n)}
    assert unique == {"shape": [npair * (npair + 1) // 2], "data": unique_from_pairs(pairs["data"], npair)}


@pytest.mark.slow
@pytest.mark.parametrize("form", ["pairs", "unique", "physicist"])
def test_every_storage_and_notation_of_the_example_has_the_one_fingerprint(runner, tmp_path, form):
    doc = example()
    two = doc["two_electron"]
    if form == "physicist":
        doc["two_electron"] = two | {"notation": "physicist", "data": dense_to_physicist(two["data"], 2)}
    else:
        packed = json.loads(marked_block(document(), f"worked-example:{form}"))
        doc["two_electron"] = {"notation": "chemist", "storage": form} | packed
    path = tmp_path / f"h2_{form}.json"
    path.write_text(json.dumps(doc), encoding="utf-8")
    (file,) = checked(runner, path)["files"]
    statuses = {check["id"]: check["status"] for check in file["checks"]}
    assert file["status"] == "pass" and "fail" not in statuses.values(), statuses
    assert statuses["checksum"] == "pass"
    assert file["fingerprint"] == example()["checksum"]


# ---------------------------------------------------------------- refusals the document promises


def test_a_newer_version_is_refused_with_the_documented_line(runner, in_tmp):
    quoted = re.search(r"e\.g\. `(h\.json: format_version: [^`]+)`", document())
    assert quoted, "docs/format.md quotes the refusal of a newer version"
    expected = " ".join(quoted.group(1).split())
    Path("h.json").write_text(json.dumps(example() | {"format_version": 2}), encoding="utf-8")
    shown = runner.invoke(main, ["show", "h.json"])
    assert shown.exit_code == 2 and expected in shown.stderr
    report = checked_unreadable(runner, "h.json")
    assert expected in report["error"]


def checked_unreadable(runner, path) -> dict:
    result = runner.invoke(main, ["check", "--format", "json", str(path)])
    assert result.exit_code == 2, result.output
    (file,) = json.loads(result.stdout)["files"]
    assert file["status"] == "unreadable"
    return file


@pytest.mark.slow
@pytest.mark.parametrize(
    ("name", "edit"),
    [
        ("version written as 1.0", lambda text: text.replace('"format_version": 1,', '"format_version": 1.0,')),
        ("NaN", lambda text: text.replace('"core_energy": 0.7143,', '"core_energy": NaN,')),
        (
            "a repeated key",
            lambda text: text.replace('"core_energy": 0.7143,', '"core_energy": 0.7, "core_energy": 0.7143,'),
        ),
        ("another format", lambda text: text.replace('"integrity.hamiltonian"', '"chemistry.molecule"')),
    ],
)
def test_unreadable_files_are_the_documented_ones(runner, tmp_path, name, edit):
    text = example_text()
    changed = edit(text)
    assert changed != text, name
    path = tmp_path / "h2.json"
    path.write_text(changed, encoding="utf-8")
    checked_unreadable(runner, path)


@pytest.mark.slow
@pytest.mark.parametrize(
    ("name", "edit", "check_id"),
    [
        ("an unknown key", lambda doc: doc | {"colour": "blue"}, "schema"),
        ("a null optional field", lambda doc: doc | {"title": None}, "schema"),
        ("an integer written with a fraction", lambda doc: doc | {"electrons": {"alpha": 1.0, "beta": 1}}, "schema"),
        ("physicist in pairs storage", lambda doc: doc | {"two_electron": example_pairs("physicist")}, "arrays.shape"),
    ],
)
def test_files_that_break_the_format_fail_the_documented_check(runner, tmp_path, name, edit, check_id):
    path = tmp_path / "h2.json"
    path.write_text(json.dumps(edit(example())), encoding="utf-8")
    (file,) = checked(runner, path)["files"]
    statuses = {check["id"]: check["status"] for check in file["checks"]}
    assert file["status"] == "fail" and statuses[check_id] == "fail", (name, statuses)
    assert runner.invoke(main, ["show", str(path)]).exit_code == 2


def example_pairs(notation: str) -> dict:
    return {"notation": notation, "storage": "pairs"} | json.loads(marked_block(document(), "worked-example:pairs"))


def test_float32_arrays_in_hdf5_are_refused(runner, tmp_path):
    path = tmp_path / "h2.h5"
    write_example_hdf5(path)
    with h5py.File(path, "a") as out:
        values = out["one_electron"][()]
        del out["one_electron"]
        out.create_dataset("one_electron", data=values.astype(np.float32))
    (file,) = checked(runner, path)["files"]
    statuses = {check["id"]: check["status"] for check in file["checks"]}
    assert statuses["arrays.shape"] == "fail"
