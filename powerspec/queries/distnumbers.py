"""The distribution queries' numbers in and out: checked points and levels, outward rounding.

Inputs: a point must be a finite real (:func:`check_real`), a quantile level
the exact rational the user wrote (:func:`decimal_level`).  Outputs: bounds
rounded outward to floats (:func:`round_down`, :func:`round_up`) and
fractions of the order scaled to counts (:func:`scale_count`: exact integers,
or outward-rounded mpmath numbers for enormous orders).

>>> round_down(Fraction(1, 3)) < Fraction(1, 3) < round_up(Fraction(1, 3))
True
"""

from __future__ import annotations

import math
from fractions import Fraction

import mpmath
import numpy as np
from flint import arb, fmpq

from powerspec.errors import InputError
from powerspec.numbers.counts import to_arb, working

COUNT_INT_BITS = 100_000
"""Orders up to this many bits give exact-integer count bounds; larger give mpmath numbers."""


def check_real(x, what: str) -> float:
    """x as a float, or InputError naming ``what`` when it is not a finite real number."""
    if isinstance(x, bool) or not isinstance(x, (int, float, np.integer, np.floating)):
        raise InputError(f"{what} must be a real number, got {x!r}")
    x = float(x)
    if not math.isfinite(x):
        raise InputError(f"{what} must be finite, got {x!r}")
    return x


def decimal_level(q) -> Fraction:
    """The quantile level as the exact rational the user wrote (0.1 -> 1/10), checked in (0, 1).

    Floats are read as their shortest decimal representation, so 0.1 means 1/10.

    >>> decimal_level(0.1), decimal_level("3/8"), decimal_level(Fraction(1, 3))
    (Fraction(1, 10), Fraction(3, 8), Fraction(1, 3))
    """
    bad = InputError(f"the quantile level must lie strictly between 0 and 1, got {q!r}")
    if isinstance(q, bool):
        raise bad
    try:
        if isinstance(q, (float, np.floating)):
            if not math.isfinite(float(q)):
                raise bad
            f = Fraction(repr(float(q)))
        elif isinstance(q, (int, np.integer, Fraction)):
            f = Fraction(q)
        elif isinstance(q, str):
            f = Fraction(q.strip())
        elif hasattr(q, "as_integer_ratio"):  # decimal.Decimal and friends: their exact value
            f = Fraction(*q.as_integer_ratio())
        else:
            raise bad
    except (ValueError, ZeroDivisionError, OverflowError) as exc:
        raise bad from exc
    if not 0 < f < 1:
        raise bad
    return f


def float_up(f: Fraction) -> float:
    """The smallest float >= f (so that for floats v: v >= f <=> v >= float_up(f))."""
    v = float(f)
    return v if Fraction(v) >= f else math.nextafter(v, math.inf)


def round_down(v) -> float:
    """The largest float <= v (exact Fractions are rounded outward)."""
    f = float(v)
    return f if not isinstance(v, Fraction) or Fraction(f) <= v else math.nextafter(f, -math.inf)


def round_up(v):
    """The smallest float >= v (an mpmath number is kept when below the double range)."""
    if isinstance(v, mpmath.mpf):
        f = float(v)
        return v if (f == 0 and v != 0) else (f if f >= v else math.nextafter(f, math.inf))
    f = float(v)
    return f if not isinstance(v, Fraction) or Fraction(f) >= v else math.nextafter(f, math.inf)


def bound_width(b) -> float:
    return float(np.ravel(b[2])[0]) - float(np.ravel(b[1])[0])


def exact_rational(frac) -> Fraction:
    """The exact rational value of a float, an mpmath number or a Fraction."""
    if isinstance(frac, mpmath.mpf):
        man, exp = frac.man_exp
        return Fraction(int(man) << int(exp)) if exp >= 0 else Fraction(int(man), 1 << -int(exp))
    return Fraction(frac)


def scale_count(n, frac, kind: str):
    """n * frac as a count: exact int (ceil / floor for the lower / upper bound), or for
    enormous orders an mpmath number rounded outward from a certified ball.

    >>> scale_count(10**30, 1e-28, "hi")   # the double nearest 1e-28 lies just below it
    99
    >>> scale_count(2**100, mpmath.mpf(2) ** -95, "lo"), scale_count(2**100, 0.25, "hi")
    (32, 316912650057057350374175801344)
    """
    v = exact_rational(frac)
    if isinstance(n, int) and n.bit_length() <= COUNT_INT_BITS:
        v *= n
        if kind == "lo":
            return max(0, math.ceil(v))
        if kind == "hi":
            return min(n, math.floor(v))
        return float(v) if n.bit_length() <= 1000 else mpmath.mpf(v.numerator) / v.denominator
    with working():
        ball = to_arb(n) * arb(fmpq(v.numerator, v.denominator))
        end = ball.lower() if kind == "lo" else ball.upper() if kind == "hi" else ball.mid()
        man, exp = end.man_exp()
    rnd = {"lo": "d", "hi": "u"}.get(kind, "n")
    r = mpmath.mpf(mpmath.libmp.from_man_exp(int(man), int(exp), mpmath.mp.prec, rnd))
    # counts are integers: the bounds tighten to them
    return mpmath.ceil(r) if kind == "lo" else mpmath.floor(r) if kind == "hi" else r


__all__ = ["COUNT_INT_BITS", "bound_width", "check_real", "decimal_level", "exact_rational",
           "float_up", "round_down", "round_up", "scale_count"]
