"""What a comparison found: the rung, the evidence for each rung tried, and the figures behind it.

``Comparison.as_dict()`` is the JSON document ``integrity compare --format json``
prints, valid against ``schemas/comparison.schema.json``. Energies are in
hartree; a block's ``where`` is an index into that block as the common form
stores it (e.g. ``two_electron.ab`` [p, q, r, s] = (pa qa|rb sb)); B is
compared against A, so differences are B - A.
"""

from __future__ import annotations

from dataclasses import dataclass

from integrity._version import __version__
from integrity.model.orbital_lists import format_orbital_list, format_signs

COMPARISON_FORMAT = "integrity.comparison"
COMPARISON_VERSION = 1
#: the rungs, in order; a comparison lands on the first that holds
RUNGS = ("identical", "tolerance", "relabel", "constant", "spectrum", "different")
RUNG_TITLES = {
    "identical": "identical",
    "tolerance": "equal within the tolerance",
    "relabel": "equal after relabelling orbitals",
    "constant": "equal up to a constant",
    "spectrum": "same spectrum",
    "different": "different",
}


def rung_number(name: str) -> int:
    """1 for identical ... 6 for different."""
    return RUNGS.index(name) + 1


@dataclass(frozen=True)
class Side:
    """One file as read: where from, its fingerprint and what it declares."""

    label: str
    fingerprint: str
    basis: str
    orbitals: int
    alpha: int
    beta: int
    core_energy: float
    notation: str
    storage: str

    def as_dict(self) -> dict:
        return {
            "label": self.label,
            "fingerprint": self.fingerprint,
            "basis": self.basis,
            "orbitals": self.orbitals,
            "electrons": {"alpha": self.alpha, "beta": self.beta},
            "core_energy": self.core_energy,
            "notation": self.notation,
            "storage": self.storage,
        }


@dataclass(frozen=True)
class BlockDifference:
    """The largest |B - A| in one block and where; ``largest`` None when a value is not finite
    (``where`` then points at the first such element); ``beyond`` counts elements beyond the tolerance."""

    block: str
    largest: float | None
    where: tuple[int, ...] | None
    beyond: int
    size: int

    def as_dict(self) -> dict:
        return {
            "block": self.block,
            "largest": self.largest,
            "where": None if self.where is None else list(self.where),
            "beyond_tolerance": self.beyond,
            "elements": self.size,
        }


@dataclass(frozen=True)
class Relabelling:
    """B = A relabelled: B's orbital p is A's orbital ``order[p]`` times ``signs[p]``, after
    exchanging alpha and beta when ``exchange_spins``. One order and sign list per orbital
    set (unrestricted: alpha, beta). Indices refer to the orbitals of the common form
    (``basis``, ``spin_layout``); ``largest`` is the largest element difference after it."""

    order: tuple[tuple[int, ...], ...]
    signs: tuple[tuple[int, ...], ...]
    exchange_spins: bool
    largest: float
    basis: str
    spin_layout: str | None

    @property
    def is_identity(self) -> bool:
        return not self.exchange_spins and all(
            list(order) == list(range(len(order))) and all(s > 0 for s in signs)
            for order, signs in zip(self.order, self.signs, strict=True)
        )

    @property
    def order_text(self) -> str:
        """As ``--orbital-order`` takes it: one list, or alpha/beta when they differ."""
        texts = [format_orbital_list(order) for order in self.order]
        return texts[0] if len(set(texts)) == 1 else "/".join(texts)

    @property
    def signs_text(self) -> str:
        """As ``--orbital-signs`` takes it."""
        texts = [format_signs(signs) for signs in self.signs]
        return texts[0] if len(set(texts)) == 1 else "/".join(texts)

    def as_dict(self) -> dict:
        return {
            "order": [list(order) for order in self.order],
            "signs": [list(signs) for signs in self.signs],
            "order_text": self.order_text,
            "signs_text": self.signs_text,
            "exchange_spins": self.exchange_spins,
            "largest": self.largest,
            "basis": self.basis,
            "spin_layout": self.spin_layout,
        }


