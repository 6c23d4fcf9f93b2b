"""Exact moments tr(M^p) against closed forms, exact rational traces and numpy traces of explicit
builds."""

from __future__ import annotations

import math
from fractions import Fraction
from pathlib import Path

import numpy as np
import pytest
from flint import fmpq
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from powerspec.algebra.engine import Leaf, Product
from powerspec.algebra.grammar import parse
from powerspec.algebra.kinds import Combination
from powerspec.algebra.moment_traces import factor_matrix, matrix_traces, word_table
from powerspec.algebra.moments import MomentEngine, trace_moments
from powerspec.errors import InputError, NotExactError, SizeLimitError
from powerspec.factors import from_matrix
from powerspec.numbers.counts import BigCount, to_arb
from powerspec.numbers.hp import working
from powerspec.queries.moments import moment_answer
from tests.reference import fold

RNG = np.random.default_rng(20240611)


def _random_graph(n, weighted=False, directed=False, rng=RNG):
    a = (rng.random((n, n)) < 0.55).astype(float)
    if weighted:
        a *= rng.integers(1, 4, (n, n))
    np.fill_diagonal(a, 0)
    if not directed:
        a = np.triu(a, 1)
        a = a + a.T
    return a


def _kind_matrix(a, kind, direction="out"):
    d = a.sum(axis=1 if direction == "out" else 0)
    if kind == "adjacency":
        return a
    if kind in ("laplacian", "signless"):
        return np.diag(d) - a if kind == "laplacian" else np.diag(d) + a
    if kind == "transition":
        return a / d[:, None]
    s = 1 / np.sqrt(d)
    return np.eye(len(d)) - a * s[:, None] * s[None, :]


def _numpy_traces(m, order):
    return [float(np.trace(np.linalg.matrix_power(m, p))) for p in range(1, order + 1)]


def _close(got, want, rel=1e-9):
    for (_, g), w in zip(got, want, strict=True):
        scale = max(1.0, abs(w))
        assert abs(float(g) - w) <= rel * scale, (got, want)


# ------------------------------------------------------------------ exact rational references
def _fractions(a: np.ndarray) -> list[list[Fraction]]:
    return [[Fraction(float(x)) for x in row] for row in a]


def _fmatmul(x, y):
    n = len(x)
    return [[sum((x[i][k] * y[k][j] for k in range(n)), Fraction(0)) for j in range(n)]
            for i in range(n)]


