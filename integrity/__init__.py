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

from .checks import FileReport, check, check_paths  # noqa: E402
from .diagnose import diagnose  # noqa: E402
from .errors import IntegrityError  # noqa: E402
from .fingerprint import fingerprint  # noqa: E402
from .fullci import solve  # noqa: E402
from .io import load, save  # noqa: E402
from .model import Electrons, Hamiltonian, Orbitals, Reference, TwoElectron  # noqa: E402

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
    "diagnose",
    "fingerprint",
    "load",
    "save",
    "solve",
]
