"""Certified block spectra of the symmetry tier against independent references.

References: numpy eigvalsh on the explicitly built product (Kronecker products from
the matrix definitions, see test_symmetry_support), python-flint's certified
eigenvalue balls at 128 bits for tiny products, exact traces of the product matrices
computed with Python integers / Fractions from word expansions (tr of a word in k-th
tensor powers is the k-th power of the factor word's trace), and Weichsel's theorem
(1962) on the components of direct products for the Laplacian nullity.
"""

from __future__ import annotations

import itertools
from fractions import Fraction

import mpmath
import numpy as np
import pytest
import sympy
from hypothesis import given, settings
from hypothesis import strategies as st
from test_symmetry_support import (  # noqa: F401  (one_blas_thread is an autouse fixture)
    U,
    certified_eigenvalues,
    expand,
    explicit_product,
    one_blas_thread,
    random_weighted_graph,
    reference_eigenvalues,
    sorted_cover,
)

from powerspec.tiers.symmetry import KINDS, PowerOperand, SymmetryError, blocks, plan

RULES = {"direct": (0, 1), "strong": (1, 1), "cartesian": (1, 0), "mix(0,0.7)": (0, 0.7),
         "mix(1,0.5)": (1, 0.5)}

P3 = np.array([[0, 1, 0], [1, 0, 1], [0, 1, 0]])
STAR = np.array([[0, 1, 1, 1], [1, 0, 0, 0], [1, 0, 0, 0], [1, 0, 0, 0]])
PAW = np.array([[0, 1, 1, 0], [1, 0, 1, 0], [1, 1, 0, 1], [0, 0, 1, 0]])  # triangle with a pendant


def _operands(spec, seed):
    rng = np.random.default_rng(seed)
    out = []
    for n, k in spec:
        a = random_weighted_graph(rng, n)
        out.append(PowerOperand(a, a.sum(axis=1), k))
    return out


def _check_against_explicit(ops, a, b, kind):
    got_v, got_r, total = expand(blocks(ops, a, b, kind))
    m = explicit_product([(op.adjacency, op.degrees, op.copies) for op in ops], a, b, kind)
    ref, ref_err = reference_eigenvalues(m)  # numpy on the explicit product
    assert total == m.shape[0]
    assert sorted_cover(got_v, got_r, ref, ref_err)
    # radii are small: about 1e-13 of the block scale, never 1e-6
    assert np.max(got_r) < 1e-10 * max(1.0, float(np.max(np.abs(ref))))
    return got_v, got_r


PRODUCTS = {
    "G^3": [(3, 3)],
    "G^2 (n=4)": [(4, 2)],
    "G^2 x H^2": [(3, 2), (3, 2)],
    "G^3 x H": [(3, 3), (2, 1)],
}


@pytest.mark.parametrize("rule", list(RULES))
@pytest.mark.parametrize("name", list(PRODUCTS))
def test_full_multisets_against_explicit_products(name, rule):
    a, b = RULES[rule]
    ops = _operands(PRODUCTS[name], seed=hash((name, rule)) % 2**32)
    for kind in KINDS:
        _check_against_explicit(ops, a, b, kind)


@pytest.mark.parametrize("spec,rule,kind", [([(4, 5)], "direct", "laplacian"),
                                            ([(5, 4)], "strong", "normalized"),
                                            ([(3, 6)], "cartesian", "transition"),
                                            ([(3, 3), (3, 3)], "direct", "signless")])
def test_thousand_vertex_products(spec, rule, kind):
    # products of 625 to 1024 vertices, still small enough for numpy on the explicit matrix
    a, b = RULES[rule]
    _check_against_explicit(_operands(spec, seed=7), a, b, kind)


def test_custom_degrees_are_used():
    # the degrees the caller passes (here strengths plus self-loop weight 0.5) define D
    ops = _operands([(3, 3)], seed=3)
    ops = [PowerOperand(op.adjacency, op.degrees + 0.5, op.copies) for op in ops]
    for kind in ("laplacian", "normalized"):
        _check_against_explicit(ops, 0, 1, kind)


@settings(max_examples=60, deadline=None)
@given(n=st.integers(2, 5), k=st.integers(1, 4), seed=st.integers(0, 2**31),
       rule=st.sampled_from(list(RULES)), kind=st.sampled_from(KINDS), mirror=st.booleans())
def test_coverage_random_weighted_factors(n, k, seed, rule, kind, mirror):
    # hypothesis: random weighted irregular factors, every explicit eigenvalue inside the radii;
    # ``mirror`` makes the factor symmetric under reversal (exactly), so the automorphism split runs
    if n**k > 256:
        k = 2
    a, b = RULES[rule]
    ops = _operands([(n, k)], seed)
    if mirror:
        adj = ops[0].adjacency
        adj = (adj + adj[::-1, ::-1]) / 2  # x + y == y + x exactly: reversal is an exact automorphism
        deg = adj.sum(axis=1)
        ops = [PowerOperand(adj, (deg + deg[::-1]) / 2, k)]
    _check_against_explicit(ops, a, b, kind)


