"""A short summary of a Hamiltonian (what ``integrity show`` prints), as plain values."""

from __future__ import annotations

import numpy as np

from integrity.model.fingerprint import fingerprint
from integrity.model.hamiltonian import Hamiltonian
from integrity.model.slabs import chemist_slabs, spin_blocks


def _norm_and_max(slabs) -> tuple[float, float]:
    """Frobenius norm and largest magnitude over slabs, scaled so huge values do not overflow.

    NaN anywhere makes both NaN; an infinity makes both infinite.
    """
    scale, total = 0.0, 0.0  # norm = scale * sqrt(total)
    for slab in slabs:
        magnitude = np.abs(slab)
        if not magnitude.size:
            continue
        peak = float(magnitude.max())
        if not np.isfinite(peak):
            return peak, peak
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


def irrep_names(ham: Hamiltonian) -> list[str] | None:
    """Names of the irreps by number, from ``provenance.irrep_names`` (space-separated, as build writes them).

    None when the provenance names none, or names fewer irreps than the orbitals use.
    """
    text = (ham.provenance or {}).get("irrep_names")
    if not isinstance(text, str) or ham.orbitals.irreps is None:
        return None
    names = text.split()
    if not names or max(ham.orbitals.irreps) >= len(names):
        return None
    return names


def summarize(ham: Hamiltonian) -> dict:
    """The summary as a dict of plain values (rendered by :mod:`integrity.cli.render`)."""
    orb = ham.orbitals
    two = ham.two_electron
    computed = fingerprint(ham)
    names = irrep_names(ham)
    provenance = dict(ham.provenance or {})
    history = provenance.pop("history", None) or []
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
            "irrep_names": None if names is None else [names[i] for i in orb.irreps],
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
                    "tolerance": r.tolerance,
                }.items()
                if v is not None
            }
            for r in ham.references
        ],
        "provenance": provenance,
        "history": list(history),
    }
