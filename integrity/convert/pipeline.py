"""``convert``: several conversion steps in one call, in a fixed order.

Order: (storage -> dense, when a later step needs dense arrays), basis,
spin layout, notation, antisymmetrization, relabelling, storage. Every step is exact
(values copied or permuted, never recomputed) except

* packing (dense -> pairs -> unique), which drops the elements it assumes
  equal to their partners: refused beyond ``tolerance`` unless ``allow_loss``;
* spin-orbital -> unrestricted/restricted and unrestricted -> restricted,
  which drop blocks they assume zero or equal: refused likewise;
* antisymmetrization, <pq||rs> = <pq|rs> - <pq|sr>, which cannot be undone:
  converting an antisymmetrized file back to plain integrals is refused.

A relabelling of the orbitals (``orbital_order``, ``orbital_signs``,
``exchange_spins``; see :mod:`integrity.convert.orbital_order`) is applied
after the notation step, so its indices are those of the result's orbitals
(its basis and spin layout), before the storage step packs the result.

Arguments left None keep what the input has; a storage the target cannot
use (e.g. ``pairs`` after a change to physicist) becomes ``dense``. A
spin-orbital result is ``interleaved`` unless ``spin_layout`` says otherwise.

A Hamiltonian that carries a checksum is first checked against its own
fingerprint: a mismatch is refused unless ``accept_checksum_mismatch`` (a converter must
not launder a damaged file by writing a fresh checksum); accepted, the mismatch
is recorded in the history. The result has ``checksum=None`` and one
``provenance.history`` entry per step, dated ``date`` (YYYY-MM-DD; today, UTC,
when None; see :mod:`integrity.convert.history`).

>>> import numpy as np
>>> from integrity.model.hamiltonian import Hamiltonian, Orbitals, Electrons, TwoElectron
>>> ham = Hamiltonian(Orbitals(1, "restricted"), Electrons(1, 1), 0.0, np.array([[-1.0]]),
...                   TwoElectron(np.array([[[[0.5]]]]), notation="chemist"))
>>> result = convert(ham, basis="spin-orbital", notation="physicist", antisymmetrize=True)
>>> [(s["step"], s["from"], s["to"]) for s in result.steps]
[('basis', 'restricted', 'spin-orbital'), ('notation', 'chemist', 'physicist'), \
('antisymmetrize', False, True)]
>>> result.fingerprint_changed, float(result.hamiltonian.two_electron.array[0, 1, 0, 1])
(True, 0.5)
>>> convert(ham, storage="unique").steps[0]["fingerprint_changed"]
False
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

from integrity.convert.bitwise import native, same_bits
from integrity.convert.history import dated, step_entry, with_history
from integrity.convert.metadata import layout_permutation, map_references, relabelled_irreps, relabelled_occupation
from integrity.convert.orbital_order import relabel_step
from integrity.convert.reindex import NOTATION_SWAP, antisymmetrize_in_place, reindexed, spin_split
from integrity.convert.spin_orbital import to_spin_orbital_step, to_unrestricted_step
from integrity.convert.spin_separation import from_spin_orbital_step, to_restricted_step
from integrity.convert.storage import require_tolerance, storage_problem, storage_step
from integrity.errors import FieldError, RefusedError
from integrity.model.fingerprint import fingerprint
from integrity.model.hamiltonian import Hamiltonian, TwoElectron
from integrity.model.indexing import BASES, NOTATIONS, SPIN_LAYOUTS, STORAGES

DEFAULT_LAYOUT = "interleaved"


@dataclass(frozen=True, eq=False)
class ConversionResult:
    """The converted Hamiltonian and the history entries of the steps applied (in order).

    ``hamiltonian.provenance["history"]`` ends with ``steps``;
    ``hamiltonian.checksum`` is None, so :func:`integrity.io.save` writes a fresh one.
    """

    hamiltonian: Hamiltonian
    steps: tuple[dict, ...]

    @property
    def fingerprint_changed(self) -> bool:
        """True when the result's fingerprint differs from the input's (some step changed it)."""
        return any(step["fingerprint_changed"] for step in self.steps)

    def as_dict(self) -> dict:
        """The steps and the result's stored checksum (None until written)."""
        return {"steps": [dict(step) for step in self.steps], "checksum": self.hamiltonian.checksum}


