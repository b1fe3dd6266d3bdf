"""Exception hierarchy shared by every stage of confirm.

The command line turns any :class:`ConfirmError` into a one-line message and
exit code 2; any other exception is a bug and exits 3.
"""

from __future__ import annotations

__all__ = [
    "ConfirmError",
    "InputError",
    "FileFormatError",
    "ChemistryError",
    "FitError",
]


class ConfirmError(Exception):
    """Base class of every error the user can cause and fix."""


class InputError(ConfirmError, ValueError):
    """A parameter or argument has a value that is not allowed."""


class FileFormatError(ConfirmError):
    """A file is missing, unreadable, truncated or not of a supported kind."""


class ChemistryError(ConfirmError):
    """A structure cannot be handled (unparsable, unsupported atoms, radicals...)."""


class FitError(ConfirmError):
    """A spectrum cannot be fitted (no signal, no candidates, diverged)."""
