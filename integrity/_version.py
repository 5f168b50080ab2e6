"""The version, written once (read by the build through ``pyproject.toml``)."""

__version__ = "0.2.0"
