"""Load and save Hamiltonian files: the container by extension, identity, schema, model.

The container follows the extension: ``.h5``/``.hdf5`` is HDF5, ``.json`` is JSON.

>>> import tempfile, pathlib, numpy as np
>>> from integrity.model.hamiltonian import Hamiltonian, Orbitals, Electrons, TwoElectron
>>> ham = Hamiltonian(Orbitals(1, "restricted"), Electrons(1, 0), 0.25, np.array([[-0.5]]),
...                   TwoElectron(np.array([[[[0.75]]]]), notation="chemist"))
>>> folder = pathlib.Path(tempfile.mkdtemp())
>>> from integrity.model.fingerprint import fingerprint
>>> save(ham, folder / "h.json")
>>> again = load(folder / "h.json")
>>> float(again.one_electron[0, 0]), again.checksum == fingerprint(ham)
(-0.5, True)
"""

from __future__ import annotations

from pathlib import Path

from integrity.errors import ContainerError, FieldError, IntegrityError
from integrity.io import hdf5, jsonfile
from integrity.io.content import content_from_hamiltonian, hamiltonian_from_content
from integrity.io.discovery import dangling_link_reason, is_dangling_link
from integrity.io.document import DEFAULT_MEMORY, Document
from integrity.io.schema import file_problems
from integrity.model.fingerprint import fingerprint
from integrity.model.hamiltonian import FORMAT_NAME, FORMAT_VERSION, Hamiltonian

EXTENSIONS = {".h5": "hdf5", ".hdf5": "hdf5", ".json": "json"}


def container_of(path) -> str:
    """``"hdf5"`` or ``"json"`` by the file's extension."""
    suffix = Path(path).suffix.lower()
    if suffix not in EXTENSIONS:
        raise ContainerError(None, f"unknown extension {suffix or '(none)'!r}; expected .h5, .hdf5 or .json", str(path))
    return EXTENSIONS[suffix]


def open_document(path, *, memory: int = DEFAULT_MEMORY, lazy: bool | str = False) -> Document:
    """Open a file and read its metadata tree; arrays are decoded on demand.

    Raises ContainerError when the file is not one of ours (unreadable
    container, another ``format``, an unknown ``format_version``).
    """
    container = container_of(path)
    if is_dangling_link(path):
        raise ContainerError(None, dangling_link_reason(path), str(path))
    document = hdf5.read(path, memory=memory, lazy=lazy) if container == "hdf5" else jsonfile.read(path, memory=memory)
    try:
        _require_identity(document)
    except IntegrityError:
        document.close()
        raise
    return document


def _require_identity(document: Document) -> None:
    tree = document.tree
    fmt = tree.get("format")
    if fmt != FORMAT_NAME:
        raise ContainerError(
            document.locate(("format",)),
            f"expected {FORMAT_NAME!r}, got {fmt!r}: this is not an integrity Hamiltonian file",
            document.path,
        )
    version = tree.get("format_version")
    if isinstance(version, float) and version == FORMAT_VERSION:
        # 1.0 would pass as 1 but change the fingerprint's header (docs/format.md, fingerprint)
        raise ContainerError(
            document.locate(("format_version",)),
            f"expected the integer {FORMAT_VERSION}, got {version!r}; write the version without a fraction",
            document.path,
        )
    if version != FORMAT_VERSION or isinstance(version, bool):
        raise ContainerError(
            document.locate(("format_version",)),
            f"version {version!r} is unknown to this reader, which reads version {FORMAT_VERSION}",
            document.path,
        )


def hamiltonian_of(document: Document) -> Hamiltonian:
    """Validate a document against the schema and build its Hamiltonian.

    The first schema problem (or structural fault) is raised as FieldError
    naming the file and the location inside it.
    """
    problems = file_problems(document.tree, document.schema_entry, document.notes)
    if problems:
        first = problems[0]
        more = f" (and {len(problems) - 1} more schema problems)" if len(problems) > 1 else ""
        raise FieldError(document.locate(first.path), first.message + more, document.path)
    try:
        return hamiltonian_from_content(document.content)
    except IntegrityError as err:
        err.field = _locate_field(document, err.field)
        raise err.in_file(document.path) from None


def _locate_field(document: Document, field: str | None) -> str | None:
    """Translate a model field name (``references[0].energy``) to the file's location."""
    if document.container == "json" or field is None:
        return field
    parts = []
    for token in field.split("."):
        name, _, index = token.partition("[")
        index = index.rstrip("]")
        if name == "references" and index.isdigit():
            labels = list(document.tree.get("references", {}))
            parts += ["references", labels[int(index)] if int(index) < len(labels) else index]
        elif index.isdigit():
            parts += [name, int(index)]  # an element of a dataset, e.g. orbitals.irreps[1]
        else:
            parts.append(token)
    return document.locate(tuple(parts))


def load(path, *, memory: int = DEFAULT_MEMORY) -> Hamiltonian:
    """Read a Hamiltonian file (HDF5 or JSON) into memory, validated.

    ``memory`` (bytes) bounds the arrays the file may declare; a file
    claiming more is refused before anything is allocated.
    """
    with open_document(path, memory=memory) as document:
        return hamiltonian_of(document)


def save(
    ham: Hamiltonian,
    path,
    *,
    overwrite: bool = False,
    fingerprint_checksum: bool = True,
    compression: str | None = None,
    compression_opts=None,
    chunks=None,
) -> None:
    """Write a Hamiltonian atomically; never replaces an existing file unless ``overwrite``.

    The fingerprint of the data written is stored in ``checksum``
    (``fingerprint_checksum=False`` writes ``ham.checksum`` as it is).
    HDF5 only: ``compression`` ("gzip" or "lzf"), ``compression_opts``, ``chunks``.
    """
    if fingerprint_checksum:
        ham = ham.replace(checksum=fingerprint(ham))
    content = content_from_hamiltonian(ham)
    try:
        if container_of(path) == "hdf5":
            hdf5.write(
                content,
                path,
                overwrite=overwrite,
                compression=compression,
                compression_opts=compression_opts,
                chunks=chunks,
            )
        else:
            if compression is not None or chunks is not None:
                raise FieldError("compression", "compression and chunking are HDF5 options; JSON is plain text")
            jsonfile.write(content, path, overwrite=overwrite)
    except IntegrityError as err:
        raise err.in_file(path) from None
