"""Shared helpers of the foundation tests.

Everything here is written from docs/format.md, not from the library: shapes, pair
indices, and two plain writers (``json`` and ``h5py``) that produce files the
way another group would. The comparison helpers compare bit for bit.
"""

from __future__ import annotations

import hashlib
import json
import math
import os
import struct
from pathlib import Path
from typing import Any

import h5py
import numpy as np
from hypothesis import HealthCheck, settings
from hypothesis import strategies as st

from integrity.model.hamiltonian import Electrons, Hamiltonian, Orbitals, Reference, TwoElectron

BASES = ("restricted", "unrestricted", "spin-orbital")
LAYOUTS = ("interleaved", "blocked")
NOTATIONS = ("chemist", "physicist")
#: irreps of each abelian point group the format allows (docs/format.md)
GROUP_ORDER = {"C1": 1, "Ci": 2, "C2": 2, "Cs": 2, "C2v": 4, "C2h": 4, "D2": 4, "D2h": 8}

#: floats that a careless writer or reader changes: signed zero, subnormals, extremes,
#: and values needing all 17 significant digits
SPECIAL_FLOATS = (
    -0.0,
    0.0,
    5e-324,
    -5e-324,
    2.225073858507201e-308,  # largest subnormal
    2.2250738585072014e-308,  # smallest normal
    1e308,
    -1e308,
    1.7976931348623157e308,
    0.1,
    0.30000000000000004,
    1.2345678901234567,
    -9.876543210987654e-05,
    1 / 3,
    123456789.12345679,
)

#: generated complex arrays carry negative zeros in both parts (the JSON reader keeps them)
NEGATIVE_ZEROS_IN_COMPLEX_ARRAYS = True

#: hypothesis settings for tests that touch files: no deadline, no example database
#: (it would write outside tests/foundation), moderate example counts (raise them for a
#: long local hunt with FOUNDATION_MAX_EXAMPLES=1000)
FILE_SETTINGS = settings(
    max_examples=int(os.environ.get("FOUNDATION_MAX_EXAMPLES", "40")),
    deadline=None,
    database=None,
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large],
)


# ---------------------------------------------------------------- shapes and pairs


def n_pairs(n: int) -> int:
    return n * (n + 1) // 2


def pair(p: int, q: int) -> int:
    """docs/format.md: the pair index of p >= q is p(p+1)/2 + q (either order here)."""
    p, q = max(p, q), min(p, q)
    return p * (p + 1) // 2 + q


def one_shape(basis: str, n: int) -> tuple[int, ...]:
    return (2, n, n) if basis == "unrestricted" else (n, n)


def two_shape(basis: str, n: int, storage: str) -> tuple[int, ...]:
    block = {
        "dense": (n, n, n, n),
        "pairs": (n_pairs(n), n_pairs(n)),
        "unique": (n_pairs(n_pairs(n)),),
    }[storage]
    return (3, *block) if basis == "unrestricted" else block


def allowed_storages(basis: str, notation: str, is_complex: bool) -> list[str]:
    """docs/format.md: packed storage needs chemist notation and real values; no unique unrestricted."""
    out = ["dense"]
    if notation == "chemist" and not is_complex:
        out.append("pairs")
        if basis != "unrestricted":
            out.append("unique")
    return out


def dense_from_pairs_slow(pairs: np.ndarray, n: int) -> np.ndarray:
    """Dense chemist block from a pair matrix, element by element (obviously right)."""
    out = np.empty((n, n, n, n), dtype=pairs.dtype)
    for p in range(n):
        for q in range(n):
            for r in range(n):
                for s in range(n):
                    out[p, q, r, s] = pairs[pair(p, q), pair(r, s)]
    return out


def pairs_from_unique_slow(unique: np.ndarray, npair: int) -> np.ndarray:
    """Pair matrix from the lower triangle stored row by row."""
    out = np.empty((npair, npair), dtype=unique.dtype)
    k = 0
    for i in range(npair):
        for j in range(i + 1):
            out[i, j] = out[j, i] = unique[k]
            k += 1
    return out


def unique_from_pairs_slow(pairs: np.ndarray) -> np.ndarray:
    npair = pairs.shape[0]
    return np.array([pairs[i, j] for i in range(npair) for j in range(i + 1)], dtype=pairs.dtype)


