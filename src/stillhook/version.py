"""The package version (one place; the emitted files and reports carry it)."""

__all__ = ["__version__"]

__version__ = "0.1.0"
