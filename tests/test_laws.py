"""Limit laws: moments, Berry-Esseen bounds, binomial windows and estimates against closed forms."""

from __future__ import annotations

import math
from fractions import Fraction

import mpmath
import numpy as np
import pytest
from scipy import special, stats

import powerspec as ps
from powerspec.queries.distribution import _Query, quantile
from powerspec.tiers.lawproduct import (
    BinomialWindow,
    ProductLaw,
    binom_pmf,
    binom_range,
    binom_tail_bound,
)
from powerspec.tiers.laws import (
    BERRY_ESSEEN_IID,
    BERRY_ESSEEN_NONIID,
    Affine,
    BivariateNormal,
    Mixture,
    Normal,
    SumLaw,
    lattice_span,
)
from powerspec.tiers.lawsolve import step_bracket
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
    # the generic (secant) ppf of the base class against scipy's closed form
    assert abs(a.ppf(0.3) - stats.norm(-1 - 3 * 1.5, 6.0).ppf(0.3)) < 1e-9
    m = Mixture([0.25, 0.75], [Normal(0, 1), Normal(2, 9)])
    assert abs(m.cdf(1.0) - (0.25 * stats.norm.cdf(1.0) + 0.75 * stats.norm(2, 3).cdf(1.0))) < 1e-15
    # source: law of total variance (textbook)
    assert m.var() == pytest.approx(0.25 * 1 + 0.75 * 9 + 0.25 * 0.75 * 4)
    qs = np.array([0.01, 0.4, 0.99])
    assert np.allclose(m.cdf(m.ppf(qs)), qs, atol=1e-12)


def test_bivariate_normal_against_scipy():
    # source: scipy.stats.multivariate_normal (Genz's algorithm) on random covariances
    rng = np.random.default_rng(3)
    worst = 0.0
    for i in range(60):
        a = rng.normal(size=(2, 2))
        cov = a @ a.T + 0.05 * np.eye(2)
        mu = rng.normal(size=2)
        x, y = rng.normal(size=2) * 2
        x = mu[0] if i % 7 == 0 else x  # one coordinate at its mean: Owen's T limits
        y = mu[1] if i % 11 == 0 else y
        b = BivariateNormal(mu, cov)
        worst = max(worst, abs(b.cdf(x, y) - stats.multivariate_normal(mu, cov).cdf([x, y])))
        assert abs(b.pdf(x, y) - stats.multivariate_normal(mu, cov).pdf([x, y])) < 1e-12
    assert worst < 1e-7
    assert BivariateNormal([1.0, 0.0], [[2.0, 0.0], [0.0, 3.0]]).real_marginal().var() == 2.0


@pytest.mark.parametrize("factor,k", [("C(5)", 3), ("motif()", 2), ("P(4)", 3), ("K(1, 3)", 4)])
def test_cartesian_law_moments_match_explicit_product(factor, k):
    q = _Query(f"cart({factor}^{k})", "adjacency", "law", None, None, "out")
    law = q.law().law
    a = ps.parse(factor).factor.adjacency.toarray()
    eig = np.linalg.eigvalsh(fold([a] * k, 1.0, 0.0))
    # source: numpy.linalg.eigvalsh on the explicit Kronecker sum; mean k m1 and variance k s^2
    assert law.mean() == pytest.approx(np.mean(eig), abs=1e-10)
    assert law.var() == pytest.approx(np.var(eig), rel=1e-10)
    # third cumulant of a sum of independent copies = k * kappa3 (numpy on the explicit spectrum)
    assert law.cumulants()[2] == pytest.approx(np.mean((eig - np.mean(eig)) ** 3), abs=1e-9)


def test_sum_law_bounds_hold_for_binomial_far_tails():
    # source: P(sum of k signs <= x) = sum_{j: k - 2j <= x} C(k, j) / 2^k (binomial, Python ints)
    k = 3000
    law = SumLaw([([-1.0, 1.0], [0.5, 0.5], k, 0.0)])
    cum, run = {}, 0
    for j in range(k, -1, -1):  # eigenvalue k - 2j ascending
        run += math.comb(k, j)
        cum[k - 2 * j] = run
    xs = np.array(list(range(-k, k + 1, 97)) + [-k, k, -k + 2, 5, 0], dtype=float)
    est, lo, hi = law.evaluate(xs)
    worst_centre = 0.0
    for x, e, a, b in zip(xs, est, lo, hi, strict=True):
        top = max(v for v in cum if v <= x)
        exact = mpmath.mpf(cum[top]) / mpmath.mpf(2) ** k
        assert a <= exact <= b, x
        if abs(x) < 3 * math.sqrt(k):
            worst_centre = max(worst_centre, abs(e - float(exact)))
    assert worst_centre < law.eps  # the estimate is far better than the sup bound


