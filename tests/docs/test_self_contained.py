"""Nothing in the repository refers to a path outside it.

The text files of the repository (README, contributor guide, docs, package, tests, benches,
fixtures, schemas, project configuration) are searched line by line for:

- absolute paths into a machine's folders (a user's home, a drive letter),
- relative paths that climb out of the repository (``../`` leading outside, or to nothing),
- markdown documents named but not present in the repository (a contract kept elsewhere),
- the folder where the project's first design notes were kept.

A failure names the file and the line. Binary files (HDF5 fixtures) are skipped.
"""

from __future__ import annotations

import re
from pathlib import Path

import pytest
from documents import read_text, text_files
from locations import REPOSITORY as ROOT

# written in pieces so that this file does not match its own patterns
DESIGN_FOLDER = "shared" + "/" + "design"
SYSTEM_FOLDERS = ("work", "home", "tmp", "Users", "mnt", "opt", "srv", "root", "scratch", "private", "var")
ABSOLUTE = re.compile(r"(?<![\w.:/~@-])/(?:" + "|".join(SYSTEM_FOLDERS) + r")/")
DRIVE = re.compile(r"(?<![\w])[A-Za-z]:\\\\?[A-Za-z]")
CLIMBING = re.compile(r"(?:\.\./)+[^\s`'\"()\[\]<>,;:#*]*")
MARKDOWN = re.compile(r"(?<![\w./-])(?:[\w.-]+/)*[\w.-]*[\w-]\.md\b")
URL = re.compile(r"\b\w+://\S+")


def _inside(target: Path) -> bool:
    resolved = target.resolve()
    return resolved == ROOT or ROOT in resolved.parents


def outside_references(path: Path, text: str) -> list[str]:
    """``file:line: reason: text`` for every reference to a place outside the repository."""
    found = []
    where = path.relative_to(ROOT) if _inside(path) else path
    for number, line in enumerate(text.splitlines(), start=1):
        local = URL.sub("", line)
        reasons = []
        if DESIGN_FOLDER in local:
            reasons.append(f"refers to the {DESIGN_FOLDER} folder outside the repository")
        if ABSOLUTE.search(local) or DRIVE.search(local):
            reasons.append("an absolute path")
        for token in CLIMBING.findall(local):
            target = path.parent / token
            if not (_inside(target) and target.exists()):
                reasons.append(f"{token!r} leads outside the repository or to nothing")
        for name in MARKDOWN.findall(local):
            if not ((path.parent / name).exists() or (ROOT / name).exists()):
                reasons.append(f"names {name!r}, which is not in the repository (the contracts are docs/*.md)")
        found += [f"{where}:{number}: {reason}: {line.strip()[:120]}" for reason in reasons]
    return found


def test_nothing_refers_to_a_path_outside_the_repository():
    problems = []
    for path in text_files():
        text = read_text(path)
        if text is not None:
            problems += outside_references(path, text)
    assert not problems, "references outside the repository:\n" + "\n".join(problems)


def test_the_search_covers_the_package_docs_and_fixtures():
    files = {p.relative_to(ROOT).as_posix() for p in text_files()}
    for expected in ("README.md", "docs/format.md", "docs/checks.md", "integrity/model/hamiltonian.py"):
        assert expected in files
    assert any(name.startswith("fixtures/good/") for name in files)


@pytest.mark.parametrize(
    "line",
    [
        "    (see ``" + "/".join(["..", "shared", "design", "format"]) + ".md" + "``).",
        "the contract in " + DESIGN_FOLDER + "/checks.md",
        'path = "/' + 'work/main/fixtures/good/lih_sto3g.h5"',
        "open('/" + "home/someone/h2.json')",
        "C:\\" + "Users\\someone\\h2.json",
        "as " + "cli" + ".md asks",
        "see ../../" + "elsewhere/notes.txt",
    ],
)
def test_a_reference_outside_is_caught_and_named(line):
    source = ROOT / "integrity" / "model" / "hamiltonian.py"
    problems = outside_references(source, "first line\n" + line + "\n")
    assert problems and all(p.startswith("integrity/model/hamiltonian.py:2: ") for p in problems), problems


@pytest.mark.parametrize(
    ("source", "line"),
    [
        ("docs/format.md", "the checks are in [docs/checks.md](checks" + ".md), the README in [it](../" + "README.md)"),
        ("README.md", "the contract is [`docs/format.md`](docs/format.md); see fixtures/README.md"),
        ("integrity/io/schema.py", 'SCHEMA = "https://json-schema.org/draft/2020-12/schema"'),
        ("integrity/io/hdf5.py", "an attribute is written /orbitals@count, a dataset /two_electron"),
        ("bench/checks.py", "#!/usr/bin/env python"),
    ],
)
def test_references_inside_the_repository_are_allowed(source, line):
    assert outside_references(ROOT / source, line) == []
