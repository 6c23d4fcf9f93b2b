"""The exact engine against closed forms and explicitly built products."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import powerspec as ps
from powerspec.algebra.engine import Engine, Leaf, Product
from powerspec.algebra.grammar import parse
from powerspec.algebra.kinds import CARTESIAN, DIRECT, STRONG, Combination
from tests.reference import (
    definition_product,
    eigenvalues,
    expand,
    fold,
    kron_product,
    multiset_distance,
)


def atoms(expr, matrix="adjacency", **kw):
    return ps.spectrum(expr, matrix, **kw).atoms.atoms()


# --------------------------------------------------------------- hypercube
@pytest.mark.parametrize("k", [1, 2, 3, 7, 12, 100, 1000, 2000])
def test_hypercube_adjacency_closed_form(k):
    # source: Q_k has eigenvalues k - 2j with multiplicity C(k, j)
    # (Brouwer & Haemers, Spectra of Graphs, §1.4.6 -- from memory)
    got = atoms(f"cart(K(2)^{k})")
    want = [(float(k - 2 * j), math.comb(k, j)) for j in range(k, -1, -1)]
    assert got == want
    assert sum(m for _, m in got) == 2**k


@pytest.mark.parametrize("k", [1, 5, 64, 2000])
def test_hypercube_laplacian_closed_form(k):
    # source: Laplacian of Q_k = k I - A, eigenvalues 2j with multiplicity C(k, j) (same ref)
    got = atoms(f"cart(K(2)^{k})", "laplacian")
    assert got == [(float(2 * j), math.comb(k, j)) for j in range(k + 1)]


def test_hypercube_matches_numpy_small():
    # source: numpy.linalg.eigvalsh on Q_6 built with scipy.sparse.kron
    a = np.array([[0.0, 1.0], [1.0, 0.0]])
    explicit = fold([a] * 6, 1.0, 0.0)
    got = expand(ps.spectrum("cart(K(2)^6)").atoms)
    assert multiset_distance(got, np.linalg.eigvalsh(explicit)) < 1e-9


# ------------------------------------------------------------------- torus
@pytest.mark.parametrize("m,d", [(3, 2), (4, 3), (5, 3), (6, 2), (7, 3), (10, 2)])
def test_torus_against_numpy_and_closed_form(m, d):
    c = np.roll(np.eye(m), 1, axis=1)
    c = c + c.T
    explicit = fold([c] * d, 1.0, 0.0)
    got = expand(ps.spectrum(f"cart(C({m})^{d})").atoms)
    # source: numpy.linalg.eigvalsh on the explicit Kronecker sum
    assert multiset_distance(got, np.linalg.eigvalsh(explicit)) < 1e-9
    # source: torus closed form sum_i 2cos(2 pi j_i / m) (textbook)
    grid = np.meshgrid(*[2 * np.cos(2 * np.pi * np.arange(m) / m)] * d)
    closed = np.sum(grid, axis=0).ravel()
    assert multiset_distance(got, closed) < 1e-9


def test_torus_large_power_counts():
    # source: order of cart(C(m)^d) is m^d (definition); the merged multiset covers it
    sp = ps.spectrum("cart(C(10)^6)").atoms
    assert sp.order == 10**6
    # source: largest eigenvalue 2d of the d-dimensional torus, multiplicity 1 (textbook)
    assert sp.atoms()[-1] == (12.0, 1)


# ------------------------------------------------- complete-graph products
@pytest.mark.parametrize("n,k", [(3, 2), (4, 3), (5, 5), (3, 40)])
def test_direct_power_of_complete_graph(n, k):
    # source: closed form -- K_n has eigenvalues n-1 (once) and -1 (n-1 times), so the
    # direct power has (n-1)^(k-j) (-1)^j with multiplicity C(k, j) (n-1)^j, merged by value
    want: dict[int, int] = {}
    for j in range(k + 1):
        v = (n - 1) ** (k - j) * (-1) ** j
        want[v] = want.get(v, 0) + math.comb(k, j) * (n - 1) ** j
    got = atoms(f"direct(K({n})^{k})")
    assert [(float(v), m) for v, m in sorted(want.items())] == got


@pytest.mark.parametrize("q,k", [(2, 3), (3, 4), (4, 5), (3, 200)])
def test_strong_power_of_complete_graph_is_complete(q, k):
    # source: strong(K_q^k) is the complete graph on q^k vertices (definition), whose
    # spectrum is q^k - 1 once and -1 with multiplicity q^k - 1 (textbook)
    sp = ps.spectrum(f"strong(K({q})^{k})").atoms
    assert sp.order == q**k
    vals = sp.atoms()
    assert vals[0] == (-1.0, q**k - 1)
    assert vals[1][1] == 1
    assert math.isclose(float(vals[1][0]), q**k - 1, rel_tol=1e-12)


def test_direct_overflow_is_mpmath_not_inf():
    # source: closed form -- direct(K_3^2000) has largest eigenvalue 2^2000 (beyond the
    # double range), from the K_3 eigenvalues 2, -1, -1
    sp = ps.spectrum("direct(K(3)^2000)").atoms
    top_value, top_mult = sp.atoms()[-1]
    assert not isinstance(top_value, float)
    import mpmath

    assert mpmath.almosteq(mpmath.log(top_value), 2000 * mpmath.log(2), 1e-12)
    assert top_mult == 1  # only the all-(n-1) choice reaches 2^2000
    assert sp.order == 3**2000


# ------------------------------------------------------ exactness table
def test_laplacian_of_direct_product_of_irregular_factors():
    # D_G (x) D_H - A_G (x) A_H does not factor for irregular factors (DESIGN §2); the exact
    # tier builds the 12-vertex product instead.
    # source: numpy eigvalsh on diag(row sums) - A of the explicit Kronecker product
    a, b = _path(3), _star(3)
    m = fold([a, b], 0.0, 1.0)
    want = np.linalg.eigvalsh(np.diag(m.sum(1)) - m)
    got = expand(ps.spectrum("direct(P(3), K(1, 3))", "laplacian").atoms)
    assert multiset_distance(got, want) < 1e-9


@pytest.mark.parametrize(
    "expr,ca,cb,mats",
    [
        ("direct(C(4), C(5))", 0.0, 1.0, ("c4", "c5")),
        ("strong(K(3), C(5))", 1.0, 1.0, ("k3", "c5")),
    ],
)
@pytest.mark.parametrize("kind", ["laplacian", "signless", "normalized", "transition"])
def test_regular_products_all_kinds(expr, ca, cb, mats, kind):
    # source: numpy eigensolvers on L = D - A etc. of the explicit Kronecker product
    lib = {"c4": _cycle(4), "c5": _cycle(5), "k3": np.ones((3, 3)) - np.eye(3)}
    a = kron_product(lib[mats[0]], lib[mats[1]], ca, cb)
    want = eigenvalues(_kind_matrix(a, kind))
    got = expand(ps.spectrum(expr, kind).atoms)
    assert multiset_distance(got, want) < 1e-9


@pytest.mark.parametrize("kind", ["normalized", "transition"])
def test_direct_product_normalized_and_transition_exact_for_irregular(kind):
    # source: numpy on the explicit product; D^-1/2 A D^-1/2 and D^-1 A factor over A (x) B
    a = kron_product(_path(3), _star(3), 0.0, 1.0)
    want = eigenvalues(_kind_matrix(a, kind)) if kind == "normalized" else np.linalg.eigvals(
        _kind_matrix(a, kind))
    got = expand(ps.spectrum("direct(P(3), K(1, 3))", kind).atoms)
    assert multiset_distance(got, want) < 1e-9


@pytest.mark.parametrize("expr,g,h,ca,cb", [
    ("direct(P(3), C(4))", "p3", "c4", 0.0, 1.0),
    ("strong(K(1, 3), C(5))", "s3", "c5", 1.0, 1.0),
    ("mix(1, 0.5, P(4), C(4))", "p4", "c4", 1.0, 0.5),
    ("direct(C(5), K(1, 2))", "c5", "s2", 0.0, 1.0),
])
@pytest.mark.parametrize("kind", ["laplacian", "signless"])
def test_one_irregular_factor_laplacian_blocks(expr, g, h, ca, cb, kind):
    # source: numpy eigvalsh on D -+ A of the explicit Kronecker product; the engine uses one
    # n x n block per eigenvalue of the regular factor instead
    lib = {"p3": _path(3), "p4": _path(4), "s3": _star(3), "s2": _star(2), "c4": _cycle(4),
           "c5": _cycle(5)}
    a = kron_product(lib[g], lib[h], ca, cb)  # operands in the expression's order
    want = eigenvalues(_kind_matrix(a, kind))
    got = expand(ps.spectrum(expr, kind).atoms)
    assert multiset_distance(got, want) < 1e-9


def test_cartesian_laplacian_irregular_exact():
    # source: numpy on L = D - A of the explicit Cartesian product P(3) x K(1, 3)
    a = kron_product(_path(3), _star(3), 1.0, 0.0)
    got = expand(ps.spectrum("cart(P(3), K(1, 3))", "laplacian").atoms)
    assert multiset_distance(got, eigenvalues(_kind_matrix(a, "laplacian"))) < 1e-9


def test_cartesian_transition_of_irregular_factors():
    # D^-1 A does not split over a Kronecker sum of irregular factors; the exact tier solves it.
    # source: numpy eigvals on D^-1 A of the explicit Kronecker sum
    m = fold([_path(3), _star(3)], 1.0, 0.0)
    want = np.linalg.eigvals(m / m.sum(1)[:, None])
    got = expand(ps.spectrum("cart(P(3), K(1, 3))", "transition").atoms)
    assert multiset_distance(got, want) < 1e-9


def test_mix_left_fold_against_explicit():
    # source: numpy on the explicit left fold ((G o G) o G) of 2(A(+)B) + 0.5 A(x)B
    g = _path(3)
    want = eigenvalues(fold([g, g, g], 2.0, 0.5))
    got = expand(ps.spectrum("mix(2, 0.5, P(3)^3)").atoms)
    assert multiset_distance(got, want) < 1e-8


def test_mix_associative_cases_match_explicit():
    # source: numpy on the explicit fold; mix(1, b) and mix(0, b) are associative
    g = _star(2)
    for ca, cb in ((1.0, 0.5), (0.0, 2.0), (1.0, -1.0)):
        want = eigenvalues(fold([g] * 4, ca, cb))
        got = expand(ps.spectrum(f"mix({ca}, {cb}, K(1, 2)^4)").atoms)
        assert multiset_distance(got, want) < 1e-8


def test_directed_laplacian_in_and_out_degree():
    # source: numpy on L = D_out - A and D_in - A of the explicit product of a
    # weighted directed factor with itself
    a = np.array([[0.0, 2.0, 0.0], [0.0, 0.0, 1.0], [1.0, 1.0, 0.0]])
    f = ps.from_matrix(a, name="w")
    node = Product(CARTESIAN, ((Leaf(f), 2),))
    explicit = kron_product(a, a, 1.0, 0.0)
    for direction, deg in (("out", explicit.sum(1)), ("in", explicit.sum(0))):
        eng = Engine(direction=direction)
        got = expand(eng.spectrum(node, "laplacian"))
        want = np.linalg.eigvals(np.diag(deg) - explicit)
        assert multiset_distance(got, want) < 1e-8


def test_size_limit_refusal_before_work():
    with pytest.raises(ps.SizeLimitError, match="limit"):
        ps.spectrum("cart(motif()^200)")
    with pytest.raises(ps.SizeLimitError, match="top"):
        ps.spectrum("cart(C(7)^6)", limit=50)


def test_squaring_path_when_values_coincide():
    # C(10) eigenvalues lie in Z[(1+sqrt5)/2]: far fewer distinct sums than compositions.
    sp = ps.spectrum("cart(C(10)^40)").atoms
    # source: order 10^40 (definition); top eigenvalue 80 with multiplicity 1 (torus closed form)
    assert sp.order == 10**40
    assert sp.atoms()[-1] == (80.0, 1)
    assert sp.atoms()[0] == (-80.0, 1)


# ------------------------------------------------------ property tests
def _cycle(n):
    c = np.roll(np.eye(n), 1, axis=1)
    return c + c.T


def _path(n):
    a = np.zeros((n, n))
    i = np.arange(n - 1)
    a[i, i + 1] = a[i + 1, i] = 1
    return a


def _star(n):
    a = np.zeros((n + 1, n + 1))
    a[0, 1:] = a[1:, 0] = 1
    return a


def _kind_matrix(a: np.ndarray, kind: str) -> np.ndarray:
    d = a.sum(1)
    if kind == "adjacency":
        return a
    if kind == "laplacian":
        return np.diag(d) - a
    if kind == "signless":
        return np.diag(d) + a
    if kind == "normalized":
        s = 1 / np.sqrt(d)
        return np.eye(len(d)) - s[:, None] * a * s[None, :]
    return a / d[:, None]


weights = st.sampled_from([-1.0, 1.0, 1.0, 2.0, 0.5])


@st.composite
def small_factor(draw, directed_ok=True):
    n = draw(st.integers(1, 4))
    directed = directed_ok and draw(st.booleans())
    a = np.zeros((n, n))
    for i in range(n):
        for j in range(n):
            if (directed or j >= i) and draw(st.integers(0, 2)) == 0:
                w = draw(weights)
                a[i, j] = w
                if not directed:
                    a[j, i] = w
    return a


@st.composite
def expression(draw, budget=2000, directed_ok=True):
    """(node, explicit matrix) for a random tree of products of random factors."""
    kind = draw(st.sampled_from(["cart", "direct", "strong", "mix"]))
    comb = {"cart": CARTESIAN, "direct": DIRECT, "strong": STRONG}.get(kind)
    if comb is None:
        comb = Combination(draw(st.sampled_from([0.0, 1.0, 2.0, -1.0])),
                           draw(st.sampled_from([0.0, 0.5, 1.0, -2.0])))
    operands, mats = [], []
    size = 1
    for _ in range(draw(st.integers(1, 3))):
        if draw(st.integers(0, 3)) == 0 and size * 4 <= budget:
            node, mat = draw(expression(budget // max(size, 1) // 2, directed_ok))
        else:
            mat = draw(small_factor(directed_ok))
            node = Leaf(ps.from_matrix(mat))
        n = mat.shape[0]
        kmax = max(1, int(math.log(max(budget / size, 1)) / math.log(max(n, 2))))
        k = draw(st.integers(1, min(kmax, 3)))
        if size * n**k > budget:
            k = 1
            if size * n > budget:
                break
        size *= n**k
        operands.append((node, k))
        mats.extend([mat] * k)
    if not operands:
        mat = draw(small_factor(directed_ok))
        operands, mats = [(Leaf(ps.from_matrix(mat)), 1)], [mat]
    return Product(comb, tuple(operands)), fold(mats, float(comb.a), float(comb.b))


@settings(max_examples=120, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(expression())
def test_random_trees_adjacency_and_degrees(case):
    node, explicit = case
    eng = Engine()
    got = expand(eng.spectrum(node))
    want = eigenvalues(explicit)
    scale = max(1.0, float(np.max(np.abs(want)))) if want.size else 1.0
    # source: numpy eigensolvers on the product built with scipy.sparse.kron.  For
    # non-symmetric matrices with repeated (possibly defective) eigenvalues numpy's error
    # grows like eps^(1/multiplicity), so the distance check is loose there and the traces
    # tr(M^p) -- computed by explicit matrix powers, no eigensolver -- pin the multiset down.
    symmetric = np.array_equal(explicit, explicit.T)
    # (numpy's error on a defective 128-vertex example was seen at 8.5e-3 * scale, hence
    # only a sanity bound there; the traces below are the precise check)
    # a defective eigenvalue of multiplicity m moves by about (n eps)^(1/m) under rounding
    # (Wilkinson, The Algebraic Eigenvalue Problem, 1965, ch. 2; from memory), so the
    # non-symmetric bound follows the largest multiplicity of the exact answer
    m_max = int(np.max(np.unique(np.round(got, 9), return_counts=True)[1])) if got.size else 1
    loose = max(5e-2, (got.size * 2.3e-16) ** (1 / m_max))
    assert multiset_distance(got, want) <= (1e-8 if symmetric else loose) * scale
    power_ = np.eye(explicit.shape[0])
    for p in range(1, 7 if symmetric else 11):
        power_ = power_ @ explicit
        tr_engine = complex(np.sum(got**p))
        assert abs(tr_engine - np.trace(power_)) <= 1e-9 * max(1.0, scale) ** p * len(got)
    # source: row sums of the explicit product matrix
    deg = expand(eng.degrees(node))
    assert multiset_distance(deg, explicit.sum(1)) <= 1e-9 * max(1.0, np.abs(explicit).sum())
    assert eng.spectrum(node).order == node.order == explicit.shape[0]


@settings(max_examples=40, deadline=None)
@given(st.sampled_from(["cart", "direct", "strong"]), st.integers(2, 4), st.integers(2, 4),
       st.data())
def test_products_match_graph_theoretic_definition(kind, n, m, data):
    # source: the product built vertex by vertex from its definition (tests/reference.py)
    a = data.draw(small_factor(directed_ok=False))
    b = data.draw(small_factor(directed_ok=False))
    a = (a != 0).astype(float)
    b = (b != 0).astype(float)
    np.fill_diagonal(a, 0)
    np.fill_diagonal(b, 0)
    explicit = definition_product(a, b, kind)
    comb = {"cart": CARTESIAN, "direct": DIRECT, "strong": STRONG}[kind]
    node = Product(comb, ((Leaf(ps.from_matrix(a)), 1), (Leaf(ps.from_matrix(b)), 1)))
    eng = Engine()
    assert multiset_distance(expand(eng.spectrum(node)), np.linalg.eigvalsh(explicit)) < 1e-9
    assert multiset_distance(expand(eng.degrees(node)), explicit.sum(1)) < 1e-12


@pytest.mark.parametrize("weight,k", [(-1.0, 2), (-49.6898667886702, 6), (-0.5, 4)])
def test_normalized_laplacian_of_direct_powers_with_negative_factor_degrees(weight, k):
    # The product's degrees are positive (an even number of negative factors) while each
    # factor's are negative.  Source: numpy eigvalsh of I - D^-1/2 A D^-1/2 on the explicitly
    # built Kronecker power (definition of the direct product and the normalized Laplacian).
    a = np.array([[weight, 1.0], [1.0, weight]]) if weight < -1 else \
        weight * np.array([[0.0, 1], [1, 0]])
    text = (f"direct(loops({weight!r}, K(2))^{k})" if weight < -1
            else f"direct(scale({weight!r}, P(2))^{k})")
    m = a
    for _ in range(k - 1):
        m = np.kron(m, a)
    d = m.sum(axis=1)
    assert np.all(d > 0)
    s = np.diag(d ** -0.5)
    want = np.sort(np.linalg.eigvalsh(np.eye(len(m)) - s @ m @ s))
    got = np.sort(expand(Engine().spectrum(parse(text), "normalized")).real)
    assert np.max(np.abs(got - want)) < 1e-12
