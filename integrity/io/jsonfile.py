"""The JSON container.

The same tree as HDF5, as JSON objects. An array is ``{"shape": [...],
"data": [...]}`` with values in C order, or ``{"shape": [...], "real": [...],
"imag": [...]}`` when complex; ``two_electron`` carries its attributes
(``notation``, ``storage``, ...) beside ``shape`` and ``data``. Floats are
written in the shortest form that reads back to the same float64, so
HDF5 -> JSON -> HDF5 is bit-exact. ``orbitals.irreps`` and occupations are
read as plain lists or as integer arrays; ``provenance.history`` steps are
written as objects and read as objects or JSON strings.

Reading is strict: NaN and infinities (not JSON) and duplicate keys are
errors, reported with the line and column.
"""

from __future__ import annotations

import json
import math
import os
import re
import uuid

import numpy as np

from integrity.errors import BudgetError, ContainerError, FieldError
from integrity.io.atomic import atomic_output
from integrity.io.content import history_entry_from_text
from integrity.io.document import Document, format_bytes
from integrity.io.schema import excerpt

#: parsing JSON numbers costs about this many bytes of memory per byte of text
PARSE_BYTES_PER_TEXT_BYTE = 3
#: objects and arrays nest at most this deep (the format needs 5: references[i].occupation.alpha.data)
MAX_DEPTH = 64
_CHUNK = 1 << 16
_TOKENS = re.compile(r'"[^"\\]*+(?:\\.[^"\\]*+)*+(?:"|\Z)|[\[\]{}]')


def nesting_problem(text: str) -> str | None:
    """Where the text nests objects and arrays deeper than :data:`MAX_DEPTH`, or None.

    Counts brackets outside strings without parsing (the parser recurses once per
    level, so a deep enough text would exhaust Python's stack).

    >>> nesting_problem('{"a": [[1], {"b": "[[["}]}') is None
    True
    >>> nesting_problem("[" * 100 + "]" * 100)
    'nested deeper than 64 levels at line 1, column 65'
    """
    if text.count("[") + text.count("{") <= MAX_DEPTH:
        return None  # too few openings to nest that deep (most files: a scan of the text costs more)
    depth = 0
    for token in _TOKENS.finditer(text):
        bracket = token.group()
        if bracket in "[{":
            depth += 1
            if depth > MAX_DEPTH:
                start = token.start()
                line = text.count("\n", 0, start) + 1
                column = start - (text.rfind("\n", 0, start) + 1) + 1
                return f"nested deeper than {MAX_DEPTH} levels at line {line}, column {column}"
        elif bracket in "]}":
            depth -= 1
    return None


class _Offending(ValueError):
    """A value json accepts but the format forbids; ``pattern`` finds it in the text."""

    def __init__(self, message, pattern):
        super().__init__(message)
        self.pattern = pattern


def _reject_constant(name: str):
    raise _Offending(
        f"{name} is not JSON; the format forbids NaN and infinities", r"(?<![\w\"])" + re.escape(name) + r"(?![\w\"])"
    )


def _no_duplicates(pairs):
    out = {}
    for key, value in pairs:
        if key in out:
            raise _Offending(f"key {excerpt(key)} appears twice in one object", re.escape(json.dumps(key)) + r"\s*:")
        out[key] = value
    return out


def _excerpt_text(text: str) -> str:
    return text if len(text) <= 160 else text[:157] + "..."


def _position_of(text: str, err: ValueError) -> str:
    """' at line L, column C' of the offending token (its last occurrence for a repeated key)."""
    pattern = getattr(err, "pattern", None)
    if pattern is None:
        return ""
    matches = list(re.finditer(pattern, text))
    if not matches:
        return ""
    where = matches[-1] if "appears twice" in str(err) else matches[0]
    line = text.count("\n", 0, where.start()) + 1
    column = where.start() - (text.rfind("\n", 0, where.start()) + 1) + 1
    return f" at line {line}, column {column}"


