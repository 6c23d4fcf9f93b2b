"""Non-factoring Laplacians: cdf/count/quantile bounds hold whichever tier answers.

Small products are answered exactly (explicit build or symmetry reduction); the moment
bounds (Chebyshev-Markov-Stieltjes from exact moments) are checked on the same cases
directly, and through the planner where no exact route exists.
"""

from __future__ import annotations

import numpy as np
import pytest

import powerspec as ps
from powerspec.tiers.momentbounds import cdf_bounds_from_moments
from tests.reference import kron_product


def _explicit_laplacian(a, b, ca, cb, signless=False):
    m = kron_product(a, b, ca, cb)
    d = np.diag(m.sum(1))
    return d + m if signless else d - m


CASES = [
    ("direct(P(3), K(1, 4))", "p3", "s4", 0.0, 1.0),
    ("strong(P(3), K(1, 3))", "p3", "s3", 1.0, 1.0),
    ("direct(P(4), P(3))", "p4", "p3", 0.0, 1.0),
]


def _mats():
    p = {n: ps.P(n).adjacency.toarray() for n in (3, 4)}
    s = {n: ps.K(1, n).adjacency.toarray() for n in (3, 4)}
    return {"p3": p[3], "p4": p[4], "s3": s[3], "s4": s[4]}


@pytest.mark.parametrize("expr,fa,fb,ca,cb", CASES)
@pytest.mark.parametrize("kind", ["laplacian", "signless"])
def test_moment_fallback_bounds_hold(expr, fa, fb, ca, cb, kind):
    m = _mats()
    # source: numpy.linalg.eigvalsh on D -+ A of the product built with scipy.sparse.kron
    ev = np.sort(np.linalg.eigvalsh(_explicit_laplacian(m[fa], m[fb], ca, cb, kind == "signless")))
    n = len(ev)
    # points between distinct eigenvalues (numpy's values carry rounding, so none sits on one)
    distinct = np.unique(np.round(ev, 8))
    mids = (distinct[:-1] + distinct[1:]) / 2
    for x in np.r_[distinct[0] - 1, mids[:: max(1, len(mids) // 5)], distinct[-1] + 1]:
        a = ps.cdf(expr, float(x), kind)
        truth = np.sum(ev <= x + 1e-12) / n
        assert a.lower - 1e-12 <= truth <= a.upper + 1e-12
        assert a.method.startswith("exact")
        lo, hi, how = cdf_bounds_from_moments(ps.parse(expr), kind, float(x))
        assert lo - 1e-12 <= truth <= hi + 1e-12
    for lo_x, hi_x in ((0.0, 2.0), (1.0, 4.5)):
        c = ps.count(expr, lo_x, hi_x, kind)
        truth = int(np.sum((ev >= lo_x - 1e-12) & (ev <= hi_x + 1e-12)))
        assert c.lower <= truth <= c.upper
    for q in (0.1, 0.7):
        qa = ps.quantile(expr, q, kind)
        truth = ev[int(np.ceil(q * n)) - 1]  # smallest x with F(x) >= q
        assert qa.lower - 1e-9 <= truth <= qa.upper + 1e-9


def test_exact_method_answers_small_non_factoring_products():
    # source: numpy.linalg.eigvalsh on D - A of the explicit 15-vertex product; x = 0.5 lies
    # strictly between eigenvalues, so the exact tier's bounds are one number (rounded outward)
    m = _mats()
    ev = np.linalg.eigvalsh(_explicit_laplacian(m["p3"], m["s4"], 0.0, 1.0))
    a = ps.cdf("direct(P(3), K(1, 4))", 0.5, "laplacian", method="exact")
    truth = np.sum(ev <= 0.5) / len(ev)
    assert a.method.startswith("exact") and a.lower <= truth <= a.upper and a.upper - a.lower < 1e-15


def test_moment_fallback_where_no_exact_route():
    # a power of a product of irregular factors: no rule, no symmetry operands, 12^6 vertices
    a = ps.cdf("direct(cart(P(3), K(1, 3))^6)", 10.0, "laplacian")
    assert "moments" in a.method and 0 <= a.lower <= a.upper <= 1


def test_one_irregular_factor_distribution_tiers_hold():
    # Past the exact tier (small limit), the bracket/law tiers have no rule for this
    # Laplacian; the answer must still contain the exact one (moment bounds).
    # source: the exact tier with the default limit (block construction, checked against numpy)
    e = "direct(P(3), cart(C(5)^3))"
    for x in (3.0, 7.5, 11.0):
        exact = ps.cdf(e, x, "laplacian")
        bounded = ps.cdf(e, x, "laplacian", limit=20)
        assert bounded.lower - 1e-12 <= exact.lower <= exact.upper <= bounded.upper + 1e-12
