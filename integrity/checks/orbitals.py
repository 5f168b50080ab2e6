"""The orbitals: their point-group irreps, and whether they are canonical as claimed.

``orbitals.irreps``: integrals that the abelian point group forces to zero. With
irreps g_p (numbers whose product is their XOR), h_pq vanishes unless
g_p = g_q and (pq|rs) vanishes unless g_p ^ g_q ^ g_r ^ g_s = 0. XOR is
symmetric, so the rule reads the same in either notation and for
antisymmetrized arrays. Spin orbitals carry their spatial orbital's irrep.

``orbitals.canonical``: the Brillouin condition, F_ia = 0 between occupied and
virtual orbitals of the Fock matrix the integrals give (Source: Szabo and
Ostlund, *Modern Quantum Chemistry*, sec. 3.3 (from memory); the restricted
open-shell blocks as in Roothaan's open-shell theory, Rev. Mod. Phys. 32, 179
(1960) (from memory)).
"""

from __future__ import annotations

import numpy as np

from integrity.checks.registry import (
    OUTSIDE_FINGERPRINT,
    Result,
    at_element,
    at_field,
    failed,
    figure,
    passed,
    register,
    skipped,
    warned,
)
from integrity.energies.meanfield import fock_matrices, reference_occupation
from integrity.model.indexing import spin_of_spin_orbitals, spin_orbital_index
from integrity.model.slabs import chemist_slabs, spin_blocks


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
    where = at_field(f"orbitals.irreps[{int(alpha[p])}]")
    return failed(
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
    labels = ("aa", "ab", "bb") if ham.basis == "unrestricted" else (None,)
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
        return skipped("no orbital irreps stored")
    g = np.asarray(irreps, dtype=np.int64)
    if ham.basis == "spin-orbital":
        mismatch = _spin_partner_mismatch(ham, g)
        if mismatch is not None:
            return mismatch
    pair = g[:, None] ^ g[None, :]
    worst, where, count = 0.0, None, 0
    h = np.asarray(ham.one_electron)
    for label, block in [("alpha", h[0]), ("beta", h[1])] if ham.basis == "unrestricted" else [(None, h)]:
        forbidden = np.abs(np.where(pair != 0, block, 0))
        count += int(np.count_nonzero(forbidden > ctx.limit))
        if forbidden.max() > worst:
            p, q = np.unravel_index(int(np.argmax(forbidden)), forbidden.shape)
            worst, where = float(forbidden.max()), at_element("one_electron", (p, q), label)
    for label, p0, slab in _stored_slabs(ham):
        rows = slice(p0, p0 + len(slab))
        mask = pair[rows, :, None, None] != pair[None, None, :, :]
        forbidden = np.abs(np.where(mask, slab, 0))
        count += int(np.count_nonzero(forbidden > ctx.limit))
        peak = float(forbidden.max()) if forbidden.size else 0.0
        if peak > worst:
            local = np.unravel_index(int(np.argmax(forbidden)), forbidden.shape)
            index = (int(local[0]) + p0, *map(int, local[1:]))
            worst, where = peak, at_element("two_electron", index, label)
    group = f" of {ham.orbitals.point_group}" if ham.orbitals.point_group else ""
    if worst > ctx.limit:
        return failed(
            f"{count} integral(s) that the irreps{group} force to zero are not zero; largest "
            f"{worst:.3g} at {where}; the irreps may be listed in another orbital order, or the "
            "orbitals are not symmetry-adapted",
            value=worst,
            limit=ctx.limit,
            where=where,
        )
    return passed(
        f"every integral forbidden by the irreps{group} vanishes",
        value=worst,
        limit=ctx.limit,
    )


def spin_coupling(ham, layout: str):
    """(largest element, its Location) that couples alpha and beta spin orbitals under ``layout``.

    Spatial orbitals give none: h[p, q] needs sigma_p = sigma_q; (pq|rs) needs
    sigma_p = sigma_q and sigma_r = sigma_s; an antisymmetrized <pq||rs> needs
    sigma_p + sigma_q = sigma_r + sigma_s (S_z conserved).
    """
    spin = spin_of_spin_orbitals(ham.n, layout)
    mixed = spin[:, None] != spin[None, :]
    h = np.abs(np.asarray(ham.one_electron))
    worst, where = 0.0, None
    if np.any(mixed):
        peak = float(np.max(np.where(mixed, h, 0.0)))
        if peak > worst:
            p, q = np.unravel_index(int(np.argmax(np.where(mixed, h, 0.0))), h.shape)
            worst, where = peak, at_element("one_electron", (p, q))
    antisymmetrized = bool(ham.two_electron.antisymmetrized)
    for _, p0, slab in _stored_slabs(ham):
        rows = spin[p0 : p0 + len(slab)]
        if antisymmetrized:
            pair_in = rows[:, None] + spin[None, :]
            forbidden = pair_in[:, :, None, None] != (spin[:, None] + spin[None, :])[None, None]
        else:
            forbidden = (rows[:, None] != spin[None, :])[:, :, None, None] | mixed[None, None]
        magnitude = np.abs(np.where(forbidden, slab, 0))
        peak = float(magnitude.max()) if magnitude.size else 0.0
        if peak > worst:
            local = np.unravel_index(int(np.argmax(magnitude)), magnitude.shape)
            worst, where = peak, at_element("two_electron", (int(local[0]) + p0, *map(int, local[1:])))
    return worst, where


def _made_from_spatial_orbitals(ham) -> bool:
    """Whether the history records a conversion to spin orbitals from restricted or unrestricted ones."""
    history = (ham.provenance or {}).get("history") or []
    return any(
        isinstance(step, dict) and step.get("step") == "basis" and step.get("to") == "spin-orbital" for step in history
    )


@register("orbitals.spin_coupling", limit=1e-10, severity="warn", needs_finite=True)
def check_spin_coupling(ham, ctx) -> Result:
    """Largest element coupling alpha and beta spin orbitals (spin-orbital files); warns: S_z is then not conserved."""
    if ham.basis != "spin-orbital":
        return passed(
            f"{ham.basis} orbitals hold no element that couples alpha and beta: S_z is conserved by construction",
            value=0.0,
            limit=ctx.limit,
        )
    layout = ham.orbitals.spin_layout
    value, where = spin_coupling(ham, layout)
    if value <= ctx.limit:
        return passed(
            f"no element couples alpha and beta spin orbitals in the {layout} layout (largest {figure(value)})",
            value=value,
            limit=ctx.limit,
        )
    other = "blocked" if layout == "interleaved" else "interleaved"
    other_value, _ = spin_coupling(ham, other)
    if other_value <= ctx.limit:
        cause = (
            f"read as {other}, no element couples them (largest {figure(other_value)}): the arrays are probably "
            f"{other}, labelled {layout}"
        )
    elif _made_from_spatial_orbitals(ham):
        cause = (
            "the history says the file was made from spatial orbitals, which cannot couple the spins: it was altered"
        )
    else:
        cause = (
            "orbitals built from spatial functions cannot do this (only two-component orbitals with spin-orbit "
            "coupling can); S_z is not conserved, so the states have no definite 2S"
        )
    return warned(
        f"alpha and beta spin orbitals are coupled in the {layout} layout: largest element {figure(value)} at "
        f"{where}; {cause}",
        value=value,
        limit=ctx.limit,
        where=where,
        details={layout: value, other: other_value},
    )


def brillouin_blocks(ham, occupation):
    """(name, spin block, matrix block, rows, columns) whose vanishing is the stationarity of the determinant.

    Closed shell, unrestricted and spin-orbital: F^s_ia for each spin s,
    occupied i and virtual a. Restricted open shell (alpha occupies D + S,
    beta D): (F^a + F^b)_dv, F^b_ds and F^a_sv.
    """
    fock_a, fock_b = fock_matrices(ham, occupation)
    n = ham.n
    alpha, beta = (np.asarray(o, dtype=int) for o in occupation)
    if ham.basis == "restricted" and set(beta.tolist()) != set(alpha.tolist()):
        doubly = np.intersect1d(alpha, beta)
        singly = np.setdiff1d(np.union1d(alpha, beta), doubly)
        empty = np.setdiff1d(np.arange(n), np.union1d(alpha, beta))
        return [
            ("(Fa+Fb) doubly-virtual", "alpha+beta", (fock_a + fock_b)[np.ix_(doubly, empty)], doubly, empty),
            ("Fb doubly-singly", "beta", fock_b[np.ix_(doubly, singly)], doubly, singly),
            ("Fa singly-virtual", "alpha", fock_a[np.ix_(singly, empty)], singly, empty),
        ]
    if ham.basis == "spin-orbital":
        occupied = np.union1d(alpha, beta)
        virtual = np.setdiff1d(np.arange(n), occupied)
        return [("F occupied-virtual", None, fock_a[np.ix_(occupied, virtual)], occupied, virtual)]
    out = []
    for name, spin, fock, occupied in (("Fa", "alpha", fock_a, alpha), ("Fb", "beta", fock_b, beta)):
        virtual = np.setdiff1d(np.arange(n), occupied)
        out.append((f"{name} occupied-virtual", spin, fock[np.ix_(occupied, virtual)], occupied, virtual))
    return out


@register("orbitals.canonical", limit=1e-6, needs_finite=True)
def check_canonical(ham, ctx) -> Result:
    """Brillouin: max |F_ia| over occupied i and virtual a, when the orbitals claim to be canonical."""
    if not ham.orbitals.canonical:
        return warned(
            f"not run: the file does not claim canonical orbitals (orbitals.canonical is {OUTSIDE_FINGERPRINT}); "
            "the Brillouin condition was not tested",
            where=at_field("orbitals.canonical"),
        )
    ref = next((r for r in ham.references if r.method == "hf"), None)
    occupation = reference_occupation(ham, ref)
    worst, where = 0.0, None
    for name, spin, block, rows, cols in brillouin_blocks(ham, occupation):
        if block.size and np.abs(block).max() > worst:
            i, a = np.unravel_index(int(np.argmax(np.abs(block))), block.shape)
            worst, where = float(np.abs(block).max()), at_element("fock", (rows[i], cols[a]), spin)
            named = f"{name} ({rows[i]}, {cols[a]})"
    if worst > ctx.limit:
        return failed(
            f"the Brillouin condition fails: |F| = {worst:.3g} at {named} (limit {ctx.limit:.3g}); "
            "the orbitals are not the SCF's for this occupation, or the integrals are altered",
            value=worst,
            limit=ctx.limit,
            where=where,
        )
    return passed(f"Brillouin holds: max |F_ia| = {worst:.3g}", value=worst, limit=ctx.limit)
