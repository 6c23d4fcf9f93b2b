"""The ends tier: exact counts from the atoms at one end of the spectrum plus a tail ball."""

from __future__ import annotations

import math
from fractions import Fraction

import numpy as np
import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st

import powerspec as ps
from powerspec.algebra.engine import Engine
from powerspec.algebra.grammar import parse
from powerspec.algebra.kinds import PRODUCT_KINDS
from powerspec.errors import SizeLimitError
from powerspec.queries.distsource import ends_tiers
from tests.reference import eigenvalues, fold
from tests.strategies import factor_matrix

RULES = {"cart": (1.0, 0.0), "direct": (0.0, 1.0), "strong": (1.0, 1.0)}


def true_counts(want: np.ndarray, x: float) -> tuple[int, int]:
    """(#eigenvalues < x, #eigenvalues <= x) of numpy's eigenvalues, which are known only to
    about 1e-9 here: the caller keeps x away from them."""
    return int(np.sum(want < x)), int(np.sum(want <= x))


@settings(max_examples=60, deadline=None)
@given(factor_matrix(), factor_matrix(), st.sampled_from(sorted(RULES)), st.integers(1, 4),
       st.integers(1, 3))
def test_ends_tier_brackets_the_explicit_counts(a, b, kind, ka, kb):
    # source: numpy eigvalsh on the explicitly built product (tests/reference.fold): every ends
    # tier brackets the true count at every point, and is exact on the listed side of its edge
    assume(a.shape[0] ** ka * b.shape[0] ** kb <= 700)
    ca, cb = RULES[kind]
    node = ps.Product(PRODUCT_KINDS[kind], ((ps.Leaf(ps.from_matrix(a, name="A")), ka),
                                            (ps.Leaf(ps.from_matrix(b, name="B")), kb)))
    want = np.sort(eigenvalues(fold([a] * ka + [b] * kb, ca, cb)).real)
    distinct = np.unique(np.round(want, 7))
    mids = (distinct[:-1] + distinct[1:]) / 2
    far = [distinct[0] - 1.0, distinct[-1] + 1.0]
    points = np.concatenate([mids, far])
    seen = 0
    for tier in ends_tiers(Engine(), node, "adjacency", budget=1.0):
        seen += 1
        assert tier.order == len(want)
        for x in points:
            if np.min(np.abs(want - x)) < 1e-6 * max(1.0, np.abs(want).max()):
                continue  # too close to an eigenvalue for numpy's digits to decide
            below, upto = true_counts(want, x)
            for strict, truth in ((True, below), (False, upto)):
                est, lo, hi = tier.counts(float(x), strict)
                assert lo <= truth <= hi, (kind, ka, kb, x, lo, truth, hi)
                listed_side = x < tier.edge if tier.bottom else x > tier.edge
                if listed_side and np.all(tier.atoms.radius[:tier.listed] < 1e-9):
                    assert lo == hi == truth
    assert seen >= 1


def test_cycle_laplacian_bottom_counts_closed_form():
    # source: textbook spectrum of L(C_5): 0, (5 - sqrt 5)/2 (twice), (5 + sqrt 5)/2 (twice);
    # Cartesian sums: 0 once, 1.38 in 2k ways, 2.76 in 4 C(k, 2) ways; 3.62 > 3
    for k in (1000, 3000, 10**6):
        got = ps.count(f"cart(C(5)^{k})", 0, 3, matrix="laplacian", method="exact")
        want = 1 + 2 * k + 4 * math.comb(k, 2)
        assert (got.estimate, got.lower, got.upper) == (want, want, want)
        if k == 10**6:  # past the window tier's 4 * 10^6 compositions: the ends answer
            assert "smallest distinct eigenvalues by best-first search" in got.method


def test_hypercube_top_window_closed_form():
    # source: Q_k closed form, eigenvalues k - 2j with multiplicity C(k, j)
    k = 10**6  # the full spectrum (10^6 + 1 atoms of up to 10^6 bits) is past the exact tier
    got = ps.count(f"cart(K(2)^{k})", k - 7, k + 1, method="exact")
    want = sum(math.comb(k, j) for j in range(4))
    assert (got.estimate, got.lower, got.upper) == (want, want, want)
    assert got.method.startswith("exact")  # the window tier or the ends tier
    tiers = ends_tiers(Engine(), parse(f"cart(K(2)^{k})"), "adjacency", budget=1.0)
    top = next(t for t in tiers if not t.bottom)
    assert top.counts(k + 1.0, False)[0] - top.counts(k - 7.0, True)[0] == want