def dense_chemist_slow(
    array: np.ndarray, basis: str, n: int, notation: str, storage: str, antisymmetrized: bool = False
) -> np.ndarray:
    """The two-electron array as dense chemist (the fingerprint's part 4), from docs/format.md."""
    blocks = list(array) if basis == "unrestricted" else [array]
    out = []
    for block in blocks:
        if storage == "unique":
            block = dense_from_pairs_slow(pairs_from_unique_slow(block, n_pairs(n)), n)
        elif storage == "pairs":
            block = dense_from_pairs_slow(block, n)
        elif notation == "physicist" and not antisymmetrized:
            # <pq|rs> = (pr|qs), so chem[p, q, r, s] = phys[p, r, q, s]
            chem = np.empty_like(block)
            for p, q, r, s in np.ndindex(block.shape):
                chem[p, q, r, s] = block[p, r, q, s]
            block = chem
        out.append(block)
    return np.stack(out) if basis == "unrestricted" else out[0]


# ---------------------------------------------------------------- random values


def random_values(rng: np.random.Generator, shape, is_complex: bool = False) -> np.ndarray:
    """Random float64 (or complex128) values spanning many magnitudes, with special floats."""

    def part():
        values = rng.standard_normal(shape)
        scale = rng.choice([1.0, 1e-300, 1e300, 1e-10, 1e12], size=shape, p=[0.6, 0.1, 0.1, 0.1, 0.1])
        values = values * scale
        flat = values.reshape(-1)
        picks = rng.integers(0, flat.size, size=min(flat.size, len(SPECIAL_FLOATS)))
        for index, special in zip(picks, rng.permutation(SPECIAL_FLOATS), strict=False):
            flat[index] = special
        return values

    if not is_complex:
        return part()
    out = np.empty(shape, dtype=np.complex128)
    out.real, out.imag = part(), part()
    return _without_complex_negative_zeros(out)


def _without_complex_negative_zeros(array: np.ndarray) -> np.ndarray:
    if not NEGATIVE_ZEROS_IN_COMPLEX_ARRAYS and array.dtype.kind == "c":
        for part in (array.real, array.imag):
            part[(part == 0) & np.signbit(part)] = 0.0
    return array


def finite_floats():
    return st.one_of(st.sampled_from(SPECIAL_FLOATS), st.floats(allow_nan=False, allow_infinity=False))


@st.composite
def float_arrays(draw, shape, is_complex=False):
    """A random array of the shape with hypothesis-chosen values put in at random places."""
    rng = np.random.default_rng(draw(st.integers(0, 2**32 - 1)))
    array = random_values(rng, shape, is_complex)
    size = int(np.prod(shape))
    for _ in range(draw(st.integers(0, min(6, size)))):
        index = draw(st.integers(0, size - 1))
        value = draw(finite_floats())
        if is_complex:
            old = array.flat[index]
            array.flat[index] = complex(value, old.imag) if draw(st.booleans()) else complex(old.real, value)
        else:
            array.flat[index] = value
    return _without_complex_negative_zeros(array)


# ---------------------------------------------------------------- hypothesis: Hamiltonians

#: text that survives both containers: no NUL (HDF5 strings), no lone surrogates (UTF-8)
safe_text = st.text(st.characters(codec="utf-8", exclude_characters="\x00"), max_size=20)
#: names of HDF5 groups: additionally no "/" and not "." (see the dedicated tests)
label_text = st.text(st.characters(codec="utf-8", exclude_characters="\x00/"), min_size=1, max_size=12).filter(
    lambda s: s != "."
)
key_text = st.text(st.characters(codec="utf-8", exclude_characters="\x00"), min_size=1, max_size=12)
int64s = st.integers(-(2**63), 2**63 - 1)

json_values = st.recursive(
    st.none() | st.booleans() | st.integers() | finite_floats() | safe_text,
    lambda inner: st.lists(inner, max_size=3) | st.dictionaries(safe_text, inner, max_size=3),
    max_leaves=8,
)


