"""What a command prints: its one error line when it refuses its input, its output when it succeeds."""

from __future__ import annotations

from click.testing import CliRunner

from integrity.cli import main


def one_error_line(runner, args) -> str:
    """The single stderr line of a refused command (exit 2, nothing on stdout, no traceback)."""
    result = runner.invoke(main, args)
    assert result.exit_code == 2, (result.exit_code, result.output)
    assert result.stdout == ""
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1, result.stderr
    assert "Traceback" not in result.stderr and "internal error" not in result.stderr
    return lines[0]


def succeeded(*args) -> str:
    """The stdout of a command that exits 0; arguments may be paths or numbers."""
    result = CliRunner().invoke(main, [str(a) for a in args])
    assert result.exit_code == 0, result.output
    return result.stdout
