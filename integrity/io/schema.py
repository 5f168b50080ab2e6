"""Validate metadata trees against ``schemas/hamiltonian.schema.json``.

The schema file is the single source of truth for the metadata of both
containers: a JSON document is validated as it is (entry point
``json_document``); an HDF5 file is read into a tree of groups, attributes and
dataset descriptors and validated against ``hdf5_tree``, which shares every
definition but the array encoding.

Long numeric lists (array data) are checked for ``{"type": "number"}`` in one
pass over their element types instead of item by item; the rule is the same.

>>> problems = schema_problems({"format": "integrity.hamiltonian"}, "json_document")
>>> problems[0].path, problems[0].message
(('core_energy',), 'missing: this field is required')
"""

from __future__ import annotations

import functools
import json
import math
import reprlib
from dataclasses import dataclass
from importlib import resources
from pathlib import Path

import jsonschema
from jsonschema import ValidationError
from referencing import Registry, Resource

SCHEMA_FILES = {
    "hamiltonian": "hamiltonian.schema.json",
    "report": "report.schema.json",
    "policy": "policy.schema.json",
    "comparison": "comparison.schema.json",
}
_BULK_THRESHOLD = 256
_short = reprlib.Repr()
_short.maxstring = 40
_short.maxlist = 4
_short.maxdict = 3
_short.maxlevel = 2
_short.maxlong = 30
#: a value quoted in a message is cut to this many characters
EXCERPT = 80
#: integers must fit a signed 64-bit integer (the HDF5 container's type)
INT64 = (-(2**63), 2**63 - 1)
#: keys of a JSON array object whose lists are array values (judged by arrays.finite, not here)
_ARRAY_VALUE_KEYS = ("data", "real", "imag")


def excerpt(value) -> str:
    """A value as a message quotes it: a short repr, at most :data:`EXCERPT` characters.

    >>> excerpt([[0.5] * 100] * 100)
    '[[0.5, 0.5, 0.5, 0.5, ...], [0.5, 0.5, 0.5, 0.5, ...], [0.5, 0.5, 0.5, 0.5, ....'
    >>> len(excerpt([[0.1234567890123] * 100] * 100)), excerpt(10**400)
    (80, '1000000000000...00000000000000')
    """
    try:
        text = _short.repr(value)
    except ValueError:  # an integer beyond Python's limit of digits for str()
        return f"an integer of {value.bit_length()} bits"
    return text if len(text) <= EXCERPT else text[: EXCERPT - 3] + "..."


@dataclass(frozen=True)
class SchemaProblem:
    """One schema violation: ``path`` into the tree (keys and list indices),
    the rule (JSON Schema keyword) and a one-line message."""

    path: tuple
    rule: str
    message: str


def schema_folder():
    """Where the schemas are: ``integrity/schemas`` in an installed wheel (the build maps
    the repository's top-level ``schemas/`` there), or ``schemas/`` beside the package
    in a source checkout (an editable install)."""
    packaged = resources.files("integrity").joinpath("schemas")
    if packaged.is_dir():
        return packaged
    return Path(__file__).resolve().parents[2] / "schemas"


@functools.cache
def load_schema(name: str) -> dict:
    """The parsed schema document ``schemas/<name>.schema.json``."""
    return json.loads(schema_folder().joinpath(SCHEMA_FILES[name]).read_text("utf-8"))


def _bulk_items(validator, items, instance, schema):
    """``items`` that checks long lists of numbers in one pass, then as usual."""
    if items == {"type": "number"} and isinstance(instance, list) and len(instance) > _BULK_THRESHOLD:
        if set(map(type, instance)) <= {float, int}:
            return
        for index, item in enumerate(instance):
            if type(item) not in (float, int):
                yield ValidationError(f"{excerpt(item)} is not of type 'number'", path=[index])
                return
    yield from _DRAFT.VALIDATORS["items"](validator, items, instance, schema)


_DRAFT = jsonschema.Draft202012Validator
_Validator = jsonschema.validators.extend(_DRAFT, validators={"items": _bulk_items})


@functools.cache
def _validator(name: str, entry: str | None):
    schema = load_schema(name)
    registry = Registry().with_resource(schema["$id"], Resource.from_contents(schema))
    target = schema if entry is None else {"$ref": f"{schema['$id']}#/$defs/{entry}"}
    _DRAFT.check_schema(schema)
    return _Validator(target, registry=registry)


def schema_problems(tree, entry: str | None = None, name: str = "hamiltonian") -> list[SchemaProblem]:
    """Every violation of the schema (at ``#/$defs/<entry>``, or the root), sorted by path."""
    found = []
    for error in _validator(name, entry).iter_errors(tree):
        found.extend(_leaves(error))
    if name == "hamiltonian":
        found.extend(value_problems(tree))
    unique = {(p.path, p.message): p for p in found}
    return sorted(unique.values(), key=lambda p: tuple(str(k) for k in p.path))


def file_problems(tree, entry: str, notes=()) -> list[SchemaProblem]:
    """Every schema problem of a file: the tree's, and the ``notes`` its reader made
    about what it left out of the tree (``(path, message)``: a soft link to nothing)."""
    found = schema_problems(tree, entry)
    found += [SchemaProblem(tuple(path), "link", message) for path, message in notes]
    return sorted(found, key=lambda p: tuple(str(k) for k in p.path))


