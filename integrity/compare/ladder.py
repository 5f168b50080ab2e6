"""Compare two Hamiltonians: place them on the first rung of the ladder that holds.

1. **identical**: the same fingerprint (so the same content in any container,
   notation or storage).
2. **tolerance**: in the common form (:mod:`integrity.compare.forms`) every
   element of every block, and core_energy, agree within the tolerance ε, and
   the electron counts are equal.
3. **relabel**: B is A with its orbitals reordered and sign-flipped (alpha and
   beta exchanged too, where the electron counts say so), within ε
   (:mod:`integrity.compare.relabel`).
4. **constant**: the integrals agree, directly or after the relabelling, but
   core_energy differs; the difference is named when it equals a stored part.
5. **spectrum**: the elements differ but the lowest full-CI energies of the
   stated sector (``roots`` of them) agree within ε, as they do for orbitals
   rotated within the space (:mod:`integrity.compare.spectrum`).
6. **different**: none of the above; the blocks that differ, the energy
   difference and the likeliest reasons say how.

Files whose common forms have different orbital counts are compared as far
as that is meaningful (sizes, electron counts, energies) and land on rung 6.
"""

from __future__ import annotations

import math
import os

import numpy as np

from integrity.compare.forms import common_forms
from integrity.compare.relabel import DEFAULT_NODE_LIMIT, find_relabelling
from integrity.compare.result import RUNGS, Comparison, Constant, Relabelling, Side, Step, rung_number
from integrity.compare.spectrum import diagnosed, file_energies, named_constant, spectra_agree
from integrity.compare.views import block_differences, exchanged, view_of
from integrity.errors import FieldError
from integrity.io import DEFAULT_MEMORY, load
from integrity.model.fingerprint import fingerprint
from integrity.model.hamiltonian import Hamiltonian

NAMES = ("A", "B")
#: a handful of differing elements (one element and its symmetric partners) reads as a damaged value
FEW_ELEMENTS = 8


def _loaded(item, memory: int):
    if isinstance(item, Hamiltonian):
        return item, None
    if isinstance(item, str | os.PathLike):
        return load(item, memory=memory), str(item)
    raise FieldError(None, f"expected a Hamiltonian or a file path, got {type(item).__name__}")


def _side(ham: Hamiltonian, label: str, fingerprint_text: str) -> Side:
    return Side(
        label,
        fingerprint_text,
        ham.basis,
        ham.n,
        int(ham.electrons.alpha),
        int(ham.electrons.beta),
        float(ham.core_energy),
        ham.two_electron.notation,
        ham.two_electron.storage,
    )


def _counts(ham: Hamiltonian) -> tuple[int, int]:
    return int(ham.electrons.alpha), int(ham.electrons.beta)


def _check_arguments(tolerance, roots, accept):
    if (
        isinstance(tolerance, bool)
        or not isinstance(tolerance, int | float)
        or not (math.isfinite(tolerance) and tolerance > 0)
    ):
        raise FieldError("tolerance", f"expected a positive number of hartree, got {tolerance!r}")
    if isinstance(roots, bool) or not isinstance(roots, int) or roots < 1:
        raise FieldError("roots", f"expected a positive integer, got {roots!r}")
    if accept not in RUNGS[:-1]:
        raise FieldError("accept", f"expected one of {RUNGS[:-1]}, got {accept!r}")


def _metadata_notes(a: Hamiltonian, b: Hamiltonian) -> list[str]:
    notes = []
    parts_a, parts_b = dict(a.core_energy_parts or {}), dict(b.core_energy_parts or {})
    if parts_a != parts_b and a.core_energy == b.core_energy:
        notes.append(f"core_energy is split into different parts: A {parts_a or 'none'}, B {parts_b or 'none'}")
    if a.orbitals.point_group != b.orbitals.point_group:
        notes.append(f"point groups differ: A {a.orbitals.point_group}, B {b.orbitals.point_group}")
    labels_a = {r.label: r.energy for r in a.references}
    labels_b = {r.label: r.energy for r in b.references}
    for label in sorted(set(labels_a) & set(labels_b)):
        if labels_a[label] != labels_b[label]:
            notes.append(
                f"the stored references {label!r} differ by {labels_b[label] - labels_a[label]:.3g} hartree (B - A)"
            )
    return notes


