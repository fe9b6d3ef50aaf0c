"""All fescan exceptions and warnings, in one place.

Every error that bad input can cause is a :class:`FescanError`; subclasses also
inherit the builtin a caller would expect (``ValueError``, ``KeyError``,
``FileNotFoundError``), so ``except ValueError`` keeps working.
"""

from __future__ import annotations

__all__ = [
    "FescanError",
    "StructureFileError",
    "StructureNotFound",
    "EmptyStructureError",
    "CoordinateError",
    "CofactorNotFound",
    "NoRelayPath",
    "ConfigError",
    "FescanWarning",
    "IncompleteClusterWarning",
]


class FescanError(Exception):
    """Base class of every error fescan raises on purpose."""


class StructureFileError(FescanError, ValueError):
    """A structure file is unreadable, malformed or not a structure at all."""


class StructureNotFound(StructureFileError, FileNotFoundError):
    """The path does not exist or is not a regular file."""


class EmptyStructureError(StructureFileError):
    """The file parses but holds no models or no atoms (in the chosen model)."""


class CoordinateError(StructureFileError):
    """Coordinates are missing, not numbers, or not finite (NaN/inf)."""


class CofactorNotFound(FescanError, KeyError):
    """A cofactor the user named (``CHAIN/RESNUM``) is not in the structure."""

    def __str__(self) -> str:  # KeyError would otherwise repr() the message
        return str(self.args[0]) if self.args else ""


class NoRelayPath(FescanError):
    """No chain of hops connects the chosen entry and exit cofactors."""


class ConfigError(FescanError, ValueError):
    """An option or a user parameter file (TOML) is invalid."""


class FescanWarning(UserWarning):
    """Base class of fescan warnings (repairable problems)."""


class IncompleteClusterWarning(FescanWarning):
    """A cluster is missing atoms but was still analysed."""
