"""The frozen spectral distribution against closed forms, exact integers and explicit products."""

from __future__ import annotations

import math
from fractions import Fraction

import numpy as np
import pytest
from scipy import stats

import powerspec as ps
from powerspec.errors import InputError
from powerspec.queries.frozen import (
    BracketDistribution,
    ExactDistribution,
    LawDistribution,
    NoDensityError,
    distribution,
)
from tests.reference import fold


def hypercube_row(k: int) -> list[int]:
    # source: Q_k spectrum k - 2j with multiplicity C(k, j) (textbook closed form, from memory)
    row, c = [], 1
    for j in range(k + 1):
        row.append(c)
        c = c * (k - j) // (j + 1)
    return row


def test_exact_tier_curve_quantiles_and_moments():
    k = 12
    d = distribution(f"cart(K(2)^{k})")
    assert isinstance(d, ExactDistribution) and d.tier == "exact"
    row = hypercube_row(k)
    xs = np.linspace(-13, 13, 101)
    est, lo, hi = d.cdf(xs, bounds=True)
    for x, e, a, b in zip(xs, est, lo, hi, strict=True):
        truth = Fraction(sum(row[j] for j in range(k + 1) if k - 2 * j <= x), 2**k)
        assert a <= truth <= b and abs(e - float(truth)) < 1e-15
    assert np.allclose(d.sf(xs), 1 - est)
    # quantiles: the smallest k - 2j with cdf >= q, q read as the written decimal
    qs = [0.01, 0.1, 0.5, 0.75, 0.999]
    got = d.ppf(qs)
    for q, g in zip(qs, got, strict=True):
        cum = 0
        for j in range(k, -1, -1):
            cum += row[j]
            if Fraction(cum, 2**k) >= Fraction(repr(q)):
                assert g == k - 2 * j
                break
    assert d.ppf(np.array([[0.5, 0.5]])).shape == (1, 2)
    lo_end, hi_end = d.interval(0.9)
    assert lo_end == -hi_end == d.ppf(0.05)
    # source: mean k * 0, variance k * 1 (each copy is +-1 with equal weight)
    assert d.mean() == 0.0 and d.var() == k and d.moment(4, exact=True) == 3 * k * k - 2 * k
    with pytest.raises(NoDensityError):
        d.pdf(0.0)


def test_moments_against_explicit_product():
    # source: numpy traces of powers of the explicitly built direct product P(3) (x) C(5) (x) K(1, 3)
    mats = [ps.P(3).adjacency.toarray(), ps.C(5).adjacency.toarray(), ps.K(1, 3).adjacency.toarray()]
    m = fold(mats, 0.0, 1.0)
    d = distribution("direct(P(3), C(5), K(1, 3))")
    n = m.shape[0]
    for p in range(1, 7):
        assert float(d.moment(p)) == pytest.approx(np.trace(np.linalg.matrix_power(m, p)) / n,
                                                   rel=1e-12, abs=1e-12)


def test_law_tier_cartesian_parameters_and_density():
    # source: mean k tr(A)/n and variance k var(spectrum of A) (independent copies; numpy on the
    # factor), and the normal density with those parameters (scipy.stats.norm)
    k = 10**6
    d = distribution(f"cart(motif()^{k})", method="law")
    assert isinstance(d, LawDistribution)
    eig = np.linalg.eigvalsh(ps.motif().adjacency.toarray())
    assert d.mu == pytest.approx(k * eig.mean(), rel=1e-12)
    assert d.sigma2 == pytest.approx(k * eig.var(), rel=1e-12)
    assert float(d.mean()) == pytest.approx(k * eig.mean(), rel=1e-12)
    assert float(d.var()) == pytest.approx(k * eig.var(), rel=1e-12)
    xs = d.mu + math.sqrt(d.sigma2) * np.array([-2.0, 0.0, 1.5])
    assert np.allclose(d.pdf(xs), stats.norm(d.mu, math.sqrt(d.sigma2)).pdf(xs), rtol=1e-9)
    # the 1000-point curve: bounds ordered and containing the normal law's own CDF in the bulk
    x = np.linspace(d.mu - 4 * math.sqrt(d.sigma2), d.mu + 4 * math.sqrt(d.sigma2), 1000)
    est, lo, hi = d.cdf(x, bounds=True)
    assert est.shape == (1000,) and np.all(lo <= est) and np.all(est <= hi)
    assert np.all(np.diff(est) >= -1e-12)
    qs = np.linspace(0.01, 0.99, 50)
    qe, ql, qh = d.ppf(qs, bounds=True)
    assert np.all(ql <= qe) and np.all(qe <= qh)
    # the quantiles invert the estimate
    assert np.allclose(d.cdf(qe), qs, atol=1e-9)
    with pytest.raises(NoDensityError):
        distribution("cart(K(2)^1000000)", method="law").pdf(0.0)  # a lattice: atoms, no density


