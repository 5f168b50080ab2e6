"""Which paths are Hamiltonian files: the policy's ``files.include`` and ``files.exclude`` globs.

A glob is matched against a file's path relative to the folder of the policy
file, written with ``/``:

- a glob without ``/`` matches the file's name in any folder (``*.json``
  matches ``package.json`` and ``web/package.json``);
- a glob with ``/`` matches the whole relative path (a leading ``/`` is
  dropped); ``*`` and ``?`` stay within one folder name, ``**`` spans any
  number of folders (``scans/**/*.h5``), ``[abc]`` is a set of characters;
- a glob that names a folder (``scratch/``, ``scratch/**``) matches every file
  under it.

A file outside the policy's folder is matched by its name only.

>>> rules = FileRules(".", include=("data/**",), exclude=("*_scratch.h5", "data/old/"))
>>> rules.passed_over("data/run/a.h5") is None
True
>>> rules.passed_over("data/run/a_scratch.h5")
"excluded by files.exclude '*_scratch.h5'"
>>> rules.passed_over("data/old/b.h5")
"excluded by files.exclude 'data/old/'"
>>> rules.passed_over("notes/c.json")
'not under files.include'
"""

from __future__ import annotations

import functools
import os
import re
from dataclasses import dataclass
from pathlib import Path


@functools.lru_cache(maxsize=256)
def compile_glob(pattern: str) -> re.Pattern:
    """The regular expression a glob stands for (see the module's rules).

    >>> [bool(compile_glob(g).match("scans/a/b/x.h5")) for g in ("scans/**/*.h5", "scans/*.h5", "*.h5")]
    [True, False, True]
    """
    anchored = "/" in pattern.rstrip("/")
    text = pattern.lstrip("/")
    if text.endswith("/"):
        text += "**"
    out = [] if anchored else ["(?:.*/)?"]
    i = 0
    while i < len(text):
        char = text[i]
        if text.startswith("**/", i):
            out.append("(?:.*/)?")
            i += 3
            continue
        if text.startswith("**", i):
            out.append(".*")
            i += 2
            continue
        if char == "*":
            out.append("[^/]*")
        elif char == "?":
            out.append("[^/]")
        elif char == "[":
            end = text.find("]", i + 2)
            if end < 0:
                out.append(re.escape(char))
            else:
                body = text[i + 1 : end]
                body = "^" + body[1:] if body.startswith("!") else body
                out.append(f"[{body.replace(chr(92), chr(92) * 2)}]")
                i = end
        else:
            out.append(re.escape(char))
        i += 1
    return re.compile("".join(out) + r"\Z")


@dataclass(frozen=True)
class FileRules:
    """``include`` and ``exclude`` globs, relative to ``root`` (the policy's folder)."""

    root: str = "."
    include: tuple[str, ...] = ()
    exclude: tuple[str, ...] = ()

    def relative(self, path) -> str:
        """``path`` relative to ``root`` with ``/``; the bare name when it lies outside."""
        absolute = Path(os.path.abspath(path))
        try:
            return absolute.relative_to(Path(os.path.abspath(self.root))).as_posix()
        except ValueError:
            return absolute.name

    def passed_over(self, path) -> str | None:
        """Why the policy passes ``path`` over, or None when it is a Hamiltonian file to judge."""
        if not (self.include or self.exclude):
            return None
        relative = self.relative(path)
        for pattern in self.exclude:
            if compile_glob(pattern).match(relative):
                return f"excluded by files.exclude {pattern!r}"
        if self.include and not any(compile_glob(pattern).match(relative) for pattern in self.include):
            return "not under files.include"
        return None
