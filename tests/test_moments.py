"""Exact moments tr(M^p) against closed forms and numpy traces of explicitly built products."""

from __future__ import annotations

import math
from fractions import Fraction

import numpy as np
import pytest

from powerspec.algebra.engine import Leaf, Product
from powerspec.algebra.grammar import parse
from powerspec.algebra.kinds import Combination
from powerspec.algebra.moments import trace_moments
from powerspec.errors import InputError, NotExactError
from powerspec.factors import from_matrix
from powerspec.queries.moments import moment_answer
from tests.reference import fold

RNG = np.random.default_rng(20240611)


def _random_graph(n, weighted=False, directed=False):
    a = (RNG.random((n, n)) < 0.55).astype(float)
    if weighted:
        a *= RNG.integers(1, 4, (n, n))
    np.fill_diagonal(a, 0)
    if not directed:
        a = np.triu(a, 1)
        a = a + a.T
    return a


def _kind_matrix(a, kind, direction="out"):
    d = a.sum(axis=1 if direction == "out" else 0)
    return {"adjacency": a, "laplacian": np.diag(d) - a, "signless": np.diag(d) + a,
            "transition": a / d[:, None] if kind == "transition" else None}[kind]


def _numpy_traces(m, order):
    return [float(np.trace(np.linalg.matrix_power(m, p))) for p in range(1, order + 1)]


def _close(got, want):
    for (_, g), w in zip(got, want, strict=True):
        assert math.isclose(float(g), w, rel_tol=1e-9, abs_tol=1e-6), (got, want)


@pytest.mark.parametrize("k", [1, 2, 5, 30, 1000])
def test_hypercube_closed_walks(k):
    # source: closed-walk counts of Q_k.  A closed walk of length 2 is an edge out and back:
    # k * 2^k.  Length 4: a walk is a sequence of 4 coordinate flips whose product is the
    # identity, i.e. each used coordinate appears an even number of times: either one
    # coordinate four times (k ways) or two distinct coordinates twice each (C(k,2) choices
    # times 4!/(2!2!) = 6 orders): k + 6 C(k,2) = 3k^2 - 2k per start vertex (derived here).
    got = dict(trace_moments(parse(f"cart(K(2)^{k})"), order=4))
    assert got[2] == k * 2**k
    assert got[4] == 2**k * (3 * k * k - 2 * k)
    assert got[1] == got[3] == 0  # bipartite: no odd closed walks


def test_hypercube_huge_k_per_vertex():
    # source: same derivation as above, per vertex: tr(A^4)/2^k = 3k^2 - 2k; tr(A^2)/2^k = k
    k = 10**9
    got = dict(trace_moments(parse(f"cart(K(2)^{k})"), order=4, per_vertex=True))
    assert got[2] == k and got[4] == 3 * k * k - 2 * k
    # the unnormalised traces are k 2^k, kept in exact factored form (BigCount)
    big = dict(trace_moments(parse(f"cart(K(2)^{k})"), order=2))
    assert str(big[2]) == "1953125 * 2^1000000009"  # 10^9 = 1953125 * 2^9


@pytest.mark.parametrize("expr,mats,a,b", [
    ("cart(P(3), C(4))", None, 1, 0),
    ("strong(K(1, 2)^2, P(2))", None, 1, 1),
    ("direct(P(3)^3)", None, 0, 1),
    ("mix(2, 0.5, P(3), K(1, 2))", None, 2, 0.5),
])
def test_adjacency_moments_against_numpy(expr, mats, a, b):
    # source: numpy traces of the explicit Kronecker-built product (tests/reference.fold)
    node = parse(expr)
    facs = [c.factor.adjacency.toarray() for c, k in node.operands for _ in range(k)]
    m = fold(facs, a, b)
    _close(trace_moments(node, order=7), _numpy_traces(m, 7))


@pytest.mark.parametrize("trial", range(12))
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
    adj = fold([s, s, s], 0, 1)
    _close(trace_moments(node, "laplacian", order=8), _numpy_traces(_kind_matrix(adj, "laplacian"), 8))
    d = _random_graph(3, directed=True)
    d[0, 1] = d[1, 2] = d[2, 0] = 1
    node = Product(Combination(0.0, 1.0), ((Leaf(from_matrix(d)), 2),))
    adj = fold([d, d], 0, 1)
    got = trace_moments(node, "laplacian", order=4, direction="in")
    _close(got, _numpy_traces(_kind_matrix(adj, "laplacian", "in"), 4))


def test_transition_and_normalized_direct_are_rational():
    # source: numpy traces of D^-1 A and I - D^-1/2 A D^-1/2 of the explicit direct product
    node = parse("direct(K(1, 3), P(3))")
    f1, f2 = (f.adjacency.toarray() for f in node.leaves())
    adj = fold([f1, f2], 0, 1)
    d = adj.sum(axis=1)
    got = trace_moments(node, "transition", order=4)
    assert all(isinstance(v, (int, Fraction)) for _, v in got)
    _close(got, _numpy_traces(adj / d[:, None], 4))
    s = 1 / np.sqrt(d)
    _close(trace_moments(node, "normalized", order=4),
           _numpy_traces(np.eye(len(d)) - adj * s[:, None] * s[None, :], 4))


def test_regular_shortcut_and_refusal():
    # source: numpy traces of the Cartesian transition matrix of regular factors (cycles)
    node = parse("cart(C(3), C(4))")
    adj = fold([f.adjacency.toarray() for f in node.leaves()], 1, 0)
    _close(trace_moments(node, "transition", order=4), _numpy_traces(adj / 4.0, 4))
    with pytest.raises(NotExactError):
        trace_moments(parse("cart(K(1, 3), P(3))"), "transition", order=3)
    with pytest.raises(InputError):
        trace_moments(parse("cart(P(3))"), "adjacency", order=0)


def test_moment_answer_json():
    # source: the hypercube closed form tr(A^2) = k 2^k (see above)
    ans = moment_answer("cart(K(2)^4)", order=2)
    assert ans.query == "moments" and ans.moments == [(1, 0), (2, 4 * 16)]
    assert '"moments": [[1, 0], [2, 64]]' in ans.to_json()
