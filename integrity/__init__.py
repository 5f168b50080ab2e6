"""integrity: validate, solve and convert molecular Hamiltonian integral files.

The jobs as plain functions (the command line is a thin layer over them)::

    ham = integrity.load("h2.h5")                 # HDF5 or JSON, validated
    report = integrity.check("h2.h5")             # or check(ham); report.status is pass/fail/unreadable
    result = integrity.solve(ham, roots=3)        # full CI; result.roots[i].energy, .two_s
    other = integrity.convert(ham, notation="physicist", basis="spin-orbital")
    integrity.save(other.hamiltonian, "h2_so.json")
    finding = integrity.diagnose(ham, expected=-1.1373)
    verdict = integrity.compare("ours.h5", "theirs.json")   # verdict.name, .relabelling, .as_dict()
    cas = integrity.reduce_active_space(ham, frozen=[0, 1], active=range(2, 8)).hamiltonian
"""

from integrity._version import __version__
from integrity.checks import BatchReport, CheckOptions, FileReport, check, check_paths
from integrity.compare import Comparison, compare
from integrity.convert import convert, convert_file, reduce_active_space, reduce_file
from integrity.energies import diagnose, solve
from integrity.errors import IntegrityError
from integrity.io import load, save
from integrity.model import Electrons, Hamiltonian, Orbitals, Reference, TwoElectron, fingerprint

__all__ = [
    "BatchReport",
    "CheckOptions",
    "Comparison",
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
    "compare",
    "convert",
    "convert_file",
    "diagnose",
    "fingerprint",
    "load",
    "reduce_active_space",
    "reduce_file",
    "save",
    "solve",
]
