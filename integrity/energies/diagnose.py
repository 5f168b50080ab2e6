"""Explain an energy that does not match: test each known way a file goes wrong.

The energy the file gives (the reference determinant for ``hf``, full CI
for ``fci``) is compared with the expected one; then each hypothesis is
tested by recomputing the energy the way the mistake would have produced it:
the other index notation, alpha and beta exchanged, another electron count,
another root or spin state, a missing or doubled constant (the core energy,
one of its parts, or the nuclear repulsion of the geometry in provenance), a
factor of two on the two-electron term, the other spin-orbital layout, a
complex one-electron matrix stored transposed (h^T = h*, which is as Hermitian
as h, so no structural check can see it). A hypothesis *matches*
when it reproduces the expected energy to within the tolerance. A match is a
lead, not a proof: distinct mistakes can give the same number.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass, field

import numpy as np

from integrity.energies.meanfield import default_occupation, determinant_energy, reference_occupation
from integrity.energies.nuclear import provenance_nuclear_repulsion
from integrity.energies.solve import solve
from integrity.errors import BudgetError, FieldError, IntegrityError, UnsupportedError
from integrity.io import DEFAULT_MEMORY
from integrity.model.hamiltonian import Electrons, Hamiltonian, Reference, TwoElectron


@dataclass(frozen=True)
class Hypothesis:
    """One way the energy could have been produced; ``energy`` None when it could not be evaluated."""

    name: str
    description: str
    energy: float | None
    matches: bool
    note: str | None = None

    def as_dict(self) -> dict:
        return {
            "name": self.name,
            "description": self.description,
            "energy": self.energy,
            "matches": self.matches,
            "note": self.note,
        }


@dataclass(frozen=True)
class Diagnosis:
    expected: float
    method: str
    computed: float
    tolerance: float
    hypotheses: list[Hypothesis] = field(default_factory=list)

    @property
    def difference(self) -> float:
        return self.expected - self.computed

    @property
    def matches(self) -> bool:
        return abs(self.difference) <= self.tolerance

    @property
    def explanations(self) -> list[Hypothesis]:
        return [h for h in self.hypotheses if h.matches]

    def as_dict(self) -> dict:
        return {
            "expected": self.expected,
            "method": self.method,
            "computed": self.computed,
            "difference": self.difference,
            "tolerance": self.tolerance,
            "matches": self.matches,
            "hypotheses": [h.as_dict() for h in self.hypotheses],
        }


@dataclass(frozen=True)
class _Target:
    method: str
    electrons: Electrons
    two_s: int | None
    irrep: int | None
    root: int
    occupation: tuple | None


def constant_hints(ham: Hamiltonian, difference: float, tolerance: float) -> list[str]:
    """Hints from the constants alone: difference = expected - computed."""
    hints = []
    if abs(difference - ham.core_energy) <= tolerance and ham.core_energy != 0:
        hints.append(
            "the difference equals core_energy: the expected energy includes a constant the file "
            "lacks (or the expected value is electronic only, the other way round)"
        )
    elif abs(difference + ham.core_energy) <= tolerance and ham.core_energy != 0:
        hints.append(
            "the difference equals minus core_energy: the expected energy is electronic only, without core_energy"
        )
    parts = ham.core_energy_parts or {}
    for name, value in parts.items():
        if value == 0:
            continue
        if abs(difference - value) <= tolerance:
            hints.append(f"the difference equals core_energy_parts.{name}: that part is missing from core_energy")
        elif abs(difference + value) <= tolerance:
            hints.append(f"the difference equals minus core_energy_parts.{name}: that part is counted twice")
    nuclear = provenance_nuclear_repulsion(ham.provenance)
    if nuclear is not None and not any(abs(value - nuclear) <= tolerance for value in parts.values()):
        if abs(difference - nuclear) <= tolerance:
            hints.append(
                f"the difference equals the nuclear repulsion of the geometry in provenance ({nuclear:.10f} "
                "hartree): core_energy lacks it"
            )
        elif abs(difference + nuclear) <= tolerance:
            hints.append(
                f"the difference equals minus the nuclear repulsion of the geometry in provenance "
                f"({nuclear:.10f} hartree): it is counted twice"
            )
    return hints


def common_offset(differences, tolerance: float) -> float | None:
    """The constant every difference (expected - computed) shares, when there are two or more and it is not 0.

    >>> common_offset([0.25, 0.25], 1e-6), common_offset([0.25, 0.5], 1e-6), common_offset([0.25], 1e-6)
    (0.25, None, None)
    """
    values = [float(d) for d in differences]
    if len(values) < 2:
        return None
    middle = 0.5 * (max(values) + min(values))
    if max(values) - min(values) > tolerance or abs(middle) <= tolerance:
        return None
    return middle


def offset_text(ham: Hamiltonian, offset: float, count: int, tolerance: float) -> str:
    """What a constant shared by every reference means, with the nuclear repulsion of provenance when known."""
    text = (
        f"all {count} references are off by the same constant {offset:+.10f} hartree: the integrals agree with "
        f"them, the constant does not; core_energy {ham.core_energy:.10f} is probably wrong or missing a part "
        f"(with core_energy {ham.core_energy + offset:.10f} every reference matches)"
    )
    hints = constant_hints(ham, offset, tolerance)
    if hints:
        return "; ".join([text, *hints])
    nuclear = provenance_nuclear_repulsion(ham.provenance)
    if nuclear is not None:
        text += f"; the geometry in provenance has nuclear repulsion {nuclear:.10f} hartree, which is not the constant"
    return text


def _energy(ham: Hamiltonian, target: _Target, memory: int) -> float:
    if target.method == "hf":
        occupation = target.occupation or default_occupation(ham, target.electrons.alpha, target.electrons.beta)
        return float(np.real(determinant_energy(ham, occupation)))
    result = solve(
        ham,
        alpha=target.electrons.alpha,
        beta=target.electrons.beta,
        two_s=target.two_s,
        irrep=target.irrep,
        root=target.root,
        memory=memory,
    )
    return result.roots[0].energy


def diagnose(
    ham: Hamiltonian,
    *,
    expected: float | None = None,
    reference: str | None = None,
    method: str | None = None,
    tolerance: float = 1e-6,
    memory: int = DEFAULT_MEMORY,
    computed: float | None = None,
) -> Diagnosis:
    """Compare the file's energy with ``expected`` (or a reference's) and test the hypotheses.

    ``method`` is "hf" (the determinant) or "fci"; by default the reference's,
    or "fci" for a bare expected energy. ``computed`` is the file's own energy
    when the caller already has it (it is not solved again).
    """
    target, expected = _target(ham, expected, reference, method)
    computed = _energy(ham, target, memory) if computed is None else computed
    difference = expected - computed
    hypotheses = [Hypothesis("as stored", "the file as it is", computed, abs(difference) <= tolerance)]
    if not hypotheses[0].matches:
        hypotheses += [
            Hypothesis("constants", hint, computed + difference, True)
            for hint in constant_hints(ham, difference, tolerance)
        ]
        for name, description, variant, changed in _variants(ham, target):
            hypotheses.append(_evaluate(name, description, variant, changed, expected, tolerance, memory))
        if target.method == "fci":
            hypotheses += _other_states(ham, target, expected, tolerance, memory)
    return Diagnosis(expected, target.method, computed, tolerance, hypotheses)


def _target(ham, expected, reference, method):
    if (expected is None) == (reference is None):
        raise FieldError("expected", "give an expected energy or a reference label, one of them")
    if reference is not None:
        ref = ham.reference(reference)
        method = method or ref.method
        expected = ref.energy
    else:
        ref = Reference("expected", method or "fci", expected)
        method = method or "fci"
    if method not in ("hf", "fci"):
        raise FieldError("method", f"can explain 'hf' and 'fci' energies, not {method!r}")
    electrons = ham.electrons_of(ref)
    occupation = reference_occupation(ham, ref) if method == "hf" else None
    return _Target(method, electrons, ref.two_s, ref.irrep, ref.root or 0, occupation), float(expected)


def _evaluate(name, description, variant, target, expected, tolerance, memory) -> Hypothesis:
    if variant is None:
        return Hypothesis(name, description, None, False, note="not evaluated: the variant is not a valid file")
    try:
        energy = _energy(variant, target, memory)
    except (FieldError, UnsupportedError, BudgetError) as err:
        return Hypothesis(name, description, None, False, note=f"not evaluated: {err.reason}")
    return Hypothesis(name, description, energy, abs(energy - expected) <= tolerance)


def _variants(ham: Hamiltonian, target: _Target):
    """(name, description, Hamiltonian, target) for each mistake that can be re-enacted."""
    two = ham.two_electron
    if two.storage == "dense" and not two.antisymmetrized:
        other = "physicist" if two.notation == "chemist" else "chemist"
        yield (
            "notation",
            f"two_electron is really {other}, stored under the label {two.notation}",
            _quiet(ham.replace, two_electron=TwoElectron(two.array, other, "dense", two.interaction)),
            target,
        )
    electrons = target.electrons
    if electrons.alpha != electrons.beta:
        swapped = _Target(
            target.method, Electrons(electrons.beta, electrons.alpha), target.two_s, target.irrep, target.root, None
        )
        yield ("alpha/beta", "the alpha and beta counts are exchanged", ham, swapped)
    for d_alpha, d_beta in ((1, 0), (0, 1), (-1, 0), (0, -1), (1, 1), (-1, -1)):
        counts = Electrons(electrons.alpha + d_alpha, electrons.beta + d_beta)
        if min(counts.alpha, counts.beta) < 0 or max(counts.alpha, counts.beta) > ham.orbitals.per_spin:
            continue
        yield (
            "electrons",
            f"the state has {counts.alpha} alpha and {counts.beta} beta electrons",
            ham,
            _Target(target.method, counts, None, None, 0, None),
        )
    for factor in (2.0, 0.5):
        scaled = _quiet(
            ham.replace,
            two_electron=TwoElectron(
                np.asarray(two.array) * factor, two.notation, two.storage, two.interaction, two.antisymmetrized
            ),
        )
        yield (
            "factor",
            f"the two-electron term is scaled by {factor:g} (a 1/2 convention applied twice or not at all)",
            scaled,
            target,
        )
    h = np.asarray(ham.one_electron)
    if np.iscomplexobj(h) and np.any(h.imag != 0):
        yield (
            "transposed",
            "one_electron is stored transposed: h^T = h*, Hermitian too, so the imaginary parts have the wrong sign",
            _quiet(ham.replace, one_electron=np.ascontiguousarray(np.swapaxes(h, -1, -2))),
            target,
        )
    if ham.basis == "spin-orbital":
        other = "blocked" if ham.orbitals.spin_layout == "interleaved" else "interleaved"
        orbitals = dataclasses.replace(ham.orbitals, spin_layout=other)
        yield (
            "spin layout",
            f"the spin orbitals are really {other}",
            _quiet(ham.replace, orbitals=orbitals),
            _Target(target.method, electrons, target.two_s, target.irrep, target.root, None),
        )


def _quiet(function, **kwargs):
    try:
        return function(**kwargs)
    except IntegrityError:
        return None


def _other_states(ham, target, expected, tolerance, memory) -> list[Hypothesis]:
    """Another root of the same electron counts: another spin state, irrep or excited state."""
    try:
        states = solve(ham, alpha=target.electrons.alpha, beta=target.electrons.beta, roots=8, memory=memory)
    except (FieldError, UnsupportedError, BudgetError) as err:
        return [
            Hypothesis(
                "other state",
                "another state of these electron counts",
                None,
                False,
                note=f"not evaluated: {err.reason}",
            )
        ]
    found = []
    for index, state in enumerate(states.roots):
        if abs(state.energy - expected) <= tolerance:
            spin = f"2S = {state.two_s}" if state.two_s is not None else "2S unknown"
            irrep = f", irrep {state.irrep}" if state.irrep is not None else ""
            found.append(
                Hypothesis(
                    "other state",
                    f"the expected energy is state {index} of this sector ({spin}{irrep})",
                    state.energy,
                    True,
                )
            )
    if not found:
        found.append(
            Hypothesis(
                "other state",
                "another of the 8 lowest states of these electron counts",
                states.roots[-1].energy,
                False,
                note="none matches",
            )
        )
    return found


def likely_causes(ham: Hamiltonian, label: str, computed: float, tolerance: float, memory: int) -> list[str]:
    """What the energy checks say when a reference is missed: the hypotheses that reproduce it."""
    finding = diagnose(ham, reference=label, tolerance=tolerance, memory=memory, computed=computed)
    return [
        h.description if h.name == "constants" else f"{h.description}: that reproduces the reference energy"
        for h in finding.explanations
    ]
