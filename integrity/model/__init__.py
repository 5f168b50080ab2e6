"""The Hamiltonian and its conventions: the in-memory model, index conventions,
the two-electron array read as dense chemist slabs, the fingerprint, and a summary."""

from integrity.model.fingerprint import fingerprint
from integrity.model.hamiltonian import (
    ENERGY_UNIT,
    FORMAT_NAME,
    FORMAT_VERSION,
    Electrons,
    Hamiltonian,
    Orbitals,
    Reference,
    TwoElectron,
)
from integrity.model.summary import summarize

__all__ = [
    "ENERGY_UNIT",
    "FORMAT_NAME",
    "FORMAT_VERSION",
    "Electrons",
    "Hamiltonian",
    "Orbitals",
    "Reference",
    "TwoElectron",
    "fingerprint",
    "summarize",
]
