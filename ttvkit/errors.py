"""Exception and warning types of ttvkit.

Every bad input ends in one of these, with a message that says what was
wrong, where (file, row, column) and what to do about it.  The command line
turns any :class:`TtvkitError` into one line on stderr and exit status 2.
"""

from __future__ import annotations

__all__ = [
    "TtvkitError",
    "InputError",
    "TimeStandardError",
    "EphemerisError",
    "MissingValueError",
    "ConvergenceError",
    "OutputExistsError",
    "TtvkitWarning",
    "TimeStandardWarning",
]


class TtvkitError(Exception):
    """Base class of every error ttvkit raises on purpose."""


class InputError(TtvkitError, ValueError):
    """A file or value could not be read or fails validation."""


class TimeStandardError(InputError):
    """A time standard is unknown, ambiguous or cannot be converted."""


class EphemerisError(InputError):
    """Epochs cannot be assigned or an ephemeris is malformed."""


class MissingValueError(InputError):
    """A value a formula needs was not given (names the value and the formula)."""


class ConvergenceError(TtvkitError, RuntimeError):
    """A fit or a sampler did not converge and convergence was required."""


class OutputExistsError(TtvkitError, FileExistsError):
    """An output exists and overwriting it was not asked for."""


class TtvkitWarning(UserWarning):
    """Base class of ttvkit's warnings."""


class TimeStandardWarning(TtvkitWarning):
    """A source's times look as if they were given in the wrong standard."""


def located(message: str, path: object = None, row: int | None = None,
            column: str | None = None) -> str:
    """Prefix ``message`` with where the problem is: ``file, row N, column 'c'``."""
    where = []
    if path is not None:
        where.append(str(path))
    if row is not None:
        where.append(f"row {row}")
    if column is not None:
        where.append(f"column '{column}'")
    return (", ".join(where) + ": " + message) if where else message
