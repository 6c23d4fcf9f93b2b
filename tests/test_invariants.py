"""Spectral invariants against explicit builds (numpy/scipy), closed forms and exact integers.

Coverage is the criterion for every bracket: the truth must lie in [lower, upper]
(widened by 1e-9 relative for the rounding of the numpy reference itself).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import scipy.sparse.csgraph as csgraph
from flint import arb
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from scipy.special import logsumexp
from sympy import factorint

from powerspec.algebra.engine import Leaf, Product
from powerspec.algebra.grammar import parse
from powerspec.algebra.kinds import Combination
from powerspec.factors import from_matrix
from powerspec.numbers.counts import BigCount
from powerspec.numbers.hp import working
from powerspec.queries.invariants import invariants
from powerspec.queries.invariants_context import Context
from powerspec.queries.invariants_spectral import offset_levels
from tests.reference import fold

TOL = 1e-9


def _explicit(node) -> np.ndarray:
    if isinstance(node, Leaf):
        return node.factor.adjacency.toarray()
    mats = [_explicit(c) for c, k in node.operands for _ in range(k)]
    return fold(mats, float(node.comb.a), float(node.comb.b))


def _truth(adj: np.ndarray, t: float = 1.0) -> dict:
    """Invariants of an explicitly built graph, by numpy/scipy (the independent reference)."""
    ev = np.linalg.eigvalsh(adj)
    lap = np.diag(adj.sum(axis=1)) - adj
    al = np.linalg.eigvalsh(lap)
    n = len(adj)
    comps = int(csgraph.connected_components(adj != 0, directed=False)[0])
    distinct = [x for x in ev[::-1] if ev[-1] - x > 1e-7]
    out = {"spectral_radius": float(np.max(np.abs(ev))),
           "spectral_gap": float(ev[-1] - ev[-2]) if n > 1 else None,
           "spectral_gap_distinct": float(ev[-1] - distinct[0]) if distinct else None,
           "algebraic_connectivity": float(al[1]) if n > 1 else None,
           "laplacian_spectral_radius": float(al[-1]),
           "components": comps,
           "energy": float(np.sum(np.abs(ev))),
           # scipy's logsumexp: exp(lambda) overflows a double past lambda ~ 709
           "log_estrada_index": float(logsumexp(ev)),
           "log_heat_trace": float(logsumexp(-t * al))}
    if comps == 1 and n > 1:
        sign, logdet = np.linalg.slogdet(lap[1:, 1:])  # matrix-tree theorem
        out["log_spanning_trees"] = float(logdet)
        out["kirchhoff_index"] = float(n * np.sum(1 / al[1:]))
    return out


def _covers(entry: dict, x: float, name: str = "") -> None:
    tol = TOL * max(1.0, abs(x))
    lo, hi = entry["lower"], entry["upper"]
    assert lo is not None or hi is not None or entry["value"] is not None, (name, entry)
    if lo is not None:
        assert float(lo) <= x + tol, (name, entry, x)
    if hi is not None:
        assert x - tol <= float(hi), (name, entry, x)
    if entry["value"] is not None and not isinstance(entry["value"], (int, BigCount)):
        assert abs(float(entry["value"]) - x) <= tol + (float(hi) - float(lo)), (name, entry, x)


def _check_all(node, inv: dict, t: float = 1.0) -> None:
    truth = _truth(_explicit(node), t)
    for name, x in truth.items():
        e = inv[name]
        if name == "components":
            assert e["value"] == x
        elif x is not None and (e["lower"] is not None or e["upper"] is not None):
            _covers(e, x, name)


# ------------------------------------------------------------------ closed forms
@pytest.mark.parametrize("k", [1, 2, 5, 10])
def test_hypercube_spanning_trees_exact(k):
    # source: tau(Q_k) = 2^(2^k - k - 1) prod_j j^C(k, j) (Stanley, Enumerative Combinatorics
    # vol. 2 -- from memory), the matrix-tree theorem over the spectrum k - 2j with mult C(k, j)
    want = 2 ** (2**k - k - 1) * math.prod(j ** math.comb(k, j) for j in range(1, k + 1))
    inv = invariants(f"cart(K(2)^{k})").invariants
    assert inv["spanning_trees"]["value"] == want
    got = float(inv["log_spanning_trees"]["value"])
    assert abs(got - math.log(want)) < 1e-9 * math.log(want) + 1e-12


def test_hypercube_1000_spanning_trees_factored():
    # source: tau(Q_k) = prod_j (2j)^C(k, j) / 2^k; the expected prime exponents are assembled here
    # with sympy's factorint (independent of powerspec's factoring)
    k = 1000
    want: dict[int, int] = {}
    for j in range(1, k + 1):
        for p, e in factorint(2 * j).items():
            want[p] = want.get(p, 0) + e * math.comb(k, j)
    want[2] -= k
    got = invariants(f"cart(K(2)^{k})").invariants["spanning_trees"]["value"]
    assert isinstance(got, BigCount) and len(got.terms) == 1
    (key, coeff), = got.terms.items()
    assert coeff == 1 and dict(key) == want


@pytest.mark.parametrize("n", [2, 5, 7])
def test_complete_graph_cayley(n):
    # source: Cayley's formula tau(K_n) = n^(n-2); Kirchhoff index of K_n = n - 1 (its Laplacian
    # eigenvalues are 0 and n, n - 1 times); spectral radius n - 1, algebraic connectivity n
    inv = invariants(f"K({n})").invariants
    assert inv["spanning_trees"]["value"] == n ** (n - 2)
    _covers(inv["kirchhoff_index"], n - 1)
    assert inv["spectral_radius"]["value"] == n - 1 and inv["algebraic_connectivity"]["value"] == n


def test_complete_bipartite_spanning_trees():
    # source: tau(K_{m,n}) = m^(n-1) n^(m-1) (Scoins 1962 -- from memory)
    inv = invariants("K(3, 4)").invariants
    assert inv["spanning_trees"]["value"] == 3**3 * 4**2


@pytest.mark.parametrize("d,q", [(3, 3), (4, 2), (2, 5)])
def test_hamming_graph(d, q):
    # source: the Hamming graph H(d, q) = K_q^(box d) has eigenvalues (q-1)d - q i with multiplicity
    # C(d, i)(q-1)^i (textbook closed form): spectral radius (q-1)d, gap q, algebraic connectivity q,
    # Laplacian spectral radius q d; tau by the matrix-tree theorem over that spectrum
    inv = invariants(f"cart(K({q})^{d})").invariants
    assert inv["spectral_radius"]["value"] == (q - 1) * d
    assert inv["spectral_gap"]["value"] == q and inv["algebraic_connectivity"]["value"] == q
    assert inv["laplacian_spectral_radius"]["value"] == q * d
    want = math.prod((q * i) ** (math.comb(d, i) * (q - 1) ** i) for i in range(1, d + 1)) // q**d
    assert inv["spanning_trees"]["value"] == want


@pytest.mark.parametrize("expr", ["cart(C(5)^2)", "cart(P(4), P(3))", "cart(C(3), P(5))"])
def test_torus_and_grid_against_numpy(expr):
    # source: numpy slogdet of the reduced Laplacian (matrix-tree theorem) and eigvalsh of the
    # explicit product
    node = parse(expr)
    _check_all(node, invariants(expr).invariants)


def test_torus_gap_at_a_billion_copies():
    # issue 8: lambda_1 - lambda_2 of cart(C(9)^(10^9)) to full precision, and lambda_1 minus the third
    # distinct eigenvalue.  source: the cycle's eigenvalues 2cos(2 pi j/9) (closed form): the gaps are
    # 2 - 2cos(2 pi/9) and 4 - 4cos(2 pi/9) = 0.9358222275..., whatever k
    c = math.cos(2 * math.pi / 9)
    inv = invariants("cart(C(9)^1000000000)").invariants
    gap = inv["spectral_gap"]
    _covers(gap, 2 - 2 * c)
    assert float(gap["upper"]) - float(gap["lower"]) < 1e-13
    _, levels = offset_levels(Context(parse("cart(C(9)^1000000000)"), 1000, "out", 1.0),
                              "adjacency", 3, bottom=False)
    assert abs(float(levels[2]) - (4 - 4 * c)) < 1e-13 and abs(float(levels[2]) - 0.9358222275) < 1e-10
    # algebraic connectivity of the torus: 2 - 2cos(2 pi/9), the cycle's own
    _covers(inv["algebraic_connectivity"], 2 - 2 * c)


@pytest.mark.parametrize("k", [1000, 1000000, 1000000000])
def test_direct_path_powers_closed_forms(k):
    # source: P(3) has eigenvalues -sqrt2, 0, sqrt2 and is connected bipartite, so direct(P(3)^k) has
    # spectral radius 2^(k/2), energy (2 sqrt2)^k, nullity 3^k - 2^k and (Weichsel 1962, applied
    # factor by factor) 2^(k-1) components, hence no spanning tree
    inv = invariants(f"direct(P(3)^{k})").invariants
    _covers(inv["log_spectral_radius"], k / 2 * math.log(2))
    assert str(inv["components"]["value"]) == (f"2^{k - 1}" if k > 10**4 else str(2 ** (k - 1)))
    nul = inv["nullity"]["value"]
    assert nul == 3**k - 2**k if k <= 1000 else str(nul) == f"3^{k} - 2^{k}"
    assert inv["spanning_trees"]["value"] == 0 and inv["algebraic_connectivity"]["value"] == 0
    e = inv["energy"]
    assert abs(float(e["value"].log() / (arb(k) * arb(8).sqrt().log())) - 1) < 1e-12


@pytest.mark.parametrize("k", [1000, 1000000, 1000000000])
def test_strong_complete_powers_are_complete_graphs(k):
    # source: strong(K(3)^k) is the complete graph on N = 3^k vertices: spectral radius N - 1,
    # algebraic connectivity = Laplacian spectral radius = N, Cayley's log tau = (N - 2) log N,
    # Kirchhoff index N - 1, energy 2(N - 1), log Estrada = log(e^(N-1) + (N-1)/e) ~ N - 1
    inv = invariants(f"strong(K(3)^{k})").invariants
    with working():
        n = arb(3) ** k
        checks = {"spectral_radius": n - 1, "algebraic_connectivity": n,
                  "laplacian_spectral_radius": n, "log_spanning_trees": (n - 2) * n.log(),
                  "kirchhoff_index": n - 1, "energy": 2 * (n - 1), "log_estrada_index": n - 1}
        for name, want in checks.items():
            got = inv[name]["value"]
            got = arb(got) if isinstance(got, int) else got
            assert abs(float(got / want) - 1) < 1e-12, (name, got, want)
    assert inv["components"]["value"] == 1 and inv["nullity"]["value"] == 0


def test_estrada_and_heat_multiplicative_huge_k():
    # source: e^(A(+)B) = e^A (x) e^B, so EE(G^k) = EE(G)^k; EE(K_3) = e^2 + 2 e^-1 (spectrum 2, -1, -1);
    # heat trace of K_3 at t: 1 + 2 e^(-3t) (Laplacian spectrum 0, 3, 3)
    k = 10**6
    inv = invariants(f"cart(K(3)^{k})", t=0.5).invariants
    _covers(inv["log_estrada_index"], k * math.log(math.e**2 + 2 / math.e))
    _covers(inv["log_heat_trace"], k * math.log(1 + 2 * math.exp(-1.5)))


def test_cartesian_spanning_tree_bracket_covers_and_is_tight():
    # source: cart(K(3)^k) has non-zero Laplacian eigenvalues 3i with multiplicity C(k, i) 2^i
    # (Hamming-graph closed form), so log tau = sum_i C(k, i) 2^i log(3i) - k log 3 (matrix-tree),
    # summed here in double precision for k = 200 (about 1e96, relative error ~1e-14); limit=50
    # forbids the enumeration, so the moment bracket answers and must contain it
    k = 200
    want = sum(math.comb(k, i) * 2.0**i * math.log(3 * i) for i in range(1, k + 1)) - k * math.log(3)
    lt = invariants(f"cart(K(3)^{k})", limit=50).invariants["log_spanning_trees"]
    assert "bracket" in lt["method"]
    assert float(lt["lower"]) <= want * (1 + 1e-12) and want * (1 - 1e-12) <= float(lt["upper"])
    assert float(lt["upper"]) / float(lt["lower"]) - 1 < 1e-2
    big = invariants("cart(K(3)^1000000)").invariants["log_spanning_trees"]
    assert big["value"] is not None  # relative width below 1e-3 at k = 10^6


# ------------------------------------------------------------------ explicit builds
_RULES = [(1, 0), (0, 1), (1, 1), (1, 0.5), (0, 2)]


def _random_factor(rng, n, decimal):
    a = (rng.random((n, n)) < 0.6).astype(float)
    a = np.triu(a, 1)
    a = a + a.T
    if decimal:
        w = np.round(rng.random((n, n)) * 2 + 0.1, 1)
        a = a * (w + w.T) / 2
    if rng.random() < 0.2:
        a[0, 0] = 1.0
    return a


@settings(max_examples=30, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(seed=st.integers(0, 10**6), rule=st.sampled_from(_RULES), copies=st.integers(1, 3),
       decimal=st.booleans(), limit=st.sampled_from([None, 2]))
def test_random_products_against_explicit_builds(seed, rule, copies, decimal, limit):
    # source: numpy/scipy on the explicitly built product (tests/reference.fold); limit=2 forces the
    # extremes, symmetry-tier and moment-bound routes instead of the exact enumeration
    rng = np.random.default_rng(seed)
    g = _random_factor(rng, int(rng.integers(2, 5)), decimal)
    h = _random_factor(rng, int(rng.integers(1, 4)), False)
    node = Product(Combination(*rule), ((Leaf(from_matrix(g)), copies), (Leaf(from_matrix(h)), 1)))
    ans = invariants(node, limit=limit, t=0.3)
    _check_all(node, ans.invariants, t=0.3)
    ans.to_json()


@pytest.mark.parametrize("expr", ["direct(K(1, 3), P(4))", "strong(K(1, 2), P(3))", "direct(P(3)^4)",
                                  "strong(K(1, 3)^3)"])
def test_nonfactoring_laplacians_from_the_symmetry_tier(expr):
    # source: numpy eigvalsh of the explicit Laplacian of the irregular direct/strong product; the
    # symmetry tier's blocks give certified values (method says so)
    node = parse(expr)
    inv = invariants(expr).invariants
    assert "symmetry reduction" in inv["algebraic_connectivity"]["method"] or \
        inv["algebraic_connectivity"]["value"] == 0
    _check_all(node, inv)


def test_nullity_and_components_against_scipy():
    # source: numpy rank deficiency of the explicit adjacency and scipy connected components
    for expr in ["direct(K(2)^4, P(3))", "strong(K(1), C(4)^2)", "cart(K(1, 2), K(2))",
                 "direct(C(4)^3)"]:
        node = parse(expr)
        adj = _explicit(node)
        inv = invariants(expr).invariants
        assert inv["nullity"]["value"] == len(adj) - np.linalg.matrix_rank(adj)
        assert inv["components"]["value"] == csgraph.connected_components(adj != 0)[0]


def test_bounds_come_from_the_radii():
    # certified balls: lower < value < upper for irrational values, and the bounds are rounded outward
    # (source: numpy eigvalsh of cart(C(5)^2), inside the bounds)
    inv = invariants("cart(C(5)^2)").invariants
    for name in ("spectral_gap", "algebraic_connectivity", "log_spanning_trees", "energy"):
        e = inv[name]
        assert e["lower"] <= float(e["value"]) <= e["upper"] and e["lower"] < e["upper"]
        assert e["upper"] - e["lower"] < 1e-10 * max(1.0, abs(float(e["value"])))
    _check_all(parse("cart(C(5)^2)"), inv)
