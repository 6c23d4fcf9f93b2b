"""Chebyshev–Markov–Stieltjes CDF bounds contain the exact CDF (numpy spectra of small products)."""

from __future__ import annotations

import math

import mpmath
import numpy as np
import pytest
from flint import arb

from powerspec.algebra.engine import Leaf, Product
from powerspec.algebra.grammar import parse
from powerspec.algebra.kinds import Combination
from powerspec.errors import InputError
from powerspec.factors import from_matrix
from powerspec.numbers.hp import working
from powerspec.tiers.invariant_bounds import log_mean_exp_bounds, log_sum_exp, mean_bounds
from powerspec.tiers.momentbounds import cdf_bounds, cdf_bounds_from_moments, recurrence
from tests.reference import fold

RNG = np.random.default_rng(7)


def _random_graph(n):
    while True:
        a = np.triu((RNG.random((n, n)) < 0.6).astype(float), 1)
        a = a + a.T
        if np.all(a.sum(axis=1) > 0):
            return a


def _contains(lo, hi, ev, x):
    # exact CDF from numpy eigenvalues; a +-1e-9 window absorbs eigensolver rounding at atoms
    f_lo = np.mean(ev <= x - 1e-9)
    f_hi = np.mean(ev <= x + 1e-9)
    return lo <= f_hi and f_lo <= hi


@pytest.mark.parametrize("trial", range(10))
def test_bounds_contain_exact_cdf_random_products(trial):
    # source: numpy eigvalsh of the explicitly built product (adjacency, and the non-factoring
    # Laplacian of direct/strong products)
    ca, cb = [(1, 0), (0, 1), (1, 1), (1, 0.5), (0, 2)][trial % 5]
    g, h = _random_graph(3 + trial % 2), _random_graph(3)
    ops = ((Leaf(from_matrix(g)), 1), (Leaf(from_matrix(h)), 1))
    node = Product(Combination(float(ca), float(cb)), ops)
    adj = fold([g, h], ca, cb)
    for kind, m in (("adjacency", adj), ("laplacian", np.diag(adj.sum(axis=1)) - adj)):
        ev = np.linalg.eigvalsh(m)
        xs = list(RNG.uniform(ev.min() - 0.5, ev.max() + 0.5, 3)) + [float(np.round(np.median(ev)))]
        for x in xs:
            lo, hi, _ = cdf_bounds_from_moments(node, kind, x, order=8)
            assert 0.0 <= lo <= hi <= 1.0
            assert _contains(lo, hi, ev, x), (trial, kind, x, lo, hi)


def test_bounds_for_larger_power_are_informative():
    # source: numpy eigvalsh of the explicit strong(P(3)^3) Laplacian (27 vertices)
    node = parse("strong(P(3)^3)")
    p3 = node.operands[0][0].factor.adjacency.toarray()
    adj = fold([p3, p3, p3], 1, 1)
    ev = np.linalg.eigvalsh(np.diag(adj.sum(axis=1)) - adj)
    widths = []
    for x in np.linspace(ev.min(), ev.max(), 7):
        lo, hi, how = cdf_bounds_from_moments(node, "laplacian", float(x), order=12)
        assert _contains(lo, hi, ev, x)
        widths.append(hi - lo)
    assert max(widths) < 0.9  # the bounds carry information, not just [0, 1]


def test_finite_support_collapses_to_exact():
    # source: Q_3 spectrum -3, -1 (x3), 1 (x3), 3 (closed form of the hypercube)
    node = parse("cart(K(2)^3)")
    assert cdf_bounds_from_moments(node, "adjacency", 0.0)[:2] == (0.5, 0.5)
    assert cdf_bounds_from_moments(node, "adjacency", -1.0)[:2] == (0.5, 0.5)
    assert cdf_bounds_from_moments(node, "adjacency", -1.5)[:2] == (0.125, 0.125)


def test_normal_moments_bracket_phi():
    # source: moments of N(0,1) are (p-1)!! (from memory); Phi from mpmath.ncdf
    mom = [0 if p % 2 else math.prod(range(p - 1, 0, -2)) for p in range(13)]
    for x in (-2.0, -0.7, 0.0, 0.3, 1.9):
        lo, hi = cdf_bounds(mom, x)
        phi = float(mpmath.ncdf(x))
        assert lo <= phi <= hi
        assert hi - lo < 0.5


def test_recurrence_detects_atoms_and_bad_input():
    # source: the measure (delta_-1 + delta_1)/2 has moments 1, 0, 1, 0, 1 (two atoms)
    assert recurrence([1, 0, 1, 0, 1])[3] == 2
    with pytest.raises(InputError):
        cdf_bounds([1, 0, -1], 0.0)  # a negative second moment is impossible
    with pytest.raises(InputError):
        cdf_bounds_from_moments(parse("cart(dicycle(3))"), "adjacency", 0.0)


# ------------------------------------------------------------------ two-point bounds on E f(X)
_FUNS = {"log": np.log, "inv": lambda x: 1 / x, "exp": np.exp}


@pytest.mark.parametrize("trial", range(12))
def test_two_point_mean_bounds_cover_random_measures(trial):
    # source: E f(X) evaluated directly (numpy) for random discrete measures on [a, b]; the bounds
    # from the mean, the variance and the ends must contain it
    rng = np.random.default_rng(100 + trial)
    x = rng.random(rng.integers(2, 9)) * 5 + 0.2
    w = rng.random(x.size)
    w /= w.sum()
    m = float(np.dot(w, x))
    v = float(np.dot(w, (x - m) ** 2))
    with working():
        a, b, mb, vb = arb(float(x.min())), arb(float(x.max())), arb(m), arb(v)
        for name, f in _FUNS.items():
            want = float(np.dot(w, f(x)))
            lo, hi = mean_bounds(name, mb, vb, a, b)
            assert float(lo) <= want * (1 + 1e-12) + 1e-12 and want * (1 - 1e-12) - 1e-12 <= float(hi)
        t = 0.7
        want = float(np.log(np.dot(w, np.exp(-t * x))))
        lo, hi = log_mean_exp_bounds(arb(-t), mb, vb, a, b)
        assert float(lo) <= want + 1e-12 and want - 1e-12 <= float(hi)


def test_log_space_bounds_for_astronomical_values():
    # source: mpmath at 60 digits: log E e^X for two atoms at +-10^6 with equal weights is
    # 10^6 - log 2 (+ e^(-2*10^6) terms); the bounds stay finite and contain it
    with mpmath.workdps(60):
        want = float(mpmath.log((mpmath.e ** 10**6 + mpmath.e ** -(10**6)) / 2))
    with working():
        lo, hi = log_mean_exp_bounds(arb(1), arb(0), arb(10) ** 12, arb(-(10**6)), arb(10**6))
        assert float(lo) <= want <= float(hi) and float(hi - lo) < 1e-6
        x = arb(10) ** 20  # exact at 160 bits with room for 28 more digits
        big = log_sum_exp([x, x - 1, -x])
        # source: log(e^X + e^(X - 1) + e^-X) = X + log(1 + 1/e) up to e^(-2X), X = 10^20
        assert abs(float(big - x) - math.log(1 + 1 / math.e)) < 1e-12
