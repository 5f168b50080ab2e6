"""Index symmetry of the integrals: h = h^dagger, the permutational symmetry of the
two-electron array, and whether that symmetry is the declared notation's."""

from __future__ import annotations

import numpy as np

from integrity.checks.registry import (
    Result,
    at_element,
    at_field,
    failed,
    figure,
    judged,
    passed,
    register,
    skipped,
    warned,
)
from integrity.checks.relations import PAIR_MATRIX, Deviation, deviation, odd_one_out, relations_for
from integrity.model.indexing import pair_members
from integrity.model.slabs import spin_blocks

OTHER = {"chemist": "physicist", "physicist": "chemist"}
FEW_ELEMENTS = 8


def _blocks(ham, notation: str):
    """(label, array, relations) to test for a notation, per spin block; [] when nothing can break."""
    two = ham.two_electron
    stored = spin_blocks(two, ham.basis)
    labels = ("aa", "ab", "bb") if ham.basis == "unrestricted" else ("",)
    out = []
    for label, block in zip(labels, stored, strict=True):
        if two.storage == "unique":
            continue
        if two.storage == "pairs":
            if label != "ab":
                out.append((label, block, PAIR_MATRIX))
            continue
        relations = relations_for(notation, ham.is_complex, bool(two.antisymmetrized), mixed_spin=label == "ab")
        out.append((label, block, relations))
    return out


def deviations(ham, ctx, notation: str) -> list[tuple[str, Deviation]]:
    """Every (block label, Deviation) for a notation's relations; cached for the run."""
    key = ("deviations", notation)
    if key not in ctx.cache:
        limit = ctx.limit if ctx.limit is not None else 1e-10
        ctx.cache[key] = [
            (label, deviation(block, relation, limit, ctx.box_bytes))
            for label, block, relations in _blocks(ham, notation)
            for relation in relations
        ]
    return ctx.cache[key]


def _worst(found):
    return max(found, key=lambda item: item[1].max_abs)


def _element(ham, label, index):
    """The Location of a deviation's index (pair-matrix indices become (p, q, r, s)); None for none."""
    if index is None:
        return None
    if ham.two_electron.storage == "pairs":
        p, q = pair_members(ham.n)
        index = (int(p[index[0]]), int(q[index[0]]), int(p[index[1]]), int(q[index[1]]))
    return at_element("two_electron", index, label)


def _text(location) -> str:
    return "" if location is None else str(location)


def _fits(found, limit) -> bool:
    return all(dev.max_abs <= limit for _, dev in found)


@register("one_electron.hermitian", limit=1e-10, needs_finite=True)
def check_hermitian(ham, ctx) -> Result:
    """max |h - h^dagger| per spin block."""
    h = np.asarray(ham.one_electron)
    blocks = [("alpha", h[0]), ("beta", h[1])] if ham.basis == "unrestricted" else [("", h)]
    worst, where, broken = 0.0, None, 0
    for label, block in blocks:
        deviation = np.abs(block - block.conj().T)
        peak = float(deviation.max())
        broken += int(np.count_nonzero(np.triu(deviation > ctx.limit, 1)))
        if peak > worst:
            p, q = np.unravel_index(int(np.argmax(deviation)), deviation.shape)
            worst, where = peak, at_element("one_electron", (p, q), label)
    if worst > ctx.limit:
        cause = (
            # h^T of a Hermitian h is Hermitian too: a transposed matrix is not what breaks this
            "a triangle may have been filled from the other without conjugation (complex values "
            "mirrored as if real), or an element was altered"
            if ham.is_complex
            else ("an element was altered, or the matrix is not the one-electron Hamiltonian")
        )
        return judged(
            True,
            f"h is not Hermitian: {broken} pair(s) differ by more than the limit, largest "
            f"{worst:.3g} at {where}; {cause}",
            value=worst,
            limit=ctx.limit,
            where=where,
        )
    return judged(False, "h equals its conjugate transpose", value=worst, limit=ctx.limit)


