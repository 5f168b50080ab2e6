"""Molecular geometries: an ``.xyz`` file, or atom lines given inline.

An atom line is ``SYMBOL X Y Z`` (whitespace-separated, coordinates in the
unit the caller states). An ``.xyz`` file is the common plain format: the
number of atoms on the first line, a free comment on the second, then one atom
line each.

>>> read_geometry(["H 0 0 0", "H 0 0 0.74"])
(('H', (0.0, 0.0, 0.0)), ('H', (0.0, 0.0, 0.74)))
>>> read_geometry("He 0 0 0")
(('He', (0.0, 0.0, 0.0)),)
"""

from __future__ import annotations

import math
import os

from integrity.errors import FieldError

Atom = tuple[str, tuple[float, float, float]]


def read_geometry(source) -> tuple[Atom, ...]:
    """Atoms from an ``.xyz`` file path, a text of atom lines, or a list of atom lines."""
    if isinstance(source, str) and "\n" not in source and source.lower().endswith(".xyz"):
        return _read_xyz_file(source)
    lines = source.splitlines() if isinstance(source, str) else [line for item in source for line in item.splitlines()]
    lines = [line.strip() for line in lines if line.strip()]
    if not lines:
        raise FieldError("geometry", "no atoms given; give atom lines 'SYMBOL X Y Z' or an .xyz file")
    return tuple(_atom(line, f"geometry line {number}") for number, line in enumerate(lines, start=1))


def _read_xyz_file(path: str) -> tuple[Atom, ...]:
    if not os.path.isfile(path):
        raise FieldError("geometry", "no such .xyz file", path)
    try:
        with open(path, encoding="utf-8") as handle:
            lines = handle.read().splitlines()
    except (OSError, UnicodeDecodeError) as err:
        raise FieldError("geometry", f"cannot read the .xyz file ({err})", path) from None
    try:
        count = int(lines[0].split()[0])
    except (IndexError, ValueError):
        raise FieldError("geometry", "the first line of an .xyz file must be the number of atoms", path) from None
    atoms = [line.strip() for line in lines[2 : 2 + count] if line.strip()]
    if len(atoms) != count or count < 1:
        raise FieldError("geometry", f"declares {count} atoms but lists {len(atoms)}", path)
    return tuple(_atom(line, f"line {number}", path) for number, line in enumerate(atoms, start=3))


def _atom(line: str, where: str, path: str | None = None) -> Atom:
    fields = line.split()
    if len(fields) != 4 or not fields[0].isalpha():
        raise FieldError(where, f"expected 'SYMBOL X Y Z', got {line[:60]!r}", path)
    try:
        coordinates = tuple(float(x) for x in fields[1:])
    except ValueError:
        raise FieldError(where, f"coordinates must be numbers, got {line[:60]!r}", path) from None
    if not all(math.isfinite(x) for x in coordinates):
        raise FieldError(where, f"coordinates must be finite, got {line[:60]!r}", path)
    return fields[0].capitalize(), coordinates


def geometry_text(atoms) -> str:
    """Atom lines, one per atom, as stored in provenance.

    >>> geometry_text((("H", (0.0, 0.0, 0.0)), ("H", (0.0, 0.0, 0.74))))
    'H 0.0 0.0 0.0\\nH 0.0 0.0 0.74'
    """
    return "\n".join(f"{symbol} {x!r} {y!r} {z!r}" for symbol, (x, y, z) in atoms)
