"""One invariant's entry -- {value, lower, upper, method} -- built from certified numbers.

``value`` is what the computation certifies: an exact int, count
(:class:`~powerspec.numbers.counts.BigCount`) or rational (``fmpq``), or an
arb ball (printed with only its covered digits); None when only a bracket or
nothing is available.  ``lower`` / ``upper`` are rigorous bounds taken from
the ball's ends and rounded *outward*: a float when the bound lies within the
double range (1e-300..1e300 in magnitude, or 0), else a string in scientific
notation rounded outward at 15 significant digits, which ``decimal.Decimal``
and ``mpmath.mpf`` read.  Never NaN or infinity.

>>> from flint import arb
>>> with working():
...     e = certified(arb(2).sqrt(), "demo")
>>> e["lower"] < 2 ** 0.5 <= e["upper"], e["method"]
(True, 'demo')
>>> with working():
...     up = outward(arb(10) ** 400, up=True)
>>> up
'1.00000000000001e+400'
"""

from __future__ import annotations

import math

from flint import arb, fmpq

from powerspec.numbers.counts import BigCount
from powerspec.numbers.hp import working

SCI_DIGITS = 15
"""Significant digits of the outward-rounded bounds written as strings."""


def entry(value=None, lower=None, upper=None, method: str = "") -> dict:
    """The entry dict (numbers already in output form)."""
    return {"value": value, "lower": lower, "upper": upper, "method": method}


def unavailable(reason: str) -> dict:
    """An entry with no number and the reason in its method."""
    return entry(method=reason)


def _exact_arb(x) -> arb:
    if isinstance(x, fmpq):
        return arb(x)
    if isinstance(x, BigCount):
        raise TypeError("counts are exact; no outward rounding needed")
    return arb(x)


def outward(x, up: bool):
    """A float or scientific-notation string bounding the exact number x from below (or above)."""
    with working():
        x = _exact_arb(x)
        x = x.upper() if up else x.lower()
        if x == 0:
            return 0.0
        mag = abs(x)
        if arb("1e-300") < mag < arb("1e300"):
            f = float(x)
            if up and arb(f) < x:
                f = math.nextafter(f, math.inf)
            elif not up and arb(f) > x:
                f = math.nextafter(f, -math.inf)
            return f
        return _sci(x, up)


def _whole(x: arb) -> int:
    """The integer value of an exact integral arb."""
    return int(x.unique_fmpz())


def _sci(x: arb, up: bool) -> str:
    """Decimal text d.ddd...e+N bounding the exact x from the wanted side."""
    neg = x < 0
    mag = -x if neg else x
    toward_large = up != neg  # rounding the magnitude up
    with working():
        lg = mag.log() / arb(10).log()
        if not abs(lg.mid()) < 1e15:  # the mantissa is beyond 160-bit reach: a power of ten
            return _power_text(lg, toward_large, neg)
        e10 = _whole(lg.mid().floor())
        mant = mag / arb(10) ** e10 * arb(10) ** (SCI_DIGITS - 1)
        digits = _whole(mant.upper().ceil()) if toward_large else _whole(mant.lower().floor())
    s = str(digits)
    e10 += len(s) - SCI_DIGITS
    text = f"{s[0]}.{s[1:]}e{e10:+d}"
    return "-" + text if neg else text


def _power_text(lg: arb, toward_large: bool, neg: bool) -> str:
    """'1e+N' bounding 10^lg from above (toward_large) or below, with the sign."""
    with working():
        e = _whole(lg.upper().ceil()) if toward_large else _whole(lg.lower().floor())
    return ("-" if neg else "") + f"1e{e:+d}"


def certified(value, method: str) -> dict:
    """The entry of a certified number: exact (int, BigCount, fmpq) or an arb ball."""
    if isinstance(value, (int, BigCount)) and not isinstance(value, bool):
        return entry(value, value, value, method)
    if isinstance(value, fmpq):
        if value.q == 1:
            v = int(value.p)
            return entry(v, v, v, method)
        return entry(value, outward(value, False), outward(value, True), method)
    if not value.is_finite():
        return unavailable(method + "; not available: the ball is not finite")
    if value.is_exact():
        man, exp = value.mid().man_exp()
        man, exp = int(man), int(exp)
        if abs(exp) < 4096:
            return certified(fmpq(man * 2 ** max(exp, 0), 2 ** max(-exp, 0)), method)
    return entry(value, outward(value, False), outward(value, True), method)


TIGHT = 1e-3
"""A bracket whose relative width is below this also gets the ball spanning it as its value."""


def bracket(lower: arb | None, upper: arb | None, method: str) -> dict:
    """The entry of a rigorous bracket; its value is the ball spanning it when that is tight."""
    ok_lo = lower is not None and lower.is_finite()
    ok_hi = upper is not None and upper.is_finite()
    value = None
    with working():
        if ok_lo and ok_hi:
            lo, hi = lower.lower(), upper.upper()
            span = lo.union(hi)
            if span.rad() <= TIGHT * abs(span.mid()):
                value = span
    return entry(value, outward(lower, False) if ok_lo else None,
                 outward(upper, True) if ok_hi else None, method)


__all__ = ["SCI_DIGITS", "TIGHT", "bracket", "certified", "entry", "outward", "unavailable"]
