"""The contributor guide's layout table names every module of the package."""

from __future__ import annotations

import re

from locations import REPOSITORY


def _listed() -> set[str]:
    text = (REPOSITORY / "DEVELOPERS.md").read_text()
    listed = set()
    for cell in re.findall(r"^\| ([^|]+) \|", text, flags=re.M):
        names = re.findall(r"`([^`]+)`", cell)
        folder = None
        for name in names:
            if "/" in name:
                folder = name.rsplit("/", 1)[0]
                listed.add(name)
            elif folder is not None and name.endswith(".py"):
                listed.add(f"{folder}/{name}")  # `integrity/cli/check.py`, `show.py`, ...
    return listed


def test_every_module_of_the_package_is_in_the_layout_table():
    modules = {str(p.relative_to(REPOSITORY)) for p in (REPOSITORY / "integrity").rglob("*.py")}
    packages = {m for m in modules if m.endswith("/__init__.py") and m != "integrity/__init__.py"}
    missing = sorted(modules - packages - _listed())
    assert not missing, f"DEVELOPERS.md does not list {missing}"


def test_the_layout_table_names_no_module_that_is_gone():
    gone = sorted(p for p in _listed() if p.endswith(".py") and not (REPOSITORY / p).exists())
    assert not gone, f"DEVELOPERS.md lists modules that do not exist: {gone}"
