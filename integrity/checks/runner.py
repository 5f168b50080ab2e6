"""Run the checks on a file or a Hamiltonian and collect the verdicts.

A file is opened once; its metadata is validated before anything else, and
the Hamiltonian is assembled from it when it can be (a file that cannot be
assembled still gets the checks that need only the metadata). Arrays larger
than a quarter of the memory budget stay on disk and are read in boxes and
slabs of a fixed fraction of it. An exception inside one check becomes that
check's ``fail``; the others still run.

>>> from integrity.testing import random_hamiltonian
>>> report = check(random_hamiltonian("restricted", 3, seed=1))
>>> report.status, len(report.results) == len(check_ids())
('pass', True)
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass, field, replace
from functools import partial

import numpy as np

from integrity.checks.registry import REGISTRY, Context, Result, check_ids, failed, run_one, skipped, stamp
from integrity.checks.report import FileReport
from integrity.errors import FieldError, IntegrityError
from integrity.io import DEFAULT_MEMORY, find_files, open_document
from integrity.io.content import hamiltonian_from_content
from integrity.io.schema import file_problems
from integrity.model.fingerprint import fingerprint
from integrity.model.hamiltonian import Hamiltonian
from integrity.model.slabs import slab_budget

ENGINES = ("native", "pyscf", "both")


@dataclass(frozen=True)
class CheckOptions:
    """How to judge a file.

    ``only`` runs just these check ids (None: all), ``without`` leaves these
    out; ``tolerances`` maps a check id to its limit; ``memory`` is the budget
    in bytes; ``engine`` the full-CI engine (``native``, ``pyscf`` or
    ``both``); ``strict`` makes a warning fail the file; ``fingerprint`` puts
    the fingerprint in the report even when the checksum check did not run;
    ``convergence`` and ``max_iterations`` go to the full-CI solver;
    ``progress(path, check_id, update)`` is called as each check starts
    (``update`` None) and with every :class:`~integrity.solver.SolveProgress`
    of a solve inside it.
    """

    only: tuple[str, ...] | None = None
    without: tuple[str, ...] = ()
    tolerances: Mapping[str, float] = field(default_factory=dict)
    memory: int = DEFAULT_MEMORY
    engine: str = "native"
    strict: bool = False
    fingerprint: bool = True
    convergence: float = 1e-9
    max_iterations: int = 200
    progress: Callable | None = None

    def __post_init__(self):
        object.__setattr__(self, "only", None if self.only is None else tuple(self.only))
        object.__setattr__(self, "without", tuple(self.without))
        object.__setattr__(self, "tolerances", dict(self.tolerances))

    def chosen(self) -> list[str]:
        """The check ids to run, in report order; an unknown id is an error naming the known ones."""
        known = check_ids()
        for name in [*(self.only or ()), *self.without, *self.tolerances]:
            if name not in known:
                raise FieldError("check", f"unknown check id {name!r}; known: {', '.join(known)}")
        for name, limit in self.tolerances.items():
            problem = REGISTRY[name].limit_problem(limit)
            if problem:
                raise FieldError("tolerances", problem)
        if self.engine not in ENGINES:
            raise FieldError("engine", f"{self.engine!r} is not an engine; expected one of {ENGINES}")
        return [i for i in known if (self.only is None or i in self.only) and i not in self.without]

    def limit(self, check_id: str) -> float | None:
        return self.tolerances.get(check_id, REGISTRY[check_id].limit)


def check(source, options: CheckOptions | None = None, **keywords) -> FileReport:
    """Run the checks on a path or a :class:`~integrity.model.Hamiltonian`.

    Give a :class:`CheckOptions`, or its fields as keywords
    (``check(path, only=("energy.hf",), memory=2**30)``).
    """
    options = replace(options or CheckOptions(), **keywords)
    ids = options.chosen()
    if isinstance(source, Hamiltonian):
        return _judge(source, str(source.title or "(in memory)"), ids, options)
    path = str(source)
    try:
        document = open_document(path, memory=options.memory, lazy="auto")
    except IntegrityError as err:
        return FileReport(path, "unreadable", error=str(err.in_file(path)))
    with document:
        missing = [key for key in ("one_electron", "two_electron") if key not in document.tree]
        if missing:
            why = dict(document.notes).get((missing[0],), "missing dataset")  # e.g. a soft link to nothing
            return FileReport(
                path,
                "unreadable",
                error=f"{path}: {document.locate((missing[0],))}: {why}; nothing to check without it",
            )
        ham, build_error = None, _schema_error(document)
        if build_error is None:
            try:
                ham = hamiltonian_from_content(document.content)
            except FieldError as err:
                build_error = err
            except IntegrityError as err:
                return FileReport(path, "unreadable", error=str(err.in_file(path)))
            except Exception as err:  # the schema passed: a hole in it, reported rather than raised
                build_error = FieldError(None, f"the metadata cannot be assembled ({type(err).__name__}: {err})")
        return _judge(ham, path, ids, options, document=document, build_error=build_error)


def _schema_error(document) -> FieldError | None:
    """The first schema problem of an opened file (the ``schema`` check lists them all), or None.

    The model is built only from metadata that follows the schema, so a wrong type
    (an integer where a list belongs) is a finding, not an exception.
    """
    problems = file_problems(document.tree, document.schema_entry, document.notes)
    if not problems:
        return None
    first = problems[0]
    more = f" (and {len(problems) - 1} more schema problems)" if len(problems) > 1 else ""
    return FieldError(document.locate(first.path), first.message + more)


def check_paths(paths, options: CheckOptions | None = None, **keywords) -> list[FileReport]:
    """Check every file named or found under the folders named, one after another."""
    return [check(path, options, **keywords) for path in find_files(paths)]


def _judge(ham, path, ids, options: CheckOptions, *, document=None, build_error=None) -> FileReport:
    memory = options.memory
    lazy = document is not None and ham is not None and not isinstance(ham.two_electron.array, np.ndarray)
    # on disk: boxes and slabs are fixed fractions of the budget (in memory: cache-sized boxes)
    box_bytes = min(max(2**16, memory // 32), 64 * 2**20) if lazy else 2**20
    base = Context(
        limit=None,
        memory=memory,
        engine=options.engine,
        document=document,
        box_bytes=box_bytes,
        build_error=build_error,
        convergence=options.convergence,
        max_iterations=options.max_iterations,
    )
    results: list[Result] = []
    finite = None
    with slab_budget(max(2**16, memory // 16)):
        for check_id in ids:
            spec = REGISTRY[check_id]
            ctx = replace(base, limit=options.limit(check_id), cache=base.cache)
            if options.progress is not None:
                options.progress(path, check_id, None)
                ctx = replace(ctx, progress=partial(options.progress, path, check_id))
            if spec.needs_hamiltonian and ham is None:
                results.append(_stamped(check_id, f"not run: the file could not be assembled ({build_error})"))
                continue
            if spec.needs_finite:
                if finite is None:
                    finite = _finite_result(results, ham, ctx)
                if finite.status == "fail":
                    results.append(_stamped(check_id, f"not run: {finite.message.split(';')[0]}"))
                    continue
            results.append(run_one(spec, ham, ctx))
    digest = next((r.details.get("computed") for r in results if r.id == "checksum" and r.details), None)
    if digest is None and ham is not None and options.fingerprint and "checksum" not in ids:
        try:
            digest = fingerprint(ham)
        except Exception as err:  # reading the arrays failed: a finding, like any check's failure
            results.append(
                stamp(
                    REGISTRY["checksum"], failed(f"the fingerprint could not be computed: {type(err).__name__}: {err}")
                )
            )
    bad = any(r.status == "fail" for r in results) or (options.strict and any(r.status == "warn" for r in results))
    if ham is None and build_error is not None:
        bad = True
    return FileReport(path, "fail" if bad else "pass", results, digest)


def _stamped(check_id: str, why: str) -> Result:
    return stamp(REGISTRY[check_id], skipped(why))


def _finite_result(results, ham, ctx) -> Result:
    """The arrays.finite verdict of this run, computed quietly if it was not selected."""
    for result in results:
        if result.id == "arrays.finite":
            return result
    return run_one(REGISTRY["arrays.finite"], ham, ctx)