def read(path, *, memory: int) -> Document:
    """Read a JSON Hamiltonian file; the text size is checked against ``memory`` first."""
    try:
        size = os.path.getsize(path)
    except FileNotFoundError:
        raise ContainerError(None, "no such file", str(path)) from None
    needed = size * PARSE_BYTES_PER_TEXT_BYTE
    if needed > memory:
        raise BudgetError(
            None,
            f"{format_bytes(size)} of JSON text needs about {format_bytes(needed)} to parse, "
            f"beyond the memory budget of {format_bytes(memory)}; raise --memory or use HDF5",
            str(path),
            needed=needed,
            budget=memory,
        )
    try:
        with open(path, encoding="utf-8") as handle:
            text = handle.read()
    except UnicodeDecodeError as err:
        raise ContainerError(
            None, f"not UTF-8 text (byte {err.start}); is this an HDF5 file named .json?", str(path)
        ) from None
    too_deep = nesting_problem(text)
    if too_deep is not None:
        raise ContainerError(None, f"not readable as JSON: {too_deep}", str(path))
    try:
        tree = json.loads(text, parse_constant=_reject_constant, object_pairs_hook=_no_duplicates)
    except json.JSONDecodeError as err:
        raise ContainerError(
            None, f"invalid JSON at line {err.lineno}, column {err.colno}: {err.msg}", str(path)
        ) from None
    except RecursionError:
        raise ContainerError(None, "not readable as JSON: nested too deep to parse", str(path)) from None
    except ValueError as err:
        raise ContainerError(
            None, f"invalid JSON{_position_of(text, err)}: {_excerpt_text(str(err))}", str(path)
        ) from None
    if not isinstance(tree, dict):
        raise ContainerError(None, f"expected a JSON object at the top, got {type(tree).__name__}", str(path))
    document = Document(path=str(path), container="json", tree=tree, locate=_locate, decoder=lambda: decode(tree))
    return document


def _locate(path: tuple) -> str:
    from integrity.io.schema import render_path

    return render_path(path)


def decode(tree: dict) -> dict:
    """The logical content of a JSON document (arrays decoded to NumPy)."""
    content = {
        k: v
        for k, v in tree.items()
        if k not in ("one_electron", "two_electron", "orbitals", "references", "provenance")
    }
    if isinstance(tree.get("orbitals"), dict):
        orbitals = dict(tree["orbitals"])
        if isinstance(orbitals.get("irreps"), dict):
            orbitals["irreps"] = decode_array(orbitals["irreps"], "orbitals.irreps").astype(int).tolist()
        content["orbitals"] = orbitals
    if isinstance(tree.get("one_electron"), dict):
        content["one_electron"] = decode_array(tree["one_electron"], "one_electron")
    if isinstance(tree.get("two_electron"), dict):
        two = tree["two_electron"]
        flags = {k: v for k, v in two.items() if k not in ("shape", "data", "real", "imag")}
        content["two_electron"] = {"array": decode_array(two, "two_electron"), **flags}
    if isinstance(tree.get("references"), list):
        content["references"] = [_reference(i, entry) for i, entry in enumerate(tree["references"])]
    if isinstance(tree.get("provenance"), dict):
        provenance = dict(tree["provenance"])
        if isinstance(provenance.get("history"), list):
            # steps may be objects, or (mirroring HDF5) JSON text of objects
            provenance["history"] = [
                history_entry_from_text(s, unwrap_strings=False) if isinstance(s, str) else s
                for s in provenance["history"]
            ]
        content["provenance"] = provenance
    return content


def _reference(i, entry):
    if not isinstance(entry, dict) or not isinstance(entry.get("occupation"), dict):
        return entry
    entry = dict(entry)
    occ = dict(entry["occupation"])
    for spin in ("alpha", "beta"):
        if isinstance(occ.get(spin), dict):
            occ[spin] = decode_array(occ[spin], f"references[{i}].occupation.{spin}").astype(int).tolist()
    entry["occupation"] = occ
    return entry


def decode_array(node: dict, field: str) -> np.ndarray:
    """NumPy array from ``{"shape", "data"}`` or ``{"shape", "real", "imag"}``.

    >>> values = decode_array({"shape": [2], "real": [1.0, -0.0], "imag": [0.5, -0.0]}, "x")
    >>> values.tolist(), bool(np.signbit(values.real[1])), bool(np.signbit(values.imag[1]))
    ([(1+0.5j), (-0-0j)], True, True)
    """
    shape = node.get("shape")
    if not isinstance(shape, list) or not all(isinstance(s, int) and s >= 0 for s in shape):
        raise FieldError(f"{field}.shape", f"expected a list of non-negative integers, got {excerpt(shape)}")
    expected = math.prod(shape)
    if "data" in node:
        values = _numbers(node["data"], f"{field}.data", expected)
    elif "real" in node and "imag" in node:
        values = np.empty(expected, dtype=np.complex128)  # built part by part: keeps signed zeros
        values.real = _numbers(node["real"], f"{field}.real", expected)
        values.imag = _numbers(node["imag"], f"{field}.imag", expected)
    else:
        raise FieldError(field, "an array needs 'data', or 'real' and 'imag'")
    return values.reshape(shape)


