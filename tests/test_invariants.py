"""Spectral invariants against closed forms, the matrix-tree theorem and scipy eigensolvers."""

from __future__ import annotations

import math

import mpmath
import numpy as np
import pytest
import scipy.sparse as sp
import scipy.sparse.linalg as sla

from powerspec.algebra.grammar import parse
from powerspec.queries.invariants import invariants
from tests.reference import fold


def _explicit(expr):
    node = parse(expr)
    mats = [c.factor.adjacency.toarray() for c, k in node.operands for _ in range(k)]
    return node, mats


def _log_trees_numpy(adj):
    # matrix-tree theorem: log det of the Laplacian with one row and column removed
    lap = np.diag(adj.sum(axis=1)) - adj
    sign, logdet = np.linalg.slogdet(lap[1:, 1:])
    assert sign > 0
    return logdet


@pytest.mark.parametrize("k", [1, 2, 5, 20, 100])
def test_hypercube_spanning_trees(k):
    # source: tau(Q_k) = 2^(2^k - k - 1) prod_j j^C(k, j) (Stanley, Enumerative Combinatorics,
    # vol. 2 -- from memory), compared in log form
    want = (2**k - k - 1) * math.log(2) + sum(math.comb(k, j) * math.log(j) for j in range(1, k + 1))
    got = invariants(f"cart(K(2)^{k})").invariants["log_spanning_trees"]["value"]
    assert math.isclose(float(got), want, rel_tol=1e-11, abs_tol=1e-12)


@pytest.mark.parametrize("expr", ["cart(C(5)^2)", "cart(P(4), P(3))",
                                  "cart(C(3), P(5))"])
def test_torus_and_grid_spanning_trees(expr):
    # source: numpy slogdet of the reduced Laplacian of the explicit product (matrix-tree theorem)
    node, mats = _explicit(expr)
    adj = fold(mats, 1, 0)
    inv = invariants(expr).invariants
    assert math.isclose(float(inv["log_spanning_trees"]["value"]), _log_trees_numpy(adj), rel_tol=1e-10)
    lap = np.diag(adj.sum(axis=1)) - adj
    alpha = np.linalg.eigvalsh(lap)
    # source: numpy eigvalsh -- Kirchhoff index N * sum 1/alpha, algebraic connectivity alpha_2
    kf = len(adj) * np.sum(1 / alpha[1:])
    assert math.isclose(float(inv["kirchhoff_index"]["value"]), kf, rel_tol=1e-9)
    assert math.isclose(float(inv["algebraic_connectivity"]["value"]), alpha[1], rel_tol=1e-9)
    assert inv["components"]["value"] == 1


@pytest.mark.parametrize("expr,a,b", [("cart(C(47)^3)", 1, 0), ("direct(P(3)^10)", 0, 1)])
def test_spectral_radius_against_scipy(expr, a, b):
    # source: scipy.sparse.linalg.eigsh on the explicit sparse product (~1e5 vertices)
    node = parse(expr)
    f = sp.csr_array(node.operands[0][0].factor.adjacency)
    k = node.operands[0][1]
    m = f
    for _ in range(k - 1):
        i1, i2 = sp.identity(m.shape[0], format="csr"), sp.identity(f.shape[0], format="csr")
        m = sp.csr_array(a * (sp.kron(m, i2) + sp.kron(i1, f)) + b * sp.kron(m, f))
    # a positive start vector (as for any Perron vector) keeps Lanczos fast despite the small gap
    v0 = np.ones(m.shape[0]) + np.random.default_rng(3).random(m.shape[0]) * 1e-3
    lam = sla.eigsh(m.astype(float), k=1, which="LA", v0=v0, return_eigenvectors=False)[0]
    inv = invariants(expr).invariants
    assert math.isclose(float(inv["spectral_radius"]["value"]), lam, rel_tol=1e-8)
    assert math.isclose(float(inv["epidemic_threshold"]["value"]), 1 / lam, rel_tol=1e-8)