@st.composite
def references(draw, n: int, full: bool = False):
    """Reference entries with unique labels; ``full``: at least one, every optional field set."""
    labels = draw(st.lists(label_text, min_size=1 if full else 0, max_size=3, unique=True))
    out = []
    for label in labels:
        method = draw(st.sampled_from(["hf", "fci"]) | safe_text.filter(bool))

        def maybe(strategy):
            return draw(strategy) if full else draw(st.none() | strategy)

        occupation = maybe(
            st.tuples(
                st.lists(st.integers(0, n - 1), unique=True, max_size=n).map(tuple),
                st.lists(st.integers(0, n - 1), unique=True, max_size=n).map(tuple),
            )
        )
        out.append(
            Reference(
                label=label,
                method=method,
                energy=draw(finite_floats()),
                electrons=maybe(st.builds(Electrons, st.integers(0, 2 * n), st.integers(0, 2 * n))),
                two_s=maybe(st.integers(0, 10)),
                irrep=maybe(st.integers(0, 7)),
                root=maybe(st.integers(0, 10)),
                occupation=occupation,
                tolerance=maybe(st.floats(min_value=5e-324, max_value=1e10)),
            )
        )
    return tuple(out)


@st.composite
def hamiltonians(draw, optional: bool | None = None, sizes=(1, 2, 3, 4, 5)):
    """Any valid Hamiltonian of the format: every basis, layout, storage, real or complex,
    with or without each optional field (all of them when ``optional`` is True)."""
    basis = draw(st.sampled_from(BASES))
    layout = draw(st.sampled_from(LAYOUTS)) if basis == "spin-orbital" else None
    even = [n for n in sizes if n % 2 == 0]
    n = draw(st.sampled_from(even if basis == "spin-orbital" else list(sizes)))
    is_complex = draw(st.booleans())
    notation = draw(st.sampled_from(NOTATIONS))
    storage = draw(st.sampled_from(allowed_storages(basis, notation, is_complex)))
    can_antisymmetrize = basis == "spin-orbital" and notation == "physicist"
    antisymmetrized = draw(st.sampled_from([None, False, True] if can_antisymmetrize else [None, False]))

    def maybe(strategy):
        if optional is None:
            return draw(st.none() | strategy)
        return draw(strategy) if optional else None

    point_group = maybe(st.sampled_from(sorted(GROUP_ORDER)))
    order = GROUP_ORDER.get(point_group, 8)
    irreps = maybe(st.lists(st.integers(0, order - 1), min_size=n, max_size=n).map(tuple))
    provenance = maybe(
        st.dictionaries(
            key_text.filter(lambda k: k != "history"),
            safe_text | int64s | finite_floats() | st.booleans(),
            max_size=4,
        )
    )
    history = maybe(st.lists(st.dictionaries(safe_text, json_values, max_size=4), max_size=3))
    if history is not None:
        provenance = {**(provenance or {}), "history": history}
    refs = maybe(references(n, full=bool(optional)))
    return Hamiltonian(
        orbitals=Orbitals(
            count=n,
            basis=basis,
            spin_layout=layout,
            point_group=point_group,
            irreps=irreps,
            canonical=maybe(st.booleans()),
        ),
        electrons=Electrons(draw(st.integers(0, n)), draw(st.integers(0, n))),
        core_energy=draw(finite_floats()),
        one_electron=draw(float_arrays(one_shape(basis, n), is_complex and draw(st.booleans()))),
        two_electron=TwoElectron(
            draw(float_arrays(two_shape(basis, n, storage), is_complex)),
            notation=notation,
            storage=storage,
            interaction=draw(st.sampled_from([None, "coulomb", "model"])),
            antisymmetrized=antisymmetrized,
        ),
        core_energy_parts=maybe(st.dictionaries(key_text, finite_floats(), max_size=3)),
        references=refs or (),
        title=maybe(safe_text),
        provenance=provenance,
    )


# ---------------------------------------------------------------- bit-exact comparison


def float_bits(value) -> bytes:
    return struct.pack("<d", float(value))


