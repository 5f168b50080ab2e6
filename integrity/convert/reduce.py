"""Cut an active space out of a larger Hamiltonian: fold frozen orbitals into the constants.

With frozen, doubly occupied orbitals C and active orbitals A of a restricted
file (chemist notation)::

    E_fc      = sum_c 2 h_cc + sum_cd [2 (cc|dd) - (cd|dc)]
    h^eff_pq  = h_pq + sum_c [2 (pq|cc) - (pc|cq)]                   p, q in A
    (pq|rs)'  = (pq|rs)                                              p, q, r, s in A
    core_energy' = core_energy + E_fc

Unrestricted files (the same orbitals frozen in both spins)::

    h^a,eff_pq = h^a_pq + sum_c [(pq|cc)_aa - (pc|cq)_aa + (pq|cc)_ab]
    h^b,eff_pq = h^b_pq + sum_c [(pq|cc)_bb - (pc|cq)_bb + (cc|pq)_ab]
    E_fc       = sum_c (h^a_cc + h^b_cc) + sum_cd [(cc|dd)_aa - (cd|dc)_aa + (cc|dd)_bb - (cd|dc)_bb] / 2
                 + sum_cd (cc|dd)_ab

Spin-orbital files, per frozen spin orbital c: h^eff_pq = h_pq + sum_c [(pq|cc) -
(pc|cq)] (antisymmetrized: + sum_c <pc||qc>) and E_fc = sum_c h_cc + 1/2
sum_cd [(cc|dd) - (cd|dc)]. These are the Fock operator and the energy (less
core_energy) of the determinant of the frozen orbitals, which is how they are
computed (:func:`integrity.energies.meanfield.fock_matrices`).

Orbitals neither frozen nor active are discarded (empty virtual orbitals).
The kept orbitals stay in their original order; spin-orbital files keep their
layout, the k-th kept alpha spin orbital paired with the k-th kept beta one.
E_fc is added to ``core_energy_parts.frozen_core`` (a file without parts gets
``frozen_core`` and, when its core energy was not zero, ``input_core`` for it).

Electron counts lose the frozen electrons; irreps and the occupations of
``hf`` references follow the kept orbitals (their energies do not change: the
frozen orbitals are occupied in them). Energies of other references, full CI
among them, belong to the old space: they are dropped, or recomputed with
``solve_references`` (the history says which).
"""

from __future__ import annotations

import dataclasses

import numpy as np

from integrity.convert.bitwise import native
from integrity.convert.history import dated, step_entry, with_history
from integrity.convert.pipeline import ConversionResult, checksum_entries
from integrity.energies.meanfield import determinant_energy, fock_matrices, reference_occupation
from integrity.errors import FieldError, RefusedError
from integrity.io import DEFAULT_MEMORY
from integrity.model.hamiltonian import Electrons, Hamiltonian, Reference, TwoElectron
from integrity.model.indexing import pack_pairs, spin_of_spin_orbitals, spin_orbital_index, unique_from_pairs
from integrity.model.orbital_lists import format_orbital_list
from integrity.model.slabs import dense_chemist

SPIN_NAMES = ("alpha", "beta")


def _named(indices) -> str:
    """ "orbital 3" or "orbitals 0-2,5"."""
    return f"orbital {indices[0]}" if len(indices) == 1 else f"orbitals {format_orbital_list(indices)}"


def _are(indices) -> str:
    return "is" if len(indices) == 1 else "are"


def _indices(values, n: int, option: str) -> tuple[int, ...]:
    try:
        indices = tuple(int(v) for v in values)
    except (TypeError, ValueError):
        raise FieldError(option.lstrip("-"), f"expected orbital indices, got {values!r}") from None
    outside = sorted({i for i in indices if not 0 <= i < n})
    if outside:
        raise FieldError(
            option.lstrip("-"),
            f"{option} names {_named(outside)} outside 0..{n - 1} (the file has {n})",
        )
    repeated = sorted({i for i in indices if indices.count(i) > 1})
    if repeated:
        raise FieldError(option.lstrip("-"), f"{option} lists {_named(repeated)} twice")
    return indices


def _hf_occupations(ham: Hamiltonian) -> list[tuple[str, tuple]]:
    """(label, occupation) of every hf reference; the lowest orbitals when there is none."""
    found = [(ref.label, reference_occupation(ham, ref)) for ref in ham.references if ref.method == "hf"]
    return found or [("(lowest orbitals; no hf reference)", reference_occupation(ham, None))]


def _open_frozen(ham: Hamiltonian, frozen, occupation) -> list[int]:
    """Frozen orbitals the occupation does not fill (twice, or once per spin orbital)."""
    alpha, beta = set(occupation[0]), set(occupation[1])
    if ham.basis == "spin-orbital":
        return [c for c in frozen if c not in alpha | beta]
    return [c for c in frozen if not (c in alpha and c in beta)]


