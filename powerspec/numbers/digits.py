"""Certified decimal text for numbers of any size: every printed digit is covered.

* Exact integers print in full (fast subquadratic conversion by FLINT), or in
  factored form (``3^1000000000 - 1``) when kept factored.
* Exact rationals and exact doubles print as the shortest decimal that reads
  back to the same double when they are doubles, else correctly rounded to
  :data:`MAX_DIGITS` significant digits.
* A ball (midpoint, radius) prints with as many significant digits as the
  radius covers: the last printed digit's unit u satisfies radius <= u / 2,
  so the printed number is within one unit of the last digit of the truth.
  :func:`ball_text` also returns the radius *of the printed number* (the
  ball's radius plus the rounding of its midpoint), so (text, radius) is
  again a rigorous ball.
* Numbers beyond the double range print in scientific notation
  (``5.24399703295529e+477121254``), which ``decimal.Decimal`` and
  ``mpmath.mpf`` read back.

>>> from flint import arb, fmpq
>>> ball_text(arb(2).sqrt())[0]           # at flint's default 53 bits
'1.414213562373095'
>>> ball_text(arb(2000000000) + arb(0, 2e-7))[0]
'2000000000.000000'
>>> ball_text(fmpq(1, 3))[0], ball_text(fmpq(-5, 4))[0]
('0.33333333333333333333', '-1.25')
>>> int_text(3**50)
'717897987691852588770249'
"""

from __future__ import annotations

import math
from fractions import Fraction

import mpmath
from flint import acb, arb, fmpq, fmpz

from powerspec.numbers.counts import BigCount
from powerspec.numbers.hp import HP, to_mpmath, working

MAX_DIGITS = 20
"""Most significant digits printed for a non-integer value."""

JSON_INT_DIGITS = 4000
"""Integers with more decimal digits are written as JSON strings (Python's json reads 4300)."""


def int_text(n: int | BigCount) -> str:
    """Exact decimal digits of an int (FLINT's fast conversion); factored form for a BigCount."""
    if isinstance(n, BigCount):
        return str(n)
    n = int(n)
    if n.bit_length() < 3000:
        return str(n)
    return str(fmpz(n))


def int_digits(n: int) -> int:
    """Number of decimal digits of |n| (exact)."""
    n = abs(int(n))
    if n < 10:
        return 1
    d = int(n.bit_length() * 0.30102999566398120)
    return d + 1 if fmpz(n) >= fmpz(10) ** d else d


def _float_text(x: float) -> str:
    r = repr(float(x))
    return r[:-2] if r.endswith(".0") else r


def real_text(x: HP) -> tuple[str, mpmath.mpf]:
    """(text, radius of the text as an mpmath number) for a real exact rational or arb ball."""
    with working(256):
        if isinstance(x, fmpq):
            p, q = int(x.p), int(x.q)
            if q == 1:
                return int_text(p), mpmath.mpf(0)
            if max(p.bit_length(), q.bit_length()) < 1000:
                f = p / q
                if math.isfinite(f) and f != 0 and fmpq(*f.as_integer_ratio()) == x:
                    # The shortest repr reads back to the same double, but its decimal value is
                    # in general not the double itself (17.998 is not 2 * fl(8.999)): the
                    # radius is the exact distance, 0 only when the digits are the value.
                    text = _float_text(f)
                    gap = abs(Fraction(text) - Fraction(p, q))
                    if not gap:
                        return text, mpmath.mpf(0)
                    with mpmath.workprec(64):
                        r = mpmath.mpf(gap.numerator) / gap.denominator
                        return text, r * (1 + mpmath.mpf(2) ** -50)
            return _rounded(arb(x), exact=True)
        if x.is_exact():
            m, e = x.mid().man_exp()
            if abs(int(e)) < 4096:
                return real_text(fmpq(int(m) * 2 ** max(int(e), 0), 2 ** max(-int(e), 0)))
            return _rounded(x, exact=True)
        return _rounded(x)