def assert_same_bits(actual, expected, what: str) -> None:
    """Same shape, same dtype (native order), same bytes: signed zeros and all."""
    actual = np.asarray(actual)
    expected = np.asarray(expected)
    assert actual.shape == expected.shape, f"{what}: shape {actual.shape} != {expected.shape}"
    assert actual.dtype == expected.dtype, f"{what}: dtype {actual.dtype} != {expected.dtype}"
    a = np.ascontiguousarray(actual, dtype=actual.dtype.newbyteorder("<")).view(np.uint8)
    b = np.ascontiguousarray(expected, dtype=expected.dtype.newbyteorder("<")).view(np.uint8)
    if not np.array_equal(a, b):
        flat_a, flat_b = actual.reshape(-1), expected.reshape(-1)
        bad = [i for i in range(flat_a.size) if flat_a[i].tobytes() != flat_b[i].tobytes()]
        raise AssertionError(
            f"{what}: {len(bad)} of {flat_a.size} elements differ in their bits; first at flat index "
            f"{bad[0]}: {flat_a[bad[0]]!r} != {flat_b[bad[0]]!r}"
        )
    assert np.array_equal(np.signbit(actual.real), np.signbit(expected.real)), what


def assert_same_value(actual: Any, expected: Any, what: str) -> None:
    """Deep equality of plain values that also tells 0.0 from -0.0 and 1 from 1.0 and True."""
    if isinstance(expected, float):
        assert type(actual) in (float, np.float64), f"{what}: {actual!r} is not a float"
        assert float_bits(actual) == float_bits(expected), f"{what}: {actual!r} != {expected!r}"
    elif isinstance(expected, bool):
        assert actual is expected or (isinstance(actual, np.bool_) and bool(actual) is expected), (
            f"{what}: {actual!r} != {expected!r}"
        )
    elif isinstance(expected, dict):
        assert isinstance(actual, dict), f"{what}: {actual!r} is not an object"
        assert set(actual) == set(expected), f"{what}: keys {sorted(actual)} != {sorted(expected)}"
        for key in expected:
            assert_same_value(actual[key], expected[key], f"{what}.{key}")
    elif isinstance(expected, list | tuple):
        assert isinstance(actual, list | tuple), f"{what}: {actual!r} is not a list"
        assert len(actual) == len(expected), f"{what}: {actual!r} != {expected!r}"
        for i, (a, b) in enumerate(zip(actual, expected, strict=True)):
            assert_same_value(a, b, f"{what}[{i}]")
    elif isinstance(expected, int):
        assert not isinstance(actual, bool | float) and int(actual) == expected, f"{what}: {actual!r} != {expected!r}"
    else:
        assert actual == expected, f"{what}: {actual!r} != {expected!r}"


def assert_same_hamiltonian(actual: Hamiltonian, expected: Hamiltonian, *, checksum=True) -> None:
    """Every field equal, arrays bit for bit, fingerprints equal."""
    from integrity.model.fingerprint import fingerprint

    assert actual.orbitals == expected.orbitals, f"{actual.orbitals} != {expected.orbitals}"
    assert_same_value(actual.electrons.alpha, expected.electrons.alpha, "electrons.alpha")
    assert_same_value(actual.electrons.beta, expected.electrons.beta, "electrons.beta")
    assert float_bits(actual.core_energy) == float_bits(expected.core_energy), (
        f"core_energy {actual.core_energy!r} != {expected.core_energy!r}"
    )
    assert_same_bits(actual.one_electron, expected.one_electron, "one_electron")
    assert_same_bits(actual.two_electron.array, expected.two_electron.array, "two_electron")
    for flag in ("notation", "storage", "interaction", "antisymmetrized"):
        a, b = getattr(actual.two_electron, flag), getattr(expected.two_electron, flag)
        assert a == b and type(a) is type(b), f"two_electron.{flag}: {a!r} != {b!r}"
    if expected.core_energy_parts is None:
        assert actual.core_energy_parts is None
    else:
        assert_same_value(dict(actual.core_energy_parts), dict(expected.core_energy_parts), "core_energy_parts")
    assert len(actual.references) == len(expected.references), "references"
    for i, (a, b) in enumerate(zip(actual.references, expected.references, strict=True)):
        for name in ("label", "method", "electrons", "two_s", "irrep", "root", "occupation"):
            assert getattr(a, name) == getattr(b, name), f"references[{i}].{name}"
        assert float_bits(a.energy) == float_bits(b.energy), f"references[{i}].energy"
        if b.tolerance is None:
            assert a.tolerance is None
        else:
            assert float_bits(a.tolerance) == float_bits(b.tolerance), f"references[{i}].tolerance"
    assert actual.title == expected.title, f"title {actual.title!r} != {expected.title!r}"
    if expected.provenance is None:
        assert actual.provenance is None
    else:
        assert_same_value(dict(actual.provenance), dict(expected.provenance), "provenance")
    assert actual.format_version == expected.format_version
    assert actual.energy_unit == expected.energy_unit
    if checksum:
        assert actual.checksum == expected.checksum
    assert fingerprint(actual) == fingerprint(expected)


