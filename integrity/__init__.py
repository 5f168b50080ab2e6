"""integrity: validate, solve and convert molecular Hamiltonian integral files.

The jobs as plain functions (the command line is a thin layer over them)::

    ham = integrity.load("h2.h5")                 # HDF5 or JSON, validated
    report = integrity.check("h2.h5")             # or check(ham); report.status is pass/fail/error
    result = integrity.solve(ham, roots=3)        # full CI; result.roots[i].energy, .two_s
    other = integrity.convert(ham, notation="physicist", basis="spin-orbital")
    integrity.save(other.hamiltonian, "h2_so.json")
    finding = integrity.diagnose(ham, expected=-1.1373)
"""

from __future__ import annotations

__version__ = "0.1.0"

from .checks import FileReport, check, check_paths
from .diagnose import diagnose
from .errors import IntegrityError
from .fingerprint import fingerprint
from .fullci import solve
from .io import load, save
from .model import Electrons, Hamiltonian, Orbitals, Reference, TwoElectron

__all__ = [
    "Electrons",
    "FileReport",
    "Hamiltonian",
    "IntegrityError",
    "Orbitals",
    "Reference",
    "TwoElectron",
    "__version__",
    "check",
    "check_paths",
    "convert",
    "convert_file",
    "diagnose",
    "fingerprint",
    "load",
    "save",
    "solve",
]
