"""Damaged copies of a Hamiltonian file, each reproducible from (fixture, mutation, seed).

A :class:`Mutation` has a name, the containers it applies to (``json``,
``hdf5``) and a function that writes a damaged copy of a source file to a
target path, drawing every choice from the case's random generator
(:func:`case_rng`: the seed, the fixture's file name and the mutation's name),
so the same triple writes the same bytes. It returns a :class:`Damage`: what
was done, in one line, and what ``integrity check`` must make of the result:

- ``fail``: the damage changed numeric or fingerprinted content, broke the
  container, or broke a rule of docs/format.md; the file must not pass
  (exit status 1 or 2);
- ``pass``: the damage provably leaves the file's meaning unchanged (keys
  reordered, another byte order, the identity); the file must pass (status 0);
- ``either``: the damage touched only what a file may carry freely or what
  the checks only warn about (title, provenance, a removed reference), or its
  effect cannot be told without the reader under test.

Which fields are *free* (provenance, title), *soft* (references,
``core_energy_parts``, ``orbitals.canonical``, ``two_electron.interaction``,
``checksum``: outside the fingerprint, the checks warn when they go) or *hard*
(everything else) decides most expectations: :func:`stakes`.

>>> sorted(MUTATIONS)[:3]
['bad_text', 'change_core_energy', 'change_electrons']
>>> stakes(("provenance", "basis")), stakes(("references", 0, "energy")), stakes(("electrons", "alpha"))
('free', 'soft', 'hard')
"""

from __future__ import annotations

import json
import math
import os
import shutil
import zlib
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path

import numpy as np

FAIL, EITHER, PASS = "fail", "either", "pass"
JSON, HDF5 = "json", "hdf5"

#: one mebibyte of text, for long strings
MEBI = 2**20
#: the depth of nested JSON lists and objects
JSON_DEPTH = 100_000
#: the depth of nested HDF5 groups
HDF5_DEPTH = 1_200


@dataclass(frozen=True)
class Damage:
    """What a mutation did (``description``, one line) and what ``check`` must make of it (``expect``)."""

    description: str
    expect: str


@dataclass(frozen=True)
class Mutation:
    """A named way of damaging a file of the given ``containers``."""

    name: str
    containers: tuple[str, ...]
    make: Callable[[Path, Path, np.random.Generator], Damage]

    def apply(self, source: Path | str, target: Path | str, seed: int) -> Damage:
        """Write the damaged copy of ``source`` to ``target`` (same extension); other files it needs beside it."""
        source, target = Path(source), Path(target)
        return self.make(source, target, case_rng(source.name, self.name, seed))


def case_rng(fixture: str, mutation: str, seed: int) -> np.random.Generator:
    """The random generator of one case: the same (fixture file name, mutation, seed), the same draws."""
    return np.random.default_rng([int(seed), zlib.crc32(fixture.encode()), zlib.crc32(mutation.encode())])


def container_of(path: Path | str) -> str:
    """``json`` or ``hdf5``, by the file's extension."""
    return JSON if str(path).lower().endswith(".json") else HDF5


def mutations_for(path: Path | str) -> list[Mutation]:
    """The mutations that apply to a file of ``path``'s container, in name order."""
    kind = container_of(path)
    return [MUTATIONS[name] for name in sorted(MUTATIONS) if kind in MUTATIONS[name].containers]


# --------------------------------------------------------------------------------------------
# Which fields matter


def stakes(path: tuple) -> str:
    """``free``, ``soft`` or ``hard``: what changing the field at ``path`` (keys and indices) may do.

    Paths are written in the JSON container's keys; HDF5 locations are mapped
    to them by :func:`hdf5_path`.
    """
    if not path:
        return "hard"
    head = path[0]
    if head == "title":
        return "free" if len(path) == 1 else "hard"
    if head == "provenance":
        return "free" if len(path) >= 2 else "soft"
    if head in ("references", "core_energy_parts", "checksum"):
        return "soft"
    if path[:2] in (("orbitals", "canonical"), ("two_electron", "interaction")):
        return "soft"
    return "hard"


def hdf5_path(group: str, name: str | None = None) -> tuple:
    """The JSON path of an HDF5 object (``/references/hf``) or attribute (``name`` of ``group``)."""
    parts = tuple(p for p in group.split("/") if p)
    return parts + ((name,) if name is not None else ())


#: fields whose removal leaves a file that must be refused or fail (required, or in the fingerprint)
_REQUIRED = {
    ("format",),
    ("format_version",),
    ("energy_unit",),
    ("orbitals",),
    ("orbitals", "count"),
    ("orbitals", "basis"),
    ("orbitals", "spin_layout"),
    ("orbitals", "point_group"),
    ("orbitals", "irreps"),
    ("electrons",),
    ("electrons", "alpha"),
    ("electrons", "beta"),
    ("core_energy",),
    ("one_electron",),
    ("one_electron", "shape"),
    ("one_electron", "data"),
    ("two_electron",),
    ("two_electron", "shape"),
    ("two_electron", "data"),
    ("two_electron", "notation"),
    ("two_electron", "storage"),
}
#: keys every reference needs
_REFERENCE_REQUIRED = {"label", "method", "energy"}


def removal_expect(path: tuple, value) -> str:
    """What removing the field at ``path`` (holding ``value``) must give."""
    if path in _REQUIRED:
        return FAIL
    if path == ("two_electron", "antisymmetrized"):
        return FAIL if value is True else EITHER
    if len(path) == 3 and path[0] == "references" and path[2] in _REFERENCE_REQUIRED:
        return FAIL
    if len(path) == 4 and path[0] == "references" and path[2] in ("occupation", "electrons"):
        return FAIL  # one spin of the pair left
    if len(path) == 2 and path[0] == "core_energy_parts":
        return FAIL if _number(value) and value != 0 else EITHER  # the parts no longer add up
    return EITHER


def _number(value) -> bool:
    return isinstance(value, int | float) and not isinstance(value, bool)


def changed_expect(path: tuple, before, after) -> str:
    """What replacing ``before`` by ``after`` at ``path`` must give (types, not values, decide most)."""
    if _same_json(before, after):
        return PASS
    kind = stakes(path)
    if kind == "free":
        if path[0] == "title":
            return EITHER if isinstance(after, str) else FAIL
        if len(path) == 2 and path[1] != "history":
            scalar = isinstance(after, str | int | float | bool)
            return EITHER if scalar and not _nonfinite(after) else FAIL
        return EITHER
    if kind == "soft":
        if _number(before) and _number(after) and _moved_beyond_limit(path, float(before), float(after)):
            return FAIL
        if _number(before) and _number(after) and float(before) == float(after) and isinstance(after, int):
            return EITHER  # an integer is accepted where a number is expected
        if type(before) is not type(after):
            return FAIL
        if path == ("checksum",):
            return FAIL
        return EITHER
    if _number(before) and isinstance(before, float) and type(after) is int and float(after) == before:
        return EITHER
    return FAIL


