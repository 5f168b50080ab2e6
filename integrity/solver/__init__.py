"""The project's own full-CI solver over integral arrays (occupation-number picture), and a pyscf engine.

Entry point: :func:`solve_arrays`. Also :func:`estimate_memory` (bytes a native
solve needs) and the slow, obviously right :func:`slater_condon_solve`.
"""

from integrity.solver.memory import estimate_memory
from integrity.solver.slater_condon import SlaterCondonResult, hamiltonian_matrix, slater_condon_solve
from integrity.solver.solve import FCIResult, Root, SolveProgress, solve_arrays

__all__ = [
    "FCIResult",
    "Root",
    "SlaterCondonResult",
    "SolveProgress",
    "estimate_memory",
    "hamiltonian_matrix",
    "slater_condon_solve",
    "solve_arrays",
]
