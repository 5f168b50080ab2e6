"""Where the repository's own files are, for tests that read them."""

from __future__ import annotations

from pathlib import Path

REPOSITORY = Path(__file__).resolve().parents[2]
FIXTURES = REPOSITORY / "fixtures"
GOOD = FIXTURES / "good"
DAMAGED = FIXTURES / "damaged"
SCHEMAS = REPOSITORY / "schemas"