def _relabelling(view_a, view_b, counts_a, counts_b, basis, layout, tolerance, node_limit):
    """(Relabelling or None, whether it fits the electron counts, evidence text)."""
    swapped = counts_a[::-1]
    modes = []
    if counts_a == counts_b:
        modes.append(False)
        if basis != "restricted" and counts_a[0] == counts_a[1]:
            modes.append(True)
    elif swapped == counts_b:
        modes += [True, False] if basis != "restricted" else [True]
    else:
        modes.append(False)
    searched, stopped = 0, False
    for exchange in modes:
        source = exchanged(view_a) if exchange and basis != "restricted" else view_a
        search = find_relabelling(source, view_b, tolerance, node_limit=node_limit)
        searched += search.nodes
        stopped = stopped or not search.exhausted
        if search.found is None:
            continue
        found = search.found
        relabelling = Relabelling(
            order=tuple(tuple(int(i) for i in part) for part in view_a.local_orders(found.permutation)),
            signs=tuple(tuple(int(s) for s in part) for part in view_a.split(found.signs)),
            exchange_spins=exchange,
            largest=found.largest,
            basis=basis,
            spin_layout=layout,
        )
        fits = (counts_b == swapped) if exchange else (counts_b == counts_a)
        text = f"largest difference after it {found.largest:.2g}"
        if not search.used_irreps and view_a.irreps is not None and view_b.irreps is not None:
            text += "; the irreps do not follow the orbitals (found without them)"
        return relabelling, fits, text
    if stopped:
        text = f"no relabelling found; the search stopped after {searched} assignments (--search-limit), so one "
        return None, False, text + "may still exist"
    return None, False, "no order and signs map A onto B: every candidate the invariants allow was tried"


def _block_evidence(blocks, core_difference: float, tolerance: float) -> str:
    worst = [b for b in blocks if b.largest is None or b.largest > tolerance]
    parts = [f"{b.block} {'non-finite' if b.largest is None else f'{b.largest:.3g}'} at {list(b.where)}" for b in worst]
    if abs(core_difference) > tolerance or not math.isfinite(core_difference):
        parts.insert(0, f"core_energy {core_difference:.3g}")
    if not parts:
        return f"every element within {tolerance:g}"
    return "largest differences: " + ", ".join(parts)


def _structure_reasons(blocks, tolerance, generic: bool) -> list[str]:
    """A few differing elements point at a damaged value; many (only when ``generic``) at other content."""
    differing = [b for b in blocks if b.beyond]
    total = sum(b.beyond for b in differing)
    if not differing:
        return []
    if total <= FEW_ELEMENTS and len(differing) == 1:
        block = differing[0]
        where = "the first that is not finite" if block.largest is None else "the largest"
        return [
            f"only {total} element(s) of {block.block} differ beyond {tolerance:g}, {where} at "
            f"{list(block.where)}: a damaged or edited value (and its symmetric partners)"
        ]
    if not generic:
        return []
    share = total / sum(b.size for b in blocks)
    names = ", ".join(b.block for b in differing)
    return [
        f"{total} elements ({share:.0%}) differ beyond {tolerance:g} in {names}: the integrals differ throughout "
        "(another geometry, basis, active space or set of orbitals)"
    ]


