"""Rewritten fast paths give the same answers as the paths they replace (no timing assertions).

* the law tier's parity bound (:mod:`powerspec.tiers.lawparity`), used past
  the per-j window's cap: its bounds contain exact CDFs, overlap the per-j
  mixture's bounds, and its memory does not grow with k;
* the quantile search's flat region near x = alpha (:mod:`powerspec.queries.distsolve`):
  the bounds still contain the exact quantile;
* the ``auto`` cost model of :mod:`powerspec.queries.distribution`: the tier it
  picks answers within its bounds.
"""

from __future__ import annotations

import math
import tracemalloc
from fractions import Fraction

import mpmath
import numpy as np
import pytest

import powerspec as ps
import powerspec.queries.disttiers as disttiers
from powerspec.queries.distribution import _Query, cdf, quantile
from powerspec.queries.frozen import NoDensityError
from powerspec.tiers.lawparity import ParityWindow, binom_max
from powerspec.tiers.lawproduct import BinomialWindow, binom_pmf


def strong_p3_counts(k: int):
    """Exact spectrum of strong(P(3)^k) as (value, multiplicity) pairs, values in mpmath.

    Source: P(3) eigenvalues -sqrt 2, 0, sqrt 2 (textbook); strong power eigenvalues
    prod(1 + lambda_i) - 1 = (1 + sqrt 2)^a (1 - sqrt 2)^b - 1 with multinomial multiplicities
    C(k, a) C(k - a, b) (Python integers), values at 50 digits.
    """
    mpmath.mp.dps = 50
    s2 = mpmath.sqrt(2)
    return [((1 + s2) ** a * (1 - s2) ** b - 1, math.comb(k, a) * math.comb(k - a, b))
            for a in range(k + 1) for b in range(k + 1 - a)]


def direct_k3_cdf(k: int, x: float) -> Fraction:
    """Exact CDF of direct(K(3)^k) at x: eigenvalues (-1)^j 2^(k - j), multiplicity C(k, j) 2^j.

    Source: K(3) spectrum {2, -1, -1} (textbook); the direct power multiplies eigenvalues.
    """
    tot = 0
    for j in range(k + 1):
        v = (-1) ** j * mpmath.mpf(2) ** (k - j)
        if v <= x:
            tot += math.comb(k, j) * 2**j
    return Fraction(tot, 3**k)


@pytest.fixture
def parity_only(monkeypatch):
    """Force the parity bound at every k (the per-j window is its reference)."""
    monkeypatch.setattr(disttiers, "WINDOW_CAP", 0)


@pytest.mark.parametrize("k", [40, 150])
def test_parity_law_contains_exact_strong_cdf(parity_only, k):
    q = _Query(f"strong(P(3)^{k})", "adjacency", "law", None, None, "out")
    tier = q.law()
    assert isinstance(tier.law.window, ParityWindow)
    atoms = strong_p3_counts(k)
    for x in (-1e12, -3.0, -1.5, -1.0 - 1e-9, -0.5, 0.0, 2.0, 1e6, 1e20):
        truth = Fraction(sum(m for v, m in atoms if v <= x), 3**k)
        est, lo, hi = (float(v[0]) for v in q.x_eval(tier, np.array([x])))
        assert lo <= truth <= hi, (k, x, lo, float(truth), hi)
        assert lo <= est <= hi