def _require_occupations(ham, frozen, discarded, allow_open_frozen):
    """Refuse frozen orbitals that are not filled and discarded ones that are; return what was allowed."""
    opened: dict[str, list[int]] = {}
    for label, occupation in _hf_occupations(ham):
        open_orbitals = _open_frozen(ham, frozen, occupation)
        if open_orbitals and not allow_open_frozen:
            filled = "occupied" if ham.basis == "spin-orbital" else "doubly occupied"
            raise RefusedError(
                "frozen",
                f"{_named(open_orbitals)} {_are(open_orbitals)} not {filled} in the reference {label!r} "
                f"(alpha {list(occupation[0])}, beta {list(occupation[1])}); a frozen orbital must be; freeze "
                "anyway with --allow-open-frozen (recorded in the history)",
            )
        if open_orbitals:
            opened[label] = open_orbitals
        lost = sorted(set(discarded) & (set(occupation[0]) | set(occupation[1])))
        if lost:
            raise RefusedError(
                "active",
                f"{_named(lost)} {_are(lost)} occupied in the reference {label!r} but neither "
                "frozen nor active; freeze them (--frozen) or keep them active (--active)",
            )
    return opened


def _frozen_occupation(ham: Hamiltonian, frozen):
    if ham.basis != "spin-orbital":
        return tuple(frozen), tuple(frozen)
    spins = spin_of_spin_orbitals(ham.n, ham.orbitals.spin_layout)
    return tuple(c for c in frozen if spins[c] == 0), tuple(c for c in frozen if spins[c] == 1)


def _kept_order(ham: Hamiltonian, active) -> np.ndarray:
    """The kept orbitals in the result's order (see the module docstring)."""
    kept = sorted(active)
    if ham.basis != "spin-orbital":
        return np.asarray(kept, dtype=int)
    layout = ham.orbitals.spin_layout
    spins = spin_of_spin_orbitals(ham.n, layout)
    by_spin = [[p for p in kept if spins[p] == s] for s in (0, 1)]
    if len(by_spin[0]) != len(by_spin[1]):
        raise FieldError(
            "active",
            f"--active keeps {len(by_spin[0])} alpha and {len(by_spin[1])} beta spin orbitals; a spin-orbital "
            f"file in the {layout} layout needs as many of each",
        )
    half = len(by_spin[0])
    order = np.empty(2 * half, dtype=int)
    for spin in (0, 1):
        for k, p in enumerate(by_spin[spin]):
            order[spin_orbital_index(k, spin, half, layout)] = p
    return order


def _electrons(ham: Hamiltonian, electrons: Electrons, frozen_occupation, kept: int, where: str) -> Electrons:
    alpha = electrons.alpha - len(frozen_occupation[0])
    beta = electrons.beta - len(frozen_occupation[1])
    per_spin = kept // 2 if ham.basis == "spin-orbital" else kept
    for spin, count in zip(SPIN_NAMES, (alpha, beta), strict=True):
        if not 0 <= count <= per_spin:
            raise FieldError(
                where,
                f"{electrons.alpha} alpha and {electrons.beta} beta electrons less the frozen ones leave {count} "
                f"{spin} electrons for {per_spin} active orbitals per spin; the active space cannot hold them",
            )
    return Electrons(alpha, beta)


def _two_electron(ham: Hamiltonian, order: np.ndarray) -> TwoElectron:
    two = ham.two_electron
    box = np.ix_(order, order, order, order)
    if two.storage == "dense":
        stored = native(np.asarray(two.array))
        array = np.stack([b[box] for b in stored]) if ham.basis == "unrestricted" else stored[box]
        return TwoElectron(np.ascontiguousarray(array), two.notation, "dense", two.interaction, two.antisymmetrized)
    chem = dense_chemist(two, ham.basis, ham.n)
    blocks = list(chem) if ham.basis == "unrestricted" else [chem]
    packed = [pack_pairs(np.ascontiguousarray(b[box])) for b in blocks]
    if two.storage == "unique":
        packed = [unique_from_pairs(p) for p in packed]
    array = np.stack(packed) if ham.basis == "unrestricted" else packed[0]
    return TwoElectron(array, two.notation, two.storage, two.interaction, two.antisymmetrized)


