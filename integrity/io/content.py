"""The logical content of a file, shared by both containers.

Content is a plain dict with the keys of docs/format.md, as a JSON document has
them, except that arrays are NumPy arrays (or lazy HDF5 datasets),
``two_electron`` holds its array under ``"array"``, ``references`` is a list
of dicts with their ``label``, and ``orbitals.irreps`` and occupations are
lists of ints. Each container maps its own encoding to and from this dict;
this module maps the dict to and from :class:`~integrity.model.hamiltonian.Hamiltonian`.
"""

from __future__ import annotations

import json
from typing import Any

import numpy as np

from integrity.errors import FieldError
from integrity.io.schema import excerpt
from integrity.model.hamiltonian import FORMAT_NAME, Electrons, Hamiltonian, Orbitals, Reference, TwoElectron

ORBITAL_KEYS = ("count", "basis", "spin_layout", "point_group", "irreps", "canonical")
TWO_ELECTRON_FLAGS = ("notation", "storage", "interaction", "antisymmetrized")
REFERENCE_SCALARS = ("method", "energy", "two_s", "irrep", "root", "tolerance")


def plain(value):
    """NumPy scalars, arrays and byte strings (and lists, tuples, dicts of them) as plain Python values.

    >>> plain({"n": np.int64(3), "x": np.float32(0.5), "s": np.bytes_(b"ab"), "v": np.array([1, 2])})
    {'n': 3, 'x': 0.5, 's': 'ab', 'v': [1, 2]}
    """
    if isinstance(value, bytes | np.bytes_):
        return value.decode("utf-8")
    if isinstance(value, np.ndarray):
        return plain(value[()]) if value.ndim == 0 else [plain(v) for v in value.tolist()]
    if isinstance(value, np.bool_):
        return bool(value)
    if isinstance(value, np.integer):
        return int(value)
    if isinstance(value, np.floating):
        return float(value)
    if isinstance(value, dict):
        return {k: plain(v) for k, v in value.items()}
    if isinstance(value, list | tuple):
        return [plain(v) for v in value]
    return value


def content_from_hamiltonian(ham: Hamiltonian) -> dict[str, Any]:
    """The content dict of a Hamiltonian; optional fields that are None are left out.

    Scalars are plain Python values whatever the model was given (NumPy integers included).
    """
    orb = ham.orbitals
    content: dict[str, Any] = {
        "format": FORMAT_NAME,
        "format_version": plain(ham.format_version),
        "energy_unit": ham.energy_unit,
    }
    if ham.title is not None:
        content["title"] = ham.title
    content["orbitals"] = plain({key: getattr(orb, key) for key in ORBITAL_KEYS if getattr(orb, key) is not None})
    content["electrons"] = {"alpha": int(ham.electrons.alpha), "beta": int(ham.electrons.beta)}
    content["core_energy"] = float(ham.core_energy)
    if ham.core_energy_parts is not None:
        content["core_energy_parts"] = {k: float(v) for k, v in ham.core_energy_parts.items()}
    content["one_electron"] = ham.one_electron
    two = ham.two_electron
    content["two_electron"] = {"array": two.array} | {
        key: getattr(two, key) for key in TWO_ELECTRON_FLAGS if getattr(two, key) is not None
    }
    if ham.references:
        content["references"] = [plain(_reference_content(ref)) for ref in ham.references]
    if ham.provenance is not None:
        content["provenance"] = plain(dict(ham.provenance))
    if ham.checksum is not None:
        content["checksum"] = ham.checksum
    return content


def _reference_content(ref: Reference) -> dict[str, Any]:
    entry: dict[str, Any] = {"label": ref.label}
    for key in REFERENCE_SCALARS:
        value = getattr(ref, key)
        if value is not None:
            entry[key] = value
    if ref.electrons is not None:
        entry["electrons"] = {"alpha": ref.electrons.alpha, "beta": ref.electrons.beta}
    if ref.occupation is not None:
        entry["occupation"] = {"alpha": list(ref.occupation[0]), "beta": list(ref.occupation[1])}
    return entry