def _rounded(x: arb, exact: bool = False) -> tuple[str, mpmath.mpf]:
    with mpmath.workprec(320):
        mid, r = to_mpmath(x)
        if exact:
            r = mpmath.mpf(0)
        if mid == 0 or r >= abs(mid):
            # the ball contains 0: no digit of the midpoint is certain
            return "0", (r + abs(mid)) * (1 + mpmath.mpf(2) ** -50)
        e10 = int(mpmath.floor(mpmath.log10(abs(mid))))
        if r:
            q = int(mpmath.ceil(mpmath.log10(2 * r)))
            digits = max(min(e10 - q + 1, MAX_DIGITS), 1)
        else:
            digits = MAX_DIGITS
        text = _format(mid, digits, e10)
        if exact:
            text = _strip(text)
        total = (r + abs(mpmath.mpf(text) - mid)) * (1 + mpmath.mpf(2) ** -50)
        return text, +total


def _strip(text: str) -> str:
    """Drop trailing zeros of the fraction (for exact values they carry no information)."""
    mant, e, exp = text.partition("e")
    if "." in mant:
        mant = mant.rstrip("0").rstrip(".")
    return mant + (e + exp if e else "")


def _format(mid, digits: int, e10: int) -> str:
    if -5 <= e10 < 17:
        decimals = max(digits - 1 - e10, 0)
        scaled = mpmath.nint(mid * mpmath.mpf(10) ** decimals)
        s = int_text(int(scaled))
        neg = s.startswith("-")
        s = s.lstrip("-")
        if decimals:
            s = s.rjust(decimals + 1, "0")
            s = s[:-decimals] + "." + s[-decimals:]
        return ("-" if neg else "") + s
    s = mpmath.nstr(mid, digits, min_fixed=1, max_fixed=0, strip_zeros=False)
    mant, _, exp = s.partition("e")
    return f"{mant.rstrip('.')}e{int(exp):+d}"


def ball_text(x: HP) -> tuple[str, float]:
    """(text, radius of the printed value) for a real or complex scalar.

    Complex values print as ``a+bi`` with each part rounded on its own.
    """
    if isinstance(x, acb):
        if x.imag.is_zero():
            return real_text(x.real)
        (a, ra), (b, rb) = real_text(x.real), real_text(x.imag)
        sign = "" if b.startswith("-") else "+"
        return f"{a}{sign}{b}i", ra + rb
    return real_text(x)


def json_text(text: str) -> tuple[str, bool]:
    """(text, is_number) for JSON: a bare number when a standard parser reads it back finite and
    non-zero (integers up to :data:`JSON_INT_DIGITS` digits, reals within 1e-300..1e300 in
    magnitude), else a string (scientific notation or digits) that Decimal and mpmath read."""
    body = text.lstrip("-")
    if body.isdigit():
        return text, len(body) <= JSON_INT_DIGITS
    with mpmath.workprec(64):
        v = abs(mpmath.mpf(text))
    return text, v == 0 or mpmath.mpf("1e-300") < v < mpmath.mpf("1e300")


def mean_text(mu: float, sd: float) -> str:
    """A law's mean to six digits of its own size or of the spread, whichever is coarser (a mean of
    -5.6e-8 beside sigma = 44721 prints as 0): a description of the reference law, not a
    certified number.

    >>> mean_text(-5.55e-08, 44721.0), mean_text(22.2222222, 26.4), mean_text(231049060.1866, 1e4)
    ('0', '22.2222', '231049060.19')
    """
    unit = 1e-6 * sd
    if unit > 0 and abs(mu) < unit:
        return "0"
    digits = 6 if not sd > 0 else min(17, max(6, math.ceil(math.log10(abs(mu) / sd)) + 6))
    return f"{float(mu):.{digits}g}"


def radius_text(r) -> str:
    """A radius rounded up to two significant digits ("0" for exact values), any size."""
    with mpmath.workprec(64):
        r = mpmath.mpf(r)
        if r == 0:
            return "0"
        e = int(mpmath.floor(mpmath.log10(r)))
        m = mpmath.ceil(r / mpmath.mpf(10) ** e * 10) / 10
        if m >= 10:
            m, e = m / 10, e + 1
        return f"{float(m):.1f}e{e:+d}"


__all__ = ["JSON_INT_DIGITS", "MAX_DIGITS", "ball_text", "int_digits", "int_text",
           "json_text", "mean_text", "radius_text", "real_text"]
