"""The check suite: run every check on a file or a Hamiltonian and collect the verdicts.

>>> from integrity.checks import check_ids
>>> "two_electron.symmetry" in check_ids()
True
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from pathlib import Path

from ..blocks import slab_budget
from ..errors import FieldError, IntegrityError
from ..io import DEFAULT_MEMORY, open_document
from ..io.content import hamiltonian_from_content
from ..model import Hamiltonian
from . import energies, fullci, irreps, positivity, structure, symmetry  # noqa: F401  (register the checks)
from .registry import REGISTRY, Context, Result, run_one

ORDER = (
    "schema",
    "arrays.shape",
    "arrays.finite",
    "one_electron.hermitian",
    "two_electron.symmetry",
    "two_electron.notation",
    "two_electron.positive",
    "electrons.count",
    "orbitals.irreps",
    "core_energy.parts",
    "checksum",
    "energy.hf",
    "orbitals.canonical",
    "energy.fci",
)


def check_ids() -> list[str]:
    """Every registered check id, in report order."""
    return [i for i in ORDER if i in REGISTRY] + sorted(set(REGISTRY) - set(ORDER))


@dataclass
class FileReport:
    """The verdict on one file: ``status`` is pass, fail, or error (unreadable)."""

    path: str
    status: str
    results: list[Result] = field(default_factory=list)
    fingerprint: str | None = None
    error: str | None = None

    @property
    def failures(self) -> list[Result]:
        return [r for r in self.results if r.status == "fail"]

    def as_dict(self) -> dict:
        out = {
            "path": self.path,
            "status": self.status,
            "fingerprint": self.fingerprint,
            "checks": [r.as_dict() for r in self.results],
        }
        if self.error is not None:
            out["error"] = self.error
        return out


def resolve_selection(select=None, skip=None, tolerances=None) -> list[str]:
    """The check ids to run; unknown ids are an error naming the known ones."""
    known = check_ids()
    for name in [*(select or ()), *(skip or ()), *(tolerances or {})]:
        if name not in known:
            raise FieldError("check", f"unknown check id {name!r}; known: {', '.join(known)}")
    chosen = [i for i in known if not select or i in select]
    return [i for i in chosen if i not in (skip or ())]


def check(
    source,
    *,
    select=None,
    skip=None,
    tolerances=None,
    memory: int = DEFAULT_MEMORY,
    engine: str = "native",
    strict: bool = False,
    fingerprint: bool = True,
) -> FileReport:
    """Run the checks on a path or a Hamiltonian.

    ``tolerances`` maps check id to limit; ``memory`` is the budget in bytes
    (arrays beyond a quarter of it are checked block by block from HDF5);
    ``strict`` makes a warning fail the file; ``fingerprint`` puts the
    fingerprint in the report even when the checksum check did not run
    (one more pass over the data).
    """
    ids = resolve_selection(select, skip, tolerances)
    options = (tolerances, memory, engine, strict, fingerprint)
    if isinstance(source, Hamiltonian):
        return _run(source, None, None, str(source.title or "(in memory)"), ids, *options)
    path = str(source)
    try:
        document = open_document(path, memory=memory, lazy="auto")
    except IntegrityError as err:
        return FileReport(path, "error", error=str(err.in_file(path)))
    with document:
        missing = [key for key in ("one_electron", "two_electron") if key not in document.tree]
        if missing:
            return FileReport(
                path,
                "error",
                error=f"{path}: {document.locate((missing[0],))}: missing dataset; nothing to check without it",
            )
        ham, build_error = None, None
        try:
            ham = hamiltonian_from_content(document.content)
        except FieldError as err:
            build_error = err
        except IntegrityError as err:
            return FileReport(path, "error", error=str(err.in_file(path)))
        return _run(ham, document, build_error, path, ids, *options)


def _run(ham, document, build_error, path, ids, tolerances, memory, engine, strict, want_fingerprint):
    lazy = document is not None and ham is not None and not _in_memory(ham)
    # on disk: boxes and slabs are fixed fractions of the budget (in memory: cache-sized boxes)
    box_bytes = min(max(2**16, memory // 32), 64 * 2**20) if lazy else 2**20
    base = Context(
        limit=None, memory=memory, engine=engine, document=document, box_bytes=box_bytes, build_error=build_error
    )
    results = []
    finite = None
    with slab_budget(max(2**16, memory // 16)):
        for check_id in ids:
            spec = REGISTRY[check_id]
            limit = (tolerances or {}).get(check_id, spec.limit)
            ctx = replace(base, limit=limit, cache=base.cache)
            if spec.needs_hamiltonian and ham is None:
                results.append(Result(check_id, "skip", f"not run: the file could not be assembled ({build_error})"))
                continue
            if spec.needs_finite:
                if finite is None:
                    finite = _finite_result(results, ham, ctx)
                if finite.status == "fail":
                    results.append(Result(check_id, "skip", f"not run: {finite.message.split(';')[0]}"))
                    continue
            results.append(run_one(spec, ham, ctx))
    failed = any(r.status == "fail" for r in results) or (strict and any(r.status == "warn" for r in results))
    if ham is None and build_error is not None:
        failed = True
    fingerprint = next((r.details.get("computed") for r in results if r.id == "checksum" and r.details), None)
    if fingerprint is None and ham is not None and want_fingerprint:
        from ..fingerprint import fingerprint as compute

        try:
            fingerprint = compute(ham)
        except IntegrityError:
            fingerprint = None
    return FileReport(path, "fail" if failed else "pass", results, fingerprint)


def _finite_result(results, ham, ctx) -> Result:
    """The arrays.finite verdict of this run, computed quietly if it was not selected."""
    for result in results:
        if result.id == "arrays.finite":
            return result
    return run_one(REGISTRY["arrays.finite"], ham, ctx)


def _in_memory(ham) -> bool:
    import numpy as np

    return isinstance(ham.two_electron.array, np.ndarray)


def find_files(paths) -> list[str]:
    """Files named, and *.h5, *.hdf5, *.json found under folders named, in sorted order."""
    found = []
    for path in paths:
        path = Path(path)
        if path.is_dir():
            found += sorted(
                str(p) for p in path.rglob("*") if p.suffix.lower() in (".h5", ".hdf5", ".json") and p.is_file()
            )
        else:
            found.append(str(path))
    return found


def check_paths(paths, **options) -> list[FileReport]:
    """Check every file named or found under the folders named."""
    return [check(path, **options) for path in find_files(paths)]


__all__ = ["FileReport", "Result", "check", "check_ids", "check_paths", "find_files", "resolve_selection"]