def test_direct_power_law_parameters():
    # source: for direct(P(3)^k): zero share 1 - (2/3)^k; log|lambda| of the non-zero eigenvalues
    # is k copies of log sqrt 2 (P(3) spectrum -sqrt 2, 0, sqrt 2, textbook); signs balanced
    k = 1000
    d = distribution(f"direct(P(3)^{k})", method="law")
    assert d.zero_mass == pytest.approx(1 - (2 / 3) ** k, abs=1e-15)
    assert d.log_mu == pytest.approx(k * math.log(math.sqrt(2)), rel=1e-12)
    assert d.log_sigma2 == pytest.approx(0.0, abs=1e-9)
    assert d.negative_share == pytest.approx((2 / 3) ** k / 2, rel=1e-9)
    with pytest.raises(NoDensityError):
        d.pdf(1.0)
    # K(3): eigenvalues 2, -1, -1: zero share 0, sign shares (1 -+ (-1/3)^k) / 2 (parity, exact)
    d3 = distribution("direct(K(3)^1000000000)")
    assert d3.zero_mass == 0.0 and d3.negative_share == pytest.approx(0.5, abs=1e-15)
    # log|lambda| = (k - j) log 2 with j ~ Binomial(k, 2/3): mean k/3 log 2, variance 2k/9 log^2 2
    assert d3.log_mu == pytest.approx(1e9 / 3 * math.log(2), rel=1e-12)
    assert d3.log_sigma2 == pytest.approx(2e9 / 9 * math.log(2) ** 2, rel=1e-9)


def test_strong_power_exact_mean_at_a_billion():
    # source: E[1 + lambda] = 1 + tr(A)/n = 1 for P(3), so the strong power's mean eigenvalue is
    # prod E[1 + lambda_i] - 1 = 0 exactly; E[(1 + lambda)^2] = 1 + 4/3 gives the second moment
    d = distribution("strong(P(3)^1000000000)", method="law")
    assert d.mean() == 0.0
    assert d.moment(1, exact=True) == 0


def test_bracket_curve_contains_exact_torus_counts():
    # source: C(5) eigenvalues 2cos(2 pi j/5) (textbook); the power's multinomial counts summed
    # with Python integers (sorted sums in double precision; x points kept away from atoms)
    k = 40
    g = [2.0, 2 * math.cos(2 * math.pi / 5), 2 * math.cos(4 * math.pi / 5)]
    vals, mult = [], []
    for a in range(k + 1):
        for b in range(k + 1 - a):
            c = k - a - b
            vals.append(a * g[0] + b * g[1] + c * g[2])
            mult.append(math.comb(k, a) * math.comb(k - a, b) * 2 ** (b + c))
    vals = np.array(vals)
    o = np.argsort(vals)
    cum = np.cumsum(np.array(mult, dtype=object)[o])
    d = distribution(f"cart(C(5)^{k})", method="bracket", tol=1e-3)
    assert isinstance(d, BracketDistribution)
    xs = np.linspace(-40, 60, 211)
    xs = xs[np.min(np.abs(xs[:, None] - vals[None, :]), axis=1) > 1e-6]
    est, lo, hi = d.cdf(xs, bounds=True)
    for x, a, b in zip(xs, lo, hi, strict=True):
        i = np.searchsorted(vals[o], x, side="right")
        truth = Fraction(int(cum[i - 1]) if i else 0, 5**k)
        assert a <= truth <= b, x
    dens = d.pdf([0.0, 10.0])
    assert np.all(dens >= 0) and dens[0] > dens[1]


def test_errors_are_specific():
    d = distribution("cart(K(2)^8)")
    for bad in (0, 1, -0.1, 1.5, float("nan"), "x"):
        with pytest.raises(InputError):
            d.ppf(bad)
    with pytest.raises(InputError):
        d.cdf(float("inf"))
    with pytest.raises(InputError):
        d.moment(-1)
    with pytest.raises(InputError):
        distribution("cart(dicycle(5)^3)").moment(2)  # complex spectrum: not trace moments
