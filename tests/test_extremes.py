"""`top` (best-first extremes) against closed forms and the full exact spectrum."""

from __future__ import annotations

import math

import mpmath
import numpy as np
import pytest
from flint import arb, ctx
from hypothesis import assume, given, settings
from hypothesis import strategies as st

import powerspec as ps
from powerspec.algebra.extremes import select
from powerspec.errors import SizeLimitError
from tests.reference import eigenvalues, expand, fold
from tests.strategies import factor_matrix


def top_atoms(expr, m, **kw):
    return ps.top(expr, m, **kw).atoms.atoms()


def test_hypercube_top_huge_k():
    # source: Q_k closed form, eigenvalues k - 2j with multiplicity C(k, j)
    k = 10**9
    got = top_atoms(f"cart(K(2)^{k})", 3)
    assert got == [(float(k - 2 * j), math.comb(k, j)) for j in (2, 1, 0)]
    got = top_atoms(f"cart(K(2)^{k})", 2, bottom=True)
    assert got == [(float(-k), 1), (float(-k + 2), k)]


def test_hamming_top_huge_k():
    # source: Hamming graph H(k, q) = cart(K_q^k): eigenvalues (q-1)k - qj with
    # multiplicity C(k, j)(q-1)^j (Brouwer & Haemers, Spectra of Graphs -- from memory)
    q, k = 4, 10**6
    got = top_atoms(f"cart(K({q})^{k})", 3)
    want = [(float((q - 1) * k - q * j), math.comb(k, j) * (q - 1) ** j) for j in (2, 1, 0)]
    assert got == want


@pytest.mark.parametrize("k", [6, 7, 40, 41])
def test_direct_power_with_negative_eigenvalues(k):
    # source: closed form -- P(3) has eigenvalues -sqrt2, 0, sqrt2; the direct power has
    # +-2^(k/2) (sign by parity of the number of negative picks) and 0.  For even k the
    # largest value 2^(k/2) has multiplicity 2^(k-1) (even number of -sqrt2 picks).
    got = top_atoms(f"direct(P(3)^{k})", 1)
    (v, m), = got
    assert math.isclose(float(v), 2 ** (k / 2), rel_tol=1e-12)
    assert m == 2 ** (k - 1)
    bot = top_atoms(f"direct(P(3)^{k})", 1, bottom=True)
    assert math.isclose(float(bot[0][0]), -(2 ** (k / 2)), rel_tol=1e-12)
    assert bot[0][1] == 2 ** (k - 1)


def test_direct_top_most_negative_factor_value():
    # loops(-3, K(2)) has eigenvalues -2 and -4; direct square: 16 (from (-4)^2) is the top.
    # source: closed form products of {-2, -4}
    got = top_atoms("direct(loops(-3, K(2))^2)", 3)
    assert got == [(4.0, 1), (8.0, 2), (16.0, 1)]
    got3 = top_atoms("direct(loops(-3, K(2))^3)", 2)
    # k odd: all values negative; largest are -8 (once) and -16 (three times)
    assert got3 == [(-16.0, 3), (-8.0, 1)]


def test_direct_power_overflow_log_form():
    # source: closed form, K(3) eigenvalues 2, -1, -1: top of the direct power is 2^k
    k = 10**6
    (v, m), = top_atoms(f"direct(K(3)^{k})", 1)
    assert isinstance(v, mpmath.mpf)
    assert mpmath.almosteq(mpmath.log(v), k * mpmath.log(2), 1e-9)
    assert m == 1


def test_strong_top_any_k():
    # source: strong(K_q^k) = K_{q^k}; top eigenvalue q^k - 1 with multiplicity 1
    (v, m), = top_atoms("strong(K(3)^50)", 1)
    assert math.isclose(float(v), 3.0**50 - 1, rel_tol=1e-12) and m == 1


