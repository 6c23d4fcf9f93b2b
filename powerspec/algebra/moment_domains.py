"""The two scalar domains the moment engine runs in: exact rationals and certified balls.

The same recurrences (Cartesian exponential generating functions, powers of
the linearisation, word expansions) run over

* :data:`EXACT` -- Python ``Fraction`` values, exact; every power is checked
  against :data:`MAX_DIGITS` *before* it is formed (SizeLimitError), so a
  moment of ``direct(G^(10^9))`` is refused up front instead of growing a
  billion-digit integer;
* :data:`BALL` -- python-flint ``arb`` balls at 160 bits (certified, any
  size: x^k for k = 10^18 costs a few squarings), for callers that need
  rigorous numbers rather than exact ones (the invariants' bounds).

>>> EXACT.power(EXACT.of(Fraction(3, 2)), 3)
Fraction(27, 8)
>>> with working():
...     b = BALL.power(BALL.of(Fraction(3, 2)), 10**9)
>>> 176091259 < float(b.log() / arb(10).log()) < 176091260
True
"""

from __future__ import annotations

import math
from fractions import Fraction

from flint import arb

from powerspec.errors import SizeLimitError
from powerspec.numbers.hp import working

MAX_DIGITS = 1_000_000
"""Largest number of decimal digits of any exact result or intermediate."""

MAX_BITS = int(MAX_DIGITS * math.log2(10)) + 1


def bits_of(x: Fraction) -> int:
    """Bits of the larger of numerator and denominator."""
    return max(abs(x.numerator).bit_length(), x.denominator.bit_length())


def guard(bits: float, what: str) -> None:
    """Raise SizeLimitError when an exact number would have more than MAX_DIGITS digits."""
    if bits > MAX_BITS:
        digits = int(bits * math.log10(2)) + 1
        raise SizeLimitError(
            f"{what} would have about {digits} digits, over the limit of {MAX_DIGITS}; "
            "ask for a lower --order or fewer copies (Cartesian powers stay small per vertex)")


class ExactDomain:
    """Exact rational arithmetic with size checks before every power."""

    name = "exact"

    @staticmethod
    def of(x) -> Fraction:
        """The domain value of an int or Fraction."""
        return Fraction(x)

    @staticmethod
    def power(x: Fraction, k: int, what: str = "a moment of a power") -> Fraction:
        """x^k exactly; SizeLimitError before forming more than MAX_DIGITS digits."""
        if x == 0 or abs(x) == 1 or k == 0:
            return x**k
        guard(k * bits_of(x), what)
        return x**k


class BallDomain:
    """Certified arb balls at the working precision (160 bits); no size limit."""

    name = "ball"

    @staticmethod
    def of(x) -> arb:
        """The domain value (an exact ball) of an int, Fraction or arb."""
        if isinstance(x, arb):
            return x
        x = Fraction(x)
        with working():
            return arb(x.numerator) / x.denominator

    @staticmethod
    def power(x: arb, k: int, what: str = "") -> arb:
        """x^k as a certified ball (binary powering)."""
        with working():
            return x**k


def affine_moments(d, t: list, c, f) -> list:
    """tau of (c I + f M)^p from tau of M^p (binomial theorem) in domain d; c, f Fractions or values.

    >>> affine_moments(EXACT, [Fraction(1), Fraction(0), Fraction(2)], 1, 3)
    [Fraction(1, 1), Fraction(1, 1), Fraction(19, 1)]
    """
    c, f = d.of(c), d.of(f)
    out = []
    for p in range(len(t)):
        s = d.of(0)
        for j in range(p + 1):
            s = s + math.comb(p, j) * c ** (p - j) * f**j * t[j]
        out.append(s)
    return out


EXACT = ExactDomain()
BALL = BallDomain()

__all__ = ["BALL", "EXACT", "MAX_BITS", "MAX_DIGITS", "BallDomain", "ExactDomain", "affine_moments",
           "bits_of", "guard"]