@pytest.mark.parametrize("spec,rule,kind", [([(3, 2)], "direct", "laplacian"),
                                            ([(4, 2)], "strong", "normalized"),
                                            ([(3, 2)], "cartesian", "transition"),
                                            ([(2, 2), (2, 1)], "direct", "signless")])
def test_certified_reference_tiny(spec, rule, kind):
    # python-flint certified eigenvalue balls (128 bits) of the explicit product
    a, b = RULES[rule]
    ops = _operands(spec, seed=11)
    got_v, got_r, _ = expand(blocks(ops, a, b, kind))
    explicit = explicit_product([(o.adjacency, o.degrees, o.copies) for o in ops], a, b, kind)
    mids, rads = certified_eigenvalues(explicit)
    assert sorted_cover(got_v, got_r, mids, rads)


# ---- sizes no explicit build reaches ------------------------------------------------------------

def _word_trace_power(x_mats, signs, k, p):
    """tr((sum_j s_j X_j^(x)k)^p) = sum over words of prod s * tr(X_w1 ... X_wp)^k, exact Fractions."""
    total = Fraction(0)
    for word in itertools.product(range(len(x_mats)), repeat=p):
        prod = np.identity(x_mats[0].shape[0], dtype=object)
        sign = 1
        for j in word:
            prod = prod.dot(x_mats[j])
            sign *= signs[j]
        total += sign * Fraction(sum(prod[i, i] for i in range(prod.shape[0]))) ** k
    return total


def _block_power_sums(blks, p):
    """(sum mult mu^p, rigorous bound of its distance to the exact sum) in mpmath at 60 digits."""
    with mpmath.workdps(60):
        s = mpmath.mpf(0)
        bound = mpmath.mpf(0)
        for blk in blks:
            for mu, r in zip(blk.values.tolist(), blk.radius.tolist(), strict=True):
                mu, r = mpmath.mpf(mu), mpmath.mpf(r)
                s += blk.multiplicity * mu**p
                bound += blk.multiplicity * ((abs(mu) + r) ** p - abs(mu) ** p)
        return s, bound


def _frac_matrix(m):
    # Fraction(float) is exact and has Python-int numerator/denominator (no int64 overflow)
    return np.array([[Fraction(float(v)) for v in row] for row in m], dtype=object)


@pytest.mark.parametrize("k,split", [(20, True), (13, False)])
def test_direct_power_of_path_traces_and_nullity(k, split):
    # with the reflection split (k = 20) and without it (k = 13, plain Schur-Weyl blocks)
    op = PowerOperand(P3.astype(float), P3.sum(axis=1).astype(float), k)
    assert plan([op], 0, 1, "laplacian", automorphisms=split).total_check == 3**k  # exact count
    blks = list(blocks([op], 0, 1, "laplacian", automorphisms=split))
    assert sum(b.multiplicity * b.values.size for b in blks) == 3**k
    d, adj = _frac_matrix(np.diag(P3.sum(axis=1))), _frac_matrix(P3)
    for p in range(1, 7):
        exact = _word_trace_power([d, adj], [1, -1], k, p)  # tr((D^(x)k - A^(x)k)^p), exact
        s, bound = _block_power_sums(blks, p)
        assert abs(s - mpmath.mpf(exact.numerator) / exact.denominator) <= bound * (1 + 1e-9) + 1e-30
    # nullity decided from the radii: zero is inside the ball or certainly outside it
    zero = sum(b.multiplicity * int(np.sum(np.abs(b.values) <= b.radius)) for b in blks)
    # Weichsel (1962): k copies of a connected bipartite graph give 2^(k-1) components
    assert zero == 2 ** (k - 1)


@pytest.mark.parametrize("name,adj,k,components", [("star", STAR, 9, 2**8), ("paw", PAW, 7, 1)])
def test_direct_power_nullity_weichsel(name, adj, k, components):
    # Weichsel (1962): bipartite connected factors give 2^(k-1) components, a non-bipartite one gives 1
    op = PowerOperand(adj.astype(float), adj.sum(axis=1).astype(float), k)
    blks = list(blocks([op], 0, 1, "laplacian"))
    near = [(b, np.abs(b.values) <= b.radius) for b in blks]
    assert all(np.all(np.abs(b.values[~z]) > b.radius[~z]) for b, z in near)
    assert sum(b.multiplicity * int(z.sum()) for b, z in near) == components


def test_strong_power_traces_k10():
    # L = (I + D)^(x)k - (I + A)^(x)k for the strong power (the identities cancel): exact word traces
    k = 10
    op = PowerOperand(PAW.astype(float), PAW.sum(axis=1).astype(float), k)
    blks = list(blocks([op], 1, 1, "laplacian"))
    x = _frac_matrix(np.eye(4) + np.diag(PAW.sum(axis=1)))
    y = _frac_matrix(np.eye(4) + PAW)
    for p in range(1, 7):
        exact = _word_trace_power([x, y], [1, -1], k, p)
        s, bound = _block_power_sums(blks, p)
        assert abs(s - mpmath.mpf(exact.numerator) / exact.denominator) <= bound * (1 + 1e-9) + 1e-30


