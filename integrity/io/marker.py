"""The format marker of a file, read without judging the file: is it meant to be ours?

A Hamiltonian file says what it is in its ``format`` field (the root attribute
``format`` of an HDF5 file, the top-level key ``format`` of a JSON document),
whose value for this format is ``integrity.hamiltonian``. A gate that meets
other JSON and HDF5 files (``package.json``, a results table) uses the marker
to pass them over, while a file that cannot be parsed at all is still an
error: a truncated Hamiltonian file must not pass as somebody else's.

>>> import json, pathlib, tempfile
>>> folder = pathlib.Path(tempfile.mkdtemp())
>>> _ = (folder / "package.json").write_text(json.dumps({"name": "web", "version": "1.0.0"}))
>>> _ = (folder / "cut.json").write_text('{"format": "integrity.hamiltonian", "core_')
>>> declared_format(folder / "package.json") is None
True
>>> declared_format(folder / "cut.json")
Traceback (most recent call last):
...
integrity.errors.ContainerError: ...cut.json: not JSON (line 1, ...); the marker cannot be read
"""

from __future__ import annotations

import json

from integrity.errors import ContainerError
from integrity.io.files import container_of


def declared_format(path) -> str | None:
    """The value of the file's ``format`` marker; None when it has none.

    Raises ContainerError when the file cannot be parsed as its container
    (HDF5 by a ``.h5``/``.hdf5`` name, JSON by a ``.json`` name).
    """
    if container_of(path) == "hdf5":
        return _hdf5_marker(path)
    return _json_marker(path)


def _hdf5_marker(path) -> str | None:
    import h5py

    try:
        with h5py.File(path, "r") as handle:
            value = handle.attrs.get("format")
    except OSError as err:
        raise ContainerError(None, f"not readable as HDF5 ({err}); the marker cannot be read", str(path)) from None
    except Exception as err:  # h5py raises KeyError, RuntimeError and others on damaged metadata
        raise ContainerError(None, f"damaged HDF5 metadata ({type(err).__name__}: {err})", str(path)) from None
    if isinstance(value, bytes):
        value = value.decode("utf-8", errors="replace")
    return value if isinstance(value, str) else None


def _json_marker(path) -> str | None:
    try:
        with open(path, "rb") as handle:
            document = json.loads(handle.read())
    except OSError as err:
        raise ContainerError(None, f"cannot read the file ({err.strerror})", str(path)) from None
    except json.JSONDecodeError as err:
        raise ContainerError(
            None, f"not JSON (line {err.lineno}, column {err.colno}: {err.msg}); the marker cannot be read", str(path)
        ) from None
    except (UnicodeDecodeError, RecursionError, ValueError) as err:
        raise ContainerError(None, f"not JSON ({type(err).__name__}); the marker cannot be read", str(path)) from None
    if not isinstance(document, dict):
        return None
    value = document.get("format")
    return value if isinstance(value, str) else None