def value_problems(tree) -> list[SchemaProblem]:
    """Values JSON Schema cannot judge: non-finite floats (``1e400`` parses to infinity) in
    metadata, integers beyond 64 bits anywhere (they have no HDF5 type, and as floats
    they overflow), and the NUL character in a key or a string (HDF5 cannot hold it).
    Array values (``data``, ``real``, ``imag`` beside a ``shape``) may be non-finite
    here: ``arrays.finite`` reports those; ``provenance.history`` steps are free-form JSON
    text in either container and are not judged. Walks without recursion.

    >>> for problem in value_problems({"core_energy": float("inf"), "orbitals": {"count": 10**30}}):
    ...     print(problem.path, problem.message)
    ('core_energy',) inf is not a finite number
    ('orbitals', 'count') 1000000000000...00000000000000 is beyond the 64-bit integer range
    """
    found = []
    pending = [((), tree, False)]
    while pending:
        path, node, values = pending.pop()
        if path == ("provenance", "history"):
            continue  # free-form steps, stored as JSON text in either container
        if isinstance(node, dict):
            found += [
                SchemaProblem((*path, k), "nul", "the key contains a NUL character, which HDF5 names cannot hold")
                for k in node
                if isinstance(k, str) and "\x00" in k
            ]
            is_array = "shape" in node
            pending += [((*path, k), v, is_array and k in _ARRAY_VALUE_KEYS) for k, v in node.items()]
        elif isinstance(node, list):
            if values and set(map(type, node)) <= {float}:
                continue  # the common case of array data, in one pass
            pending += [((*path, i), v, values) for i, v in enumerate(node)]
        elif type(node) is float and not values and not math.isfinite(node):
            found.append(SchemaProblem(path, "finite", f"{node} is not a finite number"))
        elif isinstance(node, str) and "\x00" in node:
            found.append(SchemaProblem(path, "nul", "contains a NUL character, which HDF5 strings cannot hold"))
        elif type(node) is int and not INT64[0] <= node <= INT64[1]:
            found.append(SchemaProblem(path, "int64", f"{excerpt(node)} is beyond the 64-bit integer range"))
    return sorted(found, key=lambda p: tuple(str(k) for k in p.path))


def _leaves(error: ValidationError) -> list[SchemaProblem]:
    """The most specific problems behind an error (the leaves of oneOf/anyOf/allOf trees)."""
    path = tuple(error.absolute_path)
    if error.validator in ("oneOf", "anyOf") and error.context:
        return [SchemaProblem(path, error.validator, _any_of_message(error))]
    if error.validator == "required" and isinstance(error.instance, dict):
        missing = [key for key in error.validator_value if key not in error.instance]
        return [SchemaProblem((*path, key), "required", "missing: this field is required") for key in missing]
    if error.validator == "additionalProperties" and isinstance(error.instance, dict):
        known = error.schema.get("properties", {})
        extra = [key for key in error.instance if key not in known]
        return [
            SchemaProblem((*path, key), "additionalProperties", "not a field of the format (unexpected key)")
            for key in extra
        ]
    return [SchemaProblem(path, str(error.validator), _message(error))]


def _any_of_message(error: ValidationError) -> str:
    instance = error.instance
    if isinstance(instance, dict) and "shape" in instance:
        keys = sorted(k for k in ("data", "real", "imag") if k in instance)
        return f"an array needs 'data' (real) or both 'real' and 'imag' (complex), got keys {keys}"
    context = list(error.context)
    if isinstance(instance, list):
        # a list was meant as the list form: report what that branch found, not "expected object"
        context = [e for e in context if e.validator != "type"] or context
    best = jsonschema.exceptions.best_match(context)
    if best is None:
        return f"{excerpt(instance)} matches no allowed form"
    where = "".join(f"[{k}]" for k in best.relative_path)
    return (f"item {where}: " if where else "") + _message(best)


def _message(error: ValidationError) -> str:
    value = error.validator_value
    shown = excerpt(error.instance)
    if error.validator == "type":
        return f"expected {value}, got {shown}"
    if error.validator == "enum":
        return f"{shown} is not one of {value}"
    if error.validator == "const":
        return f"expected {value!r}, got {shown}"
    if error.validator in ("minimum", "maximum", "exclusiveMinimum"):
        words = {"minimum": "below the minimum", "maximum": "above the maximum", "exclusiveMinimum": "not above"}
        return f"{shown} is {words[error.validator]} {value}"
    if error.validator == "not" and isinstance(value, dict) and "required" in value:
        return f"must not have {value['required']} here"
    if error.validator == "not" and isinstance(value, dict) and "const" in value:
        return f"{shown} is not allowed here"
    message = error.message
    if len(message) <= 2 * EXCERPT:
        return message
    return f"{shown} breaks the rule {error.validator!r}"


def render_path(path: tuple) -> str:
    """A JSON path as the format names fields: ``references[1].energy``."""
    out = ""
    for key in path:
        out += f"[{key}]" if isinstance(key, int) else (f".{key}" if out else str(key))
    return out or "(document)"
