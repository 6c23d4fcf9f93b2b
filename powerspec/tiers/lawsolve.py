"""Vectorised, safeguarded root bracketing for monotone (possibly discontinuous) functions.

Quantiles of the bracket and law tiers are roots of CDF-like functions that
may be smooth (a normal mixture), piecewise constant (exact atoms) or both.
:func:`step_bracket` finds, for each target, a pair ``a <= b`` with
``f(a) < t <= f(b)`` *verified by evaluation* and ``b - a <= xtol``: the
quantile's rigour rests on those two evaluations only, never on the
monotonicity or smoothness of ``f``.

The iteration is regula falsi with the Illinois modification (superlinear on
smooth functions), a bisection fallback whenever the bracket fails to halve
in three steps (so a step function costs at most about three times a
bisection), an optional first guess with doubling expansion, and a small
overshoot past the secant root so that both ends of the bracket close in.
All targets are iterated together: one call of ``f`` per iteration takes
the whole array of trial points.

>>> import numpy as np
>>> a, b, n = step_bracket(lambda y: y ** 3, np.array([8.0, -1.0]), -10.0, 10.0, xtol=1e-12)
>>> np.round(b, 9).tolist(), bool(np.all(a ** 3 < [8.0, -1.0])), bool(np.all(b - a <= 1e-12))
([2.0, -1.0], True, True)
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np

__all__ = ["step_bracket"]

OVER = 0.5
STALE = 3


def step_bracket(f: Callable[[np.ndarray], np.ndarray], target, lo, hi, *, xtol,
                 guess=None, step=None, flo=None, fhi=None, max_iter: int = 400,
                 indexed: bool = False):
    """Brackets ``(a, b, evaluations)`` of the points where nondecreasing ``f`` reaches ``target``.

    ``f`` maps an array of points to an array of values; ``target``, ``lo``,
    ``hi``, ``xtol``, ``guess`` and ``step`` broadcast to one shape.  On
    return ``f(a) < target <= f(b)`` and ``b - a <= xtol`` elementwise, except
    that ``a = b = lo`` where ``f(lo) >= target`` and ``a = b = hi`` where
    ``f(hi) < target`` (the root lies outside [lo, hi]).  ``evaluations`` is
    the number of calls of ``f``.  Exactness: a and b are points where the
    inequality was *evaluated*, so any rigour of ``f`` carries over.  With
    ``indexed`` ``f(y, idx)`` is called with the element indices of the points
    (only elements still iterating are evaluated).
    """
    t = np.atleast_1d(np.asarray(target, dtype=float))
    shape = t.shape
    lo = np.broadcast_to(np.asarray(lo, dtype=float), shape).copy()
    hi = np.broadcast_to(np.asarray(hi, dtype=float), shape).copy()
    xtol = np.broadcast_to(np.asarray(xtol, dtype=float), shape).copy()
    calls = 0

    def ev(y, mask=None):
        """f at y for the elements in mask (all by default); other entries are nan."""
        nonlocal calls
        calls += 1
        if mask is None:
            mask = np.ones(shape, dtype=bool)
        out = np.full(shape, np.nan)
        if not mask.any():
            return out
        idx = np.flatnonzero(mask)
        vals = f(y[mask], idx) if indexed else f(y[mask])
        out[mask] = np.asarray(vals, dtype=float).reshape(-1)
        return out

    a, b = lo.copy(), hi.copy()
    fa = np.full(shape, -np.inf)  # -inf / +inf: end not evaluated yet
    fb = np.full(shape, np.inf)
    if flo is not None:
        fa = np.broadcast_to(np.asarray(flo, dtype=float), shape).copy()
    if fhi is not None:
        fb = np.broadcast_to(np.asarray(fhi, dtype=float), shape).copy()
    if guess is not None:
        cur = np.clip(np.broadcast_to(np.asarray(guess, dtype=float), shape), lo, hi)
        st = np.broadcast_to(np.asarray(step if step is not None else xtol, dtype=float), shape)
        st = np.maximum(np.abs(st), xtol)
        fg = ev(cur)
        up = fg < t  # the root lies above the guess
        a, fa = np.where(up, cur, a), np.where(up, fg, fa)
        b, fb = np.where(up, b, cur), np.where(up, fb, fg)
        open_ = np.ones(shape, dtype=bool)
        for _ in range(64):  # doubling steps away from the guess until the root is bracketed
            c = np.where(up, cur + st, cur - st)
            open_ &= np.where(up, c < hi, c > lo)
            if not open_.any():
                break
            fc = ev(np.where(open_, c, cur), open_)
            ge = fc >= t
            to_b, to_a = open_ & ge, open_ & ~ge
            b, fb = np.where(to_b, c, b), np.where(to_b, fc, fb)
            a, fa = np.where(to_a, c, a), np.where(to_a, fc, fa)
            open_ &= ~np.where(up, ge, ~ge)
            cur = np.where(open_, c, cur)
            st = st * 2.0
    need_a, need_b = ~np.isfinite(fa), ~np.isfinite(fb)
    if need_a.any():
        fa = np.where(need_a, ev(a, need_a), fa)
    if need_b.any():
        fb = np.where(need_b, ev(b, need_b), fb)
    below = fa >= t  # root at or below lo
    above = fb < t   # root above hi
    done = below | above | (b - a <= xtol)
    out_a = np.where(below, lo, np.where(above, hi, a))
    out_b = np.where(below, lo, np.where(above, hi, b))
    a, b = np.where(done, out_a, a), np.where(done, out_b, b)
    # the last two trial points (secant); the bracket ends serve until two exist
    x1, f1 = b.copy(), fb.copy()
    x0, f0 = a.copy(), fa.copy()
    stale = np.zeros(shape, dtype=np.int8)  # steps since the bracket last halved
    ref = b - a
    for _ in range(max_iter):
        act = ~done
        if not act.any():
            break
        with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
            sec = x1 - (f1 - t) * (x1 - x0) / (f1 - f0)
            fal = a + (t - fa) * (b - a) / (fb - fa)  # regula falsi on the bracket
        mid = 0.5 * (a + b)
        inside = np.isfinite(sec) & (sec >= a) & (sec <= b)
        r = np.where(inside, sec, np.where(np.isfinite(fal) & (fal >= a) & (fal <= b), fal, mid))
        # converged secant: step just past the root, away from the last point, to close the bracket
        conv = inside & (np.abs(r - x1) <= 0.5 * xtol)
        r = np.where(conv, r + np.where(r >= x1, 0.5, -0.5) * xtol, r)
        r = np.clip(r, a + 0.5 * xtol, b - 0.5 * xtol)  # a root at an end is confirmed in one step
        c = np.where((stale >= STALE) | (b - a <= 2 * xtol), mid, r)
        c = np.where((c > a) & (c < b), c, mid)
        fc = ev(np.where(act, c, a), act)
        right = act & (fc >= t)
        left = act & ~right
        flat = (fc == fa) | (fc == fb)  # a piecewise constant stretch: secants carry no information
        b, fb = np.where(right, c, b), np.where(right, fc, fb)
        a, fa = np.where(left, c, a), np.where(left, fc, fa)
        x0, f0 = np.where(act, x1, x0), np.where(act, f1, f0)
        x1, f1 = np.where(act, c, x1), np.where(act, fc, f1)
        halved = (b - a) <= 0.5 * ref
        ref = np.where(act & halved, b - a, ref)
        stale = np.where(act, np.where(halved, 0, stale + 1), stale)
        stale = np.where(act & flat & ~halved, STALE, stale).astype(np.int8)
        done |= act & ((b - a <= xtol) | (np.nextafter(a, np.inf) >= b))
    return a, b, calls