def _numbers(values, field: str, expected: int) -> np.ndarray:
    if not isinstance(values, list):
        raise FieldError(field, f"expected a list of numbers, got {type(values).__name__}")
    if len(values) != expected:
        raise FieldError(field, f"shape needs {expected} values, the list holds {len(values)}")
    if not set(map(type, values)) <= {float, int}:
        index = next(i for i, v in enumerate(values) if type(v) not in (float, int))
        raise FieldError(f"{field}[{index}]", f"expected a number, got {excerpt(values[index])}")
    try:
        return np.array(values, dtype=np.float64)
    except OverflowError:
        index = next(i for i, v in enumerate(values) if type(v) is int and abs(v) >= 2**63)
        raise FieldError(f"{field}[{index}]", f"{excerpt(values[index])} is beyond the 64-bit integer range") from None


def write(content: dict, path, *, overwrite: bool = False) -> None:
    """Write a content dict as JSON, atomically. Refuses NaN and infinities, naming the element."""
    arrays = {}
    skeleton = {}
    for key, value in content.items():
        if key == "one_electron":
            skeleton[key] = _placeholder(arrays, key, value, {})
        elif key == "two_electron":
            flags = {k: v for k, v in value.items() if k != "array"}
            skeleton[key] = _placeholder(arrays, key, value["array"], flags)
        else:
            skeleton[key] = value
    _refuse_non_finite_metadata(skeleton)
    text = json.dumps(skeleton, indent=2, ensure_ascii=False, allow_nan=False)
    with atomic_output(path, overwrite=overwrite) as tmp, open(tmp, "w", encoding="utf-8") as out:
        rest = text
        for token, (field, array, flags) in arrays.items():
            head, rest = rest.split(json.dumps(token), 1)
            out.write(head)
            _write_array(out, field, array, flags)
        out.write(rest)
        out.write("\n")


def _placeholder(arrays, field, array, flags):
    _refuse_non_finite_array(field, array)
    token = f"@@array:{field}:{uuid.uuid4().hex}@@"
    arrays[token] = (field, array, flags)
    return token


def _refuse_non_finite_array(field, array):
    data = np.asarray(array)
    bad = ~np.isfinite(data)
    if bad.any():
        index = tuple(int(i) for i in np.argwhere(bad)[0])
        raise FieldError(
            f"{field}[{', '.join(map(str, index))}]",
            f"is {data[index]}: JSON has no NaN or infinity; fix the value or write HDF5 instead",
        )


def _write_array(out, field, array, flags):
    data = np.asarray(array)
    out.write("{")
    for key, value in flags.items():
        out.write(f"{json.dumps(key)}: {json.dumps(value)}, ")
    out.write(f'"shape": {json.dumps(list(data.shape))}, ')
    flat = data.ravel()
    if data.dtype.kind == "c":
        _write_numbers(out, "real", flat.real)
        out.write(", ")
        _write_numbers(out, "imag", flat.imag)
    else:
        _write_numbers(out, "data", flat)
    out.write("}")


def _write_numbers(out, key, flat):
    out.write(f'"{key}": [')
    for start in range(0, flat.size, _CHUNK):
        if start:
            out.write(", ")
        # float.__repr__ is the shortest text that reads back to the same float64
        out.write(", ".join(map(repr, flat[start : start + _CHUNK].astype(np.float64).tolist())))
    out.write("]")


def _refuse_non_finite_metadata(node, path=""):
    if isinstance(node, float) and not math.isfinite(node):
        raise FieldError(path or "(document)", f"is {node}: JSON has no NaN or infinity")
    if isinstance(node, dict):
        for key, value in node.items():
            _refuse_non_finite_metadata(value, f"{path}.{key}" if path else key)
    elif isinstance(node, list):
        for i, value in enumerate(node):
            _refuse_non_finite_metadata(value, f"{path}[{i}]")
