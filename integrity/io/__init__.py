"""Reading and writing: the only package that opens files.

Hamiltonian files (HDF5 and JSON, :mod:`~integrity.io.files`), their schema
(:mod:`~integrity.io.schema`), plain inputs (``.npz`` arrays, ``.xyz``
geometries) and the walk over folders (:mod:`~integrity.io.discovery`).
"""

from integrity.io.discovery import HAMILTONIAN_SUFFIXES, find_files
from integrity.io.document import DEFAULT_MEMORY, Document, format_bytes, parse_bytes
from integrity.io.files import container_of, hamiltonian_of, load, open_document, save
from integrity.io.npz import read_npz
from integrity.io.xyz import read_geometry

__all__ = [
    "DEFAULT_MEMORY",
    "HAMILTONIAN_SUFFIXES",
    "Document",
    "container_of",
    "find_files",
    "format_bytes",
    "hamiltonian_of",
    "load",
    "open_document",
    "parse_bytes",
    "read_geometry",
    "read_npz",
    "save",
]
