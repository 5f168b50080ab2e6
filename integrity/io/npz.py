"""Plain integral arrays in a NumPy ``.npz`` archive (the input of ``integrity wrap``).

Known arrays: ``one_electron``, ``two_electron`` (required), ``core_energy``
and ``irreps`` (optional). Any other name is refused rather than ignored: an
array the reader would drop is usually a misspelled one.
"""

from __future__ import annotations

import zipfile

import numpy as np

from integrity.errors import ContainerError, FieldError

NPZ_ARRAYS = ("one_electron", "two_electron", "core_energy", "irreps")


def read_npz(path) -> dict[str, np.ndarray]:
    """The arrays of an .npz file; refuses names it would ignore and pickled objects."""
    try:
        with np.load(path, allow_pickle=False) as archive:
            arrays = {key: archive[key] for key in archive.files}
    except (zipfile.BadZipFile, ValueError, OSError, EOFError) as err:
        raise ContainerError(None, f"not a readable .npz archive ({err})", str(path)) from None
    unknown = sorted(set(arrays) - set(NPZ_ARRAYS))
    if unknown:
        raise FieldError(unknown[0], f"unknown array in the archive; expected {NPZ_ARRAYS}", str(path))
    for key in ("one_electron", "two_electron"):
        if key not in arrays:
            raise FieldError(key, "missing from the archive", str(path))
    return arrays
