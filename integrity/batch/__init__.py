"""Many files at once: the policy file, the result cache, and local or cluster workers.

:mod:`~integrity.batch.policy` reads a group's acceptance policy,
:mod:`~integrity.batch.settings` merges it with the command line,
:mod:`~integrity.batch.job` is what a worker does for one file,
:mod:`~integrity.batch.execute` runs the jobs (in worker processes with a time
limit, or on a Dask cluster through :mod:`~integrity.batch.cluster`) and
yields the verdicts in input order, with :mod:`~integrity.batch.cache` keeping
those already reached.
"""

from integrity.batch.cache import ResultCache
from integrity.batch.execute import BatchRun, InProcess, LocalProcesses, make_executor
from integrity.batch.globs import FileRules
from integrity.batch.job import Job, judge
from integrity.batch.policy import Policy, discover_policy, find_policy, load_policy
from integrity.batch.settings import DEFAULT_TIMEOUT, BatchSettings, settle

__all__ = [
    "DEFAULT_TIMEOUT",
    "BatchRun",
    "BatchSettings",
    "FileRules",
    "InProcess",
    "Job",
    "LocalProcesses",
    "Policy",
    "ResultCache",
    "discover_policy",
    "find_policy",
    "judge",
    "load_policy",
    "make_executor",
    "settle",
]
