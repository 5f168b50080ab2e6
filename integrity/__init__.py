"""integrity: validate, solve and convert molecular Hamiltonian integral files."""

__version__ = "0.1.0"