def test_huge_multiplicity_in_factored_form():
    # source: the strong power of K_3 is the complete graph on N = 3^k vertices (textbook:
    # K_m strong K_n = K_mn, from memory), eigenvalues N - 1 once and -1 with multiplicity N - 1
    atoms = ps.top("strong(K(3)^1000000000)", 2).atoms
    assert str(atoms.mult[0]) == "3^1000000000 - 1" and atoms.atoms()[0][0] == -1.0
    assert atoms.mult[1] == 1


def test_mixed_expression_top():
    # source: numpy eigvalsh on the explicit product direct(P(3)^4, C(5))
    p3 = np.array([[0, 1, 0], [1, 0, 1], [0, 1, 0]], float)
    c5 = np.roll(np.eye(5), 1, 1)
    c5 = c5 + c5.T
    explicit = fold([p3, p3, p3, p3], 0.0, 1.0)
    explicit = np.kron(explicit, c5)
    want = np.sort(np.linalg.eigvalsh(explicit))
    got = top_atoms("direct(P(3)^4, C(5))", 2, limit=5)
    vals = [v for v, _ in got]
    assert abs(vals[-1] - want[-1]) < 1e-9
    assert sum(m for _, m in got) == int(np.sum(want > vals[0] - 1e-9))


@pytest.mark.parametrize("expr", [
    "cart(dicycle(5)^3)", "direct(dicycle(4)^3, P(2))", "cart(dicycle(3), C(4)^2)",
    "direct(dicycle(6)^4)",
])
def test_complex_spectra_ordered_by_real_part(expr):
    # source: the full exact spectrum (checked against numpy in test_engine), sorted by real
    # part: top() with a tiny limit must return the same leading atoms via best-first search
    full = ps.spectrum(expr).atoms
    for bottom in (False, True):
        got = top_atoms(expr, 3, bottom=bottom, limit=2)
        # conjugate pairs (equal real parts) are never split, so ties extend the selection
        want = select(full, 3, bottom).atoms()
        assert len(got) == len(want)
        for (a, ma), (b, mb) in zip(got, want, strict=True):
            assert abs(complex(a) - complex(b)) < 1e-9 and ma == mb


@settings(max_examples=80, deadline=None)
@given(factor_matrix(), factor_matrix(), st.sampled_from(["cart", "direct", "strong"]),
       st.integers(1, 4), st.integers(1, 3), st.integers(1, 4), st.booleans())
def test_best_first_equals_full_spectrum(a, b, kind, ka, kb, m, bottom):
    # source: numpy eigvalsh on the explicitly built product (tests/reference.fold), the
    # m extreme distinct values and their counts
    assume(a.shape[0] ** ka * b.shape[0] ** kb <= 700)  # keep the explicit build small
    ca, cb = {"cart": (1.0, 0.0), "direct": (0.0, 1.0), "strong": (1.0, 1.0)}[kind]
    fa, fb = ps.from_matrix(a, name="A"), ps.from_matrix(b, name="B")
    node = ps.Product(ps.algebra.kinds.PRODUCT_KINDS[kind], ((ps.Leaf(fa), ka), (ps.Leaf(fb), kb)))
    explicit = fold([a] * ka + [b] * kb, ca, cb)
    want = np.sort(eigenvalues(explicit).real)
    got = ps.top(node, m, bottom=bottom, limit=1).atoms
    vals = expand(got).real
    scale = max(1.0, np.abs(want).max())
    # the returned values are the extreme ones, with exact multiplicities
    cut = vals.min() if not bottom else vals.max()
    inside = want[want >= cut - 1e-7 * scale] if not bottom else want[want <= cut + 1e-7 * scale]
    assert len(inside) == len(vals)
    assert np.max(np.abs(np.sort(inside) - np.sort(vals))) < 1e-7 * scale
    distinct = len(ps.spectrum(node).atoms)
    assert len(got) == min(m, distinct)  # real spectra: exactly m (or all) distinct values


