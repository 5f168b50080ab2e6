"""The public API is what the README says: every name in ``integrity.__all__`` imports, and
``from integrity import *`` gives exactly those names."""

from __future__ import annotations

import importlib

import pytest

import integrity

PACKAGES = [
    "integrity.model",
    "integrity.io",
    "integrity.checks",
    "integrity.energies",
    "integrity.solver",
    "integrity.compare",
    "integrity.convert",
    "integrity.producers",
    "integrity.testing",
    "integrity.cli",
]


@pytest.mark.parametrize("name", integrity.__all__)
def test_every_public_name_is_importable(name):
    assert getattr(integrity, name) is not None


def test_star_import_gives_exactly_the_public_names():
    namespace: dict = {}
    exec("from integrity import *", namespace)
    assert sorted(k for k in namespace if k != "__builtins__") == sorted(integrity.__all__)


@pytest.mark.parametrize("package", PACKAGES)
def test_each_package_exports_what_its_all_lists(package):
    module = importlib.import_module(package)
    missing = [name for name in module.__all__ if not hasattr(module, name)]
    assert not missing, f"{package}.__all__ names {missing}, which it does not define"


@pytest.mark.parametrize("package", PACKAGES)
def test_init_files_only_re_export(package):
    """An ``__init__.py`` holds a docstring, imports and ``__all__``: no logic."""
    import ast
    from pathlib import Path

    source = Path(importlib.import_module(package).__file__).read_text()
    allowed = (ast.Import, ast.ImportFrom, ast.Expr, ast.Assign)
    for node in ast.parse(source).body:
        assert isinstance(node, allowed), f"{package}: {type(node).__name__} at line {node.lineno}"
        if isinstance(node, ast.Assign):
            assert [t.id for t in node.targets if isinstance(t, ast.Name)] == ["__all__"], node.lineno
        if isinstance(node, ast.Expr):
            assert isinstance(node.value, ast.Constant), f"{package}: an expression at line {node.lineno}"


def test_the_documented_jobs_work_end_to_end(tmp_path):
    from integrity.testing import random_hamiltonian

    ham = random_hamiltonian("restricted", 3, seed=7)
    integrity.save(ham, tmp_path / "h.json")
    again = integrity.load(tmp_path / "h.json")
    assert integrity.check(tmp_path / "h.json").status == "pass"
    assert integrity.fingerprint(again) == again.checksum
    converted = integrity.convert(again, notation="physicist")
    assert integrity.fingerprint(converted.hamiltonian) == again.checksum
    energy = integrity.solve(again).roots[0].energy
    assert integrity.diagnose(again, expected=energy).matches


def test_the_physicist_and_chemist_views_have_their_own_docstrings():
    from integrity.model import indexing

    assert indexing.physicist_to_chemist.__doc__ != indexing.chemist_to_physicist.__doc__
    assert "chem[p,q,r,s] = phys[p,r,q,s]" in indexing.physicist_to_chemist.__doc__