# ---------------------------------------------------------------- plain trees and writers


def random_tree(
    rng: np.random.Generator,
    *,
    basis="restricted",
    n=2,
    layout=None,
    notation="chemist",
    storage="dense",
    is_complex=False,
    optional=True,
    wide=True,
) -> dict:
    """A valid file's content as docs/format.md lists it; arrays as NumPy arrays.

    ``two_electron`` holds its array under ``"array"`` beside its attributes;
    ``references`` is a list of entries with their ``label``. ``wide`` values span
    1e-300..1e300 and include the special floats; otherwise they are standard normal.
    """

    def values(shape):
        if wide:
            return random_values(rng, shape, is_complex)
        out = rng.standard_normal(shape)
        return out + 1j * rng.standard_normal(shape) if is_complex else out

    if basis == "spin-orbital" and layout is None:
        layout = "interleaved"
    tree: dict[str, Any] = {
        "format": "integrity.hamiltonian",
        "format_version": 1,
        "energy_unit": "hartree",
        "orbitals": {"count": n, "basis": basis},
        "electrons": {"alpha": 1, "beta": min(1, n - 1)},
        "core_energy": float(rng.standard_normal()),
        "one_electron": values(one_shape(basis, n)),
        "two_electron": {
            "array": values(two_shape(basis, n, storage)),
            "notation": notation,
            "storage": storage,
        },
    }
    if layout is not None:
        tree["orbitals"]["spin_layout"] = layout
    if optional:
        tree["title"] = f"random test Hamiltonian n={n} α/β"
        tree["orbitals"]["point_group"] = "C2v"
        tree["orbitals"]["irreps"] = [int(i) for i in rng.integers(0, 4, size=n)]
        tree["orbitals"]["canonical"] = True
        nuclear = float(rng.standard_normal())
        frozen = float(rng.standard_normal())
        tree["core_energy"] = nuclear + frozen
        tree["core_energy_parts"] = {"nuclear_repulsion": nuclear, "frozen_core": frozen}
        tree["two_electron"]["interaction"] = "coulomb"
        tree["references"] = [
            {
                "label": "hf",
                "method": "hf",
                "energy": float(rng.standard_normal()),
                "occupation": {"alpha": [0], "beta": [0] if n > 1 else []},
                "tolerance": 1e-8,
            },
            {
                "label": "fci",
                "method": "fci",
                "energy": float(rng.standard_normal()),
                "electrons": {"alpha": 1, "beta": 0},
                "two_s": 1,
                "irrep": 0,
                "root": 0,
            },
        ]
        tree["provenance"] = {
            "producer": "foundation tests",
            "seed": 7,
            "exact": True,
            "scale": 0.1,
            "history": [{"step": "generated", "n": n}, {"step": "checked", "passed": True}],
        }
    return tree