@register("two_electron.symmetry", limit=1e-10, needs_finite=True)
def check_symmetry(ham, ctx) -> Result:
    """Largest deviation over the permutation group the notation and value type imply."""
    found = deviations(ham, ctx, ham.two_electron.notation)
    if not found:
        return skipped(
            "unique storage holds one value per symmetry orbit: the relations hold by construction",
        )
    label, worst = _worst(found)
    relations = sorted({dev.relation.text for _, dev in found})
    culprit, partner = worst.where, worst.partner
    if worst.max_abs > ctx.limit and culprit is not None:
        block, group = next((b, r) for lab, b, r in _blocks(ham, ham.two_electron.notation) if lab == label)
        culprit = odd_one_out(block, group, worst.where, worst.partner)
        partner = worst.partner if culprit == worst.where else worst.where
    where = _element(ham, label, culprit)
    details = {
        "relations": [
            {
                "block": lab or None,
                "relation": dev.relation.text,
                "max_abs": dev.max_abs,
                "count": dev.count,
                "where": _text(_element(ham, lab, dev.where)),
            }
            for lab, dev in found
        ]
    }
    if worst.max_abs <= ctx.limit:
        return passed(
            f"{len(relations)} generating relation(s) hold: {', '.join(relations)}",
            value=worst.max_abs,
            limit=ctx.limit,
            where=None,
            details=details,
        )
    broken = sum(dev.count for _, dev in found if dev.relation == worst.relation)
    message = (
        f"{worst.relation.text} is broken for {broken} of {worst.elements} elements; largest "
        f"{worst.max_abs:.3g} at {where} against {_text(_element(ham, label, partner))}, "
        f"limit {ctx.limit:.3g}; {_cause(ham, ctx, worst, broken)}"
    )
    return failed(
        message,
        value=worst.max_abs,
        limit=ctx.limit,
        where=where,
        details=details | {"relation": worst.relation.text, "count": broken},
    )


def _cause(ham, ctx, worst: Deviation, broken: int) -> str:
    two = ham.two_electron
    if two.storage == "dense" and not two.antisymmetrized:
        other = OTHER[two.notation]
        if _fits(deviations(ham, ctx, other), ctx.limit):
            return (
                f"the relations of {other} notation hold: the array is probably {other} "
                f"{'<pq|rs>' if other == 'physicist' else '(pq|rs)'} labelled {two.notation}"
            )
    if broken <= FEW_ELEMENTS:
        return "only a few elements break it: isolated altered values (a damaged transfer or a hand edit)"
    if worst.relation.conjugate:
        return "the imaginary parts may follow the opposite sign convention, or the values are not Hermitian"
    if ham.is_complex:
        return "the orbitals may be complex with the array stored for real ones"
    return "the array may not be two-electron integrals of real orbitals, or its index order is unusual"


@register("two_electron.notation", limit=1e-10, needs_finite=True)
def check_notation(ham, ctx) -> Result:
    """The declared notation's largest deviation, counted when the other notation's relations hold (else 0)."""
    two = ham.two_electron
    if two.antisymmetrized:
        return skipped("antisymmetrized <pq||rs> is physicist by definition")
    if two.storage != "dense":
        return skipped(f"{two.storage} storage is chemist by definition")
    declared, other = two.notation, OTHER[two.notation]
    mine, theirs = deviations(ham, ctx, declared), deviations(ham, ctx, other)
    mine_fit, theirs_fit = _fits(mine, ctx.limit), _fits(theirs, ctx.limit)
    mine_worst, theirs_worst = _worst(mine)[1].max_abs, _worst(theirs)[1].max_abs
    # the evidence against the label: the declared deviation, when the other notation fits
    value = mine_worst if theirs_fit else 0.0
    figures = {"value": value, "limit": ctx.limit, "details": {declared: mine_worst, other: theirs_worst}}
    if mine_fit and theirs_fit:
        return warned(
            f"both notations' relations hold (largest deviations {figure(mine_worst)} {declared}, "
            f"{figure(theirs_worst)} {other}): the array has extra symmetry (a model interaction, or "
            "too few orbitals) and the values cannot confirm the notation",
            **figures,
        )
    if mine_fit:
        return passed(
            f"the relations of {declared} notation hold and those of {other} do not "
            f"(largest {other} deviation {figure(theirs_worst)})",
            **figures,
        )
    if theirs_fit:
        return failed(
            f"declared {declared}, but the array obeys the relations of {other} notation and not "
            f"those of {declared} (largest {declared} deviation {figure(mine_worst)}): it is probably "
            f"{other} stored under the wrong label",
            where=at_field("two_electron.notation"),
            **figures,
        )
    mine_count = sum(dev.count for _, dev in mine)
    theirs_count = sum(dev.count for _, dev in theirs)
    if mine_count <= theirs_count:
        return passed(
            f"neither notation's relations hold exactly, but {declared} fits better "
            f"({mine_count} broken elements against {theirs_count}); see two_electron.symmetry",
            **figures,
        )
    return warned(
        f"neither notation's relations hold, and {other} fits better than the declared {declared} "
        f"({theirs_count} broken elements against {mine_count})",
        **figures,
    )
