"""The supported ranges of every number a user can write, and the caps on expression size.

One table, checked at parse time (expressions) and at option parsing (the
command line) before any work, so that a request outside them is refused in
one line instead of hanging, overflowing or running out of memory:

=====================  =======================================  ==================================
what                   range                                    why
=====================  =======================================  ==================================
copies ``G^k``         1 <= k <= 10^18 (:data:`MAX_COPIES`)     exponents the engine and the law
                                                                tier answer without enumerating
left-fold copies       <= 10^4 (:data:`MAX_FOLD_COPIES`)        a non-associative ``mix`` costs
                                                                one combination per copy
weights, coefficients  0 or 1e-100 <= abs(c) <= 1e100           products of three inputs stay
                       (:data:`REAL_MIN`, :data:`REAL_MAX`)     normal doubles: no overflow, no
                                                                underflow to 0 or NaN
a point x, a, b        any finite double (0 or normal)          a value on the spectrum's axis
quantile level q       0 < q < 1, normal double                 a probability
tolerance ``--tol``    1e-12 <= tol < 1                         below 1e-12 no tier can certify
heat time ``--time``   0 <= t <= 1e6                            exp(-t lambda) stays meaningful
``-m``                 1 <= m <= 10^5 (:data:`MAX_M`)           what can reasonably be printed
``--limit``            1 <= N <= 10^8 (:data:`MAX_LIMIT`)       distinct values that fit in memory
``--bins``             1 <= N <= 10^4                           a readable histogram
factor entries         <= 10^7 stored entries per family        memory of the sparse adjacency
                       factor (:data:`MAX_FAMILY_ENTRIES`)
number literals        <= 1000 characters                       exact parsing stays cheap
expression text        <= 100,000 characters                    parsing stays linear
nesting                <= 50 levels of calls and lists          no recursion-limit crash
operands               <= 256 distinct operands per product     cost grows with operands
                       function, <= 1024 distinct factors
=====================  =======================================  ==================================

Numbers are read exactly (:func:`read_number`): integers as ``int``, every
other literal -- decimals, exponents, fractions such as ``1/50`` or ``-3/4`` --
as a :class:`fractions.Fraction`; range checks are made on the exact value, and
a real reaches the factor layer as the nearest double (``float(Fraction)`` is
correctly rounded).

Errors echo at most :data:`ECHO_CHARS` characters of the offending text.
"""

from __future__ import annotations

import re
import sys
from fractions import Fraction

from powerspec.errors import ExpressionError, SizeLimitError
from powerspec.factors.matrix import clip

MAX_COPIES = 10**18
"""Largest number of copies ``k`` in ``G^k`` (and of merged equal operands)."""

MAX_FOLD_COPIES = 10**4
"""Largest total number of copies in a non-associative ``mix`` (a left fold)."""

REAL_MIN = Fraction(1, 10**100)
"""Smallest non-zero magnitude of a weight or a ``mix`` coefficient."""

REAL_MAX = Fraction(10**100)
"""Largest magnitude of a weight or a ``mix`` coefficient."""

DOUBLE_MAX = Fraction(sys.float_info.max)
"""Largest finite double: the range of points x, a, b."""

DOUBLE_MIN = Fraction(sys.float_info.min)
"""Smallest normal double: non-zero values below it would lose precision or vanish."""

TOL_MIN = Fraction(1, 10**12)
"""Smallest ``--tol`` (wanted bound width on a fraction of eigenvalues)."""

TIME_MAX = 10**6
"""Largest heat-kernel time ``--time``."""

MAX_M = 10**5
"""Largest ``-m`` (distinct extreme eigenvalues printed by ``top``)."""

MAX_LIMIT = 10**8
"""Largest ``--limit`` (distinct eigenvalues an exact answer may hold)."""

MAX_BINS = 10**4
"""Largest ``--bins`` of a plot."""

MAX_FAMILY_ENTRIES = 10**7
"""Largest number of stored matrix entries of one family factor (P, C, K, J, dicycle)."""

MAX_NUMBER_CHARS = 1000
"""Longest number literal (digits, point, exponent, sign)."""

MAX_EXPRESSION_CHARS = 100_000
"""Longest expression text."""

MAX_DEPTH = 50
"""Deepest nesting of calls and lists in an expression."""

MAX_OPERANDS = 256
"""Most distinct operands (after merging equal ones) in one product function."""

MAX_FACTORS = 1024
"""Most distinct factors (leaves) in one expression."""

ECHO_CHARS = 40
"""Most characters of offending text an error message repeats."""


class ExpressionLimitError(ExpressionError, SizeLimitError):
    """An expression is over one of the caps above; both an ExpressionError and a SizeLimitError.

    >>> issubclass(ExpressionLimitError, SizeLimitError)
    True
    """


def echo(text: str) -> str:
    """The offending text as shown in a message: quoted, at most :data:`ECHO_CHARS` characters.

    >>> echo("1" * 400)
    "'1111111111111111111111111111111111111...' (400 characters)"
    >>> echo("C(5)")
    "'C(5)'"
    """
    return clip(text, ECHO_CHARS)


# ------------------------------------------------------------------ numbers

_NUMBER = re.compile(r"([+-]?)([0-9]*)(?:\.([0-9]*))?(?:[eE]([+-]?[0-9]+))?", re.ASCII)
_EXP_GUARD = 2 * MAX_NUMBER_CHARS + 400
"""A decimal exponent past this puts any literal of allowed length far outside every range."""


