"""Compare two Hamiltonians: identical, equal within a tolerance, relabelled, shifted by a constant,
rotated (same spectrum), or different, with the evidence for each (:mod:`integrity.compare.ladder`).

>>> import integrity
>>> from integrity.testing import random_hamiltonian
>>> ham = random_hamiltonian("restricted", 4, seed=1)
>>> other = integrity.convert(ham, orbital_order=(2, 0, 3, 1), orbital_signs=(1, -1, 1, 1)).hamiltonian
>>> found = compare(ham, other)
>>> found.name, found.relabelling.order_text, found.relabelling.signs_text, found.equivalent
('relabel', '2,0,3,1', '+-++', True)
"""

from integrity.compare.ladder import compare
from integrity.compare.relabel import Found, Search, find_relabelling
from integrity.compare.result import (
    RUNG_TITLES,
    RUNGS,
    BlockDifference,
    Comparison,
    Constant,
    Energies,
    Relabelling,
    Side,
    Step,
)

__all__ = [
    "RUNGS",
    "RUNG_TITLES",
    "BlockDifference",
    "Comparison",
    "Constant",
    "Energies",
    "Found",
    "Relabelling",
    "Search",
    "Side",
    "Step",
    "compare",
    "find_relabelling",
]
