"""The fingerprint of a Hamiltonian, exactly as docs/format.md defines it.

``sha256:`` + SHA-256 hex digest of, in order:

1. the UTF-8 canonical JSON (keys sorted, separators ``,`` and ``:``) of
   ``{"format_version", "orbitals": {"count", "basis", "spin_layout",
   "point_group", "irreps"}, "electrons": {"alpha", "beta"}}``, absent
   optional fields as null;
2. ``core_energy`` as 8 bytes of little-endian float64;
3. ``one_electron`` dense, C order, little-endian float64 (complex128 if complex);
4. ``two_electron`` as dense chemist, C order, little-endian, in [aa, ab, bb]
   order when unrestricted; the stored <pq||rs> array when antisymmetrized.

References, provenance, title, notation and storage are not in it, so one
Hamiltonian has one fingerprint in any container, notation or storage.
The two-electron array is hashed in pieces of at most the slab budget
(:func:`~integrity.model.slabs.chemist_pieces`), so a file larger than
memory can be fingerprinted from an open HDF5 dataset.
"""

from __future__ import annotations

import hashlib
import json

import numpy as np

from integrity.model.hamiltonian import Hamiltonian
from integrity.model.slabs import chemist_pieces, spin_blocks


def header_bytes(ham: Hamiltonian) -> bytes:
    """Part 1: the canonical JSON of the identifying metadata."""
    orb = ham.orbitals
    header = {
        "format_version": ham.format_version,
        "orbitals": {
            "count": int(orb.count),
            "basis": orb.basis,
            "spin_layout": orb.spin_layout,
            "point_group": orb.point_group,
            "irreps": None if orb.irreps is None else [int(i) for i in orb.irreps],
        },
        "electrons": {"alpha": int(ham.electrons.alpha), "beta": int(ham.electrons.beta)},
    }
    text = json.dumps(header, sort_keys=True, separators=(",", ":"), ensure_ascii=False)
    return text.encode("utf-8")


def _little_endian(array) -> np.ndarray:
    array = np.asarray(array)
    dtype = "<c16" if array.dtype.kind == "c" else "<f8"
    return np.ascontiguousarray(array, dtype=dtype)


def fingerprint(ham: Hamiltonian) -> str:
    """``sha256:<hex>`` of the Hamiltonian's defining content (see module docstring)."""
    digest = hashlib.sha256()
    digest.update(header_bytes(ham))
    digest.update(np.array(ham.core_energy, dtype="<f8").tobytes())
    digest.update(_little_endian(ham.one_electron).data)
    two = ham.two_electron
    for block in spin_blocks(two, ham.basis):
        for piece in chemist_pieces(block, two.notation, two.storage, ham.n, antisymmetrized=bool(two.antisymmetrized)):
            digest.update(_little_endian(piece).data)
    return "sha256:" + digest.hexdigest()