def test_auto_prefers_the_ends_over_a_costly_full_spectrum():
    # the full spectrum of C(5)^1000 (501501 atoms) would cost seconds; the law's bounds are
    # loose this far out, so auto refines them from the top of the spectrum
    got = ps.count("cart(C(5)^1000)", 1995.5, 2000)
    # source: textbook spectrum of A(C_5): 2, 2cos(2pi/5) (twice), 2cos(4pi/5) (twice).  Below
    # 2000 by d1 = 2 - 2cos(2pi/5) = 1.382 or d2 = 2 - 2cos(4pi/5) = 3.618 per coordinate,
    # two ways each: 2000 (once), -d1 (2000 ways), -2 d1 (4 C(1000, 2)), -3 d1 (8 C(1000, 3)),
    # -d2 (2000 ways); next is -d1 - d2 = 1995 exactly, outside the window
    want = 1 + 2000 + 4 * math.comb(1000, 2) + 8 * math.comb(1000, 3) + 2000
    assert (got.estimate, got.lower, got.upper) == (want, want, want)
    assert got.method.startswith("exact")  # the window tier (501,501 compositions) or the ends


def test_quantile_among_the_listed_atoms():
    # source: textbook spectrum of L(C_5) as above: the 2nd..2001st smallest eigenvalues are
    # (5 - sqrt 5)/2
    k = 3000
    got = ps.quantile(f"cart(C(5)^{k})", Fraction(3, 5**k), matrix="laplacian", method="exact")
    exact = (5 - math.sqrt(5)) / 2
    assert got.lower <= exact <= got.upper and got.upper - got.lower < 1e-12


def test_exact_method_refuses_where_the_ends_do_not_reach():
    # the bulk of a spectrum past the exact limit: neither the full spectrum nor the ends
    with pytest.raises(SizeLimitError):
        ps.count("cart(C(5)^100000)", 0, 1, matrix="adjacency", method="exact")


def test_exact_tier_rounds_ball_ends_outward():
    # an atom at 1 with radius 1e-20 (below half an ulp of 1): it may lie on either side of 1,
    # so it is possible but not certain at x = 1 for both <= 1 and < 1
    from powerspec.queries.disttiers import Atoms, ExactTier

    t = ExactTier(Atoms(np.array([1.0]), [5], np.array([1e-20]), 5, True))
    assert t.counts(1.0, False)[1:] == (0, 5)
    assert t.counts(1.0, True)[1:] == (0, 5)
    assert t.counts(1.0 + 2**-52, False)[1:] == (5, 5)


def test_counts_kept_factored_compare_with_near_neighbours():
    # source: exact integer arithmetic -- 5^(10^6) - 7 < 5^(10^6), and differences that settle
    # to plain ints (here 1) still compare
    from powerspec.numbers.counts import BigCount

    n = BigCount.power(5, 10**6)
    assert n - 7 < n and n > n - 7 and not (n < n - 7)
    assert min(n, n - 7) == n - 7 and (n - 3) > (n - 4)


def test_bulk_count_of_a_factored_order_answers():
    # the ends search runs (the law's bounds are loose) and must not trip on the factored order;
    # source: the window [0, 10] lies in the bulk (mean 0, variance 2 * 10^6), so no exact count
    got = ps.count("cart(C(5)^1000000)", 0, 10)
    assert got.method.startswith("law") and got.lower <= got.estimate <= got.upper


def test_count_estimate_lies_within_its_integer_bounds():
    # the estimate is a float n * fraction; the bounds are integers rounded inward from certified
    # fractions: the estimate is clamped into them (it once read 2.0000000000000004 above 2)
    got = ps.count("direct(C(5)^2, P(3)^2)", -9, -8)
    assert got.lower <= got.estimate <= got.upper
