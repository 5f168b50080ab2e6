"""Conversions between notations, storages, orbital bases, spin layouts and containers.

Every conversion is exact where it can be (values copied or permuted, bit
for bit), refuses where it would lose something (unless forced, and then it
records what it dropped), and leaves the energy unchanged. See
:mod:`integrity.convert.pipeline` for the order of steps and the defaults.

* :func:`convert` applies several steps to a Hamiltonian in memory;
* :func:`convert_file` reads a file, converts it and writes a new one;
* :func:`convert_notation`, :func:`convert_storage`, :func:`convert_basis`,
  :func:`convert_spin_layout`, :func:`antisymmetrize` are the single steps.

* :func:`reduce_active_space` (and :func:`reduce_file`) cut an active space out
  of a larger Hamiltonian, folding frozen orbitals into the constants.

All return a :class:`ConversionResult` (the Hamiltonian and the history
entries appended to its ``provenance.history``).
"""

from integrity.convert.files import convert_file, reduce_file
from integrity.convert.pipeline import (
    ConversionResult,
    Target,
    antisymmetrize,
    convert,
    convert_basis,
    convert_notation,
    convert_spin_layout,
    convert_storage,
    plan,
)
from integrity.convert.reduce import reduce_active_space

__all__ = [
    "ConversionResult",
    "Target",
    "antisymmetrize",
    "convert",
    "convert_basis",
    "convert_file",
    "convert_notation",
    "convert_spin_layout",
    "convert_storage",
    "plan",
    "reduce_active_space",
    "reduce_file",
]
