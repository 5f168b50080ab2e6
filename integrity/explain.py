"""Explain a difference between a computed and an expected energy.

Each hypothesis is a known way Hamiltonian files go wrong; it is reported
when the difference matches it to within the tolerance. The hints are
suggestions to investigate, not proofs.
"""

from __future__ import annotations

from .model import Hamiltonian


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
    for name, value in (ham.core_energy_parts or {}).items():
        if value == 0:
            continue
        if abs(difference - value) <= tolerance:
            hints.append(f"the difference equals core_energy_parts.{name}: that part is missing from core_energy")
        elif abs(difference + value) <= tolerance:
            hints.append(f"the difference equals minus core_energy_parts.{name}: that part is counted twice")
    return hints