@dataclass(frozen=True)
class Target:
    """What the result will be: basis, spin layout (spin-orbital only), notation, storage, and
    whether it holds antisymmetrized integrals."""

    basis: str
    spin_layout: str | None
    notation: str
    storage: str
    antisymmetrized: bool


def _choice(field: str, value, allowed):
    if value is not None and value not in allowed:
        raise FieldError(field, f"{value!r} is not allowed; expected one of {allowed}")
    return value


def plan(
    ham: Hamiltonian,
    *,
    notation=None,
    storage=None,
    basis=None,
    spin_layout=None,
    antisymmetrize: bool = False,
) -> Target:
    """The target of a conversion request, or FieldError/RefusedError saying why it cannot be."""
    _choice("notation", notation, NOTATIONS)
    _choice("storage", storage, STORAGES)
    _choice("basis", basis, BASES)
    _choice("spin_layout", spin_layout, SPIN_LAYOUTS)
    if not isinstance(antisymmetrize, bool):
        raise FieldError("antisymmetrize", f"expected True or False, got {antisymmetrize!r}")
    two = ham.two_electron
    target_basis = basis or ham.basis
    if target_basis == "spin-orbital":
        target_layout = spin_layout or ham.orbitals.spin_layout or DEFAULT_LAYOUT
    elif spin_layout is not None:
        raise FieldError(
            "spin_layout",
            f"a spin layout applies to spin-orbital files only; the result "
            f"is {target_basis}; add basis='spin-orbital' (--basis spin-orbital)",
        )
    else:
        target_layout = None
    target_notation = notation or two.notation
    was_antisymmetrized = bool(two.antisymmetrized)
    if antisymmetrize and not was_antisymmetrized:
        if target_basis != "spin-orbital":
            raise FieldError(
                "antisymmetrize",
                "antisymmetrized integrals <pq||rs> are defined for the "
                f"spin-orbital basis only; the result is {target_basis}; add "
                "basis='spin-orbital' (--basis spin-orbital)",
            )
        if target_notation != "physicist":
            raise FieldError(
                "antisymmetrize",
                "antisymmetrized integrals <pq||rs> = <pq|rs> - <pq|sr> "
                f"are defined in physicist notation only; the result is {target_notation}; "
                "add notation='physicist' (--notation physicist)",
            )
    if was_antisymmetrized and (target_basis != "spin-orbital" or target_notation != "physicist"):
        raise RefusedError(
            "two_electron.antisymmetrized",
            f"this file holds <pq||rs> = <pq|rs> - <pq|sr>; the {target_basis} "
            f"{target_notation} result needs the plain integrals <pq|rs>, which cannot be "
            "recovered from it (only the spin-orbital physicist form exists)",
        )
    is_complex = native(two.array).dtype.kind == "c"
    if storage is not None:
        problem = storage_problem(target_basis, target_notation, is_complex, storage)
        if problem:
            raise FieldError("storage", problem)
        target_storage = storage
    elif storage_problem(target_basis, target_notation, is_complex, two.storage) is None:
        target_storage = two.storage
    else:
        target_storage = "dense"
    return Target(
        target_basis,
        target_layout,
        target_notation,
        target_storage,
        antisymmetrize or was_antisymmetrized,
    )


def checksum_entries(ham: Hamiltonian, accept_mismatch: bool) -> list[dict]:
    """Refuse (unless accepted) a Hamiltonian whose stored checksum is not its fingerprint."""
    if ham.checksum is None:
        return []
    computed = fingerprint(ham)
    if computed == ham.checksum:
        return []
    if not accept_mismatch:
        raise RefusedError(
            "checksum",
            f"the stored checksum {ham.checksum} does not match the content's fingerprint "
            f"{computed}: the data or its identifying metadata changed after the checksum was "
            "written; converting would write a fresh checksum over a damaged file. Check the "
            "file, or accept the mismatch (--accept-checksum-mismatch) to convert it anyway",
        )
    return [step_entry("checksum", ham.checksum, computed, fingerprint_changed=False, accepted_mismatch=True)]


