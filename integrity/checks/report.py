"""Verdicts on files: one :class:`FileReport` per file, a :class:`BatchReport` for a run.

A file's ``status`` is ``pass`` (no check failed; in strict mode, none warned
either), ``fail`` (a check failed) or ``unreadable`` (the file could not be read
as a Hamiltonian file at all; ``error`` says why). A file a run did not judge
(excluded by the policy, or not a Hamiltonian file when such files are noted
rather than refused) is :class:`PassedOver`, with the reason.
``BatchReport.as_dict()`` is the JSON report, valid against
``schemas/report.schema.json``; every entry comes back from its ``as_dict()``
through ``from_dict`` (the result cache and the workers of a parallel run
carry reports that way).

>>> from integrity.checks.registry import Result
>>> report = FileReport("a.h5", "pass", [Result("schema", "pass", "valid")], "sha256:" + "0" * 64)
>>> FileReport.from_dict(report.as_dict()) == report
True
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

from integrity._version import __version__
from integrity.checks.registry import STATUSES, Result

REPORT_FORMAT = "integrity.report"
REPORT_VERSION = 3
FILE_STATUSES = ("pass", "fail", "unreadable")


@dataclass
class FileReport:
    """The verdict on one file: ``status`` is pass, fail or unreadable."""

    path: str
    status: str
    results: list[Result] = field(default_factory=list)
    fingerprint: str | None = None
    error: str | None = None

    @property
    def failures(self) -> list[Result]:
        return [r for r in self.results if r.status == "fail"]

    def as_dict(self) -> dict[str, Any]:
        out = {
            "path": self.path,
            "status": self.status,
            "fingerprint": self.fingerprint,
            "checks": [r.as_dict() for r in self.results],
        }
        if self.error is not None:
            out["error"] = self.error
        return out

    @classmethod
    def from_dict(cls, data: dict[str, Any]) -> FileReport:
        """The FileReport ``as_dict`` described."""
        return cls(
            path=data["path"],
            status=data["status"],
            results=[Result.from_dict(entry) for entry in data.get("checks", ())],
            fingerprint=data.get("fingerprint"),
            error=data.get("error"),
        )


@dataclass(frozen=True)
class PassedOver:
    """A file a run named or found but did not judge, and why (``reason``)."""

    path: str
    reason: str

    def as_dict(self) -> dict[str, Any]:
        return {"path": self.path, "reason": self.reason}

    @classmethod
    def from_dict(cls, data: dict[str, Any]) -> PassedOver:
        return cls(path=data["path"], reason=data["reason"])


@dataclass
class BatchReport:
    """The reports of one run over many files, with the settings that judged them.

    ``policy`` is the policy file the run followed (None: none), ``passed_over``
    the files it did not judge, ``interrupted`` whether it was stopped before
    every file was judged (``files`` then holds those that were, in input order).
    """

    files: list[FileReport]
    strict: bool = False
    policy: str | None = None
    passed_over: list[PassedOver] = field(default_factory=list)
    interrupted: bool = False

    @property
    def exit_status(self) -> int:
        """0 every file passes, 1 a file failed a check, 2 a file is unreadable (2 outranks 1)."""
        if any(r.status == "unreadable" for r in self.files):
            return 2
        return 1 if any(r.status == "fail" for r in self.files) else 0

    def summary(self) -> dict[str, Any]:
        counts = dict.fromkeys(STATUSES, 0)
        for report in self.files:
            for result in report.results:
                counts[result.status] += 1
        return {
            "files": len(self.files),
            "passed": sum(r.status == "pass" for r in self.files),
            "failed": sum(r.status == "fail" for r in self.files),
            "unreadable": sum(r.status == "unreadable" for r in self.files),
            "passed_over": len(self.passed_over),
            "checks": counts,
        }

    def as_dict(self) -> dict[str, Any]:
        return {
            "format": REPORT_FORMAT,
            "report_version": REPORT_VERSION,
            "tool": "integrity",
            "version": __version__,
            "strict": self.strict,
            "policy": self.policy,
            "interrupted": self.interrupted,
            "files": [report.as_dict() for report in self.files],
            "passed_over": [entry.as_dict() for entry in self.passed_over],
            "summary": self.summary(),
        }
