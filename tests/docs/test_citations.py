"""One convention for citing outside sources, everywhere in the repository.

A value or relation taken from a book or paper is cited with the tag *from memory* when it was
recalled rather than read from the text at hand (DEVELOPERS.md, "Citing sources"; the same words
in docs/checks.md). Two things are checked mechanically on every text file:

- the tag has one wording: no "recalled from memory", "cited from memory", "quoted ... from
  memory" or "from memory for the volume and page";
- every bibliographic citation (an author of the works we cite, or a journal abbreviation) has the
  tag, or the *reference library* tag of a pyscf value, within the lines around it.

A failure names the file and the line.
"""

from __future__ import annotations

import re

import pytest
from documents import read_text, text_files
from locations import REPOSITORY

# written in pieces so that this file does not match its own patterns
MEMORY = "from" + " memory"
VARIANTS = re.compile(r"(recalled|cited|quoted|remembered)\s+(\w+\s+){0,3}" + MEMORY + r"|" + MEMORY + r"\s+for\b")
AUTHORS = (
    "Szabo", "Helgaker", "Olsen", "Crawford", "Fazekas", "Herzberg", "Knowles", "Beebe", "Ahlrichs",
    "Sherrill", "Roothaan", "Lieb",
)  # fmt: skip
JOURNALS = (r"J\. Chem\. Phys\.", r"Chem\. Phys\. Lett\.", r"Phys\. Rev\.", r"Quantum Chem\.", r"Comput\. Chem\.")
JOURNALS += (r"Comput\. Phys\.", r"Rev\. Mod\. Phys\.", r"WIREs")
CITATION = re.compile(r"\b(?:" + "|".join(re.escape(a) for a in AUTHORS) + r")|" + "|".join(JOURNALS))
TAGS = (MEMORY, "reference" + " library")
WINDOW = 4  # lines either side of a citation in which its tag must appear
OWN = "tests/docs/test_citations.py"


def citation_problems(name: str, text: str) -> list[str]:
    """``file:line: reason: text`` for a variant wording or a citation without its tag."""
    lines = text.splitlines()
    found = []
    for number, line in enumerate(lines, start=1):
        if VARIANTS.search(line):
            found.append(f"{name}:{number}: write the tag as '{MEMORY}': {line.strip()[:100]}")
        if CITATION.search(line):
            around = " ".join(lines[max(0, number - 1 - WINDOW) : number + WINDOW])
            around = re.sub(r"[\s#*>]+", " ", around)
            if not any(tag in around for tag in TAGS):
                found.append(f"{name}:{number}: a citation without '{MEMORY}': {line.strip()[:100]}")
    return found


def test_every_citation_in_the_repository_carries_the_one_tag():
    problems = []
    for path in text_files():
        name = path.relative_to(REPOSITORY).as_posix()
        text = read_text(path)
        if text is not None and name != OWN:
            problems += citation_problems(name, text)
    assert not problems, "citations outside the convention:\n" + "\n".join(problems)


@pytest.mark.parametrize(
    "text",
    [
        "# -1.1373 (Szabo and Ostlund, chapter 4)",
        "see J. Chem. Phys. 104, 8007 (1996) for the geometry",
        "# the value is recalled " + MEMORY,
        "(section numbers cited " + MEMORY + ")",
        "(volume and page " + MEMORY + " for the volume)",
    ],
)
def test_a_citation_outside_the_convention_is_named(text):
    problems = citation_problems("bench/example.py", "first line\n\n\n\n\n\n" + text + "\n")
    assert problems and all(p.startswith("bench/example.py:7: ") for p in problems), problems


@pytest.mark.parametrize(
    "text",
    [
        "# Source: Szabo and Ostlund (1989), chapter 4 (" + MEMORY + ")",
        "Olsen et al., J. Chem. Phys. 104, 8007 (1996),\n# E = -76.241860 (" + MEMORY + ")",
        "# pyscf fci.direct_spin1 of the same arrays (reference" + " library)",
    ],
)
def test_a_citation_in_the_convention_passes(text):
    assert citation_problems("bench/example.py", text) == []