def hamiltonian_from_tree(tree: dict) -> Hamiltonian:
    """The Hamiltonian a correct reader must produce from ``tree`` (built field by field)."""
    orb = tree["orbitals"]
    two = tree["two_electron"]
    refs = []
    for entry in tree.get("references", []):
        occ = entry.get("occupation")
        el = entry.get("electrons")
        refs.append(
            Reference(
                label=entry["label"],
                method=entry["method"],
                energy=entry["energy"],
                electrons=None if el is None else Electrons(el["alpha"], el["beta"]),
                two_s=entry.get("two_s"),
                irrep=entry.get("irrep"),
                root=entry.get("root"),
                occupation=None if occ is None else (tuple(occ["alpha"]), tuple(occ["beta"])),
                tolerance=entry.get("tolerance"),
            )
        )
    return Hamiltonian(
        orbitals=Orbitals(
            count=orb["count"],
            basis=orb["basis"],
            spin_layout=orb.get("spin_layout"),
            point_group=orb.get("point_group"),
            irreps=None if "irreps" not in orb else tuple(orb["irreps"]),
            canonical=orb.get("canonical"),
        ),
        electrons=Electrons(tree["electrons"]["alpha"], tree["electrons"]["beta"]),
        core_energy=tree["core_energy"],
        one_electron=np.asarray(tree["one_electron"]),
        two_electron=TwoElectron(
            np.asarray(two["array"]),
            notation=two["notation"],
            storage=two["storage"],
            interaction=two.get("interaction"),
            antisymmetrized=two.get("antisymmetrized"),
        ),
        core_energy_parts=tree.get("core_energy_parts"),
        references=tuple(refs),
        title=tree.get("title"),
        provenance=tree.get("provenance"),
        checksum=tree.get("checksum"),
    )


def encode_json_array(array: np.ndarray, *, complex_as_pairs=None) -> dict:
    """docs/format.md: {"shape", "data"} in C order, or {"shape", "real", "imag"} when complex."""
    array = np.asarray(array)
    flat = array.reshape(-1)
    if array.dtype.kind == "c":
        return {"shape": list(array.shape), "real": flat.real.tolist(), "imag": flat.imag.tolist()}
    return {"shape": list(array.shape), "data": flat.tolist()}


def json_document(tree: dict) -> dict:
    """The JSON document of a tree, built with plain Python (no library code)."""
    doc: dict[str, Any] = {}
    for key, value in tree.items():
        if key == "one_electron":
            doc[key] = encode_json_array(value)
        elif key == "two_electron":
            flags = {k: v for k, v in value.items() if k != "array"}
            doc[key] = flags | encode_json_array(value["array"])
        else:
            doc[key] = json.loads(json.dumps(value))  # a deep copy of plain values
    return doc


def write_plain_json(tree_or_doc: dict, path, *, encoded: bool = False, indent=None) -> str:
    """Write with the standard json module (floats as repr, the shortest round-trip form)."""
    doc = tree_or_doc if encoded else json_document(tree_or_doc)
    text = json.dumps(doc, indent=indent, allow_nan=True)
    with open(path, "w", encoding="utf-8") as handle:
        handle.write(text)
    return text


