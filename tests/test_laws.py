"""Limit laws: moments, Berry-Esseen bounds and estimates against closed forms and numpy."""

from __future__ import annotations

import math

import mpmath
import numpy as np
import pytest
from scipy import stats

import powerspec as ps
from powerspec.queries.distribution import _Query
from powerspec.tiers.laws import (
    BERRY_ESSEEN_IID,
    BERRY_ESSEEN_NONIID,
    Affine,
    BivariateNormal,
    Mixture,
    Normal,
    ProductLaw,
    SumLaw,
    lattice_span,
)
from tests.reference import fold


def test_published_constants():
    # source: I. Shevtsova (2011), arXiv:1111.6554, C <= 0.4748 (i.i.d.);
    # I. Shevtsova (2010), Doklady Math. 82, C <= 0.5600 (non-identical) -- as quoted in the brief
    assert BERRY_ESSEEN_IID == 0.4748
    assert BERRY_ESSEEN_NONIID == 0.5600


def test_normal_affine_mixture_against_scipy():
    # source: scipy.stats.norm computes the same quantities
    n = Normal(1.5, 4.0)
    for x in (-3.0, 0.0, 1.5, 4.2):
        assert abs(n.cdf(x) - stats.norm(1.5, 2.0).cdf(x)) < 1e-15
        assert abs(n.pdf(x) - stats.norm(1.5, 2.0).pdf(x)) < 1e-15
    assert abs(n.ppf(0.975) - stats.norm(1.5, 2.0).ppf(0.975)) < 1e-9
    lo, hi = n.interval(0.9)
    assert abs(lo - stats.norm(1.5, 2.0).ppf(0.05)) < 1e-9
    assert abs(hi - stats.norm(1.5, 2.0).ppf(0.95)) < 1e-9
    a = Affine(n, -1.0, -3.0)
    assert abs(a.cdf(0.0) - stats.norm(-1 - 3 * 1.5, 6.0).cdf(0.0)) < 1e-14
    assert a.var() == pytest.approx(36.0)
    m = Mixture([0.25, 0.75], [Normal(0, 1), Normal(2, 9)])
    assert abs(m.cdf(1.0) - (0.25 * stats.norm.cdf(1.0) + 0.75 * stats.norm(2, 3).cdf(1.0))) < 1e-15
    # source: law of total variance (textbook)
    assert m.var() == pytest.approx(0.25 * 1 + 0.75 * 9 + 0.25 * 0.75 * 4)


def test_bivariate_real_marginal():
    # source: scipy.stats.multivariate_normal; the real marginal of N(mu, S) is N(mu_0, S_00)
    b = BivariateNormal([0.5, -1.0], [[2.0, 0.3], [0.3, 1.0]])
    assert b.real_marginal().var() == 2.0
    assert abs(b.cdf(0.5, 50.0) - 0.5) < 1e-6


@pytest.mark.parametrize("factor,k", [("C(5)", 3), ("motif()", 2), ("P(4)", 3), ("K(1, 3)", 4)])
def test_cartesian_law_moments_match_explicit_product(factor, k):
    q = _Query(f"cart({factor}^{k})", "adjacency", "law", None, None, "out")
    law = q.law().law if k > 1 else None
    a = ps.parse(factor).factor.adjacency.toarray()
    eig = np.linalg.eigvalsh(fold([a] * k, 1.0, 0.0))
    # source: numpy.linalg.eigvalsh on the explicit Kronecker sum; mean k m1 and variance k s^2
    m1 = np.mean(np.linalg.eigvalsh(a))
    s2 = np.var(np.linalg.eigvalsh(a))
    assert law.mean() == pytest.approx(np.mean(eig), abs=1e-10)
    assert law.var() == pytest.approx(np.var(eig), rel=1e-10)
    assert law.mean() == pytest.approx(k * m1, abs=1e-10) and law.var() == pytest.approx(k * s2)
    # third cumulant of a sum of independent copies = k * kappa3 (numpy on the explicit spectrum)
    assert law.cumulants()[2] == pytest.approx(np.mean((eig - np.mean(eig)) ** 3), abs=1e-9)


