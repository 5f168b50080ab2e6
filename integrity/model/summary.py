"""A short summary of a Hamiltonian (what ``integrity show`` prints), as plain values."""

from __future__ import annotations

import numpy as np

from integrity.model.fingerprint import fingerprint
from integrity.model.hamiltonian import Hamiltonian
from integrity.model.slabs import chemist_slabs, spin_blocks


def _norm_and_max(slabs) -> tuple[float, float]:
    """Frobenius norm and largest magnitude over slabs, scaled so huge values do not overflow."""
    scale, total = 0.0, 0.0  # norm = scale * sqrt(total)
    for slab in slabs:
        magnitude = np.abs(slab)
        if not magnitude.size:
            continue
        peak = float(magnitude.max())
        if peak > scale:
            total *= (scale / peak) ** 2
            scale = peak
        if scale > 0:
            total += float(np.sum((magnitude / scale) ** 2))
    return scale * total**0.5, scale


def array_figures(array) -> dict:
    """Frobenius norm and largest magnitude of an array."""
    norm, largest = _norm_and_max([np.asarray(array)])
    return {"norm": norm, "max_abs": largest}


def _two_electron_figures(ham: Hamiltonian) -> dict:
    two = ham.two_electron
    slabs = (
        slab
        for block in spin_blocks(two, ham.basis)
        for _, slab in chemist_slabs(block, two.notation, two.storage, ham.n, antisymmetrized=bool(two.antisymmetrized))
    )
    norm, largest = _norm_and_max(slabs)
    return {"norm (dense)": norm, "max_abs": largest}


def summarize(ham: Hamiltonian) -> dict:
    """The summary as a dict of plain values (rendered by :mod:`integrity.cli.render`)."""
    orb = ham.orbitals
    two = ham.two_electron
    computed = fingerprint(ham)
    if ham.checksum is None:
        checksum = "no checksum stored"
    elif ham.checksum == computed:
        checksum = "matches the stored checksum"
    else:
        checksum = f"DIFFERS from the stored checksum {ham.checksum}"
    return {
        "title": ham.title,
        "orbitals": {
            "count": orb.count,
            "basis": orb.basis,
            "spin_layout": orb.spin_layout,
            "point_group": orb.point_group,
            "irreps": list(orb.irreps) if orb.irreps is not None else None,
            "canonical": orb.canonical,
        },
        "electrons": {"alpha": ham.electrons.alpha, "beta": ham.electrons.beta},
        "core_energy": ham.core_energy,
        "core_energy_parts": dict(ham.core_energy_parts or {}),
        "one_electron": {"shape": list(ham.one_electron.shape), "dtype": str(np.dtype(ham.one_electron.dtype))}
        | array_figures(ham.one_electron),
        "two_electron": {
            "notation": two.notation,
            "storage": two.storage,
            "interaction": two.interaction or "coulomb",
            "antisymmetrized": bool(two.antisymmetrized),
            "shape": list(two.array.shape),
            "dtype": str(np.dtype(two.array.dtype)),
        }
        | _two_electron_figures(ham),
        "fingerprint": computed,
        "checksum": checksum,
        "references": [
            {
                k: v
                for k, v in {
                    "label": r.label,
                    "method": r.method,
                    "energy": r.energy,
                    "two_s": r.two_s,
                    "irrep": r.irrep,
                    "root": r.root,
                    "electrons": None if r.electrons is None else f"{r.electrons.alpha},{r.electrons.beta}",
                }.items()
                if v is not None
            }
            for r in ham.references
        ],
    }
