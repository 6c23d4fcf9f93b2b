"""Applying a combination rule to eigenvalue vectors, once for every number domain.

The same few functions run in the exact domain
(:class:`~powerspec.numbers.rationals.Rationals`) and in the certified-ball
domain (:class:`~powerspec.numbers.balls.Balls`), as mpmath runs one algorithm
in several contexts: they only call ``add``, ``mul``, ``mul_int``, ``take``
and ``neg`` of the value arrays.  Exact vectors stay exact until their
numbers grow past :data:`~powerspec.numbers.rationals.MAX_BITS`, then move to
balls (certified); a vector never moves the other way.

>>> from powerspec.algebra.kinds import STRONG
>>> x = Rationals.from_ints([1, 2])
>>> apply(STRONG, x, x).to_fractions()                 # x + y + xy
[Fraction(3, 1), Fraction(8, 1)]
>>> self_power(STRONG, Rationals.from_ints([2]), np.array([0, 1, 3])).to_fractions()  # (1+2)^c - 1
[Fraction(0, 1), Fraction(2, 1), Fraction(26, 1)]
"""

from __future__ import annotations

from fractions import Fraction

import numpy as np

from powerspec.algebra.kinds import Combination
from powerspec.numbers.balls import Balls
from powerspec.numbers.convert import rationals_to_balls
from powerspec.numbers.rationals import MAX_BITS, Rationals

Vec = Rationals | Balls


def const(like: Vec, q: Fraction) -> Vec:
    """The exact rational q as a one-element vector in the domain of ``like``.

    A domain may supply its own constructor (``like.const(q)``); the exact and
    ball domains are built here.
    """
    own = getattr(like, "const", None)
    if callable(own):
        return own(Fraction(q))
    r = Rationals.from_fractions([Fraction(q)])
    return r if isinstance(like, Rationals) else rationals_to_balls(r)


def settle(x: Vec) -> Vec:
    """Move an exact vector whose numbers grew too large to certified balls."""
    if isinstance(x, Rationals) and x.wider_than(MAX_BITS):
        return rationals_to_balls(x)
    return x


def unify(x: Vec, y: Vec) -> tuple[Vec, Vec]:
    """Both vectors in one domain (balls if either is)."""
    if isinstance(x, Balls) and isinstance(y, Rationals):
        return x, rationals_to_balls(y)
    if isinstance(x, Rationals) and isinstance(y, Balls):
        return rationals_to_balls(x), y
    return x, y


def scale_shift(x: Vec, shift: Fraction, factor: Fraction) -> Vec:
    """shift + factor * x, exact in the exact domain, certified in the ball domain."""
    out = x
    if factor != 1:
        out = out.mul(const(x, factor))
    if shift != 0:
        out = out.add(const(x, shift))
    return settle(out)


def apply(comb: Combination, x: Vec, y: Vec) -> Vec:
    """Elementwise x o y = a(x + y) + b x y (one-element vectors broadcast)."""
    x, y = unify(x, y)
    a, b = comb.a, comb.b
    if b == 0:
        s = x.add(y)
        return settle(s if a == 1 else s.mul(const(x, a)))
    p = x.mul(y)
    if b != 1:
        p = p.mul(const(x, b))
    if a == 0:
        return settle(p)
    s = x.add(y)
    if a != 1:
        s = s.mul(const(x, a))
    out = settle(s.add(p))
    if a == 1 and isinstance(out, Balls):
        # x + y + bxy cancels when the linearised value (1 + bx)(1 + by) is small against its
        # factors; the product form cancels when x o y is small against 1.  Both balls are
        # rigorous, so each element keeps the tighter one.
        one = const(x, Fraction(1))
        sx = one.add(x if b == 1 else x.mul(const(x, b)))
        sy = one.add(y if b == 1 else y.mul(const(x, b)))
        alt = sx.mul(sy).sub(one)
        if b != 1:
            alt = alt.mul(const(x, 1 / b))
        out = tighter(out, alt)
    return out


def tighter(u: Balls, v: Balls) -> Balls:
    """Elementwise the ball with the smaller absolute radius (both contain the value)."""
    with np.errstate(divide="ignore"):
        ru = np.where(u.rad > 0, np.log2(u.rad) + u.exp, -np.inf)
        rv = np.where(v.rad > 0, np.log2(v.rad) + v.exp, -np.inf)
    mask = rv < ru
    if not np.any(mask):
        return u
    return _where(mask, v, u)


def self_power(comb: Combination, x: Vec, c: np.ndarray) -> Vec:
    """x o x o ... o x (c_i copies; c_i = 0 gives the identity) elementwise, for associative rules.

    Cartesian: c x.  a = 0: b^(c-1) x^c.  a = 1: ((1 + bx)^c - 1)/b, computed by
    binary powering with the rule itself so small x never cancel against 1.
    """
    c = np.asarray(c, dtype=np.int64)
    n = c.shape[0]
    xs = x if len(x) == n else x.take(np.zeros(n, dtype=np.int64))
    if comb.mode == "add":
        return settle(xs.mul_int(c))
    if comb.mode == "zero":
        raise ValueError("the zero rule has no powers")
    e = comb.identity()
    if comb.a == 0:
        bx = xs if comb.b == 1 else xs.mul(const(x, comb.b))
        p = bx.pow_int(c)
        if comb.b != 1:
            p = p.mul(const(x, 1 / comb.b))
        return settle(p)
    res = const(x, e).take(np.zeros(n, dtype=np.int64))
    base, k = xs, c.copy()
    while np.any(k):
        odd = (k & 1).astype(bool)
        if np.any(odd):
            res = _where(odd, apply(comb, res, base), res)
        k >>= 1
        if np.any(k):
            base = apply(comb, base, base)
    return res


def _where(mask: np.ndarray, a: Vec, b: Vec) -> Vec:
    """Elementwise choice a[i] where mask[i] else b[i] (same domain, exact)."""
    a, b = unify(a, b)
    n = mask.shape[0]
    idx = np.where(mask, np.arange(n), n + np.arange(n))
    return type(a).concat([a, b]).take(idx)


def pairs(x: Vec, y: Vec) -> tuple[Vec, Vec]:
    """(X, Y) with X[i*len(y) + j] = x[i], Y[...] = y[j] (row-major pairs)."""
    nx, ny = len(x), len(y)
    return x.take(np.repeat(np.arange(nx), ny)), y.take(np.tile(np.arange(ny), nx))


__all__ = ["apply", "const", "pairs", "scale_shift", "self_power", "settle", "tighter", "unify"]