def _kron(x, y):
    n, m = len(x), len(y)
    return [[x[i // m][j // m] * y[i % m][j % m] for j in range(n * m)] for i in range(n * m)]


def _exact_traces(mat, order):
    out, cur = [], mat
    for p in range(1, order + 1):
        if p > 1:
            cur = _fmatmul(cur, mat)
        out.append(sum((cur[i][i] for i in range(len(mat))), Fraction(0)))
    return out


def _exact_laplacian(adj):
    n = len(adj)
    d = [sum(row, Fraction(0)) for row in adj]
    return [[(d[i] if i == j else 0) - adj[i][j] for j in range(n)] for i in range(n)]


def test_decimal_weight_laplacian_defect(tmp_path: Path):
    # issue 8 defect 5: path 1-2 weight 0.1, 2-3 weight 1, direct with P(3), Laplacian.
    # source: numpy traces of the explicit D - A give 8.8, 21.4, 61.336; exact rational traces of
    # the explicit Kronecker product (Fractions of the float64 weights) must match exactly.
    f = tmp_path / "w.mtx"
    f.write_text("%%MatrixMarket matrix coordinate real symmetric\n3 3 2\n2 1 0.1\n3 2 1\n")
    node = parse(f'direct(load("{f}"), P(3))')
    got = trace_moments(node, "laplacian", order=3)
    w = np.array([[0, 0.1, 0], [0.1, 0, 1], [0, 1, 0]])
    p3 = np.array([[0, 1, 0], [1, 0, 1], [0, 1, 0.0]])
    adj = fold([w, p3], 0, 1)
    _close(got, [8.8, 21.4, 61.336], rel=1e-12)
    _close(got, _numpy_traces(_kind_matrix(adj, "laplacian"), 3))
    exact = _exact_traces(_exact_laplacian(_kron(_fractions(w), _fractions(p3))), 3)
    assert [v for _, v in got] == exact


@pytest.mark.parametrize("k", [1, 2, 5, 30, 1000])
def test_hypercube_closed_walks(k):
    # source: closed walks of Q_k (derived here): length 2 is an edge out and back, k 2^k; length 4
    # needs every used coordinate an even number of times: k + 6 C(k, 2) = 3k^2 - 2k per vertex.
    got = dict(trace_moments(parse(f"cart(K(2)^{k})"), order=4))
    assert got[2] == k * 2**k
    assert got[4] == 2**k * (3 * k * k - 2 * k)
    assert got[1] == got[3] == 0  # bipartite: no odd closed walks


def test_hypercube_huge_k_per_vertex_and_factored():
    # source: same derivation, per vertex tr(A^4)/2^k = 3k^2 - 2k, tr(A^2)/2^k = k;
    # the unnormalised tr(A^2) = k 2^k = 1953125 * 2^1000000009 for k = 10^9 = 1953125 * 2^9 (exact)
    k = 10**9
    got = dict(trace_moments(parse(f"cart(K(2)^{k})"), order=4, per_vertex=True))
    assert got[2] == k and got[4] == 3 * k * k - 2 * k
    big = dict(trace_moments(parse(f"cart(K(2)^{k})"), order=2))
    assert str(big[2]) == "1953125 * 2^1000000009"


def test_cartesian_motif_power_order_is_a_bigcount():
    # issue 8: moments of cart(motif()^1000000) (order 9^(10^6), a BigCount).  source: for a sum of
    # k independent copies, E[X^2] = k m2 + k(k-1) m1^2 with m_p = tr(A^p)/9 of the motif, computed
    # here with exact Fractions from its explicit matrix; tr = 9^k E[X^2].
    k = 10**6
    node = parse(f"cart(motif()^{k})")
    a = _fractions(node.leaves()[0].adjacency.toarray())
    m1 = _exact_traces(a, 1)[0] / 9
    m2 = _exact_traces(a, 2)[1] / 9
    tau = dict(trace_moments(node, order=2, per_vertex=True))
    assert Fraction(tau[2]) == k * m2 + k * (k - 1) * m1 * m1
    tr = dict(trace_moments(node, order=2))
    assert isinstance(tr[2], BigCount)
    with working():
        want = to_arb(BigCount.power(9, k)) * (float(k * m2 + k * (k - 1) * m1 * m1))
        assert abs(float(to_arb(tr[2]) / want) - 1) < 1e-12
    assert moment_answer(f"cart(motif()^{k})", order=2).to_json()


@pytest.mark.timeout(60)
def test_star_3000_order_8_closed_form():
    # issue 13: moments of K(1, 3000) at order 8 answer quickly.  source: the star's adjacency
    # eigenvalues are +-sqrt(3000) and 0 (x 2999), so tr(A^(2j)) = 2 * 3000^j and odd traces vanish
    got = dict(trace_moments(parse("K(1, 3000)"), order=8))
    assert [got[p] for p in (2, 4, 6, 8)] == [2 * 3000**j for j in (1, 2, 3, 4)]
    assert got[1] == got[3] == got[5] == got[7] == 0
    # the Laplacian of the star: eigenvalues 0, 1 (x 2999), 3001 (from memory: K(1, n) has n + 1)
    lap = dict(trace_moments(parse("K(1, 3000)"), "laplacian", order=4))
    assert lap[2] == 2999 + 3001**2 and lap[4] == 2999 + 3001**4


def test_direct_power_moments_in_factored_form():
    # source: tr((A(x)B)^p) = tr(A^p) tr(B^p); K(3) has tr(A^2) = 6, so tr(A^2) of the 3*10^6-th
    # direct power is 6^(3*10^6) = 2^3000000 * 3^3000000 exactly
    got = dict(trace_moments(parse("direct(K(3)^3000000)"), order=2))
    assert got[1] == 0 and str(got[2]) == "2^3000000 * 3^3000000"
    ans = moment_answer("direct(K(2)^5000000)", order=2)
    assert ans.moments == [(1, 0), (2, BigCount.power(2, 5000000))]


def test_direct_power_laplacian_factored_words():
    # source: D - A of the direct power of P(3): tr(L) = tr(D^(x)k) - tr(A^(x)k) = 4^k - 0
    got = dict(trace_moments(parse("direct(P(3)^1000000000)"), "laplacian", order=1))
    assert str(got[1]) == "2^2000000000"


@pytest.mark.parametrize("expr,a,b", [
    ("cart(P(3), C(4))", 1, 0),
    ("strong(K(1, 2)^2, P(2))", 1, 1),
    ("direct(P(3)^3)", 0, 1),
    ("mix(2, 0.5, P(3), K(1, 2))", 2, 0.5),
])
def test_adjacency_moments_against_numpy(expr, a, b):
    # source: numpy traces of the explicit Kronecker-built product (tests/reference.fold)
    node = parse(expr)
    facs = [c.factor.adjacency.toarray() for c, k in node.operands for _ in range(k)]
    _close(trace_moments(node, order=7), _numpy_traces(fold(facs, a, b), 7))


_RULES = [(1, 0), (0, 1), (1, 1), (1, 0.5), (0, 2), (2, 0.5)]
_KINDS = ["adjacency", "laplacian", "signless", "normalized", "transition"]


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(seed=st.integers(0, 10**6), rule=st.sampled_from(_RULES), kind=st.sampled_from(_KINDS),
       scale_exp=st.integers(-6, 6), copies=st.integers(1, 3))
def test_weighted_decimal_products_against_numpy(seed, rule, kind, scale_exp, copies):
    # source: numpy traces of the explicitly built product of random factors carrying decimal
    # weights at random scales (10^-6..10^6), every matrix kind; the product is refused exactly
    # when its kind does not follow from the factors (normalized/transition of non-direct,
    # irregular products)
    rng = np.random.default_rng(seed)
    g = _random_graph(int(rng.integers(2, 4)), rng=rng) * np.round(rng.random((1, 1)) + 0.1, 1)
    g = np.round((g + g.T) / 2 * 10.0**scale_exp, 12)
    h = _random_graph(int(rng.integers(2, 4)), rng=rng)
    ops = [g] * copies + [h]
    if any(m.sum(axis=1).min() <= 0 for m in ops) and kind in ("normalized", "transition"):
        return
    node = Product(Combination(rule[0], rule[1]),
                   ((Leaf(from_matrix(g)), copies), (Leaf(from_matrix(h)), 1)))
    adj = fold(ops, *rule)
    try:
        got = trace_moments(node, kind, order=4)
    except NotExactError:
        assert kind in ("normalized", "transition") and rule[0] != 0
        return
    except InputError:
        assert kind in ("normalized", "transition")
        return
    _close(got, _numpy_traces(_kind_matrix(adj, kind), 4), rel=1e-8)


@pytest.mark.parametrize("trial", range(6))
def test_nonfactoring_laplacian_moments_against_numpy(trial):
    # source: numpy traces of L = D - A (and D + A) built explicitly for random non-regular factors
    ca, cb = [(0, 1), (1, 1), (1, 0.5), (0, 2)][trial % 4]
    g = _random_graph(3 + trial % 2, weighted=trial % 3 == 0)
    h = _random_graph(3, directed=trial % 5 == 4)
    ops = [g, h, g] if trial % 3 == 1 else [g, h]
    node = Product(Combination(float(ca), float(cb)), tuple((Leaf(from_matrix(x)), 1) for x in ops))
    adj = fold(ops, ca, cb)
    for kind in ("laplacian", "signless"):
        _close(trace_moments(node, kind, order=6), _numpy_traces(_kind_matrix(adj, kind), 6))


def test_nested_cartesian_inside_direct_laplacian():
    # source: numpy traces of the explicit product direct(cart(G, G), H) Laplacian
    g, h = _random_graph(3), np.array([[0, 1, 1], [1, 0, 0], [1, 0, 0.0]])
    node = Product(Combination(0.0, 1.0), (
        (Product(Combination(1.0, 0.0), ((Leaf(from_matrix(g)), 2),)), 1), (Leaf(from_matrix(h)), 1)))
    adj = fold([fold([g, g], 1, 0), h], 0, 1)
    _close(trace_moments(node, "laplacian", order=5), _numpy_traces(_kind_matrix(adj, "laplacian"), 5))


def test_direct_power_laplacian_and_in_degrees():
    # source: numpy traces of the explicit direct(K(1, 2)^3) Laplacian; in-degree Laplacian of a
    # directed factor product against column sums
    node = parse("direct(K(1, 2)^3)")
    s = node.leaves()[0].adjacency.toarray()
    _close(trace_moments(node, "laplacian", order=8),
           _numpy_traces(_kind_matrix(fold([s, s, s], 0, 1), "laplacian"), 8))
    d = _random_graph(3, directed=True)
    d[0, 1] = d[1, 2] = d[2, 0] = 1
    node = Product(Combination(0.0, 1.0), ((Leaf(from_matrix(d)), 2),))
    got = trace_moments(node, "laplacian", order=4, direction="in")
    _close(got, _numpy_traces(_kind_matrix(fold([d, d], 0, 1), "laplacian", "in"), 4))


def test_regular_shortcut_and_refusals():
    # source: numpy traces of the Cartesian transition matrix of regular factors (cycles)
    node = parse("cart(C(3), C(4))")
    adj = fold([f.adjacency.toarray() for f in node.leaves()], 1, 0)
    _close(trace_moments(node, "transition", order=4), _numpy_traces(adj / 4.0, 4))
    with pytest.raises(NotExactError):
        trace_moments(parse("cart(K(1, 3), P(3))"), "transition", order=3)
    with pytest.raises(InputError):
        trace_moments(parse("cart(P(3))"), "adjacency", order=0)


@pytest.mark.timeout(20)
def test_size_checks_come_before_work():
    # the word expansion of a Cartesian node inside a direct Laplacian at order 40 is estimated
    # (about 4^40 terms) and refused up front; a left fold over 10^5 copies likewise
    node = Product(Combination(0, 1), ((Product(Combination(1, 0), ((parse("C(5)"), 3),)), 1),
                                       (parse("P(3)"), 1)))
    with pytest.raises(SizeLimitError, match="word expansion"):
        trace_moments(node, "laplacian", order=40)
    fold_node = Product(Combination(2, 1), ((parse("P(3)"), 10**5),))
    with pytest.raises(SizeLimitError, match="left fold"):
        trace_moments(fold_node, order=2)


def test_factor_traces_modular_against_exact_fractions():
    # source: exact Fraction matrix powers of random weighted factors (independent exact arithmetic),
    # for the dense path and, with twin classes, for a star-like sparse factor
    rng = np.random.default_rng(7)
    for n in (3, 6):
        a = np.round(rng.random((n, n)) * (rng.random((n, n)) < 0.6), 3)
        f = from_matrix(a)
        want = _exact_traces(_fractions(a), 6)
        assert matrix_traces(factor_matrix(f, "adjacency"), 6)[1:] == want
    star = np.zeros((41, 41))
    star[0, 1:] = star[1:, 0] = 0.25
    want = _exact_traces(_fractions(star), 5)
    assert matrix_traces(factor_matrix(from_matrix(star), "adjacency"), 5)[1:] == want


def test_word_table_against_exact_products():
    # source: exact Fraction products of the letters c I + f D and c I + f A of a weighted factor
    a = np.array([[0, 0.5, 1], [0.5, 0, 0], [1, 0, 0.25]])
    c, f = Fraction(1), Fraction(1, 3)
    table = word_table(from_matrix(a), (c, f), 4)
    adj = _fractions(a)
    d = [sum(r, Fraction(0)) for r in adj]
    letters = {0: [[(c + f * d[i]) if i == j else 0 for j in range(3)] for i in range(3)],
               1: [[(c if i == j else 0) + f * adj[i][j] for j in range(3)] for i in range(3)]}
    for (p, mask), v in table.items():
        m = letters[mask & 1]
        for i in range(1, p):
            m = _fmatmul(m, letters[(mask >> i) & 1])
        assert v == sum((m[i][i] for i in range(3)), Fraction(0))


def test_ball_domain_contains_exact_moments():
    # source: the exact moments of the same product (exact domain) lie in the certified balls
    node = parse("strong(motif()^3)")
    exact = MomentEngine(4).normalised(node, "laplacian")
    balls = MomentEngine(4, domain="ball").normalised(node, "laplacian")
    with working():
        for e, b in zip(exact, balls, strict=True):
            assert b.contains(fmpq(e.numerator, e.denominator))
    huge = MomentEngine(2, domain="ball").normalised(parse("direct(motif()^1000000)"), "laplacian")
    assert huge[2].is_finite() and huge[2] > 0


def test_moment_answer_json():
    # source: the hypercube closed form tr(A^2) = k 2^k (see above)
    ans = moment_answer("cart(K(2)^4)", order=2)
    assert ans.query == "moments" and ans.moments == [(1, 0), (2, 4 * 16)]
    assert '"moments": [[1, 0], [2, 64]]' in ans.to_json()
    assert math.isclose(float(moment_answer("cart(K(2)^4)", order=2, per_vertex=True).moments[1][1]), 4)
