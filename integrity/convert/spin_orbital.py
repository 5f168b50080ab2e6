"""Into spin orbitals: restricted or unrestricted -> spin-orbital, and restricted -> unrestricted.

With ``n`` spatial orbitals and ``m = 2n`` spin orbitals, spin orbital
``P = P(p, s)`` (see :mod:`integrity.model.indexing`; s = 0 alpha, 1 beta)::

    h_so[P(p,s), P(q,t)]                    = h_s[p, q] if s == t else 0
    (P(p,s) P(q,s') | P(r,t) P(u,t'))       = block_st[p, q, r, u] if s == s' and t == t' else 0

where h_s = h for a restricted file, h[s] for an unrestricted one, and
block_st = (pq|ru) restricted; aa, ab, bb for (s, t) = (0,0), (0,1), (1,1);
and ``block_10[p,q,r,u] = ab[r,u,p,q]`` ((pb qb|ra ua) = (ra ua|pb qb)).
The result is built in the requested notation directly (one allocation of
the m^4 array); values are copied, never computed, so the step is exact and
:mod:`integrity.convert.spin_separation` inverts it bit for bit.

>>> import numpy as np
>>> from integrity.model.hamiltonian import Hamiltonian, Orbitals, Electrons, TwoElectron
>>> ham = Hamiltonian(Orbitals(1, "restricted"), Electrons(1, 1), 0.0, np.array([[-1.0]]),
...                   TwoElectron(np.array([[[[0.5]]]]), notation="chemist"))
>>> so, entries = to_spin_orbital_step(ham, "interleaved")
>>> eri = so.two_electron.array
>>> so.one_electron.tolist(), float(eri[0, 0, 1, 1]), float(eri[0, 1, 0, 1])
([[-1.0, 0.0], [0.0, -1.0]], 0.5, 0.0)
"""

from __future__ import annotations

import dataclasses

import numpy as np

from integrity.convert.bitwise import native
from integrity.convert.history import step_entry
from integrity.convert.metadata import map_references, occupation_to_spin_orbitals, spin_orbital_irreps
from integrity.convert.reindex import NOTATION_SWAP, spin_split
from integrity.model.hamiltonian import Hamiltonian, TwoElectron


def _chemist_view(array: np.ndarray, notation: str) -> np.ndarray:
    """Chemist view of a dense array (no copy): ``chem[..., p,q,r,s] = phys[..., p,r,q,s]``."""
    return array if notation == "chemist" else np.swapaxes(array, -3, -2)


def spin_blocks_of(ham: Hamiltonian):
    """(h_alpha, h_beta, {(s, t): chemist block}) of a dense restricted or unrestricted file.

    All are views of the stored arrays."""
    h = native(ham.one_electron)
    chem = _chemist_view(native(ham.two_electron.array), ham.two_electron.notation)
    if ham.basis == "restricted":
        return h, h, {(0, 0): chem, (0, 1): chem, (1, 0): chem, (1, 1): chem}
    aa, ab, bb = chem[0], chem[1], chem[2]
    return h[0], h[1], {(0, 0): aa, (0, 1): ab, (1, 0): ab.transpose(2, 3, 0, 1), (1, 1): bb}


def to_spin_orbital_step(ham: Hamiltonian, layout: str, notation: str | None = None):
    """Restricted or unrestricted (dense) -> spin-orbital in ``layout``; returns (ham, entries).

    ``notation`` (default: the input's) is the notation of the result; a
    change is recorded as its own history entry, though no extra copy is made.
    """
    n = ham.n
    m = 2 * n
    two = ham.two_electron
    notation = notation or two.notation
    h_alpha, h_beta, blocks = spin_blocks_of(ham)
    one = np.zeros((m, m), dtype=h_alpha.dtype)
    one_split = spin_split(one, n, layout)
    one_split[0, :, 0, :] = h_alpha
    one_split[1, :, 1, :] = h_beta
    out = np.zeros((m, m, m, m), dtype=native(two.array).dtype)
    chem_split = spin_split(out, n, layout)
    if notation == "physicist":
        # out[P,Q,R,S] = chem[P,R,Q,S], so the chemist view swaps indices 2 and 3
        chem_split = chem_split.transpose(NOTATION_SWAP)
    for (s, t), block in blocks.items():
        chem_split[s, :, s, :, t, :, t, :] = block
    orb = ham.orbitals
    orbitals = dataclasses.replace(
        orb, count=m, basis="spin-orbital", spin_layout=layout, irreps=spin_orbital_irreps(orb.irreps, layout)
    )
    references = map_references(ham.references, lambda occ, label: occupation_to_spin_orbitals(occ, n, layout))
    result = ham.replace(
        orbitals=orbitals,
        one_electron=one,
        two_electron=TwoElectron(
            out,
            notation=notation,
            storage="dense",
            interaction=two.interaction,
            antisymmetrized=two.antisymmetrized,
        ),
        references=references,
    )
    entries = [step_entry("basis", ham.basis, "spin-orbital", fingerprint_changed=True, spin_layout=layout)]
    if notation != two.notation:
        entries.append(step_entry("notation", two.notation, notation, fingerprint_changed=False))
    return result, entries


def to_unrestricted_step(ham: Hamiltonian):
    """Restricted (dense) -> unrestricted: h -> [h, h], (pq|rs) -> [aa, ab, bb], all (pq|rs)."""
    two = ham.two_electron
    h = native(ham.one_electron)
    eri = native(two.array)
    result = ham.replace(
        orbitals=dataclasses.replace(ham.orbitals, basis="unrestricted"),
        one_electron=np.stack([h, h]),
        two_electron=TwoElectron(
            np.stack([eri, eri, eri]),
            notation=two.notation,
            storage="dense",
            interaction=two.interaction,
            antisymmetrized=two.antisymmetrized,
        ),
    )
    return result, [step_entry("basis", "restricted", "unrestricted", fingerprint_changed=True)]
