"""The ``integrity`` command: one module per subcommand over the library, and their rendering."""

from integrity.cli.app import main

__all__ = ["main"]
