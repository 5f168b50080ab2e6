"""Integrals that the abelian point group forces to zero.

With irreps g_p (numbers whose product is their XOR), h_pq vanishes unless
g_p = g_q and (pq|rs) vanishes unless g_p ^ g_q ^ g_r ^ g_s = 0. XOR is
symmetric, so the rule reads the same in either notation and for
antisymmetrized arrays. Spin orbitals carry their spatial orbital's irrep.
"""

from __future__ import annotations

import numpy as np

from ..blocks import chemist_slabs, spin_blocks
from ..indexing import spin_orbital_index
from .registry import Result, register, skipped


def _spin_partner_mismatch(ham, g) -> Result | None:
    """Spin orbitals of one spatial orbital must share its irrep; a mismatch betrays the layout."""
    layout, spatial = ham.orbitals.spin_layout, ham.n // 2
    alpha = spin_orbital_index(np.arange(spatial), 0, spatial, layout)
    beta = spin_orbital_index(np.arange(spatial), 1, spatial, layout)
    differ = np.flatnonzero(g[alpha] != g[beta])
    if not differ.size:
        return None
    p = int(differ[0])
    other = "blocked" if layout == "interleaved" else "interleaved"
    hint = f"; the spin orbitals may be stored {other}" if _pairs_agree(g, spatial, other) else ""
    where = f"orbitals.irreps[{int(alpha[p])}], [{int(beta[p])}]"
    return Result(
        "orbitals.irreps",
        "fail",
        f"{differ.size} spatial orbital(s) have alpha and beta spin orbitals of different irreps in the "
        f"{layout} layout: spatial orbital {p} is spin orbitals {int(alpha[p])} (irrep {g[alpha[p]]}) and "
        f"{int(beta[p])} (irrep {g[beta[p]]}){hint}",
        value=float(differ.size),
        limit=0.0,
        where=where,
    )


def _pairs_agree(g, spatial, layout) -> bool:
    alpha = spin_orbital_index(np.arange(spatial), 0, spatial, layout)
    beta = spin_orbital_index(np.arange(spatial), 1, spatial, layout)
    return bool(np.all(g[alpha] == g[beta]))


def _stored_slabs(ham):
    two = ham.two_electron
    labels = ("aa ", "ab ", "bb ") if ham.basis == "unrestricted" else ("",)
    for label, block in zip(labels, spin_blocks(two, ham.basis), strict=True):
        for p0, slab in chemist_slabs(
            block, two.notation, two.storage, ham.n, antisymmetrized=bool(two.antisymmetrized)
        ):
            yield label, p0, slab


@register("orbitals.irreps", limit=1e-8, needs_finite=True)
def check_irreps(ham, ctx) -> Result:
    """Largest integral that orbital symmetry forces to zero."""
    irreps = ham.orbitals.irreps
    if irreps is None:
        return skipped("orbitals.irreps", "no orbital irreps stored")
    g = np.asarray(irreps, dtype=np.int64)
    if ham.basis == "spin-orbital":
        mismatch = _spin_partner_mismatch(ham, g)
        if mismatch is not None:
            return mismatch
    pair = g[:, None] ^ g[None, :]
    worst, where, count = 0.0, None, 0
    h = np.asarray(ham.one_electron)
    for label, block in [("alpha ", h[0]), ("beta ", h[1])] if ham.basis == "unrestricted" else [("", h)]:
        forbidden = np.abs(np.where(pair != 0, block, 0))
        count += int(np.count_nonzero(forbidden > ctx.limit))
        if forbidden.max() > worst:
            p, q = np.unravel_index(int(np.argmax(forbidden)), forbidden.shape)
            worst, where = float(forbidden.max()), f"one_electron {label}({p}, {q})"
    for label, p0, slab in _stored_slabs(ham):
        rows = slice(p0, p0 + len(slab))
        mask = pair[rows, :, None, None] != pair[None, None, :, :]
        forbidden = np.abs(np.where(mask, slab, 0))
        count += int(np.count_nonzero(forbidden > ctx.limit))
        peak = float(forbidden.max()) if forbidden.size else 0.0
        if peak > worst:
            local = np.unravel_index(int(np.argmax(forbidden)), forbidden.shape)
            index = (int(local[0]) + p0, *map(int, local[1:]))
            worst, where = peak, f"two_electron {label}{index}"
    group = f" of {ham.orbitals.point_group}" if ham.orbitals.point_group else ""
    if worst > ctx.limit:
        return Result(
            "orbitals.irreps",
            "fail",
            f"{count} integral(s) that the irreps{group} force to zero are not zero; largest "
            f"{worst:.3g} at {where}; the irreps may be listed in another orbital order, or the "
            "orbitals are not symmetry-adapted",
            value=worst,
            limit=ctx.limit,
            where=where,
        )
    return Result(
        "orbitals.irreps",
        "pass",
        f"every integral forbidden by the irreps{group} vanishes",
        value=worst,
        limit=ctx.limit,
    )
