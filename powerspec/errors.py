"""Exception types raised by powerspec.

Every message is one line that says what is wrong and what to do.  The
command line turns any :class:`PowerspecError` into that line on stderr and
exit status 2; Python callers can catch the specific subclass.
"""

from __future__ import annotations


class PowerspecError(Exception):
    """Base class of every error powerspec raises on purpose."""


class InputError(PowerspecError, ValueError):
    """A matrix, argument or option is unusable (non-square, non-finite, ...)."""


class FactorFileError(InputError):
    """A factor file is missing, unreadable or malformed."""


class ExpressionError(InputError):
    """An expression string does not parse or names an unknown function.

    ``column`` is the 1-based column of the offending character (or None).
    """

    def __init__(self, message: str, column: int | None = None):
        self.column = column
        if column is not None:
            message = f"{message} (at column {column})"
        super().__init__(message)


class NotExactError(PowerspecError):
    """The requested spectrum is not an exact function of the factors' spectra."""


class SizeLimitError(PowerspecError):
    """The request would need more atoms, memory or digits than allowed."""


class SymbolicError(PowerspecError):
    """sympy could not produce the requested closed form within the guard."""