def test_sum_law_bounds_hold_for_binomial_far_tails():
    # source: P(sum of k signs <= x) = sum_{j: k - 2j <= x} C(k, j) / 2^k (binomial, Python ints)
    k = 3000
    law = SumLaw([([-1.0, 1.0], [0.5, 0.5], k, 0.0)])
    worst_centre = 0.0
    cum, run = {}, 0
    for j in range(k, -1, -1):  # eigenvalue k - 2j ascending
        run += math.comb(k, j)
        cum[k - 2 * j] = run
    for x in list(range(-k, k + 1, 97)) + [-k, k, -k + 2, 5, 0]:
        top = max(v for v in cum if v <= x)
        exact = mpmath.mpf(cum[top]) / mpmath.mpf(2) ** k
        lo, hi = law.bounds(float(x))
        assert mpmath.mpf(lo[()] if np.ndim(lo) == 0 else lo) <= exact <= mpmath.mpf(hi), x
        if abs(x) < 3 * math.sqrt(k):
            worst_centre = max(worst_centre, abs(float(law.cdf(float(x))) - float(exact)))
    print(f"binomial k={k}: largest centre error of the Edgeworth estimate {worst_centre:.2g}")
    assert worst_centre < law.eps  # the estimate is far better than the sup bound


def test_lugannani_rice_tail_relative_error():
    # source: exact binomial tail (Python ints); the saddlepoint estimate has small relative error
    k = 400
    law = SumLaw([([-1.0, 1.0], [0.5, 0.5], k, 0.0)])
    for x in (-200.0, -120.0, -80.0):
        exact = sum(math.comb(k, j) for j in range(k + 1) if k - 2 * j <= x) / 2**k
        est = float(law.cdf(x))
        assert abs(est / exact - 1) < 0.02, (x, est, exact)


def test_lattice_span_and_degenerate():
    # source: hypercube eigenvalues lie on -k + 2Z (closed form); {0, 2, 3} spans Z
    assert lattice_span(np.array([-1.0, 1.0])) == 2.0
    assert lattice_span(np.array([0.0, 2.0, 3.0])) == 1.0
    assert lattice_span(np.array([0.0, 1.0, math.sqrt(2)])) is None
    const = SumLaw([([3.0], [1.0], 10, 0.0)])  # a one-atom factor: the sum is exactly 30
    assert const.degenerate and float(const.cdf(30.0)) == 1.0 and float(const.cdf(29.9)) == 0.0
    lo, hi = const.bounds(30.0)
    assert (float(lo), float(hi)) == (0.0, 1.0) or (float(lo), float(hi)) == (1.0, 1.0)


def test_product_law_signs_and_zero():
    # source: for s in {-1, 0, 1} i.i.d. with p0 = 1/3 and equal signs, after k factors
    # P(0) = 1 - (2/3)^k and P(<0) = P(>0) = (2/3)^k / 2 (independence, textbook)
    k = 7
    L = SumLaw([([0.0], [1.0], k, 0.0)])
    nz = (2 / 3) ** k
    law = ProductLaw(1 - nz, [(0.5, 0.5, L)])
    assert law.cdf(-0.5) == pytest.approx(nz / 2)
    assert law.cdf(0.0) == pytest.approx(1 - nz / 2)
    assert law.cdf(0.0, strict=True) == pytest.approx(nz / 2)
    assert law.cdf(2.0) == pytest.approx(1.0)


def test_strong_power_is_shifted_law():
    # source: strong eigenvalues are (1 + l1)...(1 + lk) - 1 (DESIGN §2): cdf at x = P(S <= 1 + x);
    # checked against the exact engine spectrum of strong(C(4)^6) (cross-checked with numpy
    # in tests/test_engine.py)
    expr = "strong(C(4)^6)"
    sp = ps.spectrum(expr).atoms
    vals = np.repeat(sp.values, sp.mult.astype(np.int64))
    for x in (-1.0, 0.0, 5.0, 200.0, 728.0):
        truth = np.mean(vals <= x)
        a = ps_cdf(expr, x)
        assert a.lower <= truth <= a.upper, x


def ps_cdf(expr, x):
    from powerspec.queries.distribution import cdf
    return cdf(expr, x, method="law")