def _moved_beyond_limit(path: tuple, before: float, after: float) -> bool:
    """A reference energy moved by more than 1e-5 hartree, a core energy part by more than 1e-9:
    beyond every default limit (10 times it), so the energy or parts check must fail."""
    if not (math.isfinite(before) and math.isfinite(after)):
        return True
    if len(path) == 3 and path[0] == "references" and path[2] == "energy":
        return abs(after - before) > 1e-5
    if len(path) == 2 and path[0] == "core_energy_parts":
        return abs(after - before) > 1e-9
    return False


def _nonfinite(value) -> bool:
    return isinstance(value, float) and not math.isfinite(value)


def _same_json(a, b) -> bool:
    """Equal as JSON values, bit for bit (``-0.0`` differs from ``0.0``, ``1`` from ``1.0``)."""
    return json.dumps(a, sort_keys=True) == json.dumps(b, sort_keys=True)


# --------------------------------------------------------------------------------------------
# JSON helpers


class _Unparsable(ValueError):
    pass


def _strict_pairs(pairs):
    keys = [k for k, _ in pairs]
    if len(set(keys)) != len(keys):
        raise _Unparsable("repeated key")
    return dict(pairs)


def _bad_constant(token):
    raise _Unparsable(f"{token} is not JSON")


def parse_strictly(data: bytes):
    """The JSON value of ``data`` as docs/format.md section 5 reads it, or raise ``ValueError``."""
    try:
        text = data.decode("utf-8", errors="strict")
        value = json.loads(text, object_pairs_hook=_strict_pairs, parse_constant=_bad_constant)
        json.dumps(value).encode("utf-8")  # a lone surrogate cannot be encoded
    except (UnicodeError, RecursionError, OverflowError) as err:
        raise _Unparsable(str(err)) from None
    if _has_nonfinite(value):
        raise _Unparsable("a number beyond binary64")
    return value


def _has_nonfinite(value) -> bool:
    stack = [value]
    while stack:
        item = stack.pop()
        if isinstance(item, float) and not math.isfinite(item):
            return True
        if isinstance(item, dict):
            stack.extend(item.values())
        elif isinstance(item, list):
            stack.extend(item)
    return False


def differences(a, b, path: tuple = ()) -> list[tuple]:
    """The paths at which two JSON values differ (a changed key is a difference at the key)."""
    if isinstance(a, dict) and isinstance(b, dict):
        out = []
        for key in list(a) + [k for k in b if k not in a]:
            if key not in a or key not in b:
                out.append((*path, key))
            else:
                out.extend(differences(a[key], b[key], (*path, key)))
        return out
    if isinstance(a, list) and isinstance(b, list) and len(a) == len(b):
        if path and path[-1] in ("data", "real", "imag"):
            return [] if _same_json(a, b) else [path]
        out = []
        for i, (x, y) in enumerate(zip(a, b, strict=True)):
            out.extend(differences(x, y, (*path, i)))
        return out
    return [] if _same_json(a, b) else [path]


def bytes_expect(original: bytes, damaged: bytes) -> tuple[str, str]:
    """What a JSON file changed to ``damaged`` bytes must give, and where it changed."""
    try:
        after = parse_strictly(damaged)
    except ValueError as err:
        return FAIL, f"not JSON any more ({str(err)[:60]})"
    before = parse_strictly(original)
    found = differences(before, after)
    if not found:
        return PASS, "the same JSON value"
    where = ", ".join(_dotted(p) for p in found[:3])
    if all(stakes(p) in ("free", "soft") and not _breaks_types(p, before, after) for p in found):
        return EITHER, f"changed {where}"
    return FAIL, f"changed {where}"


def _breaks_types(path: tuple, before, after) -> bool:
    old, new = _get(before, path), _get(after, path)
    if old is _MISSING or new is _MISSING:
        return len(path) <= 1 or path[0] not in ("provenance", "core_energy_parts")
    return changed_expect(path, old, new) == FAIL


_MISSING = object()


def _get(doc, path: tuple):
    for key in path:
        try:
            doc = doc[key]
        except (KeyError, IndexError, TypeError):
            return _MISSING
    return doc


def _dotted(path: tuple) -> str:
    return ".".join(str(p) for p in path) or "(the document)"


def json_fields(doc, path: tuple = ()) -> list[tuple]:
    """Every field of a document as a path; array values (``data``, ``real``, ``imag``) are one field."""
    out = []
    if isinstance(doc, dict):
        for key, value in doc.items():
            out.append((*path, key))
            if key not in ("data", "real", "imag"):
                out.extend(json_fields(value, (*path, key)))
    elif isinstance(doc, list):
        for i, value in enumerate(doc):
            out.append((*path, i))
            out.extend(json_fields(value, (*path, i)))
    return out


def _set(doc, path: tuple, value) -> None:
    for key in path[:-1]:
        doc = doc[key]
    doc[path[-1]] = value


def _delete(doc, path: tuple) -> None:
    for key in path[:-1]:
        doc = doc[key]
    del doc[path[-1]]


def _read_json(source: Path):
    return json.loads(source.read_bytes())


def _write_json(doc, target: Path, tokens: dict[str, str] | None = None, indent=None) -> None:
    """Write ``doc``; each string value ``"<placeholder>"`` named in ``tokens`` becomes the raw text given."""
    text = json.dumps(doc, indent=indent, ensure_ascii=False, allow_nan=True)
    for placeholder, raw in (tokens or {}).items():
        text = text.replace(json.dumps(placeholder), raw, 1)
    target.write_bytes(text.encode("utf-8", errors="surrogatepass"))


def _pick(rng: np.random.Generator, items):
    items = list(items)
    return items[int(rng.integers(len(items)))]


# --------------------------------------------------------------------------------------------
# HDF5 helpers


def _h5py():
    import h5py

    return h5py


def hdf5_attributes(path: Path) -> list[tuple[str, str]]:
    """Every attribute of the file as ``(object name, attribute name)``."""
    h5py = _h5py()
    found = []
    with h5py.File(path, "r") as f:
        found.extend(("/", name) for name in f.attrs)

        def visit(name, obj):
            found.extend(("/" + name, attr) for attr in obj.attrs)

        f.visititems(visit)
    return found


def hdf5_objects(path: Path) -> list[str]:
    """Every group and dataset of the file by its absolute name (the root excluded)."""
    h5py = _h5py()
    with h5py.File(path, "r") as f:
        names = []
        f.visit(lambda name: names.append("/" + name))
    return names


def hdf5_datasets(path: Path) -> list[str]:
    h5py = _h5py()
    with h5py.File(path, "r") as f:
        return [n for n in hdf5_objects(path) if isinstance(f[n], h5py.Dataset)]


def raw_extents(path: Path) -> list[tuple[str, int, int]]:
    """``(dataset, offset, size)`` of every contiguous dataset's raw bytes in the file."""
    h5py = _h5py()
    out = []
    with h5py.File(path, "r") as f:
        for name in hdf5_datasets(path):
            dataset = f[name]
            offset = dataset.id.get_offset()
            if offset is not None:
                out.append((name, int(offset), int(dataset.id.get_storage_size())))
    return out