def test_one_irregular_factor_laplacian_beyond_the_limit():
    # The Laplacian of direct(P(3), H) with H regular has no combination rule; with a limit
    # below the product's bound, top must still agree with the full exact spectrum (or refuse),
    # never apply the regular-graph transform with a wrong degree.
    # source: the full spectrum (block construction, checked against numpy in test_engine)
    e = "direct(P(3), cart(C(5)^20))"
    full = ps.spectrum(e, "laplacian").atoms
    got = ps.top(e, 2, "laplacian", limit=300).atoms.atoms()
    assert got == select(full, 2, False).atoms()
    with pytest.raises(ps.NotExactError):
        ps.top(e, 2, "laplacian", limit=30)


def _inside(ball, truth) -> bool:
    """The mpmath value (120 digits) lies in the certified ball: compared at 400 bits."""
    old = ctx.prec
    ctx.prec = 400
    try:
        return bool(ball.contains(arb(mpmath.nstr(truth, 110))))
    finally:
        ctx.prec = old


def test_bottom_of_strong_powers_with_positive_shifted_values():
    # Every 1 + lambda of scale(1/10, K(3)) is positive (1.2, 0.9, 0.9), so the smallest
    # eigenvalues of the strong power are the smallest products: the search runs up from the
    # smallest magnitudes.  Source: the strong-product rule prod (1 + lambda_i) - 1 (DESIGN
    # section 2) with K(3)'s eigenvalues 2, -1, -1 (textbook), evaluated in mpmath at 80 digits;
    # multiplicities C(k, a) 2^(k - a) for a copies at 1.2 (exact integers)
    from powerspec.queries import planner
    k = 1000
    ans = planner.top(f"strong(scale(1/10, K(3))^{k})", m=3, bottom=True)
    atoms = ans.atoms.atoms()
    balls = ans.atoms.balls()
    # the factor holds the double nearest 1/10 (matrices are float64): the reference uses it
    w = mpmath.mpf(0.1)
    with mpmath.workdps(120):
        for a, (ball, (_, mult)) in enumerate(zip(balls, atoms, strict=True)):
            truth = (1 + 2 * w) ** a * (1 - w) ** (k - a) - 1
            assert _inside(ball, truth), (a, ball, truth)
            assert int(mult) == math.comb(k, a) * 2 ** (k - a)
    # at k = 10^6 those values are within 10^-45000 of -1, beyond 160-bit separation: refused
    with pytest.raises(SizeLimitError, match="closer together than 160-bit"):
        planner.top("strong(scale(1/10, K(3))^1000000)", m=3, bottom=True)


def test_bottom_of_a_strong_power_of_a_tiny_weight():
    # source: C(7) eigenvalues 2cos(2 pi j/7) (textbook); 1 + 1e-12 * 2cos(6 pi/7) is the smallest
    # 1 + lambda (j = 3, 4), so the smallest eigenvalue of the strong 1000th power is
    # (1 + 2e-12 cos(6 pi/7))^1000 - 1 with multiplicity 2^1000 (mpmath, 60 digits)
    from powerspec.queries import planner
    ans = planner.top("strong(scale(1/1000000000000, C(7))^1000)", m=1, bottom=True)
    (ball,), ((_, mult),) = ans.atoms.balls(), ans.atoms.atoms()
    with mpmath.workdps(120):  # the weight is the double nearest 10^-12, as the factor holds it
        truth = (1 + mpmath.mpf(1e-12) * 2 * mpmath.cos(6 * mpmath.pi / 7)) ** 1000 - 1
        assert _inside(ball, truth), (ball, truth)
    assert int(mult) == 2**1000


def test_exact_class_powers_stay_exact():
    # strong(K(3)^700) is the complete graph on N = 3^700 vertices (K(3)'s 1 + lambda are 3 and
    # 0, so every product is 3^700 - 1 once or -1): its Laplacian is N I - J, eigenvalues N
    # (N - 1 times) and 0 -- textbook; both must come back as exact integers, not balls
    from powerspec.queries import planner
    ans = planner.top("strong(K(3)^700)", m=2, matrix="laplacian")
    assert ans.atoms.is_exact
    (zero, top), (m_zero, m_top) = ans.atoms.balls(), ans.atoms.mult.tolist()  # ascending
    assert zero == 0 and int(m_zero) == 1
    assert top == 3**700 and int(m_top) == 3**700 - 1
