"""Which files to check: the paths named, and Hamiltonian-looking files under folders.

A folder is searched recursively for names ending in one of
:data:`HAMILTONIAN_SUFFIXES` (any case); the result is sorted per folder so a
report does not depend on the order the file system lists entries.
"""

from __future__ import annotations

from pathlib import Path

HAMILTONIAN_SUFFIXES = (".h5", ".hdf5", ".json")


def find_files(paths) -> list[str]:
    """Files named, and ``*.h5``, ``*.hdf5``, ``*.json`` found under folders named, in sorted order."""
    found = []
    for path in paths:
        path = Path(path)
        if path.is_dir():
            found += sorted(str(p) for p in path.rglob("*") if p.suffix.lower() in HAMILTONIAN_SUFFIXES and p.is_file())
        else:
            found.append(str(path))
    return found