def _hdf5_edit(source: Path, target: Path):
    shutil.copyfile(source, target)
    return _h5py().File(target, "r+")


def _replace_dataset(f, name: str, data, **kwargs) -> None:
    """Write ``data`` where the dataset ``name`` was, keeping its attributes."""
    attrs = dict(f[name].attrs) if name in f else {}
    if name in f:
        del f[name]
    dataset = f.create_dataset(name, data=data, **kwargs)
    for key, value in attrs.items():
        dataset.attrs[key] = value


def _hdf5_expect_for_bytes(source: Path, changed: list[int]) -> tuple[str, str]:
    for dataset, offset, size in raw_extents(source):
        if dataset.startswith("/provenance/"):
            continue  # free content: history steps are carried, not judged
        hits = [i for i in changed if offset <= i < offset + size]
        if hits:
            return FAIL, f"{len(hits)} byte(s) of {dataset}'s values"
    return EITHER, "outside the raw values (metadata or free space)"


# --------------------------------------------------------------------------------------------
# The mutations


MUTATIONS: dict[str, Mutation] = {}


def mutation(*containers: str):
    """Register the decorated function as the mutation of its own name."""

    def register(make):
        MUTATIONS[make.__name__] = Mutation(make.__name__, containers, make)
        return make

    return register


@mutation(JSON, HDF5)
def identity(source: Path, target: Path, rng) -> Damage:
    """The good file itself: it must pass."""
    shutil.copyfile(source, target)
    return Damage("unchanged", PASS)


@mutation(JSON)
def reorder_keys(source: Path, target: Path, rng) -> Damage:
    """Every object's keys in a random order (lists keep theirs): the same file."""

    def shuffled(value):
        if isinstance(value, dict):
            keys = list(value)
            order = rng.permutation(len(keys))
            return {keys[i]: shuffled(value[keys[i]]) for i in order}
        if isinstance(value, list):
            return [shuffled(v) for v in value]
        return value

    _write_json(shuffled(_read_json(source)), target, indent=int(rng.integers(0, 3)) or None)
    return Damage("keys reordered", PASS)


@mutation(HDF5)
def repack(source: Path, target: Path, rng) -> Damage:
    """Every object copied into a new file, in a random order, arrays chunked and compressed: the same file."""
    h5py = _h5py()
    with h5py.File(source, "r") as old, h5py.File(target, "w") as new:
        for key, value in old.attrs.items():
            new.attrs[key] = value
        names = hdf5_objects(source)
        order = [names[i] for i in rng.permutation(len(names))]
        for name in sorted(order, key=lambda n: n.count("/")):
            obj = old[name]
            if isinstance(obj, h5py.Group):
                created = new.require_group(name)
            elif obj.ndim >= 1 and obj.size > 1 and rng.random() < 0.5:
                created = new.create_dataset(name, data=obj[()], chunks=True, compression=_pick(rng, ["gzip", "lzf"]))
            else:
                created = new.create_dataset(name, data=obj[()])
            for key, value in obj.attrs.items():
                created.attrs[key] = value
    return Damage("repacked (member order, chunking, compression)", PASS)


@mutation(HDF5)
def equivalent_types(source: Path, target: Path, rng) -> Damage:
    """Big-endian floats, narrower integers, fixed-length strings, integer booleans: the same file."""
    h5py = _h5py()
    done = []
    with _hdf5_edit(source, target) as f:
        for obj_name, attr in hdf5_attributes(source):
            obj = f[obj_name]
            value = obj.attrs[attr]
            if rng.random() < 0.5:
                continue
            if isinstance(value, np.floating):
                obj.attrs.create(attr, value, dtype=">f8")
            elif isinstance(value, np.bool_):
                obj.attrs.create(attr, int(value), dtype="u1")
            elif isinstance(value, np.integer) and 0 <= int(value) < 127:
                obj.attrs.create(attr, int(value), dtype=_pick(rng, ["i1", "u2", ">i4", "u8"]))
            elif isinstance(value, str) and value and "\x00" not in value:
                encoded = value.encode("utf-8")
                obj.attrs.create(attr, np.bytes_(encoded), dtype=h5py.string_dtype("utf-8", len(encoded)))
            else:
                continue
            done.append(f"{obj_name}@{attr}")
        for name in ("one_electron", "two_electron"):
            if rng.random() < 0.5 and f[name].dtype == np.float64:
                _replace_dataset(f, name, f[name][()].astype(">f8"))
                done.append(name)
    return Damage(f"equivalent types for {len(done)} fields", PASS)


@mutation(JSON, HDF5)
def flip_bytes(source: Path, target: Path, rng) -> Damage:
    """One to eight random bits flipped anywhere in the file."""
    data = bytearray(source.read_bytes())
    count = int(rng.integers(1, 9))
    places = sorted({int(i) for i in rng.integers(0, len(data), size=count)})
    for i in places:
        data[i] ^= 1 << int(rng.integers(8))
    target.write_bytes(bytes(data))
    return _bytes_damage(source, data, places, f"bits flipped at {places[:4]}")


@mutation(JSON, HDF5)
def flip_value_bytes(source: Path, target: Path, rng) -> Damage:
    """A bit flipped inside a stored value: a number's text (JSON) or an array's raw bytes (HDF5)."""
    data = bytearray(source.read_bytes())
    if container_of(source) == JSON:
        digits = [i for i, b in enumerate(data) if chr(b) in "0123456789"]
        i = _pick(rng, digits)
        data[i] = ord(_pick(rng, [d for d in "0123456789" if ord(d) != data[i]]))
    else:
        _name, offset, size = _pick(rng, [e for e in raw_extents(source) if e[2] > 0])
        i = offset + int(rng.integers(size))
        data[i] ^= 1 << int(rng.integers(8))
    target.write_bytes(bytes(data))
    return _bytes_damage(source, data, [i], f"value byte changed at {i}")


@mutation(JSON, HDF5)
def zero_run(source: Path, target: Path, rng) -> Damage:
    """A run of 1 to 4096 bytes set to zero."""
    data = bytearray(source.read_bytes())
    length = int(min(len(data), 2 ** rng.uniform(0, 12)))
    start = int(rng.integers(0, len(data) - length + 1))
    changed = [i for i in range(start, start + length) if data[i] != 0]
    data[start : start + length] = bytes(length)
    target.write_bytes(bytes(data))
    return _bytes_damage(source, data, changed, f"{length} bytes zeroed at {start}")


@mutation(JSON, HDF5)
def truncate(source: Path, target: Path, rng) -> Damage:
    """The file cut short at a random length (sometimes by one byte, sometimes to nothing)."""
    data = source.read_bytes()
    keep = int(_pick(rng, [0, len(data) - 1, int(rng.integers(0, len(data)))]))
    target.write_bytes(data[:keep])
    if container_of(source) == JSON:
        expect, where = bytes_expect(data, data[:keep])
        return Damage(f"cut to {keep} of {len(data)} bytes: {where}", expect)
    return Damage(f"cut to {keep} of {len(data)} bytes", FAIL)