def test_normalized_direct_power_traces_k9():
    # I - N^(x)k with N similar to D^-1 A: tr((I - N^(x)k)^p) from tr((D^-1 A)^j), exact Fractions
    k = 9
    op = PowerOperand(STAR.astype(float), STAR.sum(axis=1).astype(float), k)
    blks = list(blocks([op], 0, 1, "normalized"))
    deg = STAR.sum(axis=1)
    walk = np.array([[Fraction(int(STAR[i, j]), int(deg[i])) for j in range(4)] for i in range(4)],
                    dtype=object)
    ident = _frac_matrix(np.eye(4))
    for p in range(1, 7):
        exact = _word_trace_power([ident, walk], [1, -1], k, p)
        s, bound = _block_power_sums(blks, p)
        assert abs(s - mpmath.mpf(exact.numerator) / exact.denominator) <= bound * (1 + 1e-9) + 1e-30


SYMMETRIC = {
    "P3": P3.astype(float),
    "C4 weighted": np.array([[0, 2, 0, 1], [2, 0, 1, 0], [0, 1, 0, 2], [1, 0, 2, 0]], dtype=float),
    "K1,3": STAR.astype(float),
    "P5 weighted": np.array([[0, .5, 0, 0, 0], [.5, 0, 2, 0, 0], [0, 2, 0, 2, 0], [0, 0, 2, 0, .5],
                             [0, 0, 0, .5, 0]]),
}


@pytest.mark.parametrize("rule", list(RULES))
@pytest.mark.parametrize("name", list(SYMMETRIC))
def test_automorphism_split_against_explicit_products(name, rule):
    # factors with a reflection or leaf swap are split into ±1 parts first; the explicit
    # product (numpy) must still be covered, for every kind
    a, b = RULES[rule]
    adj = SYMMETRIC[name]
    k = 3 if adj.shape[0] <= 4 else 2
    ops = [PowerOperand(adj, adj.sum(axis=1), k)]
    unsplit = plan(ops, a, b, "laplacian", automorphisms=False)
    assert plan(ops, a, b, "laplacian").largest < unsplit.largest
    for kind in KINDS:
        _check_against_explicit(ops, a, b, kind)


def test_automorphism_split_in_products_of_powers():
    # direct(P3^2, W^2) and strong(K1,3^2, P3): mixed split and unsplit operands
    rng = np.random.default_rng(4)
    w = random_weighted_graph(rng, 3)
    for ops, (a, b) in [([PowerOperand(P3.astype(float), P3.sum(axis=1).astype(float), 2),
                          PowerOperand(w, w.sum(axis=1), 2)], (0, 1)),
                        ([PowerOperand(STAR.astype(float), STAR.sum(axis=1).astype(float), 2),
                          PowerOperand(P3.astype(float), P3.sum(axis=1).astype(float), 1)], (1, 1))]:
        for kind in ("laplacian", "normalized"):
            _check_against_explicit(ops, a, b, kind)


@pytest.mark.parametrize("a,b", [(0, -0.5), (1, -0.3)])
def test_negative_coefficients(a, b):
    # mix(0, b < 0): the eigenvalues are scaled by b^(K-1) < 0 for even K (order reversed);
    # mix(1, b < 0): 1 + b lambda changes sign; both against numpy on the explicit product
    for spec in ([(3, 2)], [(3, 3)], [(3, 2), (2, 1)]):
        ops = _operands(spec, seed=21)
        for kind in ("laplacian", "signless", "adjacency"):
            _check_against_explicit(ops, a, b, kind)
    with pytest.raises(SymmetryError):
        list(blocks(_operands([(3, 2)], seed=21), a, b, "normalized"))


@pytest.mark.parametrize("kind", ["laplacian", "signless"])
def test_exact_reference_with_automorphism_split(kind):
    # sympy: exact real roots of the characteristic polynomial of the integer matrix of the strong
    # square of the star (split by a leaf swap here), evaluated to 30 digits
    ops = [PowerOperand(STAR.astype(float), STAR.sum(axis=1).astype(float), 2)]
    got_v, got_r, _ = expand(blocks(ops, 1, 1, kind))
    m = explicit_product([(STAR, STAR.sum(axis=1), 2)], 1, 1, kind)
    poly = sympy.Poly(sympy.Matrix(np.rint(m).astype(int).tolist()).charpoly().as_expr())
    roots = np.array(sorted(float(r.evalf(30)) for r in poly.real_roots()))
    assert sorted_cover(got_v, got_r, roots, 1e-25 + U * np.abs(roots))
