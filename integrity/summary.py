"""A short summary of a Hamiltonian: what ``integrity show`` prints."""

from __future__ import annotations

import numpy as np

from .blocks import chemist_slabs, spin_blocks
from .fingerprint import fingerprint
from .model import Hamiltonian


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
    """The summary as a dict of plain values (rendered by :func:`render_summary`)."""
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


def render_summary(path: str, summary: dict) -> str:
    """Plain-text rendering, one fact per line."""
    orb = summary["orbitals"]
    lines = [str(path)]

    def row(name, text):
        lines.append(f"  {name:<13}{text}")

    if summary["title"]:
        row("title", summary["title"])
    details = [f"{orb['count']} {orb['basis']}"]
    if orb["spin_layout"]:
        details.append(f"{orb['spin_layout']} layout")
    if orb["point_group"]:
        details.append(f"point group {orb['point_group']}")
    if orb["irreps"] is not None:
        details.append("irreps " + " ".join(map(str, orb["irreps"])))
    if orb["canonical"]:
        details.append("canonical")
    row("orbitals", ", ".join(details))
    row("electrons", f"{summary['electrons']['alpha']} alpha, {summary['electrons']['beta']} beta")
    parts = ", ".join(f"{k} {v:.10g}" for k, v in summary["core_energy_parts"].items())
    row("core energy", f"{summary['core_energy']:.10g} hartree" + (f" ({parts})" if parts else ""))
    one = summary["one_electron"]
    row("one-electron", f"{tuple(one['shape'])} {one['dtype']}, norm {one['norm']:.6g}, max |h| {one['max_abs']:.6g}")
    two = summary["two_electron"]
    flags = f"{two['notation']} {two['storage']}" + (", antisymmetrized" if two["antisymmetrized"] else "")
    row(
        "two-electron",
        f"{flags} {tuple(two['shape'])} {two['dtype']}, {two['interaction']}, "
        f"norm {two['norm (dense)']:.6g}, max |g| {two['max_abs']:.6g}",
    )
    row("fingerprint", f"{summary['fingerprint']} ({summary['checksum']})")
    if not summary["references"]:
        row("references", "none")
    for i, ref in enumerate(summary["references"]):
        extra = "".join(f", {k} {ref[k]}" for k in ("two_s", "irrep", "root", "electrons") if k in ref)
        row("references" if i == 0 else "", f"{ref['label']}: {ref['method']} {ref['energy']:.10f} hartree{extra}")
    return "\n".join(lines)
