"""cdf / count / quantile against exact counts, binomial sums and explicit products."""

from __future__ import annotations

import math
import random
from fractions import Fraction

import mpmath
import numpy as np
import pytest

import powerspec as ps
from powerspec.queries.distribution import _Query, cdf, count, quantile
from tests.reference import fold


def within(lo, truth, hi) -> bool:
    """lo <= truth <= hi compared in mpmath (bounds below the double range are mpmath numbers)."""
    t = mpmath.mpf(truth.numerator) / truth.denominator if isinstance(truth, Fraction) else truth
    return mpmath.mpf(lo) <= t <= mpmath.mpf(hi)


def hypercube_cdf(k: int, x: float) -> Fraction:
    # source: Q_k has eigenvalue k - 2j with multiplicity C(k, j) (Brouwer & Haemers,
    # Spectra of Graphs, §1.4.6 -- from memory); summed with Python integers
    return Fraction(sum(math.comb(k, j) for j in range(k + 1) if k - 2 * j <= x), 2**k)


# ------------------------------------------------------------- hypercube
@pytest.mark.parametrize("k", [10, 200, 2000])
def test_hypercube_every_tier_brackets_binomial_sum(k):
    expr = f"cart(K(2)^{k})"
    xs = sorted({-k - 1.0, -k, -k + 0.5, float(-k // 2), -3.0, 0.0, 0.5, 1.0, 7.0,
                 float(k // 3), k - 2.0, float(k), k + 3.0})
    worst = 0.0
    for method in ("exact", "bracket", "law"):
        for x in xs:
            a = cdf(expr, x, method=method)
            truth = hypercube_cdf(k, x)
            assert within(a.lower, truth, a.upper), (method, x, a.lower, float(truth), a.upper)
            if method == "law":
                worst = max(worst, abs(a.estimate - float(truth)))
            if method == "exact":
                assert Fraction(a.estimate) == Fraction(float(truth))  # exact counts
    print(f"hypercube k={k}: largest law-estimate error {worst:.3g}")


def test_hypercube_count_and_quantile():
    k = 1000
    n = 2**k
    # source: binomial sums with Python integers (closed form above)
    want = sum(math.comb(k, j) for j in range(k + 1) if -10 <= k - 2 * j <= 10)
    for method in ("exact", "bracket", "law"):
        a = count(f"cart(K(2)^{k})", -10, 10, method=method)
        assert a.lower <= want <= a.upper, method
    assert count(f"cart(K(2)^{k})", -10, 10, method="exact").estimate == want
    assert n == ps.spectrum(f"cart(K(2)^{k})").atoms.order
    # quantile: the exact q-quantile is the smallest k - 2j with cdf >= q (binomial sums)
    cum, run = {}, 0
    for j in range(k, -1, -1):  # eigenvalue k - 2j ascending
        run += math.comb(k, j)
        cum[k - 2 * j] = Fraction(run, n)
    for q in (0.01, 0.5, 0.93):
        exact_q = min(x for x in cum if cum[x] >= q)
        for method in ("exact", "bracket", "law"):
            a = quantile(f"cart(K(2)^{k})", q, method=method)
            assert a.lower <= exact_q <= a.upper, (q, method, a.lower, exact_q, a.upper)
        assert quantile(f"cart(K(2)^{k})", q, method="exact").estimate == exact_q


# --------------------------------------------------------------- coverage
FACTORS = ["P(3)", "K(1, 3)", "C(4)", "C(5)", "K(3)", "K(2)", "motif()",
           "P(4)", "K(2, 3)", "loops(0.5, P(3))", "dicycle(5)"]
KINDS = ["cart(", "direct(", "strong(", "mix(1, 0.5, ", "mix(0, 2, "]


def _cases(n_cases: int, seed: int = 7):
    rng = random.Random(seed)
    out = []
    while len(out) < n_cases:
        f = rng.choice(FACTORS)
        kind = rng.choice(KINDS)
        if f == "dicycle(5)" and kind != "cart(":
            continue  # complex spectra under multiplicative rules: exact tier only
        k = rng.choice([2, 3, 4, 6, 9, 13])
        extra = rng.choice(["", "", ", C(5)", ", P(3)"])
        out.append(f"{kind}{f}^{k}{extra})")
    return out


def _truth(spec, x, strict=False):
    re = spec.real_parts()
    sel = re < x if strict else re <= x
    return Fraction(int(sum(m for m, s in zip(spec.mult.tolist(), sel, strict=True) if s)), spec.order)


def test_coverage_bracket_and_law_contain_truth():
    worst = {"bracket": 0.0, "law": 0.0}
    checked = 0
    for expr in _cases(60):
        q = _Query(expr, "adjacency", "auto", None, None, "out")
        spec = q.eng.spectrum(q.node, "adjacency")  # exact enumeration (cross-checked below)
        re = np.unique(spec.real_parts())
        mids = (re[1:] + re[:-1]) / 2 if re.size > 1 else re
        rng = np.random.default_rng(len(expr))
        xs = list(rng.choice(mids, size=min(6, mids.size), replace=False))
        xs += [float(re[0]) - 1.0, float(re[-1]) + 1.0, float(np.median(re))]
        tiers = {"bracket": q.bracket(1e-2), "law": q.law()}
        for name, tier in tiers.items():
            for x in xs:
                est, lo, hi = q.x_cdf(tier, float(x))
                truth = _truth(spec, float(x))
                assert within(lo, truth, hi), (expr, name, x, lo, float(truth), hi)
                claimed = max(hi - est, est - lo)
                if claimed > 0:
                    worst[name] = max(worst[name], abs(est - float(truth)) / claimed)
                checked += 1
    print(f"coverage: {checked} (case, x) checks; worst |error| / claimed bound: {worst}")
    assert checked >= 900


@pytest.mark.parametrize("expr,a,b", [
    ("direct(P(3)^3, C(5))", 0.0, 1.0),
    ("strong(K(1, 3)^2, C(4))", 1.0, 1.0),
    ("mix(1, 0.5, K(3)^3)", 1.0, 0.5),
    ("mix(0, 2, P(4)^2, C(5))", 0.0, 2.0),
    ("cart(motif()^2, P(3))", 1.0, 0.0),
])
def test_every_tier_contains_numpy_truth(expr, a, b):
    # source: numpy.linalg.eigvalsh on the product built with scipy.sparse.kron (tests/reference)
    node = ps.parse(expr)
    mats = [child.factor.adjacency.toarray() for child, k in node.operands for _ in range(k)]
    explicit = fold(mats, a, b)
    eig = np.linalg.eigvalsh(explicit)
    for x in np.quantile(eig, [0.1, 0.37, 0.5, 0.81]) + 1e-7:
        truth = np.mean(eig <= x)
        for method in ("exact", "bracket", "law"):
            r = cdf(expr, float(x), method=method)
            assert r.lower - 1e-12 <= truth <= r.upper + 1e-12, (method, x)


# ----------------------------------------------------------- zero share
@pytest.mark.parametrize("factor,n,zeros", [("K(1, 3)", 4, 2), ("P(3)", 3, 1), ("P(5)", 5, 1)])
@pytest.mark.parametrize("k", [2, 4, 9])
def test_direct_power_zero_share_exact(factor, n, zeros, k):
    # source: a product of k factor eigenvalues is 0 iff one of them is; K(1, n) has n-2 zero
    # eigenvalues and path(odd) one (textbook spectra, from memory): share 1 - (1 - p0)^k
    p0 = Fraction(zeros, n)
    share = 1 - (1 - p0) ** k
    a = count(f"direct({factor}^{k})", 0, 0, method="exact")
    assert Fraction(a.estimate, a.order) == share
    law = count(f"direct({factor}^{k})", 0, 0, method="law")
    assert law.lower <= a.estimate <= law.upper
    q = _Query(f"direct({factor}^{k})", "adjacency", "law", None, None, "out")
    assert abs(q.law().law.zero - float(share)) < 1e-15


def test_zero_share_huge_power():
    # source: 1 - (2/3)^k evaluated with mpmath (P(3) has one zero eigenvalue of three)
    a = cdf("direct(P(3)^1000000000)", 0.0, method="law")
    want = 1 - mpmath.power(mpmath.mpf(2) / 3, 10**9) / 2  # zero mass + negative half
    assert a.lower <= want <= a.upper


# ------------------------------------------------------------- big powers
def test_huge_powers_answer_quickly():
    a = cdf("cart(C(5)^1000000000)", 0.0)
    assert a.method.startswith("law") and 0 <= a.lower <= a.estimate <= a.upper <= 1
    # source: symmetric-about-the-mean? no -- C(5) has mean 0 (trace 0), so cdf(0) is about 1/2
    assert abs(a.estimate - 0.5) < 1e-3
    c = count("cart(K(3)^1000000000)", -1e9, 2e9)
    assert c.upper == c.order or isinstance(c.upper, mpmath.mpf)
    qd = quantile("direct(K(3)^1000000)", 0.9, method="law")
    # source: the 0.9-quantile of 2^a (-1)^b is positive (P(S > 0) = (1 + (-1/3)^k) / 2 = 1/2)
    assert qd.lower <= qd.estimate <= qd.upper and qd.estimate > 0


# ------------------------------------------------------------------ errors
def test_errors():
    with pytest.raises(ps.InputError):
        cdf("cart(C(5)^3)", 0.0, method="fast")
    for bad in (0, -1e-3, float("nan"), True):
        with pytest.raises(ps.InputError):
            cdf("cart(C(5)^3)", 0.0, tol=bad)
    for q in (0, 1, -0.5, 1.5, float("nan")):
        with pytest.raises(ps.InputError):
            quantile("cart(C(5)^3)", q)
    for x in (float("inf"), float("nan"), "1"):
        with pytest.raises(ps.InputError):
            cdf("cart(C(5)^3)", x)
    with pytest.raises(ps.InputError):
        count("cart(C(5)^3)", 2.0, 1.0)
    with pytest.raises(ps.SizeLimitError):
        cdf("cart(motif()^100000)", 0.0, method="bracket", tol=1e-6)
    with pytest.raises(ps.SizeLimitError):
        cdf("cart(motif()^100000)", 0.0, method="exact")
    with pytest.raises(ps.NotExactError):
        cdf("mix(2, 1, P(3)^40)", 0.0, method="law")
    with pytest.raises(ps.NotExactError):
        cdf("direct(P(3)^40)", 0.0, "laplacian")
    with pytest.raises(ps.NotExactError):
        cdf("direct(dicycle(3)^40)", 0.0, method="law")


def test_auto_meets_tol_or_refuses():
    a = cdf("cart(C(5)^100000)", 3.0, tol=0.01)
    assert a.upper - a.lower <= 0.01
    assert a.inputs["tier"] in ("law", "bracket")
    # at the mean (k tr(A) / n, numpy trace) the law's Berry-Esseen width is far above 1e-7
    # and a bracket that narrow needs a grid beyond the limit
    mean = 10**7 * float(np.trace(ps.motif().adjacency.toarray())) / 9
    with pytest.raises(ps.SizeLimitError):
        cdf("cart(motif()^10000000)", mean, tol=1e-7)
    # far in the lower tail the law's Chernoff bound alone meets the same tolerance
    assert cdf("cart(motif()^10000000)", 3.0, tol=1e-7).inputs["tier"] == "law"