def _bytes_damage(source: Path, data: bytearray, changed: list[int], what: str) -> Damage:
    original = source.read_bytes()
    if container_of(source) == JSON:
        expect, where = bytes_expect(original, bytes(data))
        return Damage(f"{what}: {where}", expect)
    if bytes(data) == original:
        return Damage(f"{what}: no byte changed", PASS)
    expect, where = _hdf5_expect_for_bytes(source, [i for i in changed if data[i] != original[i]])
    return Damage(f"{what}: {where}", expect)


@mutation(JSON)
def delete_key(source: Path, target: Path, rng) -> Damage:
    """A key removed anywhere in the document (a list item removed when the path ends in an index)."""
    doc = _read_json(source)
    path = _pick(rng, json_fields(doc))
    value = _get(doc, path)
    _delete(doc, path)
    if isinstance(path[-1], int):
        expect = FAIL if stakes(path) == "hard" else EITHER
    else:
        expect = removal_expect(path, value)
    _write_json(doc, target)
    return Damage(f"removed {_dotted(path)}", expect)


#: the types a value is turned into
RETYPES = ("int", "str", "list", "float", "bool", "object", "null")


def retyped(value, kind: str, rng):
    """``value`` as another JSON type (``nested`` kinds wrap it)."""
    if kind == "int":
        if isinstance(value, float) and math.isfinite(value):
            return int(value)
        return int(rng.integers(-3, 10))
    if kind == "str":
        return str(value)[:40]
    if kind == "list":
        return [value]
    if kind == "float":
        return float(value) if _number(value) else float(rng.integers(0, 4))
    if kind == "bool":
        return bool(value) if not isinstance(value, bool) else not value
    if kind == "object":
        return {"value": value}
    return None


@mutation(JSON)
def retype_value(source: Path, target: Path, rng) -> Damage:
    """A value turned into another type: int, str, list, float, bool, object, null (possibly nested)."""
    doc = _read_json(source)
    path = _pick(rng, [p for p in json_fields(doc) if p[-1] not in ("data", "real", "imag") or rng.random() < 0.2])
    before = _get(doc, path)
    after = retyped(before, _pick(rng, RETYPES), rng)
    if rng.random() < 0.2:
        after = [after] if rng.random() < 0.5 else {"nested": after}
    _set(doc, path, after)
    _write_json(doc, target)
    expect = FAIL if after is None else changed_expect(path, before, after)
    return Damage(f"{_dotted(path)} {type(before).__name__} -> {json.dumps(after)[:40]}", expect)


@mutation(HDF5)
def delete_attribute(source: Path, target: Path, rng) -> Damage:
    """An attribute removed."""
    obj_name, attr = _pick(rng, hdf5_attributes(source))
    with _hdf5_edit(source, target) as f:
        value = f[obj_name].attrs[attr]
        del f[obj_name].attrs[attr]
    path = hdf5_path(obj_name, attr)
    if path == ("two_electron", "antisymmetrized"):
        value = bool(value)
    return Damage(f"removed {obj_name}@{attr}", removal_expect(path, _plain(value)))


@mutation(HDF5)
def delete_member(source: Path, target: Path, rng) -> Damage:
    """A group or dataset removed."""
    name = _pick(rng, hdf5_objects(source))
    with _hdf5_edit(source, target) as f:
        del f[name]
    path = hdf5_path(name)
    if len(path) == 2 and path[0] == "references":
        expect = EITHER  # a whole reference
    elif path[:1] == ("references",) and len(path) >= 4:
        expect = FAIL  # one spin's occupation
    else:
        expect = removal_expect(path, None)
    return Damage(f"removed {name}", expect)


def _plain(value):
    if isinstance(value, np.generic):
        return value.item()
    return value


@mutation(HDF5)
def retype_attribute(source: Path, target: Path, rng) -> Damage:
    """An attribute turned into another type: int, str, array, float, bool, a dataset or a group."""
    h5py = _h5py()
    obj_name, attr = _pick(rng, hdf5_attributes(source))
    path = hdf5_path(obj_name, attr)
    kind = _pick(rng, ["int", "str", "list", "float", "bool", "dataset", "group"])
    with _hdf5_edit(source, target) as f:
        obj = f[obj_name]
        before = _plain(obj.attrs[attr])
        if kind in ("dataset", "group"):
            if not isinstance(obj, h5py.Group):
                return _hdf5_retype_scalar(obj, attr, before, "int", path, rng)
            del obj.attrs[attr]
            if kind == "dataset":
                obj.create_dataset(attr, data=before)
            else:
                obj.create_group(attr).attrs["value"] = before
            return Damage(f"{obj_name}@{attr} stored as a {kind}", FAIL)  # only attributes hold scalars
        return _hdf5_retype_scalar(obj, attr, before, kind, path, rng)


def _hdf5_retype_scalar(obj, attr: str, before, kind: str, path: tuple, rng) -> Damage:
    h5py = _h5py()
    after = retyped(before, kind, rng)
    if kind == "list":
        after = np.array([before], dtype=h5py.string_dtype() if isinstance(before, str) else None)
    obj.attrs[attr] = after
    if kind == "list":
        expect = FAIL  # every value of an HDF5 file's attributes is a scalar
    elif isinstance(before, bool) and kind == "int" and after in (0, 1) and bool(after) == before:
        expect = EITHER  # an integer 0 or 1 is a boolean in HDF5
    elif isinstance(before, bool) and kind in ("int", "float") and after not in (0, 1):
        expect = FAIL
    else:
        expect = changed_expect(path, before, after)
    return Damage(f"{'/'.join(map(str, path))} {type(before).__name__} -> {kind} {str(after)[:30]}", expect)


@mutation(JSON, HDF5)
def huge_size(source: Path, target: Path, rng) -> Damage:
    """A size declared huge: the orbital count, or an array's shape (the values left as they are)."""
    huge = int(_pick(rng, [10**6, 2**31, 2**62, 2**63 - 1, 10**12]))
    if container_of(source) == JSON:
        doc = _read_json(source)
        where = _pick(rng, ["count", "one_electron", "two_electron"])
        if where == "count":
            doc["orbitals"]["count"] = huge
        else:
            shape = doc[where]["shape"]
            shape[int(rng.integers(len(shape)))] = huge
        _write_json(doc, target)
        return Damage(f"{where} declared {huge}", FAIL)
    with _hdf5_edit(source, target) as f:
        f["orbitals"].attrs["count"] = huge
    return Damage(f"/orbitals@count = {huge}", FAIL)


@mutation(JSON, HDF5)
def negative_size(source: Path, target: Path, rng) -> Damage:
    """A size declared zero or negative: the orbital count, electron counts, a shape."""
    value = int(_pick(rng, [0, -1, -(2**31), -(2**63)]))
    if container_of(source) == JSON:
        doc = _read_json(source)
        where = _pick(rng, ["count", "alpha", "beta", "one_electron", "two_electron"])
        if where == "count":
            doc["orbitals"]["count"] = value
        elif where in ("alpha", "beta"):
            if value == 0 and doc["electrons"][where] == 0:
                value = -1
            doc["electrons"][where] = value
        else:
            shape = doc[where]["shape"]
            shape[int(rng.integers(len(shape)))] = value
        _write_json(doc, target)
        return Damage(f"{where} declared {value}", FAIL)
    where = _pick(rng, [("orbitals", "count"), ("electrons", "alpha"), ("electrons", "beta")])
    with _hdf5_edit(source, target) as f:
        if value == 0 and int(f[where[0]].attrs[where[1]]) == 0:
            value = -1
        f[where[0]].attrs[where[1]] = value
    return Damage(f"/{where[0]}@{where[1]} = {value}", FAIL)