def reduce_active_space(
    ham: Hamiltonian,
    frozen=(),
    active=None,
    *,
    allow_open_frozen: bool = False,
    solve_references: bool = False,
    accept_checksum_mismatch: bool = False,
    memory: int = DEFAULT_MEMORY,
    date: str | None = None,
) -> ConversionResult:
    """The Hamiltonian over ``active`` orbitals with ``frozen`` ones folded in (see the module docstring).

    ``frozen``, ``active``: 0-based orbital indices (spin orbitals for a
    spin-orbital file). ``allow_open_frozen``: freeze orbitals an hf reference
    does not fill (such references are dropped; recorded). ``solve_references``:
    recompute full-CI references with this project's solver instead of
    dropping them. ``date`` dates the history entry (today, UTC, when None).
    """
    if active is None:
        raise FieldError("active", "give the active orbitals (--active)")
    entries = checksum_entries(ham, accept_checksum_mismatch)
    n = ham.n
    frozen, active = _indices(frozen, n, "--frozen"), _indices(active, n, "--active")
    if not active:
        raise FieldError("active", "--active names no orbital; an active space needs at least one")
    both = sorted(set(frozen) & set(active))
    if both:
        raise FieldError("frozen", f"{_named(both)} {_are(both)} in both --frozen and --active")
    discarded = tuple(p for p in range(n) if p not in set(frozen) | set(active))
    opened = _require_occupations(ham, frozen, discarded, allow_open_frozen)
    order = _kept_order(ham, active)
    occupation = _frozen_occupation(ham, frozen)
    electrons = _electrons(ham, ham.electrons, occupation, len(order), "electrons")
    box = np.ix_(order, order)
    if frozen:
        fock_alpha, fock_beta = fock_matrices(ham, occupation)
        frozen_core = float(np.real(determinant_energy(ham, occupation))) - float(ham.core_energy)
    else:
        h = np.asarray(ham.one_electron)
        fock_alpha, fock_beta = (h[0], h[1]) if ham.basis == "unrestricted" else (h, h)
        frozen_core = 0.0
    one = np.stack([fock_alpha[box], fock_beta[box]]) if ham.basis == "unrestricted" else fock_alpha[box]
    irreps = ham.orbitals.irreps
    reduced = ham.replace(
        orbitals=dataclasses.replace(
            ham.orbitals,
            count=len(order),
            irreps=None if irreps is None else tuple(int(irreps[p]) for p in order),
            canonical=None if opened else ham.orbitals.canonical,  # open frozen orbitals change the mean field
        ),
        electrons=electrons,
        core_energy=float(ham.core_energy) + frozen_core,
        core_energy_parts=_parts(ham, frozen_core) if frozen else ham.core_energy_parts,
        one_electron=np.ascontiguousarray(one),
        two_electron=_two_electron(ham, order),
        references=(),
        checksum=None,
    )
    references, dropped, recomputed = _references(ham, reduced, order, occupation, opened, solve_references, memory)
    reduced = reduced.replace(references=tuple(references))
    extra = {"frozen": format_orbital_list(frozen) if frozen else "none", "active": format_orbital_list(order)}
    if discarded:
        extra["discarded"] = format_orbital_list(discarded)
    extra["frozen_core_energy"] = frozen_core
    if opened:
        extra["open_frozen"] = {label: format_orbital_list(orbitals) for label, orbitals in opened.items()}
    if dropped:
        extra["dropped_references"] = dropped
        extra["note"] = "references over the old space no longer apply to the reduced one and were dropped"
    if recomputed:
        extra["recomputed_references"] = recomputed
        extra["recomputed_by"] = "integrity full-CI solver"
    entries.append(step_entry("reduce", f"{n} orbitals", f"{len(order)} orbitals", fingerprint_changed=True, **extra))
    entries = dated(entries, date)
    return ConversionResult(with_history(reduced, entries), tuple(entries))


def _parts(ham: Hamiltonian, frozen_core: float) -> dict[str, float]:
    if ham.core_energy_parts is not None:
        parts = {name: float(value) for name, value in ham.core_energy_parts.items()}
    else:
        parts = {"input_core": float(ham.core_energy)} if ham.core_energy != 0 else {}
    parts["frozen_core"] = parts.get("frozen_core", 0.0) + frozen_core
    return parts


def _references(ham, reduced, order, frozen_occupation, opened, solve_references, memory):
    """(references of the reduced file, labels dropped, labels recomputed)."""
    new_index = {int(old): new for new, old in enumerate(order)}
    kept, dropped, recomputed = [], [], []
    for ref in ham.references:
        keep = (ref.method == "hf" and ref.label not in opened) or (ref.method == "fci" and solve_references)
        if not keep:
            dropped.append(ref.label)
            continue
        electrons = None
        if ref.electrons is not None:
            electrons = _electrons(
                ham, ref.electrons, frozen_occupation, len(order), f"references.{ref.label}.electrons"
            )
        if ref.method == "hf":
            alpha, beta = reference_occupation(ham, ref)
            occupation = (
                tuple(sorted(new_index[p] for p in alpha if p in new_index)),
                tuple(sorted(new_index[p] for p in beta if p in new_index)),
            )
            kept.append(dataclasses.replace(ref, electrons=electrons, occupation=occupation))
        else:
            kept.append(_recomputed(reduced, ref, electrons, memory))
            recomputed.append(ref.label)
    return kept, dropped, recomputed


def _recomputed(reduced: Hamiltonian, ref: Reference, electrons, memory) -> Reference:
    from integrity.energies.solve import solve_reference

    target = dataclasses.replace(ref, electrons=electrons)
    result = solve_reference(reduced, target, memory=memory)
    return dataclasses.replace(target, energy=float(result.roots[0].energy))
