"""Quantiles of the bracket and law tiers: a vectorised scan and safeguarded secant in one parameter.

X = alpha + beta * s with s the linearised product variable.  The search
runs over a parameter y in which x(y) increases:

* additive rules: s = y (beta > 0) or s = -y (beta < 0) -- a decreasing map
  (normalized Laplacians: alpha = 1, beta = -1/d) flips the search range too;
* multiplicative rules: the exact atom of S = 0 (x = alpha) is decided
  first from P(X < alpha) and P(X <= alpha); otherwise the search runs on
  one branch (x below or above alpha) over t = log|s| - u_min >= 0.

For every level q (an exact rational) and each of the three curves
(estimate; the upper CDF bound, giving the quantile's lower bound; the
lower CDF bound, giving its upper bound) the answer is a point where the
curve was *evaluated* on the right side of q: lower bound a with
upper(a) < q, upper bound b with lower(b) >= q.  Where those hold, the true
quantile inf{x : F(x) >= q} lies in [x(a), x(b)] whatever the shape of the
curves.  All levels and curves are iterated together: one tier evaluation
per step takes the whole array of trial points.

>>> import numpy as np
>>> scan_points(0.0, 1.0, -50.0, 50.0)[:3].tolist()
[-50.0, -40.0, -10.0]
"""

from __future__ import annotations

import math
from fractions import Fraction

import mpmath
import numpy as np

from powerspec.tiers.lawsolve import step_bracket

_GRID = np.array([-40.0, -10.0, -5.0, -3.0, -2.0, -1.2, -0.6, 0.0, 0.6, 1.2, 2.0, 3.0, 5.0, 10.0, 40.0])

EPS = float(np.finfo(float).eps)


def scan_points(centre: float, scale: float, lo: float, hi: float) -> np.ndarray:
    """Sorted trial points: the range ends and centre + scale * (a grid dense in the bulk)."""
    p = np.concatenate([[lo, hi], np.clip(centre + scale * _GRID, lo, hi)])
    return np.unique(p)


def _float_up(f: Fraction) -> float:
    v = float(f)
    return v if Fraction(v) >= f else math.nextafter(v, math.inf)


class ParamCurve:
    """P(X <= x(y)) of one tier as (estimate, lower, upper) arrays of a monotone parameter y."""

    def __init__(self, query, tier):
        self.q, self.tier = query, tier
        self.mode, self.alpha, self.beta = query.mode, query.alpha, query.beta
        if self.mode == "add":
            s0, s1 = tier.support()
            self.range = (s0, s1) if self.beta > 0 else (-s1, -s0)
            c, sc = tier.bulk()
            self.centre, self.scale = (c if self.beta > 0 else -c), sc
            self.xtol_abs = 1e-12 * sc
        else:
            ulo, uhi = tier.log_range()
            self.umin = ulo
            self.span = uhi - ulo + 1.0
            c, sc = tier.bulk()
            self.centre, self.scale = c - ulo, sc
            self.xtol_abs = 1e-12 * sc

    def __call__(self, y, branch=None):
        """(estimate, lower, upper) arrays at y (multiplicative rules: t = |y| on ``branch``)."""
        y = np.asarray(y, dtype=float)
        b = self.beta
        if self.mode == "add":
            s = y if b > 0 else -y
            if b > 0:
                return self.tier.evaluate(s, False)
            e, lo, hi = self.tier.evaluate(s, True)
            return 1 - e, 1 - hi, 1 - lo
        sgn = np.asarray(branch, dtype=float) * (1.0 if b > 0 else -1.0)
        u = self.umin + np.abs(y)
        if b > 0:
            return self.tier.evaluate(sgn, u, False)
        e, lo, hi = self.tier.evaluate(sgn, u, True)
        return 1 - e, 1 - hi, 1 - lo

    def at_alpha(self):
        """((est, lo, hi) of P(X < alpha), (est, lo, hi) of P(X <= alpha)) -- the atom of S = 0."""
        z = np.zeros(1)
        lt = [float(v[0]) for v in self.tier.evaluate(z, z, True)]
        le = [float(v[0]) for v in self.tier.evaluate(z, z, False)]
        if self.beta > 0:
            return lt, le
        # X < alpha <=> S > 0: 1 - P(S <= 0); X <= alpha <=> S >= 0: 1 - P(S < 0)
        return [1 - le[0], 1 - le[2], 1 - le[1]], [1 - lt[0], 1 - lt[2], 1 - lt[1]]

    def x_of(self, y: float, branch: int = 1):
        """x(y) as a float, or an mpmath number beyond the double range."""
        if self.mode == "add":
            return self.alpha + self.beta * (y if self.beta > 0 else -y)
        sgn = branch * (1 if self.beta > 0 else -1)
        u = self.umin + abs(y)
        if u < 690:
            return self.alpha + self.beta * sgn * math.exp(u)
        x = mpmath.mpf(self.alpha) + mpmath.mpf(self.beta) * sgn * mpmath.exp(mpmath.mpf(u))
        f = float(x)
        return f if math.isfinite(f) and abs(f) < 1e300 else x


