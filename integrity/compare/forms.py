"""Bring two Hamiltonians to one form, so that their contents can be compared element by element.

Every conversion is :func:`integrity.convert.convert`, so it is exact (values
copied or permuted). The common form is

* the basis: the same when both agree; unrestricted when one is restricted and
  the other unrestricted (h -> [h, h], (pq|rs) -> [aa, ab, bb]); spin-orbital
  when either is spin-orbital or antisymmetrized, in the spin layout of the
  first spin-orbital file (A's when both are);
* dense storage, chemist notation; antisymmetrized physicist <pq||rs> when
  either file holds antisymmetrized integrals (they cannot be undone).

A file whose stored checksum does not match its content is compared as it is;
a note says so.
"""

from __future__ import annotations

from dataclasses import dataclass

from integrity.convert import convert
from integrity.model.hamiltonian import Hamiltonian


@dataclass(frozen=True, eq=False)
class CommonForms:
    """Both Hamiltonians in the common form, what that form is, and what was converted."""

    a: Hamiltonian
    b: Hamiltonian
    basis: str
    spin_layout: str | None
    description: str
    notes: tuple[str, ...]


def _target(a: Hamiltonian, b: Hamiltonian):
    antisymmetrized = bool(a.two_electron.antisymmetrized or b.two_electron.antisymmetrized)
    bases = {a.basis, b.basis}
    if antisymmetrized or "spin-orbital" in bases:
        layouts = [h.orbitals.spin_layout for h in (a, b) if h.basis == "spin-orbital"]
        return "spin-orbital", (layouts[0] if layouts else "interleaved"), antisymmetrized
    return ("unrestricted" if "unrestricted" in bases else "restricted"), None, False


def _describe(basis: str, layout: str | None, antisymmetrized: bool) -> str:
    spins = f" ({layout})" if layout else ""
    return f"{basis}{spins}, dense " + ("physicist, antisymmetrized" if antisymmetrized else "chemist")


def common_forms(a: Hamiltonian, b: Hamiltonian, names: tuple[str, str] = ("A", "B")) -> CommonForms:
    """Convert ``a`` and ``b`` to the common form (see the module docstring)."""
    basis, layout, antisymmetrized = _target(a, b)
    notation = "physicist" if antisymmetrized else "chemist"
    converted, notes = [], []
    for name, ham in zip(names, (a, b), strict=True):
        result = convert(
            ham,
            basis=basis,
            spin_layout=layout,
            notation=notation,
            storage="dense",
            antisymmetrize=antisymmetrized,
            accept_checksum_mismatch=True,
        )
        converted.append(result.hamiltonian)
        for step in result.steps:
            if step["step"] == "checksum":
                notes.append(
                    f"{name}'s stored checksum {step['from']} does not match its content ({step['to']}): "
                    "compared as it is"
                )
        changed = [f"{s['step']} {s['from']} -> {s['to']}" for s in result.steps if s["step"] != "checksum"]
        if changed:
            notes.append(f"{name} brought to the common form: " + ", ".join(changed))
    description = _describe(basis, layout, antisymmetrized)
    return CommonForms(converted[0], converted[1], basis, layout, description, tuple(notes))
