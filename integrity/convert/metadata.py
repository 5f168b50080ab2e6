"""What travels with the arrays when the orbital basis or spin layout changes.

Spatial orbital p with spin s (0 alpha, 1 beta) is spin orbital
``P = 2*p + s`` (interleaved) or ``P = p + s*n`` (blocked), see
:mod:`integrity.model.indexing`. So

* irreps: ``irreps_so[P] = irreps[p]`` (a spin orbital has its spatial
  orbital's irrep); back, alpha and beta spin orbitals of one spatial orbital
  must agree;
* reference occupations: occupied alpha orbitals A and beta orbitals B become
  spin orbitals ``{P(a, 0) for a in A}`` and ``{P(b, 1) for b in B}``; back,
  every index listed as alpha must be an alpha spin orbital (and likewise beta);
* a layout change renumbers every spin-orbital index by the same permutation.

>>> spin_orbital_irreps((0, 3), "interleaved"), spin_orbital_irreps((0, 3), "blocked")
((0, 0, 3, 3), (0, 3, 0, 3))
>>> occupation_to_spin_orbitals(((0, 1), (0,)), 2, "blocked")
((0, 1), (2,))
>>> occupation_from_spin_orbitals(((0, 1), (2,)), 4, "blocked", "hf")
((0, 1), (0,))
"""

from __future__ import annotations

import dataclasses

import numpy as np

from integrity.errors import RefusedError
from integrity.model.hamiltonian import Reference
from integrity.model.indexing import spatial_of_spin_orbitals, spin_of_spin_orbitals, spin_orbital_index

SPIN_NAMES = ("alpha", "beta")


def spin_orbital_irreps(irreps, layout: str) -> tuple[int, ...] | None:
    """Irrep of each spin orbital: that of its spatial orbital (None stays None)."""
    if irreps is None:
        return None
    spatial = spatial_of_spin_orbitals(2 * len(irreps), layout)
    return tuple(int(irreps[p]) for p in spatial)


def spatial_irreps(irreps_so, layout: str) -> tuple[int, ...] | None:
    """Irrep of each spatial orbital from spin-orbital irreps; refuses when alpha and beta differ.

    >>> spatial_irreps((0, 1, 3, 3), "interleaved")
    Traceback (most recent call last):
    ...
    integrity.errors.RefusedError: orbitals.irreps: spin orbitals 0 (spatial 0 alpha) and 1 \
(spatial 0 beta) have irreps 0 and 1; one spatial orbital has one irrep in a restricted or \
unrestricted file
    """
    if irreps_so is None:
        return None
    m = len(irreps_so)
    n = m // 2
    out = []
    for p in range(n):
        a = spin_orbital_index(p, 0, n, layout)
        b = spin_orbital_index(p, 1, n, layout)
        if irreps_so[a] != irreps_so[b]:
            raise RefusedError(
                "orbitals.irreps",
                f"spin orbitals {a} (spatial {p} alpha) and {b} (spatial {p} beta) have irreps "
                f"{irreps_so[a]} and {irreps_so[b]}; one spatial orbital has one irrep in a "
                "restricted or unrestricted file",
            )
        out.append(int(irreps_so[a]))
    return tuple(out)


def layout_permutation(m: int, source: str, target: str) -> np.ndarray:
    """``new[P]``: the index in layout ``target`` of spin orbital P of layout ``source``.

    >>> layout_permutation(6, "interleaved", "blocked").tolist()
    [0, 3, 1, 4, 2, 5]
    """
    spin = spin_of_spin_orbitals(m, source)
    spatial = spatial_of_spin_orbitals(m, source)
    return np.asarray(spin_orbital_index(spatial, spin, m // 2, target))


def relabelled_irreps(irreps, new_index: np.ndarray) -> tuple[int, ...] | None:
    """Irreps after renumbering orbital P as ``new_index[P]``."""
    if irreps is None:
        return None
    out = [0] * len(irreps)
    for old, new in enumerate(new_index.tolist()):
        out[new] = int(irreps[old])
    return tuple(out)


def occupation_to_spin_orbitals(occupation, n: int, layout: str):
    """Spatial (alpha, beta) occupations as spin-orbital indices, in the order listed."""
    alpha, beta = occupation
    return (
        tuple(int(spin_orbital_index(p, 0, n, layout)) for p in alpha),
        tuple(int(spin_orbital_index(p, 1, n, layout)) for p in beta),
    )


def occupation_from_spin_orbitals(occupation, m: int, layout: str, label: str):
    """Spin-orbital (alpha, beta) occupations as spatial indices; refuses a wrong-spin entry."""
    spin = spin_of_spin_orbitals(m, layout)
    spatial = spatial_of_spin_orbitals(m, layout)
    out = []
    for s, indices in enumerate(occupation):
        for index in indices:
            if spin[index] != s:
                raise RefusedError(
                    f"references.{label}.occupation.{SPIN_NAMES[s]}",
                    f"spin orbital {index} is listed as {SPIN_NAMES[s]} but is a "
                    f"{SPIN_NAMES[spin[index]]} spin orbital in the {layout} layout; it has no "
                    f"{SPIN_NAMES[s]} spatial orbital to map to",
                )
        out.append(tuple(int(spatial[i]) for i in indices))
    return tuple(out)


def relabelled_occupation(occupation, new_index: np.ndarray):
    """Occupations after renumbering orbital P as ``new_index[P]``."""
    return tuple(tuple(int(new_index[i]) for i in indices) for indices in occupation)


def map_references(references, occupation_map) -> tuple[Reference, ...]:
    """References with each stated occupation passed through ``occupation_map(occ, label)``.

    References without an occupation keep None: their default (the lowest
    alpha and beta orbitals) means the same determinant in every basis.
    """
    out = []
    for ref in references:
        if ref.occupation is None:
            out.append(ref)
        else:
            out.append(dataclasses.replace(ref, occupation=occupation_map(ref.occupation, ref.label)))
    return tuple(out)