@mutation(JSON, HDF5)
def mismatched_shape(source: Path, target: Path, rng) -> Damage:
    """Shapes that disagree: the count off by one, an array one row short or long, a shape re-cut."""
    if container_of(source) == JSON:
        doc = _read_json(source)
        how = _pick(rng, ["count", "shape", "data", "recut"])
        if how == "count":
            doc["orbitals"]["count"] += _pick(rng, [-1, 1])
        else:
            where = _pick(rng, ["one_electron", "two_electron"])
            array = doc[where]
            values = "data" if "data" in array else "real"
            if how == "shape":
                axis = int(rng.integers(len(array["shape"])))
                array["shape"][axis] += _pick(rng, [-1, 1])
            elif how == "data":
                if rng.random() < 0.5 and array[values]:
                    array[values].pop()
                else:
                    array[values].append(0.0)
            else:
                total = int(np.prod(array["shape"]))
                array["shape"] = [total] if len(array["shape"]) > 1 else [1, total]
        _write_json(doc, target)
        return Damage(f"mismatched {how}", FAIL)
    with _hdf5_edit(source, target) as f:
        how = _pick(rng, ["count", "one_electron", "two_electron", "irreps"])
        if how == "count":
            f["orbitals"].attrs["count"] = int(f["orbitals"].attrs["count"]) + _pick(rng, [-1, 1])
        elif how == "irreps" and "irreps" in f["orbitals"]:
            _replace_dataset(f, "orbitals/irreps", f["orbitals/irreps"][()][:-1])
        else:
            name = "one_electron" if how == "irreps" else how
            data = f[name][()]
            axis = int(rng.integers(data.ndim))
            if rng.random() < 0.5:
                data = np.delete(data, -1, axis=axis)
            else:
                data = np.concatenate([data, np.take(data, [0], axis=axis)], axis=axis)
            _replace_dataset(f, name, data)
            how = f"{name} axis {axis}"
    return Damage(f"mismatched {how}", FAIL)


#: raw number texts a JSON reader must refuse, and values an HDF5 reader must report
NONFINITE_TEXT = ("NaN", "Infinity", "-Infinity", "1e400", "-1e400", "1" * 400, "-" + "9" * 400)


@mutation(JSON, HDF5)
def nonfinite(source: Path, target: Path, rng) -> Damage:
    """NaN, infinities, 1e400 or a 400-digit integer in an array, an energy or a count."""
    if container_of(source) == JSON:
        doc = _read_json(source)
        token = _pick(rng, NONFINITE_TEXT)
        places = [("core_energy",), ("electrons", "alpha"), ("orbitals", "count"), ("format_version",)]
        places += [("references", i, "energy") for i in range(len(doc.get("references", [])))]
        places += [("core_energy_parts", p) for p in doc.get("core_energy_parts", {})]
        for name in ("one_electron", "two_electron"):
            values = "data" if "data" in doc[name] else "real"
            places += [(name, values, int(rng.integers(len(doc[name][values]))))] * 3
        path = _pick(rng, places)
        _set(doc, path, "@@token@@")
        _write_json(doc, target, tokens={"@@token@@": token})
        return Damage(f"{_dotted(path)} = {token[:12]}", FAIL)
    value = float(_pick(rng, [np.nan, np.inf, -np.inf]))
    with _hdf5_edit(source, target) as f:
        where = _pick(rng, ["one_electron", "two_electron", "/@core_energy", "reference", "count"])
        if where in ("one_electron", "two_electron"):
            data = f[where][()]
            flat = data.reshape(-1)
            flat[int(rng.integers(flat.size))] = value
            f[where][...] = data
        elif where == "/@core_energy":
            f.attrs["core_energy"] = value
        elif where == "reference":
            name = _pick(rng, list(f["references"]))
            f["references"][name].attrs["energy"] = value
            where = f"/references/{name}@energy"
        else:
            value = _pick(rng, [np.iinfo(np.int64).max, np.iinfo(np.int64).min])
            f["orbitals"].attrs["count"] = value
            return Damage(f"/orbitals@count = {value}", FAIL)
    return Damage(f"{where} = {value}", FAIL)


@mutation(JSON)
def duplicate_key(source: Path, target: Path, rng) -> Damage:
    """A key written twice in one object, with the same or another value."""
    doc = _read_json(source)
    objects = [p for p in [(), *json_fields(doc)] if isinstance(_get(doc, p), dict) and _get(doc, p)]
    path = _pick(rng, objects)
    obj = _get(doc, path)
    key = _pick(rng, obj)
    same = rng.random() < 0.5
    second = obj[key] if same else retyped(obj[key], _pick(rng, RETYPES[:5]), rng)
    obj["@@dup@@"] = "@@dup-value@@"
    raw_value = json.dumps(second, ensure_ascii=False)
    _write_json(doc, target)
    text = target.read_text(encoding="utf-8")
    text = text.replace(json.dumps("@@dup@@") + ": " + json.dumps("@@dup-value@@"), json.dumps(key) + ": " + raw_value)
    target.write_text(text, encoding="utf-8")
    return Damage(f"{_dotted((*path, key))} written twice ({'same' if same else 'another'} value)", FAIL)


@mutation(JSON, HDF5)
def deep_nesting(source: Path, target: Path, rng) -> Damage:
    """JSON lists or objects nested 100,000 deep; 1,200 nested HDF5 groups."""
    if container_of(source) == JSON:
        doc = _read_json(source)
        path = _pick(rng, [("provenance", "nested"), ("title",), ("one_electron", "data"), ("deep",), ("electrons",)])
        if path[0] == "provenance" and "provenance" not in doc:
            doc["provenance"] = {}
        opener, closer = _pick(rng, [("[", "]"), ('{"a":', "}")])
        _set(doc, path, "@@deep@@")
        _write_json(doc, target, tokens={"@@deep@@": opener * JSON_DEPTH + "1" + closer * JSON_DEPTH})
        return Damage(f"{_dotted(path)} nested {JSON_DEPTH} deep", FAIL)
    parent = _pick(rng, ["/", "/provenance", "/references", "/orbitals", "/references/" + "{first}"])
    with _hdf5_edit(source, target) as f:
        if "{first}" in parent:
            parent = parent.format(first=next(iter(f["references"])))
        group = f[parent]
        for _ in range(HDF5_DEPTH):
            group = group.create_group("g")
        group.attrs["bottom"] = 1
    return Damage(f"{HDF5_DEPTH} groups nested under {parent}", FAIL)


