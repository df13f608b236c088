"""Exceptions of suitmap.

Every message says what is wrong, where (file, variable or key) and what to
do about it, in one line.  The command-line interface prints ``str(error)``
and exits with ``error.exit_code``; no traceback unless ``--debug``.
"""

from __future__ import annotations


class SuitmapError(Exception):
    """Base class of every error suitmap raises on purpose."""

    exit_code = 2


class InputError(SuitmapError):
    """A climate input cannot be used (missing file, variable, units, years...)."""


class GridMismatch(InputError):
    """Two climate grids that must match do not."""


class ProfileError(SuitmapError):
    """An organism profile is invalid."""


class RunFileError(SuitmapError):
    """A run file is invalid."""


class OutputError(SuitmapError):
    """Outputs cannot be written (folder exists, not writable, ...)."""


class SuitmapWarning(UserWarning):
    """Something was repaired or assumed; the message says what."""