def test_lugannani_rice_tail_relative_error():
    # source: exact binomial tail (Python ints); the saddlepoint estimate has small relative error
    k = 400
    law = SumLaw([([-1.0, 1.0], [0.5, 0.5], k, 0.0)])
    for x in (-200.0, -120.0, -80.0):
        exact = sum(math.comb(k, j) for j in range(k + 1) if k - 2 * j <= x) / 2**k
        assert abs(float(law.cdf(x)) / exact - 1) < 0.02, x


def test_lattice_span_and_degenerate():
    # source: hypercube eigenvalues lie on -k + 2Z (closed form); {0, 2, 3} spans Z
    assert lattice_span(np.array([-1.0, 1.0])) == 2.0
    assert lattice_span(np.array([0.0, 2.0, 3.0])) == 1.0
    assert lattice_span(np.array([0.0, 1.0, math.sqrt(2)])) is None
    const = SumLaw([([3.0], [1.0], 10, 0.0)])  # a one-atom factor: the sum is exactly 30
    assert const.degenerate and float(const.cdf(30.0)) == 1.0 and float(const.cdf(29.9)) == 0.0


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


# ------------------------------------------------------------- binomial window
def test_binomial_weights_against_exact_integers():
    # source: C(k, j) r^j (1-r)^(k-j) with exact rationals (math.comb, Fraction)
    for k, r, js in ((10, Fraction(3, 10), range(11)), (2000, Fraction(1, 3), range(500, 900, 37)),
                     (100000, Fraction(2, 3), range(66000, 67400, 173))):
        for j in js:
            exact = Fraction(math.comb(k, j)) * r**j * (1 - r) ** (k - j)
            got = binom_pmf(np.array([j]), k, float(r))[0]
            assert abs(got / float(exact) - 1) < 1e-12, (k, j)
    b, rel = binom_range(2000, 1 / 3, 500, 900)
    exact = [float(Fraction(math.comb(2000, j)) * Fraction(1, 3) ** j * Fraction(2, 3) ** (2000 - j))
             for j in range(500, 901)]
    assert np.max(np.abs(b / np.array(exact) - 1)) <= rel


def test_binomial_tail_bound_is_an_upper_bound():
    # source: exact binomial tails with Python integers
    k = 300
    for a in (40, 70, 90, 100):
        exact = sum(math.comb(k, j) * 2 ** (k - j) for j in range(0, a + 1)) / 3**k
        assert exact <= binom_tail_bound(k, 1 / 3, a, False)
    for a in (110, 140, 200):
        exact = sum(math.comb(k, j) * 2 ** (k - j) for j in range(a, k + 1)) / 3**k
        assert exact <= binom_tail_bound(k, 1 / 3, a, True)


@pytest.mark.parametrize("k", [3000, 10**6])
def test_blocked_window_contains_the_per_j_mixture(k):
    # source: the definition -- per j, P(log|S| <= u | j) lies in [Phi(z_j) - eps_j, Phi(z_j) + eps_j]
    # clipped to [0, 1]; weights binomial(k, 1/3) with exact sign parity.  The blocked window must
    # bracket the per-j sums (computed here directly with scipy), and its estimate stay within
    # its stated quadrature error.  Operand: strong(P(3)): log|1 + lambda| = +-a, 0, a = log(1+sqrt 2).
    a = math.log1p(math.sqrt(2))
    pos, neg = (a / 2, a * a / 4, (a / 2) ** 3), (-a, 0.0, 0.0)
    w = BinomialWindow(k, 1 / 3, pos, neg)
    j = np.arange(w.jlo, w.jhi + 1, dtype=float)
    b = stats.binom(k, 1 / 3).pmf(j)
    mu = k * pos[0] + (neg[0] - pos[0]) * j
    var = (k - j) * pos[1]
    eps = np.minimum(1.0, np.minimum(
        BERRY_ESSEEN_IID * pos[2] / (pos[1] ** 1.5 * np.sqrt(k - j)),
        BERRY_ESSEEN_NONIID * (k - j) * pos[2] / var**1.5))
    sd = np.sqrt(var)
    for side, par in ((1, j % 2 == 0), (-1, j % 2 == 1)):
        wt = np.where(par, b, 0.0)
        sdl = math.sqrt(w.var_log)
        for u in np.linspace(w.mean_log - 4 * sdl, w.mean_log + 4 * sdl, 9):
            z = (u - mu) / sd
            per_lo = float(wt @ np.maximum(special.ndtr(z) - eps, 0.0))
            per_hi = float(wt @ np.minimum(special.ndtr(z) + eps, 1.0))
            per_est = float(wt @ special.ndtr(z))
            est, lo, hi = (float(v[0]) for v in w.g(np.array([u]), side, False))
            assert lo <= per_lo + 1e-12 and per_hi <= hi + w.extra + 1e-12, (side, u)
            assert abs(est - per_est) <= w.quad_err + 1e-9, (side, u)
            assert hi - lo <= (per_hi - per_lo) * 1.02 + 1e-9  # blocking costs little width


