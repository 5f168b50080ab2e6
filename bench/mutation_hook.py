"""Disable one check's failure branch in every Python process: copied by bench/mutations.py as sitecustomize.py.

With this file as ``sitecustomize.py`` on ``PYTHONPATH`` and the check id in
``INTEGRITY_MUTATION``, the check registered under that id has its failure
branch switched off, as if its ``if bad:`` read ``if False:``: a ``fail`` it
returns becomes ``pass`` (and, for a check registered with severity ``warn``,
whose failure branch is its warning, a ``warn`` too), keeping the value,
limit, where, message and details. Exceptions go through unchanged (the
runner, not the check, turns them into verdicts).

Nothing is imported eagerly: the hook waits for ``integrity.checks.registry``
to be imported, then wraps ``register`` before any check family registers, so
the registry and the module attribute (``index_symmetry.check_hermitian``)
both hold the mutated function, in the test process, in CLI subprocesses
and in worker processes alike (they inherit the environment).
"""

from __future__ import annotations

import dataclasses
import functools
import importlib.abc
import os
import sys

TARGET_MODULE = "integrity.checks.registry"
VARIABLE = "INTEGRITY_MUTATION"
#: set on a mutated function, so that a process can show the mutation took effect
MARK = "__integrity_mutation__"


def mutated(function, demoted: tuple[str, ...]):
    """``function`` with every result whose status is in ``demoted`` turned into ``pass``."""

    @functools.wraps(function)
    def check(ham, ctx):
        result = function(ham, ctx)
        if result.status in demoted:
            return dataclasses.replace(result, status="pass")
        return result

    setattr(check, MARK, demoted)
    return check


def patch(registry, check_id: str) -> None:
    """Wrap ``registry.register`` so that ``check_id`` registers its mutated function."""
    original = registry.register

    @functools.wraps(original)
    def register(name, **options):
        decorate = original(name, **options)
        if name != check_id:
            return decorate
        demoted = ("fail", "warn") if options.get("severity", "fail") == "warn" else ("fail",)
        return lambda function: decorate(mutated(function, demoted))

    registry.register = register


class _Loader(importlib.abc.Loader):
    """The registry module's own loader, followed by :func:`patch`."""

    def __init__(self, inner, check_id: str):
        self.inner = inner
        self.check_id = check_id

    def create_module(self, spec):
        return self.inner.create_module(spec)

    def exec_module(self, module):
        self.inner.exec_module(module)
        patch(module, self.check_id)

    def __getattr__(self, name):  # get_source, get_filename ... for tracebacks and doctests
        return getattr(self.inner, name)


class _Finder(importlib.abc.MetaPathFinder):
    def __init__(self, check_id: str):
        self.check_id = check_id

    def find_spec(self, fullname, path, target=None):
        if fullname != TARGET_MODULE:
            return None
        for finder in sys.meta_path:
            if finder is self or not hasattr(finder, "find_spec"):
                continue
            spec = finder.find_spec(fullname, path, target)
            if spec is not None and spec.loader is not None:
                spec.loader = _Loader(spec.loader, self.check_id)
                return spec
        return None


def install() -> None:
    check_id = os.environ.get(VARIABLE)
    if check_id and not any(isinstance(f, _Finder) for f in sys.meta_path):
        sys.meta_path.insert(0, _Finder(check_id))


install()
