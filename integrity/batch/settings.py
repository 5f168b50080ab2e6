"""The settings of a batch run: the policy's keys, overridden by what the command line gives.

For every key the command line wins over the policy file, and the policy over
the built-in default. The checks chosen are one setting: ``--only`` or
``--without`` on the command line replaces both of the policy's lists;
``--tolerance`` replaces the policy's limit of the checks it names and keeps
the others. A scheduler (a Dask cluster) and local worker processes are two
ways to run: ``--jobs`` on the command line runs locally even when the policy
names a scheduler, ``--scheduler`` runs on the cluster even when the policy
sets ``jobs``; in the policy itself a ``scheduler`` outranks ``jobs``.

>>> from integrity.batch.policy import Policy
>>> settings = settle(Policy(tolerance={"energy.hf": 1e-8}, strict=True, jobs=3), tolerance={"energy.fci": 1e-7})
>>> sorted(settings.options.tolerances.items()), settings.options.strict, settings.jobs
([('energy.fci', 1e-07), ('energy.hf', 1e-08)], True, 3)
"""

from __future__ import annotations

import os
from dataclasses import dataclass, field

from integrity.batch.globs import FileRules
from integrity.batch.policy import Policy, policy_source_text
from integrity.checks.runner import CheckOptions
from integrity.errors import FieldError
from integrity.io import DEFAULT_MEMORY

#: seconds one file may take before it is reported unreadable (hung); a 1.6 GB file takes about 15 s
DEFAULT_TIMEOUT = 600.0


def available_cores() -> int:
    """The cores this process may run on."""
    try:
        return len(os.sched_getaffinity(0))
    except AttributeError:  # pragma: no cover - not on Linux
        return os.cpu_count() or 1


@dataclass(frozen=True)
class BatchSettings:
    """How a batch run judges files and where.

    ``options`` judge each file (its ``memory`` is the budget of the whole run;
    each of ``jobs`` local workers gets ``memory / jobs``); ``timeout`` is the
    limit per file in seconds (None: no limit); ``cache`` the result cache
    file (None: none); ``scheduler`` a Dask scheduler address (None: local
    processes); ``foreign`` what a file without our format marker gets
    (``note`` or ``refuse``); ``files`` the policy's path rules; ``policy``
    the policy file followed, as a report names it.
    """

    options: CheckOptions = field(default_factory=CheckOptions)
    jobs: int = 1
    timeout: float | None = DEFAULT_TIMEOUT
    cache: str | None = None
    scheduler: str | None = None
    foreign: str = "refuse"
    files: FileRules = field(default_factory=FileRules)
    policy: str | None = None


def settle(
    policy: Policy,
    *,
    only=None,
    without=None,
    tolerance=None,
    memory: int | None = None,
    engine: str | None = None,
    strict: bool | None = None,
    foreign: str | None = None,
    jobs: int | None = None,
    timeout: float | None = None,
    cache: str | None = None,
    no_cache: bool = False,
    scheduler: str | None = None,
) -> BatchSettings:
    """Merge command-line values (None: not given) over ``policy``; see the module docstring."""
    if jobs is not None and scheduler is not None:
        raise FieldError("--jobs", "give --jobs (processes on this machine) or --scheduler (a Dask cluster), not both")
    chosen_here = bool(only) or bool(without)
    options = CheckOptions(
        only=(tuple(only) or None) if chosen_here else policy.only,
        without=tuple(without or ()) if chosen_here else (policy.without or ()),
        tolerances={**policy.tolerance, **(tolerance or {})},
        memory=_first(memory, policy.memory, DEFAULT_MEMORY),
        engine=_first(engine, policy.engine, "native"),
        strict=_first(strict, policy.strict, False),
    )
    options.chosen()  # an unknown check id or engine is refused before any file is read
    if jobs is not None:
        chosen_scheduler = None
    else:
        chosen_scheduler = _first(scheduler, policy.scheduler, None)
    limit = _first(timeout, policy.timeout, DEFAULT_TIMEOUT)
    return BatchSettings(
        options=options,
        jobs=_first(jobs, policy.jobs, available_cores()),
        timeout=None if limit == 0 else float(limit),
        cache=None if no_cache else _first(cache, policy.cache, None),
        scheduler=chosen_scheduler,
        foreign=_first(foreign, policy.foreign, "refuse"),
        files=FileRules(policy.root, policy.include, policy.exclude),
        policy=policy_source_text(policy),
    )


def _first(*values):
    """The first value that is not None."""
    return next((value for value in values if value is not None), None)