def _widen(v, direction: int):
    """Move a bound outward (direction -1 down, +1 up) by a relative 1e-12 for the final rounding."""
    if isinstance(v, float):
        return v + direction * (1e-12 * abs(v) + 1e-300)
    return v + direction * abs(v) * mpmath.mpf(1e-12)


MULTISECT_POINTS = 256
"""Trial points per bracket and round when narrowing a step-function curve (bracket tiers)."""

MULTISECT_ROUNDS = 8
"""Most multisection rounds (each shrinks a bracket 257-fold); the secant search finishes."""


def _multisect(f, tgt, a, b, fa, fb, xtol):
    """Narrow brackets [a, b] with f(a) < tgt <= f(b) by evaluating many interior points at once.

    The bracket tiers' curves are step functions of the grid, on which a secant step
    degenerates into bisection (one tier evaluation per halving).  One vectorised
    evaluation of MULTISECT_POINTS equally spaced points per bracket shrinks it 257-fold
    instead.  The new ends are again evaluated points with f(a) < tgt <= f(b) (the first
    trial point reaching tgt and the one before it), so the rigour is that of the
    evaluations, whatever the shape of f.  Arrays are updated in place.
    """
    frac = np.arange(1, MULTISECT_POINTS + 1) / (MULTISECT_POINTS + 1)
    for _ in range(MULTISECT_ROUNDS):
        act = np.flatnonzero(b - a > xtol)
        if act.size == 0:
            return
        pts = a[act, None] + (b[act] - a[act])[:, None] * frac
        vals = np.asarray(f(pts.ravel(), np.repeat(act, MULTISECT_POINTS)),
                          dtype=float).reshape(pts.shape)
        reach = vals >= tgt[act, None]
        k = np.where(reach.any(axis=1), np.argmax(reach, axis=1), MULTISECT_POINTS)
        rows = np.arange(act.size)
        has_b = k < MULTISECT_POINTS
        has_a = k > 0
        kb, ka = np.minimum(k, MULTISECT_POINTS - 1), np.maximum(k - 1, 0)
        b[act[has_b]], fb[act[has_b]] = pts[rows, kb][has_b], vals[rows, kb][has_b]
        a[act[has_a]], fa[act[has_a]] = pts[rows, ka][has_a], vals[rows, ka][has_a]


NEAR_ALPHA = 1e-13
"""Multiplicative rules: |s| below this share of |alpha / beta| leaves x = alpha + beta s at alpha."""


def _settle_near_alpha(curve, comp, branch, tgt, fixed, a, b, fa, fb):
    """Brackets whose root lies where x(y) no longer moves (|beta s| <= NEAR_ALPHA |alpha|).

    There the search in log|s| would bisect a long flat stretch for nothing: one
    evaluation at the edge y* of that region per element decides whether the
    root lies inside it (then the bracket ends at y* and is settled: both ends
    give x within NEAR_ALPHA |alpha| of alpha) or outside (it starts at y*).
    Brackets are updated in place (a and b stay evaluated points); returns the
    mask of settled elements.
    """
    settled = np.zeros(a.shape, dtype=bool)
    if curve.alpha == 0:
        return settled
    ys = math.log(NEAR_ALPHA * abs(curve.alpha) / abs(curve.beta)) - curve.umin
    if not ys > 0:
        return settled
    y = np.where(branch > 0, ys, -ys)
    free = np.isnan(fixed)
    # brackets wholly inside the flat region are settled as they are
    settled |= free & np.where(branch > 0, b <= y, a >= y)
    sel = free & (a < y) & (y < b)
    if not sel.any():
        return settled
    idx = np.flatnonzero(sel)
    vals = np.stack(curve(y[idx], branch[idx]))  # (3, elements)
    fy = vals[comp[idx], np.arange(idx.size)]
    ge = fy >= tgt[idx]
    up, low = idx[ge], idx[~ge]
    b[up], fb[up] = y[up], fy[ge]
    a[low], fa[low] = y[low], fy[~ge]
    settled[up[branch[up] > 0]] = True  # [a, y*] lies in the flat region: x(a) ~ x(b) ~ alpha
    settled[low[branch[low] < 0]] = True  # [-y*, b] likewise
    return settled


