"""Synthetic Hamiltonians for tests and benchmarks (not physics), in the way numpy ships ``testing``.

:mod:`~integrity.testing.hamiltonians` builds :class:`~integrity.model.Hamiltonian`
values with exact symmetry; :mod:`~integrity.testing.arrays` builds integral
arrays: the Hubbard model, random Hamiltonians, orbital rotations.
:mod:`~integrity.testing.interruptions` (imported by name, not re-exported) kills
real writing commands at random moments and judges what they leave.
"""

from integrity.testing.arrays import (
    hubbard,
    hund_pair,
    random_restricted,
    random_unitary,
    random_unrestricted,
    restrict_to_irreps,
    rotate_orbitals,
)
from integrity.testing.hamiltonians import random_hamiltonian

__all__ = [
    "hubbard",
    "hund_pair",
    "random_hamiltonian",
    "random_restricted",
    "random_unitary",
    "random_unrestricted",
    "restrict_to_irreps",
    "rotate_orbitals",
]