def write_plain_hdf5(
    tree: dict,
    path,
    *,
    strings: str = "vlen",  # or "fixed": np.bytes_ fixed-length attributes
    booleans: str = "int",  # canonical, antisymmetrized as 0/1; or "bool": h5py's enum boolean
    complex_style: str = "native",  # or "compound": fields ('real', 'imag')
    byteorder: str = "<",
    compression: str | None = None,
    track_order: bool | None = None,
) -> None:
    """Write a tree with plain h5py, following docs/format.md's HDF5 container section."""

    def attr(obj, key, value):
        if isinstance(value, str):
            obj.attrs[key] = np.bytes_(value.encode("utf-8")) if strings == "fixed" else value
        elif isinstance(value, bool | np.bool_):
            as_int = booleans == "int" and key in ("canonical", "antisymmetrized")
            obj.attrs[key] = np.int8(value) if as_int else np.bool_(value)
        elif isinstance(value, int):
            obj.attrs.create(key, np.array(value, dtype=byteorder + "i8"))
        elif isinstance(value, float):
            obj.attrs.create(key, np.array(value, dtype=byteorder + "f8"))
        elif isinstance(value, list):
            obj.attrs[key] = np.asarray(value)
        else:
            obj.attrs[key] = value

    def group(parent, name):
        return parent.create_group(name, track_order=track_order)

    def array(parent, name, values):
        values = np.asarray(values)
        if values.dtype.kind == "c" and complex_style == "compound":
            dtype = np.dtype([("real", byteorder + "f8"), ("imag", byteorder + "f8")])
            data = np.empty(values.shape, dtype=dtype)
            data["real"], data["imag"] = values.real, values.imag
        else:
            data = values.astype(values.dtype.newbyteorder(byteorder))
        options = {}
        if compression is not None and data.size > 0:
            options = {"chunks": True, "compression": compression}
        return parent.create_dataset(name, data=data, **options)

    def string_list(parent, name, texts):
        if strings == "fixed":
            data = np.array([t.encode("utf-8") for t in texts], dtype="S")
            parent.create_dataset(name, data=data)
        else:
            parent.create_dataset(name, data=np.array(texts, dtype=object), dtype=h5py.string_dtype())

    with h5py.File(path, "w", track_order=track_order) as out:
        for key, value in tree.items():
            if key == "orbitals":
                node = group(out, "orbitals")
                for k, v in value.items():
                    if k == "irreps":
                        node.create_dataset("irreps", data=np.asarray(v, dtype=byteorder + "i4"))
                    else:
                        attr(node, k, v)
            elif key in ("electrons", "core_energy_parts"):
                node = group(out, key)
                for k, v in value.items():
                    attr(node, k, v)
            elif key == "one_electron":
                array(out, key, value)
            elif key == "two_electron":
                dataset = array(out, key, value["array"])
                for k, v in value.items():
                    if k != "array":
                        attr(dataset, k, v)
            elif key == "references":
                refs = group(out, "references")
                for entry in value:
                    node = group(refs, entry["label"])
                    for k, v in entry.items():
                        if k == "label":
                            continue
                        if k == "electrons":
                            sub = group(node, "electrons")
                            for spin, count in v.items():
                                attr(sub, spin, count)
                        elif k == "occupation":
                            sub = group(node, "occupation")
                            for spin, indices in v.items():
                                sub.create_dataset(spin, data=np.asarray(indices, dtype=np.int64))
                        else:
                            attr(node, k, v)
            elif key == "provenance":
                node = group(out, "provenance")
                for k, v in value.items():
                    if k == "history":
                        string_list(node, "history", [json.dumps(step) for step in v])
                    else:
                        attr(node, k, v)
            else:
                attr(out, key, value)


# ---------------------------------------------------------------- the fingerprint recipe


def _decode_json_array(node: dict) -> np.ndarray:
    if "data" in node:
        values = np.array(node["data"], dtype=np.float64)
    else:
        values = np.empty(len(node["real"]), dtype=np.complex128)
        values.real, values.imag = node["real"], node["imag"]
    return values.reshape(node["shape"])


def recipe_fingerprint(path: Path) -> str:
    """docs/format.md's fingerprint of a JSON file, with json, struct, hashlib and NumPy only."""
    doc = json.loads(path.read_text(encoding="utf-8"))
    orb = doc["orbitals"]
    header = {
        "format_version": doc["format_version"],
        "orbitals": {
            "count": orb["count"],
            "basis": orb["basis"],
            "spin_layout": orb.get("spin_layout"),
            "point_group": orb.get("point_group"),
            "irreps": orb.get("irreps"),
        },
        "electrons": {"alpha": doc["electrons"]["alpha"], "beta": doc["electrons"]["beta"]},
    }
    digest = hashlib.sha256()
    digest.update(json.dumps(header, sort_keys=True, separators=(",", ":")).encode("utf-8"))
    digest.update(struct.pack("<d", doc["core_energy"]))
    one = _decode_json_array(doc["one_electron"])
    digest.update(one.astype("<c16" if one.dtype.kind == "c" else "<f8").tobytes(order="C"))
    two_node = doc["two_electron"]
    two = _decode_json_array(two_node)
    dense = dense_chemist_slow(
        two,
        orb["basis"],
        orb["count"],
        two_node["notation"],
        two_node["storage"],
        antisymmetrized=bool(two_node.get("antisymmetrized")),
    )
    digest.update(dense.astype("<c16" if dense.dtype.kind == "c" else "<f8").tobytes(order="C"))
    return "sha256:" + digest.hexdigest()


def is_close_to(value: float, published: float, decimals: int) -> bool:
    """``value`` rounds to ``published`` at the printed precision (half a unit of the last place)."""
    return math.isclose(value, published, abs_tol=0.5 * 10**-decimals + 1e-12)