def _reindex_step(ham: Hamiltonian, target: Target, owned: bool = False):
    """Spin layout, notation and antisymmetrization of a dense array in one copy; (ham, entries).

    ``owned``: the array was made by an earlier step of this conversion, so an
    antisymmetrization alone may overwrite it instead of copying it.
    """
    two = ham.two_electron
    spin_orbital = ham.basis == "spin-orbital"
    layout = (ham.orbitals.spin_layout, target.spin_layout) if spin_orbital else None
    change_layout = spin_orbital and layout[0] != layout[1]
    swap = two.notation != target.notation
    anti = target.antisymmetrized and not two.antisymmetrized
    if not (change_layout or swap or anti):
        return ham, []
    n_spatial = ham.n // 2 if spin_orbital else ham.n
    array = native(two.array)
    in_place = owned and anti and not (change_layout or swap)
    if in_place:
        new_array = array
        anti_changed = antisymmetrize_in_place(new_array)
    else:
        new_array = reindexed(
            array,
            n_spatial=n_spatial,
            layout=layout if change_layout else None,
            swap=swap,
            antisymmetrize=anti,
        )
    entries = []
    changes = {}
    if change_layout:
        new_index = layout_permutation(ham.n, *layout)
        orb = ham.orbitals
        changes["orbitals"] = dataclasses.replace(
            orb, spin_layout=target.spin_layout, irreps=relabelled_irreps(orb.irreps, new_index)
        )
        changes["one_electron"] = reindexed(ham.one_electron, n_spatial=n_spatial, layout=layout)
        changes["references"] = map_references(ham.references, lambda occ, label: relabelled_occupation(occ, new_index))
        entries.append(step_entry("spin_layout", layout[0], layout[1], fingerprint_changed=True))
    if swap:
        entries.append(step_entry("notation", two.notation, target.notation, fingerprint_changed=False))
    if anti:
        if not in_place:
            anti_changed = change_layout or not _same_as_plain(array, two.notation, new_array, n_spatial)
        entries.append(step_entry("antisymmetrize", False, True, fingerprint_changed=anti_changed))
    changes["two_electron"] = TwoElectron(
        new_array,
        notation=target.notation,
        storage="dense",
        interaction=two.interaction,
        antisymmetrized=True if anti else two.antisymmetrized,
    )
    return ham.replace(**changes), entries


def _same_as_plain(array, notation, antisymmetrized, n_spatial) -> bool:
    """Whether <pq||rs> has the same bits as the plain dense chemist array of the same layout.

    Only then does antisymmetrizing leave the fingerprint unchanged (e.g. an all-zero array).
    Both are compared through the same (arbitrary) spin split, so no copy is made.
    """
    source = spin_split(array, n_spatial, "blocked")
    if notation == "physicist":
        source = source.transpose(NOTATION_SWAP)
    return same_bits(spin_split(antisymmetrized, n_spatial, "blocked"), source)


def _basis_step(ham: Hamiltonian, target: Target, allow_loss: bool, tolerance: float):
    if target.basis == ham.basis:
        return ham, []
    if target.basis == "spin-orbital":
        return to_spin_orbital_step(ham, target.spin_layout, target.notation)
    if ham.basis == "spin-orbital":
        return from_spin_orbital_step(ham, target.basis, allow_loss=allow_loss, tolerance=tolerance)
    if target.basis == "unrestricted":
        return to_unrestricted_step(ham)
    return to_restricted_step(ham, allow_loss=allow_loss, tolerance=tolerance)