@mutation(JSON, HDF5)
def long_string(source: Path, target: Path, rng) -> Damage:
    """A 1 MB string: the title, a provenance value, a key, a label, the checksum."""
    text = "".join(_pick(rng, ["x", "é", "字", " "]) for _ in range(64)) * (MEBI // 64)
    where = _pick(rng, ["title", "provenance", "key", "checksum", "method"])
    expect = {"title": EITHER, "provenance": EITHER, "key": FAIL, "checksum": FAIL, "method": EITHER}[where]
    if container_of(source) == JSON:
        doc = _read_json(source)
        if where == "title":
            doc["title"] = text
        elif where == "provenance":
            doc.setdefault("provenance", {})["note"] = text
        elif where == "key":
            doc[text[:MEBI]] = 1
        elif where == "checksum":
            doc["checksum"] = "sha256:" + "0" * MEBI
        elif doc.get("references"):
            doc["references"][0]["method"] = text  # an unknown method is carried, not checked
        else:
            expect = EITHER
        _write_json(doc, target)
    else:
        with _hdf5_edit(source, target) as f:
            if where == "title":
                f.attrs["title"] = text
            elif where == "provenance":
                f.require_group("provenance").attrs.create("note", text)
            elif where == "key":
                f.attrs.create(text[:10_000], 1)
            elif where == "checksum":
                f.attrs["checksum"] = "sha256:" + "0" * MEBI
            elif "references" in f and len(f["references"]):
                f["references"][next(iter(f["references"]))].attrs["method"] = text
    return Damage(f"1 MB string as {where}", expect)


@mutation(JSON, HDF5)
def bad_text(source: Path, target: Path, rng) -> Damage:
    """A lone surrogate, bytes that are not UTF-8, or a NUL character in a string."""
    how = _pick(rng, ["surrogate", "not-utf8", "nul"])
    where = _pick(rng, ["title", "provenance", "basis", "key", "label"])
    if container_of(source) == JSON:
        doc = _read_json(source)
        raw = {"surrogate": '"ab\\udcffcd"', "not-utf8": '"ab\udcffcd"', "nul": '"ab\\u0000cd"'}[how]
        if where == "title":
            doc["title"] = "@@text@@"
        elif where == "provenance":
            doc.setdefault("provenance", {})["note"] = "@@text@@"
        elif where == "basis":
            doc["orbitals"]["basis"] = "@@text@@"
        elif where == "key":
            doc.setdefault("provenance", {})["@@key@@"] = 1
        elif doc.get("references"):
            doc["references"][0]["label"] = "@@text@@"
        else:
            doc["title"] = "@@text@@"
        if where == "key":
            _write_json(doc, target, tokens={"@@key@@": raw})
        else:
            _write_json(doc, target, tokens={"@@text@@": raw})
        if how == "not-utf8":  # the placeholder surrogate becomes a raw 0xFF byte
            data = target.read_bytes().replace("\udcff".encode("utf-8", "surrogatepass"), b"\xff")
            target.write_bytes(data)
        return Damage(f"{how} in {where}", FAIL)
    h5py = _h5py()
    payload = {"surrogate": b"ab\xed\xb3\xbfcd", "not-utf8": b"ab\xffcd", "nul": b"ab\x00cd"}[how]
    with _hdf5_edit(source, target) as f:
        obj, attr = {
            "title": (f, "title"),
            "provenance": (f.require_group("provenance"), "note"),
            "basis": (f["orbitals"], "basis"),
            "key": (f.require_group("provenance"), "basis"),
            "label": (f, "energy_unit"),
        }[where]
        location = f"{obj.name}@{attr}"
        if rng.random() < 0.5 or how == "nul":  # a variable-length string cannot hold a NUL
            obj.attrs.create(attr, np.bytes_(payload), dtype=h5py.string_dtype("utf-8", len(payload)))
        else:
            obj.attrs.create(attr, payload, dtype=h5py.string_dtype("ascii"))
    return Damage(f"{how} in {where} ({location})", FAIL)


@mutation(HDF5)
def soft_link(source: Path, target: Path, rng) -> Damage:
    """A soft link to nowhere or back to the root, beside or instead of a member."""
    h5py = _h5py()
    with _hdf5_edit(source, target) as f:
        to = _pick(rng, ["/nowhere", "/"])
        parent = _pick(rng, ["/", "/orbitals", "/references", "/provenance"])
        replace = rng.random() < 0.5
        if replace:
            name = _pick(rng, ["/one_electron", "/two_electron", "/orbitals/irreps", "/electrons"])
            if name not in f:
                name = "/one_electron"
            del f[name]
        else:
            name = parent.rstrip("/") + "/link"
        f[name] = h5py.SoftLink(to)
    return Damage(f"{name} -> soft link to {to}", FAIL)


@mutation(HDF5)
def hard_link_cycle(source: Path, target: Path, rng) -> Damage:
    """A group that holds a hard link to itself or to one of its ancestors."""
    with _hdf5_edit(source, target) as f:
        groups = ["/"] + [n for n in hdf5_objects(source) if isinstance(f[n], _h5py().Group)]
        holder = _pick(rng, groups[1:] or groups)
        ancestors = [g for g in groups if holder == g or holder.startswith(g.rstrip("/") + "/")]
        to = _pick(rng, ancestors)
        f[holder.rstrip("/") + "/cycle"] = f[to]
    return Damage(f"{holder}/cycle hard-linked to {to}", FAIL)


@mutation(HDF5)
def external_link(source: Path, target: Path, rng) -> Damage:
    """An array or group replaced by an external link into another file (a copy of this one, or another fixture)."""
    h5py = _h5py()
    name = _pick(rng, ["/one_electron", "/two_electron", "/orbitals", "/references"])
    other = target.with_name("linked-" + target.name)
    same = rng.random() < 0.5
    if same:
        shutil.copyfile(source, other)
    else:
        siblings = sorted(p for p in source.parent.glob("*.h5") if p.name != source.name)
        if siblings:
            shutil.copyfile(_pick(rng, siblings), other)
        else:
            with h5py.File(other, "w") as f:
                f.create_dataset(name, data=np.zeros((2, 2)))
    with _hdf5_edit(source, target) as f:
        if name not in f:
            name = "/one_electron"
        with h5py.File(other, "r") as linked:
            same = same or _same_hdf5_object(f, linked, name)
        del f[name]
        f[name] = h5py.ExternalLink(other.name, name)
    what = "a copy" if same else "another file"
    return Damage(f"{name} -> external link to {what}", EITHER if same else FAIL)


def _same_hdf5_object(a, b, name: str) -> bool:
    """Whether ``name`` holds the same attributes, values and members in both open files."""
    h5py = _h5py()
    if name not in a or name not in b:
        return False
    x, y = a[name], b[name]
    if type(x) is not type(y) or not _same_json(_attrs_of(x), _attrs_of(y)):
        return False
    if isinstance(x, h5py.Dataset):
        return x.dtype == y.dtype and x.shape == y.shape and x[()].tobytes() == y[()].tobytes()
    if sorted(x) != sorted(y):
        return False
    return all(_same_hdf5_object(a, b, f"{name}/{member}") for member in x)


def _attrs_of(obj) -> dict:
    return {key: repr(_plain(value)) for key, value in obj.attrs.items()}


@mutation(HDF5)
def external_storage(source: Path, target: Path, rng) -> Damage:
    """An array's values stored in a raw file outside: the same bytes, other bytes, or a missing file."""
    name = _pick(rng, ["one_electron", "two_electron"])
    raw = target.with_name(target.stem + "-" + name + ".raw")
    how = _pick(rng, ["same", "other", "missing"])
    with _hdf5_edit(source, target) as f:
        data = f[name][()]
        if how == "same":
            raw.write_bytes(data.astype("<f8").tobytes())
        elif how == "other":
            raw.write_bytes(rng.standard_normal(data.size).astype("<f8").tobytes())
        attrs = dict(f[name].attrs)
        del f[name]
        dataset = f.create_dataset(name, shape=data.shape, dtype="<f8", external=[(raw.name, 0, data.size * 8)])
        for key, value in attrs.items():
            dataset.attrs[key] = value
    return Damage(f"/{name} in external raw storage ({how} bytes)", EITHER if how == "same" else FAIL)


@mutation(HDF5)
def huge_chunked(source: Path, target: Path, rng) -> Damage:
    """Arrays declared huge, chunked, with no chunk written (they read as fill values): one array
    alone (its shape disagrees with the count), or every array and the count made consistent, so
    only a check of the declared size before reading stands between the reader and terabytes."""
    big = int(_pick(rng, [2_000, 20_000]))
    consistent = rng.random() < 0.5
    with _hdf5_edit(source, target) as f:
        names = ["one_electron", "two_electron"] if consistent else [_pick(rng, ["one_electron", "two_electron"])]
        for name in names:
            old = f[name]
            if consistent:
                shape = tuple(big if d > 3 else d for d in old.shape)
            else:
                shape = tuple(big if d > 3 else d for d in old.shape) if rng.random() < 0.7 else (big,) * old.ndim
            attrs = dict(old.attrs)
            del f[name]
            chunks = tuple(min(d, 64) for d in shape)
            fill = float(rng.integers(0, 2))
            dataset = f.create_dataset(name, shape=shape, dtype="<f8", chunks=chunks, fillvalue=fill)
            for key, value in attrs.items():
                dataset.attrs[key] = value
        if consistent:
            f["orbitals"].attrs["count"] = big
            if "irreps" in f["orbitals"]:
                _replace_dataset(f, "orbitals/irreps", np.zeros(big, dtype=np.int64))
    what = "every array and the count" if consistent else names[0]
    return Damage(f"{what} declared {big} orbitals, chunked, no data written", FAIL)


def _arrays_json(doc):
    return [n for n in ("one_electron", "two_electron") if "data" in doc[n]]


def _relative_change(value: float, scale: float, rng) -> float:
    """``value`` changed by about ``scale`` relative (absolute when it is zero), never to itself."""
    sign = _pick(rng, [-1.0, 1.0])
    new = value * (1 + sign * scale) if value != 0 else sign * scale
    if new == value:
        new = float(np.nextafter(value, np.inf * sign))
    return float(new)


def _scale(rng) -> float:
    return float(10 ** rng.uniform(-15, -1))


@mutation(JSON, HDF5)
def perturb_element(source: Path, target: Path, rng) -> Damage:
    """One array element changed by a relative 1e-15 to 1e-1."""
    scale = _scale(rng)
    if container_of(source) == JSON:
        doc = _read_json(source)
        name = _pick(rng, _arrays_json(doc))
        values = doc[name]["data"]
        i = int(rng.integers(len(values)))
        values[i] = _relative_change(float(values[i]), scale, rng)
        _write_json(doc, target)
        return Damage(f"{name}[{i}] changed by {scale:.1e} relative", FAIL)
    with _hdf5_edit(source, target) as f:
        name = _pick(rng, ["one_electron", "two_electron"])
        data = f[name][()]
        flat = data.reshape(-1)
        i = int(rng.integers(flat.size))
        flat[i] = _relative_change(float(flat[i]), scale, rng)
        f[name][...] = data
    return Damage(f"{name}[{i}] changed by {scale:.1e} relative", FAIL)


def orbit(index: tuple[int, ...], notation: str, antisymmetrized: bool) -> list[tuple[tuple[int, ...], int]]:
    """The images of a dense index under the real permutational symmetry of its notation, with signs.

    Chemist (pq|rs): p↔q, r↔s, (pq)↔(rs). Physicist ⟨pq|rs⟩: (p,r)↔(q,s), p↔r with q↔s, and the
    real swaps; antisymmetrized ⟨pq‖rs⟩ also changes sign under p↔q and under r↔s.

    >>> sorted(i for i, _ in orbit((0, 1, 2, 3), "chemist", False))[:2]
    [(0, 1, 2, 3), (0, 1, 3, 2)]
    """
    p, q, r, s = index
    if notation == "chemist":
        images = {(p, q, r, s), (q, p, r, s), (p, q, s, r), (q, p, s, r)}
        images |= {(c, d, a, b) for a, b, c, d in images}
        return [(i, 1) for i in images]
    signed = {(p, q, r, s): 1}
    frontier = [(p, q, r, s)]
    while frontier:
        a, b, c, d = frontier.pop()
        sign = signed[(a, b, c, d)]
        moves = [((b, a, d, c), 1), ((c, d, a, b), 1), ((c, b, a, d), 1), ((a, d, c, b), 1)]
        if antisymmetrized:
            moves = [((b, a, d, c), 1), ((c, d, a, b), 1), ((b, a, c, d), -1), ((a, b, d, c), -1)]
        for image, factor in moves:
            if image not in signed:
                signed[image] = sign * factor
                frontier.append(image)
    return list(signed.items())


@mutation(JSON, HDF5)
def perturb_orbit(source: Path, target: Path, rng) -> Damage:
    """A two-electron value changed by a relative 1e-15 to 1e-1 in every place its symmetry puts it
    (or h_pq and h_qp together): the symmetry checks cannot see it, the fingerprint must."""
    scale = _scale(rng)
    if container_of(source) == JSON:
        doc = _read_json(source)
        array = doc["two_electron"]
        if "data" not in array or array["storage"] != "dense" or doc["orbitals"]["basis"] == "unrestricted":
            return _perturb_one_electron_pair_json(doc, target, scale, rng)
        shape = array["shape"]
        data = np.array(array["data"]).reshape(shape)
        notation, anti = array["notation"], bool(array.get("antisymmetrized", False))
        _perturb_orbit_array(data, notation, anti, scale, rng)
        array["data"] = data.reshape(-1).tolist()
        _write_json(doc, target)
        return Damage(f"a two-electron orbit changed by {scale:.1e} relative", FAIL)
    with _hdf5_edit(source, target) as f:
        dataset = f["two_electron"]
        if dataset.attrs["storage"] != "dense":
            data = f["one_electron"][()]
            _perturb_pair(data, scale, rng)
            f["one_electron"][...] = data
            return Damage(f"h_pq = h_qp changed by {scale:.1e} relative", FAIL)
        data = dataset[()]
        notation = str(dataset.attrs["notation"])
        anti = bool(dataset.attrs.get("antisymmetrized", False))
        if data.ndim == 5:  # unrestricted: the αα or ββ block keeps the full symmetry
            block = int(_pick(rng, [0, 2]))
            _perturb_orbit_array(data[block], notation, anti, scale, rng)
        else:
            _perturb_orbit_array(data, notation, anti, scale, rng)
        dataset[...] = data
    return Damage(f"a two-electron orbit changed by {scale:.1e} relative", FAIL)


def _perturb_orbit_array(data: np.ndarray, notation: str, anti: bool, scale: float, rng) -> None:
    nonzero = np.argwhere(data != 0)
    index = tuple(int(i) for i in (_pick(rng, nonzero) if len(nonzero) else rng.integers(0, data.shape[0], 4)))
    old = float(data[index])
    new = _relative_change(old, scale, rng)
    for image, sign in orbit(index, notation, anti):
        data[image] = sign * new


def _perturb_pair(h: np.ndarray, scale: float, rng) -> None:
    block = h[int(rng.integers(h.shape[0]))] if h.ndim == 3 else h
    p, q = (int(i) for i in rng.integers(0, block.shape[0], 2))
    block[p, q] = block[q, p] = _relative_change(float(block[p, q]), scale, rng)


def _perturb_one_electron_pair_json(doc, target: Path, scale: float, rng) -> Damage:
    array = doc["one_electron"]
    h = np.array(array["data"]).reshape(array["shape"])
    _perturb_pair(h, scale, rng)
    array["data"] = h.reshape(-1).tolist()
    _write_json(doc, target)
    return Damage(f"h_pq = h_qp changed by {scale:.1e} relative", FAIL)


@mutation(JSON, HDF5)
def change_electrons(source: Path, target: Path, rng) -> Damage:
    """An electron count one more or less, or α and β swapped when they differ."""
    json_file = container_of(source) == JSON
    doc = _read_json(source) if json_file else None
    with _nullcontext() if json_file else _hdf5_edit(source, target) as f:
        counts = doc["electrons"] if json_file else f["electrons"].attrs
        alpha, beta = int(counts["alpha"]), int(counts["beta"])
        if alpha != beta and rng.random() < 0.3:
            counts["alpha"], counts["beta"] = beta, alpha
            what = "alpha and beta swapped"
        else:
            spin = _pick(rng, ["alpha", "beta"])
            step = _pick(rng, [-1, 1]) if int(counts[spin]) > 0 else 1
            counts[spin] = int(counts[spin]) + step
            what = f"{spin} {step:+d}"
    if json_file:
        _write_json(doc, target)
    return Damage(f"electrons: {what}", FAIL)


class _nullcontext:
    def __enter__(self):
        return None

    def __exit__(self, *exc):
        return False


@mutation(JSON, HDF5)
def change_core_energy(source: Path, target: Path, rng) -> Damage:
    """The core energy, or one of its parts, changed by a relative 1e-15 to 1e-1."""
    scale = _scale(rng)
    part = rng.random() < 0.3
    if container_of(source) == JSON:
        doc = _read_json(source)
        parts = doc.get("core_energy_parts") or {}
        if part and parts:
            key = _pick(rng, parts)
            parts[key] = _relative_change(float(parts[key]), max(scale, 1e-8), rng)
            what = f"core_energy_parts.{key}"
        else:
            doc["core_energy"] = _relative_change(float(doc["core_energy"]), scale, rng)
            what = "core_energy"
        _write_json(doc, target)
    else:
        with _hdf5_edit(source, target) as f:
            parts = f["core_energy_parts"].attrs if "core_energy_parts" in f else {}
            if part and len(parts):
                key = _pick(rng, list(parts))
                parts[key] = _relative_change(float(parts[key]), max(scale, 1e-8), rng)
                what = f"core_energy_parts@{key}"
            else:
                f.attrs["core_energy"] = _relative_change(float(f.attrs["core_energy"]), scale, rng)
                what = "core_energy"
    return Damage(f"{what} changed by {scale:.1e} relative", FAIL)


@mutation(JSON, HDF5)
def change_reference(source: Path, target: Path, rng) -> Damage:
    """A reference changed: its energy by 1e-5 to 1e-1 hartree (must fail), or its 2S, root, occupation,
    method or tolerance (may pass: another state can have the same energy)."""
    how = _pick(rng, ["energy", "energy", "energy", "two_s", "root", "occupation", "method", "tolerance"])
    shift = float(10 ** rng.uniform(-5, -1)) * _pick(rng, [-1, 1])
    if container_of(source) == JSON:
        doc = _read_json(source)
        if not doc.get("references"):
            shutil.copyfile(source, target)
            return Damage("no reference to change", PASS)
        ref = _pick(rng, doc["references"])
        expect = _change_reference(ref, how, shift, rng, doc["orbitals"]["count"])
        _write_json(doc, target)
        return Damage(f"reference {ref['label']}: {how} changed", expect)
    with _hdf5_edit(source, target) as f:
        if "references" not in f or not len(f["references"]):
            return Damage("no reference to change", PASS)
        label = _pick(rng, list(f["references"]))
        group = f["references"][label]
        ref = {key: _plain(value) for key, value in group.attrs.items()}
        if "occupation" in group:
            ref["occupation"] = {spin: group["occupation"][spin][()].tolist() for spin in group["occupation"]}
        expect = _change_reference(ref, how, shift, rng, int(f["orbitals"].attrs["count"]))
        for key, value in ref.items():
            if key == "occupation":
                for spin, indices in value.items():
                    _replace_dataset(f, f"references/{label}/occupation/{spin}", np.array(indices, dtype=np.int64))
            else:
                group.attrs[key] = value
    return Damage(f"reference {label}: {how} changed", expect)


def _change_reference(ref: dict, how: str, shift: float, rng, count: int) -> str:
    if how == "energy":
        ref["energy"] = float(ref["energy"]) + shift
        return FAIL if abs(shift) > 10 * float(ref.get("tolerance", 1e-6)) else EITHER
    if how == "two_s":
        ref["two_s"] = int(ref.get("two_s", 0)) + 2
    elif how == "root":
        ref["root"] = int(ref.get("root", 0)) + 1
    elif how == "occupation" and ref.get("occupation"):
        spin = _pick(rng, list(ref["occupation"]))
        occupied = list(ref["occupation"][spin])
        free = [i for i in range(count) if i not in occupied]
        if occupied and free:
            occupied[int(rng.integers(len(occupied)))] = _pick(rng, free)
            ref["occupation"][spin] = sorted(occupied)
    elif how == "method":
        ref["method"] = "ccsd"
    elif how == "tolerance":
        ref["tolerance"] = float(10 ** rng.uniform(-12, -2))
    return EITHER


def case_name(fixture: str, mutation_name: str, seed: int) -> str:
    """``fixture:mutation:seed``, the form a case is named in reports and on the command line."""
    return f"{os.path.basename(fixture)}:{mutation_name}:{seed}"