@pytest.mark.parametrize("k", [200, 1001])
def test_parity_law_contains_exact_direct_cdf(parity_only, k):
    # exact points (every conditional law is a point mass): the parity term is the only error
    q = _Query(f"direct(K(3)^{k})", "adjacency", "law", None, None, "out")
    tier = q.law()
    assert isinstance(tier.law.window, ParityWindow)
    for x in (-1e300, -2.0**(k // 2), -1.0, 0.0, 1.0, 2.0**(2 * k // 3), 1e300):
        truth = direct_k3_cdf(k, x)
        est, lo, hi = (float(v[0]) for v in q.x_eval(tier, np.array([x])))
        assert lo <= truth <= hi, (k, x, lo, float(truth), hi)


@pytest.mark.parametrize("k", [10**5, 10**7])
def test_parity_and_per_j_bounds_overlap(k):
    # the two paths bound the same quantity: their intervals must intersect, and the parity
    # path's width stays within its stated error terms (H's bounds plus the T bound)
    a = math.log1p(math.sqrt(2))
    pos, neg = (a / 2, a * a / 4, (a / 2) ** 3), (-a, 0.0, 0.0)
    per_j = BinomialWindow(k, 1 / 3, pos, neg)
    par = ParityWindow(k, 1 / 3, pos, neg, [a, 0.0, -a], [1 / 3, 1 / 3, 1 / 3])
    sd = math.sqrt(par.var_log)
    u = np.linspace(par.mean_log - 5 * sd, par.mean_log + 5 * sd, 41)
    for side in (1, -1):
        e1, l1, h1 = per_j.g(u, side, False)
        h1 = h1 + per_j.extra
        e2, l2, h2 = par.g(u, side, False)
        assert np.all(np.maximum(l1, l2) <= np.minimum(h1, h2) + 1e-15)
        _, hl, hh = par.h.evaluate(u, False)
        assert np.all(h2 - l2 <= (hh - hl) / 2 + par.quad_err + 1e-12)
        assert np.all(np.abs(e1 - e2) <= (h1 - l1) + (h2 - l2) + 1e-12)


def test_binom_max_bounds_every_probability():
    # source: the binomial pmf by exact integers (math.comb, Fraction) around the mode
    for k, r in ((10, Fraction(3, 10)), (999, Fraction(1, 3)), (5000, Fraction(2, 3))):
        exact = max(Fraction(math.comb(k, j)) * r**j * (1 - r) ** (k - j) for j in range(k + 1))
        assert float(exact) <= binom_max(k, float(r)) <= float(exact) * (1 + 1e-9)
    m = int((10**18 + 1) / 3)
    assert binom_pmf(np.array([float(m)]), 10**18, 1 / 3)[0] <= binom_max(10**18, 1 / 3)


# P(X <= 0) at k = 10^18 -- direct(K(3)^k): P(S < 0) = (1 - (-1/3)^k) / 2 (exact sign parity of
# the binomial number of -1 factors); strong(P(3)^k): X = S - 1 and P(S <= 1) = P(S < 0) +
# P(S > 0, log|S| <= 0) = 1/4 + 1/2 + O(1e-9) (log|1 + lambda| takes 0, +-log(1 + sqrt 2), a
# symmetric law whose sum has an atom at 0 of mass ~ 1 / (sd sqrt(2 pi)) ~ 5e-10)
@pytest.mark.parametrize("expr, at_zero", [("direct(K(3)^1000000000000000000)", 0.5),
                                           ("strong(P(3)^1000000000000000000)", 0.75)])
def test_law_tier_memory_does_not_grow_with_k(expr, at_zero):
    # the per-j window would need ~10^10 doubles here; the parity bound needs none
    tracemalloc.start()
    try:
        a = quantile(expr, 0.3, method="law")
        _, peak = tracemalloc.get_traced_memory()
    finally:
        tracemalloc.stop()
    assert peak < 64 * 2**20
    assert a.lower <= a.estimate <= a.upper
    c = cdf(expr, 0.0, method="law")
    assert c.lower <= at_zero + 1e-9 and at_zero - 1e-9 <= c.upper
    assert c.upper - c.lower < 1e-4


@pytest.mark.parametrize("q_level", [Fraction(1, 10), Fraction(1, 2), Fraction(3, 10)])
def test_strong_quantile_near_minus_one_contains_exact(q_level):
    # the quantile search settles brackets where x = -1 + s no longer moves; the bounds must still
    # contain the exact quantile (exact spectrum above, counted with Python integers)
    k = 40
    a = quantile(f"strong(P(3)^{k})", q_level, method="law")
    atoms = sorted(strong_p3_counts(k), key=lambda t: t[0])
    need, run = q_level * 3**k, 0
    for v, m in atoms:
        run += m
        if run >= need:
            truth = v
            break
    assert mpmath.mpf(a.lower) <= truth <= mpmath.mpf(a.upper)


def test_auto_prefers_the_bracket_when_exact_is_far_costlier():
    # cart(C(5)^1000) at the default tol: the law misses 1e-3, the exact spectrum holds about 5e5
    # atoms; the bracket meets the width at a fraction of the exact tier's cost
    a = quantile("cart(C(5)^1000)", 0.3)
    assert a.method.startswith("bracket")
    # source: the normal approximation of the Cartesian power (mean 0, variance 2 per copy: the
    # eigenvalues 2 cos(2 pi j / 5) have mean 0 and mean square 2) puts the 0.3-quantile near
    # sqrt(2000) * ndtri(0.3) = -23.45; the certified bounds must bracket a value close to it
    assert a.lower <= a.estimate <= a.upper
    assert abs(a.estimate + 23.45) < 1.0


def test_frozen_distribution_past_the_window_cap():
    # direct(K(3)^k) has atoms only ((-1)^j 2^(k - j), textbook K(3) spectrum): no density at any
    # k; P(X <= -2) = P(j odd) = (1 - 3^-k) / 2 for even k (exact sign parity of the binomial j)
    d = ps.distribution("direct(K(3)^1000000000000000000)")
    with pytest.raises(NoDensityError):
        d.pdf([0.5])
    est, lo, hi = d.cdf([-2.0], bounds=True)
    assert lo[0] <= 0.5 <= hi[0] and hi[0] - lo[0] < 1e-6
