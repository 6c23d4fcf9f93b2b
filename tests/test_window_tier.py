"""The window tier: exact counts of [a, b] from the compositions that may lie in it."""

from __future__ import annotations

import math

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

import powerspec as ps
from powerspec.algebra.engine import Engine
from powerspec.algebra.grammar import parse
from powerspec.algebra.kinds import PRODUCT_KINDS
from powerspec.algebra.window import compositions, window_counts
from tests.reference import eigenvalues, fold
from tests.strategies import factor_matrix


@settings(max_examples=60, deadline=None)
@given(factor_matrix(), factor_matrix(), st.integers(1, 4), st.integers(1, 3),
       st.sampled_from(["adjacency", "laplacian"]), st.data())
def test_window_counts_bracket_the_explicit_counts(a, b, ka, kb, kind, data):
    # source: numpy eigvalsh on the explicitly built Cartesian product (tests/reference.fold;
    # the Laplacian of a Cartesian product is the Cartesian product of the Laplacians)
    if a.shape[0] ** ka * b.shape[0] ** kb > 700:
        return
    if kind == "laplacian":  # no loops: the degree convention of a loop is not at issue here
        np.fill_diagonal(a, 0.0)
        np.fill_diagonal(b, 0.0)
    node = ps.Product(PRODUCT_KINDS["cart"], ((ps.Leaf(ps.from_matrix(a, name="A")), ka),
                                             (ps.Leaf(ps.from_matrix(b, name="B")), kb)))
    mats = [a] * ka + [b] * kb
    if kind == "laplacian":
        mats = [np.diag(m.sum(axis=1)) - m for m in mats]
    want = np.sort(eigenvalues(fold(mats, 1.0, 0.0)).real)
    pool = sorted(set(np.round(want, 6).tolist()) | {float(want.min()) - 1, float(want.max()) + 1})
    lo_x = data.draw(st.sampled_from(pool))
    hi_x = data.draw(st.sampled_from([v for v in pool if v >= lo_x]))
    mid = (lo_x + hi_x) / 2
    for x0, x1 in ((lo_x, hi_x), (lo_x - 0.25, mid), (mid, hi_x + 0.3)):
        est, lo, hi, _, total = window_counts(Engine(), node, kind, x0, x1)
        assert total >= 1
        tol = 1e-7 * max(1.0, float(np.abs(want).max()))
        surely = int(np.sum((want >= x0 + tol) & (want <= x1 - tol)))
        maybe = int(np.sum((want >= x0 - tol) & (want <= x1 + tol)))
        assert lo <= maybe and hi >= surely, (x0, x1, lo, hi, surely, maybe)
        assert lo <= est <= hi
        if surely == maybe:  # no eigenvalue near an end: the count is decided exactly
            assert lo == hi == surely


def test_hypercube_window_closed_form():
    # source: Q_k closed form, eigenvalues k - 2j with multiplicity C(k, j)
    k = 1000
    est, lo, hi, cand, total = window_counts(Engine(), parse(f"cart(K(2)^{k})"), "adjacency",
                                             -10.0, 10.0)
    want = sum(math.comb(k, j) for j in range(k + 1) if abs(k - 2 * j) <= 10)
    assert (est, lo, hi) == (want, want, want)
    assert total == k + 1 and cand >= 11


def test_compositions_are_all_the_weak_compositions():
    # source: stars and bars, C(k + r - 1, r - 1) weak compositions of k into r parts
    for k, r in ((0, 3), (5, 1), (7, 3), (6, 4)):
        comps = compositions(k, r)
        assert comps.shape == (math.comb(k + r - 1, r - 1), r)
        assert np.all(comps.sum(axis=1) == k) and np.all(comps >= 0)
        assert len({tuple(row) for row in comps.tolist()}) == len(comps)


