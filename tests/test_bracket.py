"""Certified one-FFT brackets against binomial sums, exact integer convolutions and closed forms."""

from __future__ import annotations

import math
from fractions import Fraction

import numpy as np
import pytest

import powerspec as ps
from powerspec.errors import SizeLimitError
from powerspec.queries.distribution import cdf, quantile
from powerspec.tiers.bracket import AddBracket, MulBracket, spacing


def hypercube_cdfs(k: int, xs) -> list[Fraction]:
    # source: Q_k spectrum k - 2j with multiplicity C(k, j) (Brouwer & Haemers, Spectra of Graphs,
    # from memory); the binomial row by C(k, j+1) = C(k, j)(k - j)/(j + 1), summed with Python ints
    row, c = [], 1
    for j in range(k + 1):
        row.append(c)
        c = c * (k - j) // (j + 1)
    out = []
    for x in xs:
        jmin = max(0, math.ceil((k - x) / 2))  # k - 2j <= x
        out.append(Fraction(sum(row[jmin:]), 2**k))
    return out


@pytest.mark.parametrize("k", [1, 7, 300, 20000])
def test_hypercube_bracket_is_exact_on_its_lattice(k):
    h = spacing([([-1.0, 1.0], [0.5, 0.5], k)], 1e-3)
    assert h == 2.0  # the lattice span of {-1, 1}
    b = AddBracket([([-1.0, 1.0], [Fraction(1, 2)] * 2, k, 0.0)], h=h)
    if k == 20000:
        assert b.plan.alias > 0  # the FFT window is smaller than the range: aliasing is bounded
    xs = [-k - 1, -k, 0, 1, k // 3, k] + ([-120, -60, 2, 58, 118] if k == 20000 else [])
    est, lo, hi = b.evaluate(np.array(xs, dtype=float))
    for x, truth, e, a, c in zip(xs, hypercube_cdfs(k, xs), est, lo, hi, strict=True):
        assert a <= truth <= c, (k, x)
        assert c - a < 1e-8  # lattice grid: only the FFT, aliasing and summation bounds remain
        assert abs(e - float(truth)) <= c - a


def test_fft_path_against_exact_integer_convolution():
    # source: (1 + z + ... + z^15)^k / 16^k expanded with Python integers -- the k-fold sum of a
    # uniform value on {0..15}; 16 grid points exceed the direct-DFT limit, so the FFT path and
    # Higham's error bound are exercised
    k = 120
    poly = [1]
    for _ in range(k):
        new = [0] * (len(poly) + 15)
        for i, c in enumerate(poly):
            for d in range(16):
                new[i + d] += c
        poly = new
    cum = np.cumsum([Fraction(c, 16**k) for c in poly])
    b = AddBracket([(np.arange(16.0), [Fraction(1, 16)] * 16, k, 0.0)], h=1.0)
    xs = np.arange(0, 15 * k + 1, 37, dtype=float)
    est, lo, hi = b.evaluate(xs)
    for x, a, c in zip(xs, lo, hi, strict=True):
        assert a <= cum[int(x)] <= c
    assert np.max(hi - lo) < 1e-9


def torus_cdf(k: int, xs) -> list[Fraction]:
    # source: C(5) eigenvalues 2 cos(2 pi j / 5) = 2, (sqrt5 - 1)/2 (twice), -(sqrt5 + 1)/2 (twice)
    # (textbook); the Cartesian power's eigenvalues are sums with multinomial multiplicities,
    # compared with x exactly as a + b (sqrt 5 - 1)/2 - c (sqrt 5 + 1)/2 in high precision
    import mpmath
    mpmath.mp.dps = 40
    g1, g2 = (mpmath.sqrt(5) - 1) / 2, -(mpmath.sqrt(5) + 1) / 2
    atoms = []
    for a in range(k + 1):
        for bb in range(k + 1 - a):
            c = k - a - bb
            mult = math.comb(k, a) * math.comb(k - a, bb) * 2 ** (bb + c)
            atoms.append((2 * a + bb * g1 + c * g2, mult))
    atoms.sort()
    out = []
    for x in xs:
        out.append(Fraction(sum(m for v, m in atoms if v <= x), 5**k))
    return out


@pytest.mark.parametrize("k,tol", [(8, 1e-1), (8, 1e-3), (150, 1e-3)])
def test_non_lattice_bracket_contains_exact(k, tol):
    v = 2 * np.cos(2 * np.pi * np.arange(5) / 5)
    p = [Fraction(1, 5)] * 5
    h = spacing([(v, p, k)], tol)
    b = AddBracket([(v, p, k, 4e-16)], h, eta=tol / 8)
    xs = np.linspace(-1.3 * k, 1.8 * k, 23) + 0.01
    truth = torus_cdf(k, xs)
    est, lo, hi = b.evaluate(xs)
    for x, t, a, c in zip(xs, truth, lo, hi, strict=True):
        assert a <= t <= c, (k, tol, x)
    if k == 150:
        assert np.max(hi - lo) < 3 * tol  # the grid was chosen for about this width


def test_direct_bracket_signs_and_zero_mass():
    # source: numpy eigvalsh of the explicit Kronecker product P(3) (x) P(3) (x) K(3)
    p3 = ps.P(3).adjacency.toarray()
    k3 = ps.K(3).adjacency.toarray()
    eig = np.linalg.eigvalsh(np.kron(np.kron(p3, p3), k3))
    vp = np.array([-math.sqrt(2), 0.0, math.sqrt(2)])
    vk = np.array([-1.0, 2.0])
    blocks = [(vp, [Fraction(1, 3)] * 3, 2, 1e-15), (vk, [Fraction(2, 3), Fraction(1, 3)], 1, 0.0)]
    b = MulBracket(blocks, h=1e-3)
    assert b.zero == pytest.approx(1 - (2 / 3) ** 2)  # source: 1 - (1 - p0)^k
    for x in (-4.5, -2.0, -1e-9, 0.0, 1.0, 3.0, 4.5):
        truth = np.mean(eig <= x + 1e-9 * (x == 0))
        sign = 0 if x == 0 else (1 if x > 0 else -1)
        _, lo, hi = b.evaluate(np.array([sign]), np.array([math.log(abs(x)) if x else 0.0]))
        assert lo[0] <= truth <= hi[0], x


def test_direct_power_bracket_against_binomial_parity():
    # source: direct(K(3)^k) eigenvalues (-1)^j 2^(k-j), multiplicity C(k, j) 2^j (K(3) spectrum
    # {2, -1, -1}); P(S <= -2^m) = sum over odd j <= k - m of C(k, j) 2^j / 3^k (Python ints)
    k = 3000
    terms = [math.comb(k, j) * 2**j for j in range(k + 1)]
    b = MulBracket([(np.array([-1.0, 2.0]), [Fraction(2, 3), Fraction(1, 3)], k, 0.0)], h=math.log(2))
    for m in (900, 1000, 1010, 1020, 1100):
        truth = Fraction(sum(terms[j] for j in range(1, k - m + 1, 2)), 3**k)
        _, lo, hi = b.evaluate(np.array([-1.0]), np.array([m * math.log(2) - 1e-9]))
        assert lo[0] <= truth <= hi[0], m
        assert hi[0] - lo[0] < 1e-6


def test_bracket_tier_reaches_ten_thousand_copies():
    # source: the torus C(5)^k has mean 0 and is symmetric about 0.5 in the bulk only up to
    # the atom at 0 -- checked here against the law tier's rigorous bounds (Berry-Esseen,
    # Shevtsova's constant): the two certified brackets must overlap, and the bracket meet tol
    a = cdf("cart(C(5)^10000)", 1.0, method="bracket", tol=1e-3)
    b = cdf("cart(C(5)^10000)", 1.0, method="law")
    assert a.upper - a.lower <= 1e-3
    assert max(a.lower, b.lower) <= min(a.upper, b.upper)
    q = quantile("cart(C(5)^10000)", 0.25, method="bracket", tol=1e-3)
    ql = quantile("cart(C(5)^10000)", 0.25, method="law")
    assert max(q.lower, ql.lower) <= min(q.upper, ql.upper)


def test_grid_limit_refused_before_work():
    v = np.array([0.0, 1.0, math.sqrt(2)])
    with pytest.raises(SizeLimitError):
        AddBracket([(v, [Fraction(1, 3)] * 3, 10**7, 0.0)], h=1e-6)
