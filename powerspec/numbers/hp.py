"""High-precision certified scalars: python-flint balls (arb / acb) and exact rationals.

Every scalar that powerspec derives from a factor is one of

* an exact rational (``flint.fmpq``; integers included) -- kept exact;
* a real ball (``flint.arb``: midpoint and radius, the true value inside);
* a complex ball (``flint.acb``).

Balls come from python-flint (Arb ball arithmetic: F. Johansson, "Arb: efficient
arbitrary-precision midpoint-radius interval arithmetic", IEEE Trans. Computers
66(8), 2017), whose every operation returns a ball that contains the exact
result of the operation applied to any points of the input balls.  All work
happens at :data:`PREC` bits inside :func:`working`, so a caller's own flint
precision setting is left alone.

>>> with working():
...     r = cos2pi(Fraction(1, 9))
>>> abs(float(r.mid()) - 0.766044443118978) < 1e-15 and radius(r) < 1e-30
True
>>> cos2pi(Fraction(1, 6))                # rational cosines stay exact
1/2
"""

from __future__ import annotations

import contextlib
import math
from fractions import Fraction
from typing import Any, Union

import mpmath
from flint import acb, arb, ctx, fmpq, fmpz

PREC = 160
"""Working precision in bits of every high-precision step (about 48 decimal digits)."""

HP = Union[fmpq, arb, acb]  # noqa: UP007 - a runtime alias used in annotations and isinstance
"""A high-precision scalar: exact rational, real ball or complex ball."""


@contextlib.contextmanager
def working(prec: int = PREC):
    """Run flint arithmetic at ``prec`` bits, restoring the caller's precision afterwards."""
    with ctx.workprec(prec):
        yield


def rational(x: int | Fraction | float | fmpq) -> fmpq:
    """The exact rational value of an int, Fraction or finite float (binary value of a float).

    >>> rational(0.5), rational(Fraction(1, 3)), rational(7)
    (1/2, 1/3, 7)
    """
    if isinstance(x, fmpq):
        return x
    if isinstance(x, (int, fmpz)):
        return fmpq(int(x))
    if isinstance(x, Fraction):
        return fmpq(x.numerator, x.denominator)
    p, q = float(x).as_integer_ratio()
    return fmpq(p, q)


def is_exact(x: HP) -> bool:
    """True for exact rationals and for balls of radius zero."""
    if isinstance(x, fmpq):
        return True
    if isinstance(x, acb):
        return x.real.is_exact() and x.imag.is_exact()
    return x.is_exact()


def as_ball(x: HP) -> arb | acb:
    """The value as an arb/acb ball (exact rationals become balls at the working precision)."""
    if isinstance(x, fmpq):
        return arb(x)
    return x


def is_real(x: HP) -> bool:
    """True unless x is a complex ball whose imaginary part may be non-zero."""
    if isinstance(x, acb):
        return x.imag.is_zero()
    return True


def real_part(x: HP) -> fmpq | arb:
    """Real part (exact rationals stay exact)."""
    if isinstance(x, acb):
        return x.real
    return x


def radius(x: HP) -> float:
    """An upper bound (float, rounded up) on the ball's radius; 0.0 for exact values."""
    if isinstance(x, fmpq):
        return 0.0
    if isinstance(x, acb):
        return _up(float(x.real.rad()) + float(x.imag.rad()))
    return _up(float(x.rad()))


def contains(x: HP, v: float | complex | Fraction) -> bool:
    """True when the exact number ``v`` lies in the ball (or equals the rational)."""
    if isinstance(v, complex):
        return as_acb(x).contains(acb(rational(v.real), rational(v.imag)))
    if isinstance(x, fmpq):
        return x == rational(v)
    return x.contains(rational(v))


def as_acb(x: HP) -> acb:
    """The value as a complex ball."""
    if isinstance(x, acb):
        return x
    return acb(as_ball(x))


def _up(f: float) -> float:
    # float() of an arb radius rounds to nearest; one step up makes it an upper bound.
    return math.nextafter(f, math.inf) if f else 0.0


# ------------------------------------------------------------ closed-form helpers
_RATIONAL_COS = {0: fmpq(1), 2: fmpq(1, 2), 3: fmpq(0), 4: fmpq(-1, 2), 6: fmpq(-1)}
"""cos(2 pi t) for the rational values, keyed by 12 t (Niven's theorem)."""


