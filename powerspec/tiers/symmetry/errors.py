"""The one exception type of the symmetry tier.

:class:`SymmetryError` is an :class:`~powerspec.errors.InputError` (hence a
``ValueError`` and a ``PowerspecError``), so the command line reports it as a
one-line user error.  Every message says what is wrong and what to do.

>>> issubclass(SymmetryError, ValueError)
True
"""

from __future__ import annotations

from powerspec.errors import InputError


class SymmetryError(InputError):
    """The symmetry tier cannot (or refuses to) answer for these operands."""
