"""The check suite: every check, the registry that orders them, and the runner.

The families register their checks when imported, in report order: form
(:mod:`~integrity.checks.structure`), index symmetry
(:mod:`~integrity.checks.index_symmetry`), positivity
(:mod:`~integrity.checks.positivity`), orbitals
(:mod:`~integrity.checks.orbitals`), energies (:mod:`~integrity.checks.energies`).
"""

from integrity.checks import structure, index_symmetry, positivity, orbitals, energies  # noqa: F401, I001  (order)
from integrity.checks.registry import REGISTRY, Context, Location, Result, check_ids, register
from integrity.checks.report import BatchReport, FileReport
from integrity.checks.runner import CheckOptions, check, check_paths

__all__ = [
    "REGISTRY",
    "BatchReport",
    "CheckOptions",
    "Context",
    "FileReport",
    "Location",
    "Result",
    "check",
    "check_ids",
    "check_paths",
    "register",
]
