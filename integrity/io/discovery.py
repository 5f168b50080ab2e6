"""Which files to check: the paths named, and Hamiltonian-looking files under folders.

A folder is searched recursively for names ending in one of
:data:`HAMILTONIAN_SUFFIXES` (any case); the result is sorted per folder so a
report does not depend on the order the file system lists entries. A
symbolic link to nothing with such a name is listed too (its reader reports
it unreadable, naming the target): a file that went missing must not pass
unnoticed.
"""

from __future__ import annotations

import os
from pathlib import Path

HAMILTONIAN_SUFFIXES = (".h5", ".hdf5", ".json")


def is_dangling_link(path) -> bool:
    """A symbolic link whose target does not exist (or cannot be reached)."""
    path = Path(path)
    return path.is_symlink() and not path.exists()


def dangling_link_reason(path) -> str:
    """What a reader says about a symbolic link to nothing: the link and its target."""
    try:
        target = os.readlink(path)
    except OSError:
        target = "(unreadable)"
    return f"a symbolic link to {target}, which does not exist"


def find_files(paths) -> list[str]:
    """Files named, and ``*.h5``, ``*.hdf5``, ``*.json`` found under folders named, in sorted order."""
    found = []
    for path in paths:
        path = Path(path)
        if path.is_dir():
            found += sorted(
                str(p)
                for p in path.rglob("*")
                if p.suffix.lower() in HAMILTONIAN_SUFFIXES and (p.is_file() or is_dangling_link(p))
            )
        else:
            found.append(str(path))
    return found
