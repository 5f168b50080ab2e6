"""One file's job, as a worker runs it: judge the file and return the outcome as a plain dict.

An outcome is what a run reports for one file, in the form that travels
between processes and is stored in the result cache::

    {"report": FileReport.as_dict(), "digest": "sha256:..." or None}
    {"passed_over": PassedOver.as_dict(), "digest": ...}

``digest`` is the SHA-256 of the file's bytes read just before judging it
(only when the run keeps a cache); ``transient`` marks an outcome that says
nothing lasting about the file (a crash, a time limit, a file a worker could
not see) and is never cached.

A worker opens the file by its absolute ``location`` and reports it under the
``path`` the user gave, so a report does not depend on where or how the file
was judged.
"""

from __future__ import annotations

import os
from dataclasses import dataclass, replace
from typing import Any

from integrity.checks.report import FileReport, PassedOver
from integrity.checks.runner import CheckOptions, check
from integrity.errors import IntegrityError
from integrity.io.digest import file_digest
from integrity.io.marker import declared_format
from integrity.model.hamiltonian import FORMAT_NAME

FOREIGN_CHOICES = ("note", "refuse")


@dataclass(frozen=True)
class Job:
    """Judge the file ``path`` (as given, relative to ``cwd`` unless absolute) with ``options``.

    ``foreign`` is ``note`` (a file without our format marker is passed over)
    or ``refuse`` (it is unreadable); ``digest`` asks for the file's digest;
    ``status`` (a :class:`~integrity.batch.status.Reporter`) hears which check runs.
    """

    index: int
    path: str
    cwd: str
    options: CheckOptions
    foreign: str = "refuse"
    digest: bool = False
    status: Any = None

    @property
    def location(self) -> str:
        """The absolute path a worker opens."""
        return os.path.normpath(os.path.join(self.cwd, self.path))


def judge(job: Job) -> dict[str, Any]:
    """The outcome of one file (see the module docstring); never raises for a bad file."""
    location = job.location
    digest = None
    if job.digest:
        try:
            digest = file_digest(location)
        except IntegrityError:
            digest = None  # unreadable: the check below says why
    options = job.options if job.status is None else replace(job.options, progress=job.status)
    report = check(location, options)
    if report.status == "unreadable" and job.foreign == "note":
        reason = foreign_reason(location)
        if reason is not None:
            return {"passed_over": PassedOver(job.path, reason).as_dict(), "digest": digest}
    return {"report": renamed(report.as_dict(), location, job.path), "digest": digest}


def foreign_reason(location: str) -> str | None:
    """Why a file is not a Hamiltonian file (its format marker), or None when it claims to be
    one or cannot be parsed at all (then it must be judged, and fails)."""
    try:
        marker = declared_format(location)
    except IntegrityError:
        return None
    if marker == FORMAT_NAME:
        return None
    if marker is None:
        return f"not a Hamiltonian file (no format marker {FORMAT_NAME!r})"
    return f"not a Hamiltonian file (its format marker is {marker!r})"


def unreadable(job: Job, reason: str) -> dict[str, Any]:
    """A transient outcome: the file has no verdict, for ``reason`` (the worker crashed, hung, ...)."""
    report = FileReport(job.path, "unreadable", error=f"{job.path}: {reason}")
    return {"report": report.as_dict(), "digest": None, "transient": True}


def renamed(report: dict[str, Any], old: str, new: str) -> dict[str, Any]:
    """A report dict with the path ``old`` written as ``new`` (in ``path``, ``error`` and messages)."""
    if old == new:
        return report
    out = dict(report, path=new)
    if out.get("error"):
        out["error"] = out["error"].replace(old, new)
    out["checks"] = [
        dict(entry, message=entry["message"].replace(old, new)) if old in entry["message"] else entry
        for entry in report.get("checks", ())
    ]
    return out


def outcome_entry(outcome: dict[str, Any]) -> FileReport | PassedOver:
    """The report entry an outcome stands for."""
    if "passed_over" in outcome:
        return PassedOver.from_dict(outcome["passed_over"])
    return FileReport.from_dict(outcome["report"])


def settings_of(job_options: CheckOptions, foreign: str) -> dict[str, Any]:
    """Everything besides the file's bytes that decides its outcome, as plain data (for the cache key)."""
    return {
        "only": None if job_options.only is None else sorted(job_options.only),
        "without": sorted(job_options.without),
        "tolerances": {k: float(v) for k, v in sorted(job_options.tolerances.items())},
        "memory": int(job_options.memory),
        "engine": job_options.engine,
        "strict": bool(job_options.strict),
        "fingerprint": bool(job_options.fingerprint),
        "convergence": float(job_options.convergence),
        "max_iterations": int(job_options.max_iterations),
        "foreign": foreign,
    }