def read_number(text: str, column: int | None = None) -> int | Fraction:
    """The exact value of a number literal: ``int`` for whole numbers, else ``Fraction``.

    Accepts ``12``, ``-3``, ``0.25``, ``1e-3``, ``+.5E2`` and fractions
    ``p/q`` of two such literals (the sign only on ``p``).  Raises
    ExpressionError (with ``column``) for anything else, a zero denominator,
    a literal longer than :data:`MAX_NUMBER_CHARS`, or a decimal exponent so
    large that the value is out of every supported range.

    >>> read_number("1/50"), read_number("-3/4"), read_number("2.5e1"), read_number("1e3")
    (Fraction(1, 50), Fraction(-3, 4), 25, 1000)
    """
    if not isinstance(text, str):
        raise ExpressionError(f"expected a number, got {type(text).__name__}", column)
    text = text.strip()
    if len(text) > MAX_NUMBER_CHARS:
        raise ExpressionError(
            f"number {echo(text)} is too long: at most {MAX_NUMBER_CHARS} characters", column)
    num, slash, den = text.partition("/")
    value = _read_decimal(num.strip(), text, column, signed=True)
    if slash:
        d = _read_decimal(den.strip(), text, column, signed=False)
        if d == 0:
            raise ExpressionError(f"division by zero in {echo(text)}", column)
        value = Fraction(value) / d
    if isinstance(value, Fraction) and value.denominator == 1:
        return int(value)
    return value


def _read_decimal(part: str, whole: str, column: int | None, signed: bool) -> int | Fraction:
    m = _NUMBER.fullmatch(part)
    if not m or not (m.group(2) or m.group(3)) or (m.group(1) and not signed):
        raise ExpressionError(f"{echo(whole)} is not a number", column)
    sign, ip, fp, ex = m.groups()
    exp = int(ex) if ex else 0
    digits = (ip or "") + (fp or "")
    if digits.strip("0") == "":
        return 0
    if abs(exp) > _EXP_GUARD:
        side = "large" if exp > 0 else "small"
        raise ExpressionError(f"number {echo(whole)} is too {side} for any supported range", column)
    mant = int(digits) * (-1 if sign == "-" else 1)
    scale = exp - len(fp or "")
    return Fraction(mant * 10**scale) if scale >= 0 else Fraction(mant, 10**-scale)


def _show(value: int | Fraction) -> str:
    """Short display of an exact value for messages (never its full digits).

    >>> _show(Fraction(10**400)), _show(Fraction(-1, 10**400)), _show(Fraction(1, 3))
    ('a number above 1.8e308', 'a number below 2.2e-308 in magnitude', '0.333')
    """
    if isinstance(value, int) and abs(value) < 10**15:
        return str(value)
    if abs(value) > DOUBLE_MAX:
        return "a number above 1.8e308" if value > 0 else "a number below -1.8e308"
    if value != 0 and abs(value) < DOUBLE_MIN:
        return "a number below 2.2e-308 in magnitude"
    return f"{float(value):.3g}"


def check_real(value: int | Fraction, what: str, column: int | None = None, *,
               text: str | None = None, lo: Fraction = REAL_MIN, hi: Fraction = REAL_MAX) -> float:
    """The nearest double to ``value`` after checking ``value == 0 or lo <= |value| <= hi``.

    Raises ExpressionError naming the range otherwise; the message shows
    ``text`` (the literal as written, clipped) or a short form of the value.

    >>> check_real(Fraction(1, 50), "the weight")
    0.02
    >>> check_real(Fraction(10**400), "the weight", text="1e400")  # doctest: +ELLIPSIS
    Traceback (most recent call last):
    ...
    powerspec.errors.ExpressionError: the weight '1e400' is out of range: give 0 or a magnitude ...
    """
    if value != 0 and not (lo <= abs(value) <= hi):
        shown = echo(text) if text is not None else _show(value)
        raise ExpressionError(
            f"{what} {shown} is out of range: give 0 or a magnitude between "
            f"{_sci(lo)} and {_sci(hi)}", column)
    return float(value)


def _sci(x: Fraction) -> str:
    """'1e-100' for a bound of the table (a power of ten), else the double's repr.

    >>> _sci(REAL_MIN), _sci(REAL_MAX), _sci(Fraction(3, 2))
    ('1e-100', '1e100', '1.5')
    """
    if _is_power_of_ten(x):
        return f"{float(x):.0e}".replace("e+", "e")
    return repr(float(x))


def _is_power_of_ten(x: Fraction) -> bool:
    n, d = x.numerator, x.denominator
    return (n == 1 and str(d).rstrip("0") == "1") or (d == 1 and str(n).rstrip("0") == "1")


def check_copies(k: int, what: str = "the power", column: int | None = None) -> int:
    """``k`` after checking ``1 <= k <= MAX_COPIES``; ExpressionLimitError beyond.

    >>> check_copies(10**18)
    1000000000000000000
    """
    if k < 1:
        raise ExpressionError(f"{what} must be at least 1, got {_show(k)}", column)
    if k > MAX_COPIES:
        raise ExpressionLimitError(
            f"{what} {echo(str(k))} is out of range: copies must be between 1 and 10^18", column)
    return k


__all__ = [
    "DOUBLE_MAX", "DOUBLE_MIN", "ECHO_CHARS", "MAX_BINS", "MAX_COPIES", "MAX_DEPTH",
    "MAX_EXPRESSION_CHARS", "MAX_FACTORS", "MAX_FAMILY_ENTRIES", "MAX_FOLD_COPIES", "MAX_LIMIT",
    "MAX_M", "MAX_NUMBER_CHARS", "MAX_OPERANDS", "REAL_MAX", "REAL_MIN", "TIME_MAX", "TOL_MIN",
    "ExpressionLimitError", "check_copies", "check_real", "echo", "read_number",
]
