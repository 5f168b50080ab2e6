"""Energies of a Hamiltonian: mean field (Fock matrices, determinant energies), full CI
through the solver, and the diagnosis of an energy that does not match."""

from integrity.energies.diagnose import Diagnosis, Hypothesis, diagnose
from integrity.energies.meanfield import determinant_energy, fock_matrices
from integrity.energies.solve import solve, solve_reference

__all__ = ["Diagnosis", "Hypothesis", "determinant_energy", "diagnose", "fock_matrices", "solve", "solve_reference"]