def test_window_count_agrees_with_the_full_exact_tier():
    # source: the full certified spectrum (exact tier) of the same product, counted over [0, 2]:
    # atoms of A(C_5)^{box 200} lie exactly at 0 and near 2, so both tiers bracket them alike
    node = "cart(C(5)^200)"
    full = ps.count(node, 0, 2, method="exact", limit=10**6)
    est, lo, hi, _, _ = window_counts(Engine(), parse(node), "adjacency", 0.0, 2.0)
    assert lo <= full.lower <= full.upper <= hi or (est, lo, hi) == (
        full.estimate, full.lower, full.upper)


def test_count_picks_the_window_over_the_full_spectrum():
    # the full spectrum of C(5)^1000 holds 501,501 atoms; the window certifies a few hundred
    got = ps.count("cart(C(5)^1000)", 0, 2)
    assert "compositions whose double-precision values" in got.method
    assert got.lower <= got.estimate <= got.upper


def _cycle5_count(k: int, lo: int, hi: int) -> int:
    """Eigenvalues of A(C_5)^{box k} in [lo, hi] (integers lo, hi), exactly: a copies on 2 and
    b, c (two ways each) on 2cos(2pi/5) = (sqrt5 - 1)/2 and 2cos(4pi/5) = -(sqrt5 + 1)/2, so the
    value is 2a - (b + c)/2 + (b - c) sqrt5 / 2; it is rational only when b = c."""
    total = 0
    for a in range(k + 1):
        for b in range(k - a + 1):
            c = k - a - b
            if b == c:
                inside = lo <= 2 * a - b <= hi
            else:  # irrational: never equal to an integer end, so floats decide
                v = 2 * a - (b + c) / 2 + (b - c) * math.sqrt(5) / 2
                inside = lo < v < hi
            if inside:
                total += math.comb(k, a) * math.comb(k - a, b) * 2 ** (b + c)
    return total


def test_values_beyond_the_double_range_are_not_dropped():
    # source: closed form -- direct(scale(1e100, K(2))^4, P(3)) has the eigenvalue 0 16 times
    # (2^4 sign patterns times P(3)'s 0) and the others overflow doubles (+-sqrt2 * 10^400); so
    # the count is 16 times that of C(5)^10 in [-1, 1] (exact enumeration, _cycle5_count).  The
    # float filter once turned the overflowing compositions into NaN and dropped them.
    want = 16 * _cycle5_count(10, -1, 1)
    for method in ("auto", "exact"):
        got = ps.count("cart(direct(scale(1e100, K(2))^4, P(3)), C(5)^10)", -1, 1, method=method)
        assert (got.estimate, got.lower, got.upper) == (want, want, want)


def test_many_candidates_fall_back_to_the_full_spectrum():
    # source: C_4 = K_2 box K_2, so cart(C(4)^1000) is Q_2000: eigenvalues 2000 - 2j with
    # multiplicity C(2000, j); |2000 - 2j| <= 300 for j in [850, 1150].  139,401 compositions may
    # lie in the window: certifying them would cost more than the full spectrum, which answers
    got = ps.count("cart(C(4)^1000)", -300, 300, method="exact")
    want = sum(math.comb(2000, j) for j in range(850, 1151))
    assert (got.estimate, got.lower, got.upper) == (want, want, want)


def test_auto_count_of_factors_scaled_past_the_double_range():
    # source: Q_k closed form -- K(2) = P(2), so this is Q_400 scaled by 10^306: eigenvalues
    # 10^306 (400 - 2j) with multiplicity C(400, j); only j = 200 (the value 0) lies in [-1, 1].
    # The bracket's grid origin once overflowed a double (OverflowError) under auto.
    w = "scale(1e100, scale(1e100, scale(1e100, scale(1e6, {}))))"
    expr = f"cart({w.format('K(2)')}^200, {w.format('P(2)')}^200)"
    got = ps.count(expr, -1, 1)
    want = math.comb(400, 200)
    assert got.lower <= want <= got.upper and got.upper - got.lower <= want // 10**6
