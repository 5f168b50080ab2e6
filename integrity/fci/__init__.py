"""The project's own full-CI solver (occupation-number picture) and a pyscf engine.

Entry point: :func:`solve_arrays`. Also :func:`estimate_memory` (bytes a native
solve needs) and the plain reference :func:`dense_fci`.
"""

from integrity.fci.dense import DenseResult, dense_fci, hamiltonian_matrix
from integrity.fci.memory import estimate_memory
from integrity.fci.solve import FCIResult, Root, solve_arrays

__all__ = [
    "DenseResult",
    "FCIResult",
    "Root",
    "dense_fci",
    "estimate_memory",
    "hamiltonian_matrix",
    "solve_arrays",
]