def hamiltonian_from_content(content: dict[str, Any]) -> Hamiltonian:
    """Build (and so validate) a Hamiltonian from a content dict.

    Raises FieldError naming the field for anything missing or malformed.
    """
    orbitals = _require(content, "orbitals", dict)
    electrons = _require(content, "electrons", dict)
    two = _require(content, "two_electron", dict)
    if "array" not in two:
        raise FieldError("two_electron", "missing: the file holds no two-electron array")
    if "one_electron" not in content:
        raise FieldError("one_electron", "missing: the file holds no one-electron array")
    irreps = orbitals.get("irreps")
    return Hamiltonian(
        orbitals=Orbitals(
            count=_require(orbitals, "count", None, "orbitals"),
            basis=_require(orbitals, "basis", None, "orbitals"),
            spin_layout=orbitals.get("spin_layout"),
            point_group=orbitals.get("point_group"),
            irreps=None if irreps is None else tuple(irreps),
            canonical=orbitals.get("canonical"),
        ),
        electrons=_electrons(electrons, "electrons"),
        core_energy=_require(content, "core_energy"),
        core_energy_parts=content.get("core_energy_parts"),
        one_electron=content["one_electron"],
        two_electron=TwoElectron(
            array=two["array"],
            notation=_require(two, "notation", None, "two_electron"),
            storage=_require(two, "storage", None, "two_electron"),
            interaction=two.get("interaction"),
            antisymmetrized=two.get("antisymmetrized"),
        ),
        references=tuple(_reference(i, entry) for i, entry in enumerate(content.get("references", ()))),
        title=content.get("title"),
        provenance=content.get("provenance"),
        checksum=content.get("checksum"),
        format_version=content.get("format_version"),
        energy_unit=content.get("energy_unit"),
    )


def _require(mapping, key, kind=None, prefix=None):
    field = f"{prefix}.{key}" if prefix else key
    if not isinstance(mapping, dict) or key not in mapping:
        raise FieldError(field, "missing: this field is required")
    value = mapping[key]
    if kind is not None and not isinstance(value, kind):
        raise FieldError(field, f"expected an object, got {type(value).__name__}")
    return value


def _electrons(mapping, prefix) -> Electrons:
    if not isinstance(mapping, dict):
        raise FieldError(prefix, f"expected an object with alpha and beta, got {excerpt(mapping)}")
    return Electrons(alpha=_require(mapping, "alpha", None, prefix), beta=_require(mapping, "beta", None, prefix))


def _reference(i: int, entry) -> Reference:
    where = f"references[{i}]"
    if not isinstance(entry, dict):
        raise FieldError(where, f"expected an object, got {type(entry).__name__}")
    occupation = entry.get("occupation")
    if occupation is not None:
        occupation = (
            tuple(_require(occupation, "alpha", None, f"{where}.occupation")),
            tuple(_require(occupation, "beta", None, f"{where}.occupation")),
        )
    electrons = entry.get("electrons")
    return Reference(
        label=_require(entry, "label", None, where),
        method=_require(entry, "method", None, where),
        energy=_require(entry, "energy", None, where),
        electrons=None if electrons is None else _electrons(electrons, f"{where}.electrons"),
        two_s=entry.get("two_s"),
        irrep=entry.get("irrep"),
        root=entry.get("root"),
        occupation=occupation,
        tolerance=entry.get("tolerance"),
    )


def history_entry_from_text(text: str, *, unwrap_strings: bool = True):
    """A provenance history step stored as text: an object when the text is a JSON object.

    HDF5 stores each step as JSON text, so a quoted string is unwrapped there
    (``unwrap_strings``); any other text, such as ``"1"``, stays the text it is.

    >>> history_entry_from_text('{"step": "notation"}'), history_entry_from_text('"done"'), history_entry_from_text("1")
    ({'step': 'notation'}, 'done', '1')
    """
    try:
        parsed = json.loads(text)
    except ValueError:
        return text
    if isinstance(parsed, dict) or (unwrap_strings and isinstance(parsed, str)):
        return parsed
    return text
