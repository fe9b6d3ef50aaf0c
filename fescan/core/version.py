"""The package version (one place; the package face and the reports read it)."""

__version__ = "0.2.0"