def cos2pi(t: Fraction) -> fmpq | arb:
    """cos(2 pi t) for a rational t: exact when rational (Niven's theorem), else a ball.

    By Niven's theorem cos(2 pi t) is rational only when it is 0, +-1/2 or +-1,
    i.e. when the reduced denominator of t divides 4 or 6.  Symmetric values are
    exact negations of one another (cos(pi - x) = -cos x), so |value| classes
    of a spectrum are identical balls.  Integer arithmetic only (this runs once
    per eigenvalue of large cycles and paths).
    """
    t = Fraction(t)
    num, den = t.numerator % t.denominator, t.denominator
    a = min(num, den - num)  # cos(2 pi a/den), 0 <= a/den <= 1/2
    if (12 * a) % den == 0 and (12 * a) // den in _RATIONAL_COS:
        return _RATIONAL_COS[(12 * a) // den]
    if 4 * a > den:  # u > 1/4: cos(2 pi u) = -cos(2 pi (1/2 - u))
        return -arb.cos_pi_fmpq(fmpq(den - 2 * a, den))
    return arb.cos_pi_fmpq(fmpq(2 * a, den))


def sin2pi(t: Fraction) -> fmpq | arb:
    """sin(2 pi t) for a rational t: exact when rational, else a ball."""
    return cos2pi(Fraction(1, 4) - Fraction(t))


def root_of_unity(t: Fraction) -> fmpq | acb:
    """exp(2 pi i t) for a rational t; exact (a rational) when real and rational."""
    c, s = cos2pi(t), sin2pi(t)
    if isinstance(s, fmpq) and s == 0:
        return c
    return acb(as_ball(c), as_ball(s))


def sqrt_int(m: int) -> fmpq | arb:
    """sqrt(m) for an integer m >= 0: exact when m is a perfect square."""
    r = math.isqrt(m)
    if r * r == m:
        return fmpq(r)
    return arb(m).sqrt()


def nth_root(q: fmpq, n: int) -> fmpq | arb:
    """q^(1/n) for a positive rational q: exact when it is rational, else a ball.

    >>> nth_root(fmpq(8, 27), 3), nth_root(fmpq(2), 2).contains(arb(2).sqrt())
    (2/3, True)
    """
    q = rational(q) if not isinstance(q, fmpq) else q
    p, d = int(q.p), int(q.q)
    rp, rd = _iroot(p, n), _iroot(d, n)
    if rp is not None and rd is not None:
        return fmpq(rp, rd)
    return arb(q).root(n)


def _iroot(x: int, n: int) -> int | None:
    """The exact integer n-th root of x >= 0, or None when x is not an n-th power."""
    if x < 2:
        return x
    lo, hi = 0, 1 << (x.bit_length() // n + 1)
    while lo < hi:  # largest r with r**n <= x
        mid = (lo + hi + 1) // 2
        if mid**n <= x:
            lo = mid
        else:
            hi = mid - 1
    return lo if lo**n == x else None


# ------------------------------------------------------------------ conversions
def to_mpmath(x: HP) -> tuple[Any, Any]:
    """(midpoint, radius) as mpmath numbers (mpf / mpc midpoint, mpf radius rounded up)."""
    if isinstance(x, fmpq):
        return mpmath.mpf(int(x.p)) / int(x.q) if x.q != 1 else mpmath.mpf(int(x.p)), mpmath.mpf(0)
    if isinstance(x, acb):
        (mr, rr), (mi, ri) = to_mpmath(x.real), to_mpmath(x.imag)
        return mpmath.mpc(mr, mi), rr + ri
    m, e = x.mid().man_exp()
    r, re_ = x.rad().man_exp()
    return mpmath.ldexp(mpmath.mpf(int(m)), int(e)), mpmath.ldexp(mpmath.mpf(int(r)), int(re_))


def from_float(v: float | complex) -> fmpq | acb:
    """The exact value of a double (or a complex of doubles) as a high-precision scalar."""
    if isinstance(v, complex) and v.imag != 0:
        return acb(arb(rational(v.real)), arb(rational(v.imag)))
    return rational(v.real if isinstance(v, complex) else v)


def ball(mid: float, rad: float) -> fmpq | arb:
    """The real ball [mid - rad, mid + rad] (an exact rational when rad == 0)."""
    if rad == 0:
        return rational(mid)
    return arb(rational(mid)) + arb(0, rad)


def cball(mid: complex, rad: float) -> fmpq | arb | acb:
    """The complex disk of radius rad around mid, enclosed in a rectangle ball."""
    if mid.imag == 0:
        return ball(mid.real, rad)
    if rad == 0:
        return acb(arb(rational(mid.real)), arb(rational(mid.imag)))
    return acb(arb(rational(mid.real)) + arb(0, rad), arb(rational(mid.imag)) + arb(0, rad))


__all__ = ["HP", "PREC", "as_acb", "as_ball", "ball", "cball", "contains", "cos2pi", "from_float",
           "is_exact", "is_real", "nth_root", "radius", "rational", "real_part", "root_of_unity",
           "sin2pi", "sqrt_int", "to_mpmath", "working"]