def quantiles(query, tier, levels: list[Fraction]):
    """Lists (estimates, lower bounds, upper bounds) of the quantiles at the exact ``levels``.

    Values are floats, or mpmath numbers beyond the double range.  Exact tier
    callers should use the tier's own exact quantile instead.
    """
    curve = ParamCurve(query, tier)
    n = len(levels)
    t = np.array([_float_up(f) for f in levels])
    # elements: (level i, curve c) with c = 0 estimate, 2 upper bound (-> lower x), 1 lower bound
    lev = np.repeat(np.arange(n), 3)
    comp = np.tile(np.array([0, 2, 1]), n)
    tgt = t[lev]
    m = lev.size
    branch = np.ones(m)
    fixed = np.full(m, np.nan)  # elements decided at x = alpha (the exact atom of S = 0)
    if curve.mode == "add":
        ranges = [(1, curve.range)]
    else:
        below, at = curve.at_alpha()
        below, at = np.array(below)[comp], np.array(at)[comp]
        branch = np.where(below >= tgt, -1.0, 1.0)
        fixed = np.where((below < tgt) & (at >= tgt), 0.0, np.nan)
        ranges = [(-1, (-curve.span, 0.0)), (1, (0.0, curve.span))]
    a = np.zeros(m)
    b = np.zeros(m)
    fa = np.zeros(m)
    fb = np.zeros(m)
    for br, (y0, y1) in ranges:
        sel = (branch == br) & np.isnan(fixed)
        if not sel.any():
            continue
        centre = curve.centre if curve.mode == "add" else br * curve.centre
        pts = scan_points(centre, curve.scale, y0, y1)
        vals = np.stack(curve(pts, np.full(pts.size, br)))  # (3, points)
        for i in np.flatnonzero(sel):
            row = vals[comp[i]]
            k = int(np.searchsorted(row >= tgt[i], True)) if np.any(row >= tgt[i]) else pts.size
            if k == 0:
                a[i], b[i], fa[i], fb[i] = pts[0], pts[0], row[0], row[0]
            elif k == pts.size:
                a[i], b[i], fa[i], fb[i] = pts[-1], pts[-1], row[-1], row[-1]
            else:
                a[i], b[i], fa[i], fb[i] = pts[k - 1], pts[k], row[k - 1], row[k]
    settled = _settle_near_alpha(curve, comp, branch, tgt, fixed, a, b, fa, fb) \
        if curve.mode != "add" else np.zeros(m, dtype=bool)
    open_ = np.isnan(fixed) & (a < b) & ~settled
    if open_.any():
        idx = np.flatnonzero(open_)

        def f(y, sub):
            v = curve(y, branch[idx[sub]])
            return np.choose(comp[idx[sub]], v)

        xtol = curve.xtol_abs + 4 * EPS * np.maximum(np.abs(a[idx]), np.abs(b[idx]))
        sa, sb, sfa, sfb, st = a[idx], b[idx], fa[idx], fb[idx], tgt[idx]
        if getattr(tier, "name", None) == "bracket":
            _multisect(f, st, sa, sb, sfa, sfb, xtol)
        ra, rb, _ = step_bracket(f, st, sa, sb, xtol=xtol, flo=sfa, fhi=sfb, indexed=True)
        a[idx], b[idx] = ra, rb
    out = ([], [], [])
    for i in range(m):
        c = comp[i]
        which = 0 if c == 0 else (1 if c == 2 else 2)
        if not np.isnan(fixed[i]):
            x = float(query.alpha)
        else:
            y = a[i] if c == 2 else b[i]
            x = curve.x_of(float(y), int(branch[i]))
            if which:
                x = _widen(x, -1 if which == 1 else 1)
        out[which].append(x)
    return out


__all__ = ["quantiles", "ParamCurve", "scan_points"]
