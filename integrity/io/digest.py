"""The content digest of a file: SHA-256 of its bytes, as the result cache keys verdicts.

Unlike the fingerprint (:mod:`integrity.model.fingerprint`), which digests the
Hamiltonian whatever its container or storage, this digests the bytes: any
change to the file, in data, metadata or padding, gives a new digest; a new
modification time alone does not.

>>> import pathlib, tempfile
>>> path = pathlib.Path(tempfile.mkdtemp()) / "a.json"
>>> _ = path.write_bytes(b"abc")
>>> file_digest(path)
'sha256:ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad'
"""

from __future__ import annotations

import hashlib

from integrity.errors import ContainerError

CHUNK = 2**20


def file_digest(path) -> str:
    """``sha256:<hex>`` of the file's bytes, read in 1 MiB chunks."""
    digest = hashlib.sha256()
    try:
        with open(path, "rb") as handle:
            while chunk := handle.read(CHUNK):
                digest.update(chunk)
    except OSError as err:
        raise ContainerError(None, f"cannot read the file ({err.strerror})", str(path)) from None
    return "sha256:" + digest.hexdigest()