@dataclass(frozen=True)
class Constant:
    """Only core_energy differs: by ``difference`` = B - A; ``named`` says which stored parts it equals."""

    difference: float
    named: tuple[str, ...]

    def as_dict(self) -> dict:
        return {"difference": self.difference, "named": list(self.named)}


@dataclass(frozen=True)
class Energies:
    """Full-CI energies of the lowest roots of each file's stated sector, Hartree-Fock determinant
    energies of each file's reference occupation, and why any is missing."""

    fci_a: tuple[float, ...] | None
    fci_b: tuple[float, ...] | None
    hf_a: float | None
    hf_b: float | None
    notes: tuple[str, ...] = ()

    @property
    def difference_method(self) -> str | None:
        """What ``difference`` compares: "fci" (lowest roots), "hf" (determinants) or None."""
        if self.fci_a and self.fci_b:
            return "fci"
        if self.hf_a is not None and self.hf_b is not None:
            return "hf"
        return None

    @property
    def difference(self) -> float | None:
        """B - A: lowest full-CI roots, or the determinant energies when full CI is missing."""
        if self.difference_method == "fci":
            return self.fci_b[0] - self.fci_a[0]
        if self.difference_method == "hf":
            return self.hf_b - self.hf_a
        return None

    def as_dict(self) -> dict:
        return {
            "fci_a": None if self.fci_a is None else list(self.fci_a),
            "fci_b": None if self.fci_b is None else list(self.fci_b),
            "hf_a": self.hf_a,
            "hf_b": self.hf_b,
            "difference": self.difference,
            "difference_method": self.difference_method,
            "notes": list(self.notes),
        }


@dataclass(frozen=True)
class Step:
    """One rung tried: whether it holds (None: could not be decided) and the evidence in one line."""

    rung: int
    name: str
    holds: bool | None
    evidence: str

    def as_dict(self) -> dict:
        return {"rung": self.rung, "name": self.name, "holds": self.holds, "evidence": self.evidence}


@dataclass(frozen=True)
class Comparison:
    """The verdict on two Hamiltonians: the first rung that holds, with its evidence.

    ``equivalent`` is True when the rung is at or above ``accept`` (a rung name).
    ``blocks`` are the direct differences of the common forms (empty when the
    sizes differ); ``relabelling``, ``constant`` and ``energies`` are None when
    the ladder did not need them.
    """

    a: Side
    b: Side
    tolerance: float
    accept: str
    name: str
    common_form: str | None
    steps: tuple[Step, ...]
    blocks: tuple[BlockDifference, ...] = ()
    relabelling: Relabelling | None = None
    constant: Constant | None = None
    energies: Energies | None = None
    reasons: tuple[str, ...] = ()
    notes: tuple[str, ...] = ()

    @property
    def rung(self) -> int:
        return rung_number(self.name)

    @property
    def title(self) -> str:
        return RUNG_TITLES[self.name]

    @property
    def equivalent(self) -> bool:
        return self.rung <= rung_number(self.accept)

    def as_dict(self) -> dict:
        return {
            "format": COMPARISON_FORMAT,
            "comparison_version": COMPARISON_VERSION,
            "tool": "integrity",
            "version": __version__,
            "a": self.a.as_dict(),
            "b": self.b.as_dict(),
            "tolerance": self.tolerance,
            "accept": self.accept,
            "rung": self.rung,
            "verdict": self.name,
            "title": self.title,
            "equivalent": self.equivalent,
            "common_form": self.common_form,
            "steps": [step.as_dict() for step in self.steps],
            "blocks": [block.as_dict() for block in self.blocks],
            "relabelling": None if self.relabelling is None else self.relabelling.as_dict(),
            "constant": None if self.constant is None else self.constant.as_dict(),
            "energies": None if self.energies is None else self.energies.as_dict(),
            "reasons": list(self.reasons),
            "notes": list(self.notes),
        }
