"""The top-level Python API (``import powerspec as ps``) against explicitly built small products.

Every reference here is independent of powerspec's engine: the product matrices are built with
``scipy.sparse.kron`` from the matrix formula of each product kind (``tests/reference.py``) or
from the graph-theoretic definition, and solved with numpy's dense eigensolvers.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import scipy.sparse as sp
import sympy

import powerspec as ps
from powerspec.errors import InputError, PowerspecError
from tests.reference import definition_product, eigenvalues, expand, fold, kron_product

P3 = np.array([[0, 1, 0], [1, 0, 1], [0, 1, 0]], dtype=float)
C4 = np.array([[0, 1, 0, 1], [1, 0, 1, 0], [0, 1, 0, 1], [1, 0, 1, 0]], dtype=float)
STAR3 = np.array([[0, 1, 1, 1], [1, 0, 0, 0], [1, 0, 0, 0], [1, 0, 0, 0]], dtype=float)


def _cycle(n: int) -> np.ndarray:
    a = np.zeros((n, n))
    for i in range(n):
        a[i, (i + 1) % n] = a[(i + 1) % n, i] = 1
    return a


def _spectrum_matches(node, matrix: np.ndarray, tol: float = 1e-9) -> None:
    got = np.sort(expand(ps.spectrum(node).atoms).real)
    want = np.sort(eigenvalues(matrix).real)
    assert got.shape == want.shape
    assert np.max(np.abs(got - want)) < tol


# --------------------------------------------------------------- factors
def test_families_are_the_textbook_matrices():
    # source: numpy eigenvalues of the adjacency matrices written out by hand above
    _spectrum_matches(ps.direct(ps.P(3)), P3)
    _spectrum_matches(ps.direct(ps.C(4)), C4)
    _spectrum_matches(ps.direct(ps.K(1, 3)), STAR3)
    _spectrum_matches(ps.direct(ps.K(4)), np.ones((4, 4)) - np.eye(4))
    _spectrum_matches(ps.direct(ps.J(3)), np.ones((3, 3)))


@pytest.mark.parametrize("make", [
    lambda m: m,                                   # numpy array
    lambda m: sp.csr_array(m),                     # scipy sparse array
    lambda m: sp.coo_matrix(m),                    # scipy sparse matrix (another format)
    lambda m: sympy.Matrix(m.astype(int).tolist()),  # sympy matrix
])
def test_factor_from_matrix_types(make):
    g = ps.factor(make(STAR3))
    # source: numpy on K(1, 3) x P(3) built with scipy.sparse.kron (direct product: A (x) B)
    _spectrum_matches(ps.direct(g, ps.P(3)), kron_product(STAR3, P3, 0, 1))


def test_factor_rejects_a_non_square_matrix():
    with pytest.raises(InputError):
        ps.factor(np.ones((2, 3)))


# -------------------------------------------------------------- products
@pytest.mark.parametrize("kind,ca,cb", [("cart", 1, 0), ("direct", 0, 1), ("strong", 1, 1)])
def test_products_against_the_vertex_pair_definition(kind, ca, cb):
    node = getattr(ps, kind)(ps.K(1, 3), ps.C(5))
    ref = definition_product(STAR3, _cycle(5), kind)
    # source: the product's adjacency from its graph-theoretic definition (vertex pairs),
    # and again from the Kronecker formula; numpy eigenvalues of both
    assert np.array_equal(ref, kron_product(STAR3, _cycle(5), ca, cb))
    _spectrum_matches(node, ref)


def test_copies_pairs_are_powers():
    # source: numpy on the Kronecker sum C4 (+) C4 (+) P3 built explicitly
    node = ps.cart((ps.C(4), 2), ps.P(3))
    ref = fold([C4, C4, P3], 1, 0)
    _spectrum_matches(node, ref)
    assert ps.spectrum(node).order == 48


def test_mix_is_a_left_fold():
    # source: numpy on ((P3 o P3) o P3) with x o y = 2(x + y) + 1/2 xy built by scipy.sparse.kron;
    # a = 2 is outside {0, 1}, so the product is not associative and the fold order matters
    node = ps.mix(2, 0.5, (ps.P(3), 3))
    _spectrum_matches(node, fold([P3, P3, P3], 2, 0.5), tol=1e-8)


def test_nested_products_and_expression_text_agree():
    node = ps.direct(ps.cart(ps.P(3), ps.P(3)), ps.K(2))
    inner = kron_product(P3, P3, 1, 0)
    # source: numpy on (P3 (+) P3) (x) K2 built explicitly
    _spectrum_matches(node, kron_product(inner, np.array([[0.0, 1], [1, 0]]), 0, 1))
    text = ps.spectrum("direct(cart(P(3), P(3)), K(2))").atoms.atoms()
    assert text == ps.spectrum(node).atoms.atoms()


# --------------------------------------------------------------- queries
def test_top_values_and_multiplicities_in_query_order():
    node = ps.cart((ps.C(4), 2), ps.P(3))
    want = np.sort(eigenvalues(fold([C4, C4, P3], 1, 0)))
    ans = ps.top(node, m=2)
    # source: numpy eigenvalues of the explicit 48 x 48 matrix: largest 4 + sqrt 2 (once)
    assert ans.values()[0] == pytest.approx(want[-1], abs=1e-12)
    assert ans.values()[0] > ans.values()[1]
    assert int(ans.multiplicities()[0]) == 1
    second = want[-1 - 1]
    assert ans.values()[1] == pytest.approx(second, abs=1e-12)
    assert int(ans.multiplicities()[1]) == int(np.sum(np.abs(want - second) < 1e-9))
    bottom = ps.top(node, m=2, bottom=True)
    assert bottom.values()[0] == pytest.approx(want[0], abs=1e-12) and bottom.values()[0] < \
        bottom.values()[1]


def test_cdf_count_quantile_against_numpy():
    node = ps.strong(ps.K(1, 3), ps.P(3))
    ev = np.sort(eigenvalues(kron_product(STAR3, P3, 1, 1)))
    # source: numpy eigenvalues of the explicit strong product; counts by comparison
    a = ps.cdf(node, 0.5)
    assert a.lower <= np.mean(ev <= 0.5) <= a.upper
    c = ps.count(node, -1.0, 1.0)
    assert c.lower <= int(np.sum((ev >= -1.0) & (ev <= 1.0))) <= c.upper
    q = ps.quantile(node, 0.5)
    true_q = ev[math.ceil(0.5 * ev.size) - 1]  # inf{x : F(x) >= 1/2}
    assert q.lower - 1e-12 <= true_q <= q.upper + 1e-12


def test_moments_are_exact_traces():
    node = ps.direct(ps.K(1, 3), ps.C(5))
    m = kron_product(STAR3, _cycle(5), 0, 1)
    ans = ps.moments(node, order=4)
    # source: exact integer traces of the explicit product's matrix powers (numpy, int64)
    mi = m.astype(np.int64)
    want = [int(np.trace(np.linalg.matrix_power(mi, p))) for p in range(1, 5)]
    assert [v for _, v in ans.moments] == want


def test_invariants_against_numpy():
    node = ps.cart(ps.K(1, 3), ps.P(3))
    a = kron_product(STAR3, P3, 1, 0)
    lap = np.diag(a.sum(axis=1)) - a
    inv = ps.invariants(node)
    # source: numpy eigvalsh of the explicit adjacency and Laplacian; the spanning-tree count by
    # the matrix-tree theorem (product of the non-zero Laplacian eigenvalues over n)
    rho = np.max(np.abs(np.linalg.eigvalsh(a)))
    mu = np.sort(np.linalg.eigvalsh(lap))
    for name, want in (("spectral_radius", rho), ("algebraic_connectivity", mu[1]),
                       ("log_spanning_trees", np.sum(np.log(mu[1:])) - np.log(a.shape[0]))):
        d = inv[name]
        assert float(d["lower"]) - 1e-9 <= want <= float(d["upper"]) + 1e-9, name


def test_distribution_is_vectorised_with_bounds():
    d = ps.distribution(ps.cart((ps.C(4), 2), ps.P(3)))
    ev = np.sort(eigenvalues(fold([C4, C4, P3], 1, 0)))
    xs = np.array([-3.0, 0.5, 1.0, 3.7])  # between atoms (sums of {0, +-2} and {0, +-sqrt 2})
    est, lo, hi = d.cdf(xs, bounds=True)
    truth = np.array([np.mean(ev <= x) for x in xs])
    # source: numpy eigenvalues of the explicit 48-vertex product, counted
    assert est.shape == xs.shape and np.all(lo <= truth) and np.all(truth <= hi)
    sest, slo, shi = d.sf(xs, bounds=True)
    assert np.all(slo <= 1 - truth) and np.all(1 - truth <= shi)
    qs = [0.25, 0.5, 0.9]
    qest, qlo, qhi = d.ppf(qs, bounds=True)
    for q, a, b in zip(qs, qlo, qhi, strict=True):
        true_q = ev[math.ceil(q * ev.size) - 1]
        assert a - 1e-12 <= true_q <= b + 1e-12
    left, right = d.interval(0.5, bounds=True)  # each end an (estimate, lower, upper) triple
    for q, (_, a, b) in ((0.25, left), (0.75, right)):
        true_q = ev[math.ceil(q * ev.size) - 1]
        assert a - 1e-12 <= true_q <= b + 1e-12


def test_distribution_of_a_huge_power_has_rigorous_bounds():
    d = ps.distribution("cart(K(2)^1000000)")
    est, lo, hi = d.cdf([0.0, 1000.0], bounds=True)
    # source: the hypercube's spectrum k - 2j, multiplicity C(k, j), is symmetric about 0 with
    # an atom at 0 of mass C(k, k/2)/2^k ~ sqrt(2/(pi k)) = 0.000798 (Stirling): F(0) is
    # 1/2 + half that atom, about 0.500399
    assert lo[0] <= 0.5 + 0.5 * math.sqrt(2 / (math.pi * 1e6)) * (1 + 1e-3) and hi[0] >= 0.5
    assert np.all(lo <= est) and np.all(est <= hi)


def test_plot_writes_a_file(tmp_path):
    pytest.importorskip("matplotlib")
    out = tmp_path / "s.png"
    summary = ps.plot(ps.cart((ps.K(2), 10)), out)
    assert out.read_bytes().startswith(b"\x89PNG") and summary.startswith("wrote ")


def test_errors_are_specific_exceptions():
    with pytest.raises(PowerspecError):
        ps.spectrum("cart(C(5)")
    with pytest.raises(InputError):
        ps.mix(True, 1, ps.P(3))