# --------------------------------------------------------- product law coverage
def strong_p3_cdf(k: int, x: float) -> Fraction:
    # source: P(3) eigenvalues -sqrt 2, 0, sqrt 2 (textbook); strong power eigenvalues
    # prod(1 + lambda_i) - 1 = (1 + sqrt 2)^a (1 - sqrt 2)^b - 1 with multinomial multiplicities;
    # compared with x in mpmath at 50 digits, counted with Python integers
    mpmath.mp.dps = 50
    s2 = mpmath.sqrt(2)
    tot = 0
    for aa in range(k + 1):
        for bb in range(k + 1 - aa):
            v = (1 + s2) ** aa * (1 - s2) ** bb - 1
            if v <= x:
                tot += math.comb(k, aa) * math.comb(k - aa, bb)
    return Fraction(tot, 3**k)


@pytest.mark.parametrize("k", [30, 120])
def test_strong_window_bounds_contain_truth(k):
    q = _Query(f"strong(P(3)^{k})", "adjacency", "law", None, None, "out")
    tier = q.law()
    assert tier.law.window is not None  # signs depend on magnitudes: the binomial window
    for x in (-1e12, -3.0, -1.5, -1.0 - 1e-9, -0.5, 0.0, 2.0, 1e6, 1e20):
        est, lo, hi = (float(v[0]) for v in q.x_eval(tier, np.array([x])))
        truth = strong_p3_cdf(k, x)
        assert lo <= truth <= hi, (k, x, lo, float(truth), hi)


def _direct_k3_quantile(k: int, q: Fraction):
    # source: direct(K(3)^k) has eigenvalues (-1)^j 2^(k-j) with multiplicity C(k, j) 2^j (K(3)
    # spectrum {2, -1, -1}, textbook).  For q < 1/2 the q-quantile is -2^(k-J) with J the smallest
    # (odd) j where G(J) = sum over odd i <= J of C(k, i) 2^i / 3^k reaches q; the binomial terms
    # are summed in mpmath at 40 digits by their ratio recurrence over +-12 standard deviations.
    mpmath.mp.dps = 40
    p = mpmath.mpf(2) / 3
    sd = math.sqrt(k * 2 / 9)
    i0 = max(0, int(2 * k / 3 - 12 * sd))
    term = mpmath.exp(mpmath.loggamma(k + 1) - mpmath.loggamma(i0 + 1) - mpmath.loggamma(k - i0 + 1)
                      + i0 * mpmath.log(p) + (k - i0) * mpmath.log(1 - p))
    g = mpmath.mpf(0)
    i = i0
    while True:
        if i % 2 == 1:
            g += term
            if g >= mpmath.mpf(q.numerator) / q.denominator:
                return -mpmath.mpf(2) ** (k - i)
        term *= mpmath.mpf(k - i) / (i + 1) * 2
        i += 1


@pytest.mark.parametrize("k", [1000, 10**6])
def test_direct_k3_quantile_against_mpmath(k):
    a = quantile(f"direct(K(3)^{k})", 0.3, method="law")
    truth = _direct_k3_quantile(k, Fraction(3, 10))
    assert mpmath.mpf(a.lower) <= truth <= mpmath.mpf(a.upper)
    assert abs(mpmath.mpf(a.estimate) / truth - 1) < 1e-6


def test_direct_k3_quantile_at_a_billion_is_an_atom():
    # source: the atoms of direct(K(3)^k) are +-2^m (closed form above); at k = 10^9 the bounds
    # must contain one, and the estimate sit on it to the rounding of log|s| (relative 1e-4)
    a = quantile("direct(K(3)^1000000000)", 0.3, method="law")
    mpmath.mp.dps = 30
    m_lo, m_hi = mpmath.log(-mpmath.mpf(a.upper), 2), mpmath.log(-mpmath.mpf(a.lower), 2)
    m = int(mpmath.nint(mpmath.log(-mpmath.mpf(a.estimate), 2)))
    assert m_lo <= m <= m_hi
    assert abs(mpmath.log(-mpmath.mpf(a.estimate), 2) - m) < 1e-4


# ------------------------------------------------------------- root bracketing
def test_step_bracket_smooth_and_step_functions():
    # source: closed forms -- ndtri for the normal CDF, the step positions of floor(3y)/30
    t = np.array([0.001, 0.3, 0.5, 0.97])
    a, b, calls = step_bracket(special.ndtr, t, -50.0, 50.0, xtol=1e-12, guess=0.0, step=1.0)
    assert np.all(special.ndtr(a) < t) and np.all(special.ndtr(b) >= t)
    assert np.allclose(b, special.ndtri(t), atol=2e-12) and calls < 40
    a, b, _ = step_bracket(lambda y: np.floor(3 * y) / 30, np.array([0.3, 0.55]), -10.0, 10.0,
                           xtol=1e-9)
    assert np.allclose(b, [3.0, 17 / 3], atol=1e-8) and np.all(np.floor(3 * a) / 30 < [0.3, 0.55])
