"""Producers of Hamiltonian files: a molecule through pyscf, or plain arrays with stated conventions."""

from integrity.producers.from_arrays import wrap_arrays
from integrity.producers.molecule import build

__all__ = ["build", "wrap_arrays"]
