"""Rigorous bounds on spectral sums sum f(lambda) from two exact moments and the spectrum's ends.

For a measure on [a, b] with mean m and variance v (here: the eigenvalues,
each of weight 1/count) and f with a third derivative of constant sign, the
cubic Hermite remainder gives one-sided bounds that are attained by two-point
measures (the principal representations of the moment problem; Karlin &
Studden, *Tchebycheff systems*, 1966 -- from memory; the inequality itself is
proved below):

* q interpolating f at a and, doubly, at x1 = m + v / (m - a) satisfies
  f(x) - q(x) = f'''(xi) / 6 (x - a)(x - x1)^2 for x >= a, so E f >= E q when
  f''' >= 0 and E f <= E q when f''' <= 0; E q is the two-point rule
  p f(a) + (1 - p) f(x1), p = v / (v + (m - a)^2), because it matches the
  first two moments and q is quadratic;
* the same with the double node x2 = m - v / (b - m) and b, with the signs
  reversed ((x - b) <= 0);
* Jensen: E f >= f(m) for convex f, E f <= f(m) for concave f.

Everything is arb ball arithmetic (160 bits): inputs are balls that contain
the true numbers, and every bound returned is the endpoint of a ball that
contains the corresponding exact bound, so it is rigorous.  Sums of
exponentials are handled in log form (:func:`log_sum_exp`) so that nothing
overflows.

>>> from flint import arb
>>> with working():
...     lo, hi = mean_bounds("log", arb(2), arb(1), a=arb(1), b=arb(3))   # two atoms 1, 3
>>> want = 0.5493061443340549                     # log(3) / 2, the exact mean of log
>>> float(lo) <= want <= float(hi), float(hi - lo) < 1e-40
(True, True)
"""

from __future__ import annotations

from flint import arb

from powerspec.numbers.hp import working

FUNCTIONS = {
    # name: (f(x), sign of f''', convex?)
    "log": (lambda x: x.log(), 1, False),
    "inv": (lambda x: 1 / x, -1, True),
    "exp": (lambda x: x.exp(), 1, True),
}
"""The functions these bounds cover; ``("expneg", t)`` is e^(-t x) (f''' < 0, convex)."""


def _fun(name):
    if isinstance(name, tuple) and name[0] == "expneg":
        t = name[1]
        return (lambda x: (-t * x).exp()), -1, True
    return FUNCTIONS[name]


def nonneg(x: arb) -> arb:
    """The ball intersected with [0, inf) (a ball whose lower end is >= 0)."""
    with working():
        if x >= 0:
            return x
        hi = x.upper()
        if hi < 0:
            return arb(0)
        return (arb(0) + hi) / 2 + arb(0, 1) * (hi / 2)


def hull(lo: arb, hi: arb) -> arb:
    """The smallest ball containing both balls (and everything between)."""
    with working():
        return lo.union(hi)


def _pick(lo_list: list, hi_list: list):
    lo = max((x.lower() for x in lo_list if x is not None and x.is_finite()), default=None)
    hi = min((x.upper() for x in hi_list if x is not None and x.is_finite()), default=None)
    return lo, hi


def mean_bounds(name, mean: arb, var: arb, a: arb | None = None, b: arb | None = None):
    """(lower, upper) exact arb numbers bounding E f(X) for X on [a, b] with the given mean, variance.

    ``name`` is "log", "inv", "exp" or ("expneg", t).  ``a`` / ``b`` are
    balls whose lower / upper ends bound the support (None: unknown); "log"
    and "inv" assume X > 0 (their bounds at a need a > 0).  Either bound may
    be None when nothing applies.

    >>> with working():
    ...     lo, hi = mean_bounds("inv", arb(2), arb(0))         # a point mass at 2
    >>> float(lo), hi is None
    (0.5, True)
    """
    f, sign3, convex = _fun(name)
    increasing = name in ("log", "exp")
    with working():
        m = mean
        v = nonneg(var)
        lows, highs = [], []
        jensen = f(m)
        (lows if convex else highs).append(jensen)
        # X in [a, b]: E f(X) lies between f(a) and f(b) for monotone f
        if a is not None and (a.lower() > 0 or name not in ("log", "inv")):
            (lows if increasing else highs).append(f(a.lower()))
        if b is not None and (b.upper() > 0 or name not in ("log", "inv")):
            (highs if increasing else lows).append(f(b.upper()))
        if a is not None:
            a0 = a.lower()
            if (name in ("log", "inv") and not a0 > 0) or not (m > a0):
                a0 = None
            if a0 is not None:
                d = m - a0
                x1 = m + v / d
                p = v / (v + d * d)
                q = p * f(a0) + (1 - p) * f(x1)
                (lows if sign3 > 0 else highs).append(q)
        if b is not None:
            b0 = b.upper()
            if b0 > m and not (name in ("log", "inv") and not (m - v / (b0 - m)) > 0):
                d = b0 - m
                x2 = m - v / d
                p = v / (v + d * d)
                q = p * f(b0) + (1 - p) * f(x2)
                (highs if sign3 > 0 else lows).append(q)
        return _pick(lows, highs)


