"""The result cache: verdicts already reached, keyed by what decides them.

One SQLite file (the standard library's ``sqlite3``) in write-ahead-log mode,
so any number of runs may read it while one writes; a writer waits up to
``busy_seconds`` for another. An entry is keyed by

- the SHA-256 of the file's bytes (:func:`integrity.io.digest.file_digest`):
  a changed byte is a new key, a new modification time is not;
- the tool's version: a new release judges afresh;
- the digest of the settings that decide a verdict (checks chosen, limits,
  memory budget, engine, strictness, how foreign files are treated).

A hit returns the stored outcome without opening the file's data. Each stored
outcome carries the SHA-256 of its own text, checked on every read, so a
damaged entry is never trusted. A cache that cannot be used (not an SQLite
file, damaged, locked beyond the wait, in a folder that cannot be written)
is reported once through ``warn`` and bypassed: the run goes on, judging
every file.
"""

from __future__ import annotations

import hashlib
import json
import sqlite3
import time
from collections.abc import Callable
from typing import Any

from integrity._version import __version__

#: the layout of the database; another value is an incompatible cache, bypassed
CACHE_LAYOUT = 1
_SCHEMA = """
CREATE TABLE IF NOT EXISTS layout (version INTEGER NOT NULL);
CREATE TABLE IF NOT EXISTS verdicts (
    file_digest TEXT NOT NULL,
    tool_version TEXT NOT NULL,
    settings_digest TEXT NOT NULL,
    path TEXT NOT NULL,
    outcome TEXT NOT NULL,
    outcome_digest TEXT NOT NULL,
    stored REAL NOT NULL,
    PRIMARY KEY (file_digest, tool_version, settings_digest)
);
"""


def settings_digest(settings: dict[str, Any]) -> str:
    """SHA-256 of the settings as canonical JSON (sorted keys)."""
    text = json.dumps(settings, sort_keys=True, separators=(",", ":"))
    return "sha256:" + hashlib.sha256(text.encode()).hexdigest()


class ResultCache:
    """Verdicts stored in the SQLite file ``path``; ``warn`` receives one line per problem.

    ``get`` and ``put`` never raise for a cache problem: after the first
    one the cache is bypassed (``usable`` is False) for the rest of the run.
    """

    def __init__(self, path, *, warn: Callable[[str], None] = lambda line: None, busy_seconds: float = 10.0):
        self.path = str(path)
        self.warn = warn
        self.busy_seconds = busy_seconds
        self.usable = True
        self.hits = 0
        self.stored = 0
        self._connection: sqlite3.Connection | None = None
        self._rejected_entries = 0
        self._guard(self._open)

    def _open(self) -> None:
        connection = sqlite3.connect(self.path, timeout=self.busy_seconds, isolation_level=None)
        try:
            connection.execute("PRAGMA journal_mode=WAL")
            connection.execute("PRAGMA synchronous=NORMAL")
            connection.executescript(_SCHEMA)
            row = connection.execute("SELECT version FROM layout").fetchone()
            if row is None:
                connection.execute("INSERT INTO layout (version) VALUES (?)", (CACHE_LAYOUT,))
            elif row[0] != CACHE_LAYOUT:
                raise sqlite3.DatabaseError(f"layout {row[0]}, this version of integrity uses layout {CACHE_LAYOUT}")
        except BaseException:
            connection.close()
            raise
        self._connection = connection

    def _guard(self, action, *args):
        if not self.usable:
            return None
        try:
            return action(*args)
        except (sqlite3.Error, OSError) as err:
            self.usable = False
            self.close()
            self.warn(f"cache {self.path}: {_reason(err)}; checking without it (nothing is read from it or stored)")
            return None

    def get(self, file_digest: str, settings: str, path: str) -> dict[str, Any] | None:
        """The stored outcome for this content and these settings, or None."""
        row = self._guard(self._select, file_digest, settings)
        if row is None:
            return None
        stored_path, text, text_digest = row
        if hashlib.sha256(text.encode()).hexdigest() != text_digest:
            self._reject(f"the entry for {path} does not match its own digest (the cache file is damaged)")
            return None
        try:
            outcome = json.loads(text)
        except ValueError:
            self._reject(f"the entry for {path} is not JSON (the cache file is damaged)")
            return None
        self.hits += 1
        return {"stored_path": stored_path, "outcome": outcome}

    def _select(self, file_digest: str, settings: str):
        return self._connection.execute(
            "SELECT path, outcome, outcome_digest FROM verdicts"
            " WHERE file_digest = ? AND tool_version = ? AND settings_digest = ?",
            (file_digest, __version__, settings),
        ).fetchone()

    def put(self, file_digest: str, settings: str, path: str, outcome: dict[str, Any]) -> None:
        """Store an outcome (replacing an entry with the same key)."""
        text = json.dumps(outcome)  # key order kept: a warm report is the cold one, byte for byte
        self._guard(self._insert, file_digest, settings, path, text)

    def _insert(self, file_digest, settings, path, text) -> None:
        self._connection.execute(
            "INSERT OR REPLACE INTO verdicts VALUES (?, ?, ?, ?, ?, ?, ?)",
            (file_digest, __version__, settings, path, text, hashlib.sha256(text.encode()).hexdigest(), time.time()),
        )
        self.stored += 1

    def _reject(self, why: str) -> None:
        self._rejected_entries += 1
        if self._rejected_entries == 1:
            self.warn(f"cache {self.path}: {why}; such entries are ignored and the files judged afresh")

    def close(self) -> None:
        if self._connection is not None:
            try:
                self._connection.close()
            except sqlite3.Error:
                pass
            self._connection = None

    def __enter__(self) -> ResultCache:
        return self

    def __exit__(self, *exc) -> None:
        self.close()


def _reason(err: Exception) -> str:
    text = str(err)
    if "locked" in text or "busy" in text:
        return "locked by another process"
    if "not a database" in text or "malformed" in text or "layout" in text:
        return f"not a usable cache ({text})"
    if "unable to open" in text:
        return "cannot be opened (does its folder exist, and may it be written?)"
    return text