def compare(
    a,
    b,
    *,
    tolerance: float = 1e-10,
    roots: int = 3,
    accept: str = "relabel",
    memory: int = DEFAULT_MEMORY,
    search_limit: int = DEFAULT_NODE_LIMIT,
    labels: tuple[str, str] | None = None,
) -> Comparison:
    """Place Hamiltonians (or files) ``a`` and ``b`` on the ladder (see the module docstring).

    ``tolerance`` (hartree) judges every element, core_energy and energy;
    ``roots``: full-CI roots compared on rung 5; ``accept``: the last rung
    still called equivalent (``Comparison.equivalent``); ``memory``: the budget
    for reading files and for full CI; ``search_limit``: assignments the
    relabelling search may try; ``labels`` name the two sides (default: the
    paths, or A and B).
    """
    _check_arguments(tolerance, roots, accept)
    ham_a, path_a = _loaded(a, memory)
    ham_b, path_b = _loaded(b, memory)
    labels = labels or (path_a or NAMES[0], path_b or NAMES[1])
    print_a, print_b = fingerprint(ham_a), fingerprint(ham_b)
    sides = {"a": _side(ham_a, labels[0], print_a), "b": _side(ham_b, labels[1], print_b)}
    notes = _metadata_notes(ham_a, ham_b)
    steps: list[Step] = []

    def result(name, **found):
        return Comparison(
            **sides,
            tolerance=float(tolerance),
            accept=accept,
            name=name,
            steps=tuple(steps),
            notes=tuple(notes),
            **found,
        )

    def step(name, holds, evidence):
        steps.append(Step(rung_number(name), name, holds, evidence))

    if print_a == print_b:
        step("identical", True, f"the same fingerprint {print_a}")
        return result("identical", common_form=None)
    step("identical", False, "the fingerprints differ")
    forms = common_forms(ham_a, ham_b, NAMES)
    notes += forms.notes
    form_a, form_b = forms.a, forms.b
    counts_a, counts_b = _counts(form_a), _counts(form_b)
    core_difference = float(form_b.core_energy - form_a.core_energy)
    if form_a.n != form_b.n:
        sizes = f"A has {form_a.n} {forms.basis} orbitals, B has {form_b.n}"
        for name in RUNGS[1:5]:
            step(name, False, f"not compared element by element: {sizes}")
        energies = file_energies(form_a, form_b, roots, tolerance, memory)
        reasons = [f"{sizes}: another basis or active space"]
        if counts_a != counts_b:
            reasons.append(f"the electron counts differ ({_counts_text(counts_a, counts_b)})")
        reasons += diagnosed(ham_a, ham_b, energies, tolerance, memory)
        step("different", True, f"{sizes}; {_energy_gap(energies)}")
        return result("different", common_form=forms.description, energies=energies, reasons=tuple(reasons))

    view_a, view_b = view_of(form_a), view_of(form_b)
    blocks = tuple(block_differences(view_a, view_b, tolerance))
    integrals_equal = all(blk.largest is not None and blk.largest <= tolerance for blk in blocks)
    core_equal = abs(core_difference) <= tolerance
    counts_text = _counts_text(counts_a, counts_b)
    evidence = _block_evidence(blocks, core_difference, tolerance)
    if counts_a != counts_b:
        evidence += f"; electron counts differ ({counts_text})"
    holds = integrals_equal and core_equal and counts_a == counts_b
    step("tolerance", holds, evidence)
    found = {"common_form": forms.description, "blocks": blocks}
    if holds:
        return result("tolerance", **found)

    if integrals_equal and counts_a == counts_b:
        relabelling, fits, text = None, True, "not needed: the integrals agree as they stand, core_energy does not"
    else:
        relabelling, fits, text = _relabelling(
            view_a, view_b, counts_a, counts_b, forms.basis, forms.spin_layout, tolerance, search_limit
        )
    matched = integrals_equal or relabelling is not None
    if relabelling is not None:
        found["relabelling"] = relabelling
    holds = relabelling is not None and fits and core_equal
    if relabelling is not None and not fits:
        text += f"; but the electron counts do not follow ({counts_text})"
    elif relabelling is not None and not core_equal:
        text += f"; core_energy differs by {core_difference:.6g}"
    step("relabel", holds, text)
    if holds:
        return result("relabel", **found)

    if matched and fits:
        constant = Constant(core_difference, named_constant(form_a, form_b, core_difference, tolerance))
        step("constant", True, f"only core_energy differs, by {core_difference:.12g} hartree (B - A)")
        return result("constant", constant=constant, **found)
    step("constant", False, "the integrals differ" if not matched else f"the electron counts differ ({counts_text})")

    energies = file_energies(form_a, form_b, roots, tolerance, memory)
    found["energies"] = energies
    reasons: list[str] = []
    if sorted(counts_a) != sorted(counts_b):
        step("spectrum", False, f"the stated sectors differ ({counts_text})")
    else:
        agree = spectra_agree(energies, tolerance)
        roots_text = "" if not energies.fci_a else f"{len(energies.fci_a)} root(s)"
        if agree is None:
            step("spectrum", None, "not evaluated: " + "; ".join(energies.notes))
        elif agree:
            hf_text = _hf_agreement(energies, tolerance)
            step("spectrum", True, f"the lowest {roots_text} agree within {tolerance:g}; {hf_text}")
            return result("spectrum", **found)
        else:
            gaps = np.subtract(energies.fci_b, energies.fci_a[: len(energies.fci_b)])
            step("spectrum", False, f"full-CI energies differ by up to {np.max(np.abs(gaps)):.3g} hartree")
            if len(gaps) > 1 and np.ptp(gaps) <= tolerance:
                reasons.append(
                    f"every root differs by the same {gaps[0]:.10g} hartree: a constant differs and the orbitals are "
                    "rotated"
                )
    if matched and not fits:
        reasons.insert(
            0,
            "the integrals agree"
            + (" after relabelling" if relabelling is not None and not relabelling.is_identity else "")
            + f" but the electron counts differ ({counts_text}): another electron count",
        )
    elif counts_a != counts_b:
        reasons.append(f"the electron counts differ ({counts_text})")
    explained = diagnosed(ham_a, ham_b, energies, tolerance, memory)
    reasons += explained
    if not matched:
        reasons += _structure_reasons(blocks, tolerance, generic=not explained)
    step("different", True, _energy_gap(energies))
    return result("different", reasons=tuple(reasons), **found)


def _energy_gap(energies) -> str:
    if energies.difference is None:
        return "energy difference unknown"
    method = "full-CI" if energies.difference_method == "fci" else "determinant"
    return f"{method} energy difference {energies.difference:.10g} hartree (B - A)"


def _counts_text(counts_a, counts_b) -> str:
    return f"A {counts_a[0]} alpha {counts_a[1]} beta, B {counts_b[0]} alpha {counts_b[1]} beta"


def _hf_agreement(energies, tolerance) -> str:
    if energies.hf_a is None or energies.hf_b is None:
        return "determinant energies not evaluated"
    gap = energies.hf_b - energies.hf_a
    if abs(gap) <= tolerance:
        return "so do the determinant energies of the stated occupations (occupied orbitals rotated among themselves)"
    return (
        f"the determinant energies differ by {gap:.3g}: the rotation mixes occupied and virtual orbitals of the "
        "stated occupations, or the occupations do not correspond"
    )