EXP_FLOOR = 1 << 20
"""exp(d) for d below -EXP_FLOOR is enclosed in [0, exp(-EXP_FLOOR)] instead of being evaluated."""


def _small_exp(d: arb) -> arb:
    """A ball containing exp(x) for every x in the ball d <= 0 (safe for astronomically large |d|)."""
    if d.lower() > -EXP_FLOOR:
        return d.exp()
    top = d.upper()
    top = top if top > -EXP_FLOOR else arb(-EXP_FLOOR)
    return hull(arb(0), top.exp().upper())


def log_sum_exp(terms: list[arb]) -> arb:
    """A ball containing log(sum exp(t_i)) for all t_i in the given balls (terms are logs).

    Never overflows: terms far below the largest are enclosed in [0, e^-(2^20)];
    when the largest term itself is too wide to be resolved, the result is
    the bracket [max lower end, max upper end + log(number of terms)].

    >>> with working():
    ...     x = log_sum_exp([arb(10**6), arb(10**6)])
    >>> abs(float(x - 10**6) - 0.6931471805599453) < 1e-12
    True
    """
    with working():
        if not terms:
            raise ValueError("log_sum_exp of no terms")
        shift = terms[0].upper()
        for t in terms[1:]:
            shift = shift.max(t.upper())
        total = arb(0)
        for t in terms:
            total += _small_exp(t - shift)
        if total > 0:
            return shift + total.log()
        low = terms[0].lower()
        for t in terms[1:]:
            low = low.max(t.lower())
        return hull(low, shift + arb(len(terms)).log())


def log_mean_exp_bounds(s: arb, mean: arb, var: arb, a: arb | None = None, b: arb | None = None):
    """(lower, upper) exact arb numbers bounding log E exp(s X) for X on [a, b], given mean, variance.

    Computed in log space (no overflow for astronomically large s X).  f =
    e^(s x) is convex with f''' of the sign of s: Jensen gives the lower
    bound s m; the two-point rules at a and b give the others.

    >>> with working():
    ...     lo, hi = log_mean_exp_bounds(arb(1), arb(0), arb(1), a=arb(-1), b=arb(1))  # atoms -1, 1
    >>> abs(float(lo) - 0.43378083048302719) < 1e-15, float(hi - lo) < 1e-40   # log cosh 1
    (True, True)
    """
    with working():
        m, v = mean, nonneg(var)
        lows, highs = [s * m], []
        # X in [a, b]: s X lies between s a and s b
        for end, is_a in ((a, True), (b, False)):
            if end is not None:
                e = end.lower() if is_a else end.upper()
                (lows if is_a == (s > 0) else highs).append(s * e)
        for end, at_a in ((a, True), (b, False)):
            if end is None:
                continue
            e = end.lower() if at_a else end.upper()
            d = (m - e) if at_a else (e - m)
            if not d > 0:
                continue
            x = m + v / d if at_a else m - v / d
            p = v / (v + d * d)
            if v.is_zero():
                q = s * m
            elif p > 0 and p < 1:
                q = log_sum_exp([p.log() + s * e, (1 - p).log() + s * x])
            else:
                continue
            # node at a: a lower bound when f''' > 0 (s > 0); node at b: an upper bound when s > 0
            (lows if at_a == (s > 0) else highs).append(q)
        return _pick(lows, highs)


__all__ = ["EXP_FLOOR", "FUNCTIONS", "hull", "log_mean_exp_bounds", "log_sum_exp", "mean_bounds",
           "nonneg"]