def convert(
    ham: Hamiltonian,
    *,
    notation: str | None = None,
    storage: str | None = None,
    basis: str | None = None,
    spin_layout: str | None = None,
    antisymmetrize: bool = False,
    orbital_order=None,
    orbital_signs=None,
    exchange_spins: bool = False,
    allow_loss: bool = False,
    accept_checksum_mismatch: bool = False,
    tolerance: float = 1e-10,
    date: str | None = None,
) -> ConversionResult:
    """Convert ``ham`` (see the module docstring for order, defaults and refusals).

    ``notation``: "chemist" or "physicist"; ``storage``: "dense", "pairs" or
    "unique"; ``basis``: "restricted", "unrestricted" or "spin-orbital";
    ``spin_layout``: "interleaved" or "blocked"; ``antisymmetrize``: store
    <pq||rs> (spin-orbital physicist only; False keeps what the input has);
    ``orbital_order``, ``orbital_signs``: orbital p of the result is orbital
    ``orbital_order[p]`` times ``orbital_signs[p]`` (one list, or alpha and beta
    lists for an unrestricted result); ``exchange_spins``: exchange alpha and beta
    first (see :mod:`integrity.convert.orbital_order`);
    ``allow_loss``: do lossy steps beyond ``tolerance`` (absolute, hartree),
    noting in the history what was dropped; ``accept_checksum_mismatch``:
    convert a Hamiltonian whose checksum is not its fingerprint (noted in the
    history); ``date``: the date of the history entries (YYYY-MM-DD; today,
    UTC, when None).

    Memory: each step holds its input and at most one new full array. Steps
    are fused where one copy can do several: a basis change to spin orbitals
    writes the requested notation directly; layout, notation and
    antisymmetrization of a spin-orbital array are one copy, and an
    antisymmetrization of an array this call made overwrites it; packing
    gathers into the smaller array.
    """
    for name, flag in (("allow_loss", allow_loss), ("accept_checksum_mismatch", accept_checksum_mismatch)):
        if not isinstance(flag, bool):
            raise FieldError(name, f"expected True or False, got {flag!r}")
    tolerance = require_tolerance(tolerance)
    target = plan(
        ham,
        notation=notation,
        storage=storage,
        basis=basis,
        spin_layout=spin_layout,
        antisymmetrize=antisymmetrize,
    )
    entries = checksum_entries(ham, accept_checksum_mismatch)
    two = ham.two_electron
    relabel = orbital_order is not None or orbital_signs is not None or exchange_spins
    needs_dense = (
        relabel
        or target.basis != ham.basis
        or target.spin_layout != ham.orbitals.spin_layout
        or target.notation != two.notation
        or target.antisymmetrized != bool(two.antisymmetrized)
    )
    current = ham
    if needs_dense and two.storage != "dense":
        current, entry = storage_step(current, "dense")
        entries.append(entry)
    current, found = _basis_step(current, target, allow_loss, tolerance)
    entries += found
    current, found = _reindex_step(current, target, owned=current is not ham)
    entries += found
    current, found = relabel_step(current, orbital_order, orbital_signs, exchange_spins)
    entries += found
    current, entry = storage_step(current, target.storage, allow_loss=allow_loss, tolerance=tolerance)
    if entry is not None:
        entries.append(entry)
    entries = dated(entries, date)
    return ConversionResult(with_history(current, entries), tuple(entries))


def convert_notation(ham: Hamiltonian, notation: str) -> ConversionResult:
    """Chemist <-> physicist: ``phys[p,q,r,s] = chem[p,r,q,s]``, i.e. <pq|rs> = (pr|qs)."""
    return convert(ham, notation=notation)


def convert_storage(
    ham: Hamiltonian, storage: str, *, allow_loss: bool = False, tolerance: float = 1e-10
) -> ConversionResult:
    """Dense <-> pairs <-> unique (see :mod:`integrity.convert.storage`)."""
    return convert(ham, storage=storage, allow_loss=allow_loss, tolerance=tolerance)


def convert_basis(
    ham: Hamiltonian,
    basis: str,
    *,
    spin_layout: str | None = None,
    allow_loss: bool = False,
    tolerance: float = 1e-10,
) -> ConversionResult:
    """Restricted / unrestricted / spin-orbital (see :mod:`integrity.convert.spin_orbital` and
    :mod:`integrity.convert.spin_separation`)."""
    return convert(ham, basis=basis, spin_layout=spin_layout, allow_loss=allow_loss, tolerance=tolerance)


def convert_spin_layout(ham: Hamiltonian, spin_layout: str) -> ConversionResult:
    """Interleaved (2p + s) <-> blocked (p + s*n) for a spin-orbital file."""
    if ham.basis != "spin-orbital":
        raise FieldError(
            "spin_layout",
            f"a spin layout applies to spin-orbital files only; this file is "
            f"{ham.basis}; convert with basis='spin-orbital' first",
        )
    return convert(ham, spin_layout=spin_layout)


def antisymmetrize(ham: Hamiltonian) -> ConversionResult:
    """Spin-orbital physicist <pq|rs> -> <pq||rs> = <pq|rs> - <pq|sr> (cannot be undone)."""
    return convert(ham, antisymmetrize=True)