@pytest.mark.parametrize("expr", ["cart(P(3)^3)", "cart(K(1, 2), C(4))"])
def test_estrada_and_heat_trace_against_numpy(expr):
    # source: numpy eigvalsh of the explicit Cartesian product
    node, mats = _explicit(expr)
    adj = fold(mats, 1, 0)
    ev = np.linalg.eigvalsh(adj)
    al = np.linalg.eigvalsh(np.diag(adj.sum(axis=1)) - adj)
    inv = invariants(expr, t=0.7).invariants
    assert math.isclose(float(inv["estrada_index"]["value"]), np.sum(np.exp(ev)), rel_tol=1e-10)
    assert math.isclose(float(inv["heat_trace"]["value"]), np.sum(np.exp(-0.7 * al)), rel_tol=1e-10)
    # source: numpy -- energy sum |lambda|, nullity = count of |lambda| < 1e-9
    assert math.isclose(float(inv["energy"]["value"]), np.sum(np.abs(ev)), rel_tol=1e-10)
    assert inv["nullity"]["value"] == int(np.sum(np.abs(ev) < 1e-9))


def test_estrada_multiplicative_closed_form_huge_k():
    # source: e^(A(+)B) = e^A (x) e^B, so EE(G^k) = EE(G)^k; EE(K_3) = e^2 + 2 e^-1 (spectrum 2, -1, -1)
    k = 10**6
    inv = invariants(f"cart(K(3)^{k})").invariants
    want = k * mpmath.log(mpmath.e**2 + 2 / mpmath.e)
    got = inv["log_estrada_index"]
    assert abs(got["value"] - want) < 1e-6 * want
    assert got["lower"] <= want <= got["upper"]
    # heat trace of K_3 at t = 1: 1 + 2 e^-3 (Laplacian spectrum 0, 3, 3)
    want_h = k * mpmath.log(1 + 2 * mpmath.e**-3)
    assert abs(inv["log_heat_trace"]["value"] - want_h) < 1e-6 * want_h


@pytest.mark.parametrize("expr,a,b", [("direct(K(1, 3), P(4))", 0, 1),
                                      ("strong(K(1, 2), P(3))", 1, 1)])
def test_nonfactoring_brackets_hold(expr, a, b):
    # source: numpy eigvalsh of the explicit non-regular direct/strong product's Laplacian
    node, mats = _explicit(expr)
    adj = fold(mats, a, b)
    al = np.linalg.eigvalsh(np.diag(adj.sum(axis=1)) - adj)
    ev = np.linalg.eigvalsh(adj)
    inv = invariants(expr).invariants
    ac = inv["algebraic_connectivity"]
    assert ac["value"] is None and ac["lower"] <= al[1] <= ac["upper"]
    lt = inv["log_spanning_trees"]
    if al[1] > 1e-9:
        assert _log_trees_numpy(adj) <= lt["upper"]
    ht = inv["heat_trace"]
    assert ht["value"] is None or math.isclose(float(ht["value"]), np.sum(np.exp(-al)), rel_tol=1e-9)
    if ht["value"] is None:
        assert ht["lower"] <= np.sum(np.exp(-al)) <= ht["upper"]
    assert math.isclose(float(inv["energy"]["value"]), np.sum(np.abs(ev)), rel_tol=1e-9)


def test_energy_bounds_and_json_for_huge_cartesian():
    # source: Cauchy-Schwarz / tr(A^2) brackets checked against numpy on an explicit small case
    inv = invariants("cart(C(5)^3)", limit=5).invariants
    node, mats = _explicit("cart(C(5)^3)")
    ev = np.linalg.eigvalsh(fold(mats, 1, 0))
    e = inv["energy"]
    assert e["value"] is None and e["lower"] <= np.sum(np.abs(ev)) <= e["upper"]
    ans = invariants("cart(K(2)^100000)")
    assert '"invariants"' in ans.to_json() and ans.invariants["spectral_radius"]["value"] == 100000.0
