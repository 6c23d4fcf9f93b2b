"""The two Laplacian ends of direct and strong powers from the symmetry tier's blocks.

Sources: numpy eigvalsh on the explicitly built product (direct: Kronecker product
A (x) B; strong: (A + I) (x) (B + I) - I; degrees D (x) D resp. (D + I) (x) (D + I) - I,
built in test_symmetry_support.explicit_product) with numpy's error allowance
8 N u ||L|| (from memory); mpmath's symmetric eigensolver at 50 digits for tiny
products; and closed forms: the Laplacian of the star
K(1, m) has spectrum {0, 1^(m-1), m + 1}, λ_max(L) <= max over edges uv of d_u + d_v
(Anderson & Morley 1985), and λ_max(L) = N for a graph on N vertices with a vertex
adjacent to all others (its complement is disconnected; Merris 1994) -- all from memory.

The large-block threshold is forced low (``large_from=1``) so that the Cholesky route
(LAPACK candidates, then inertia certificates) runs on small blocks.
"""

from __future__ import annotations

import math

import mpmath
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from test_symmetry_support import (  # noqa: F401  (one_blas_thread is an autouse fixture)
    explicit_product,
    one_blas_thread,
    random_weighted_graph,
    reference_eigenvalues,
)

from powerspec.algebra.engine import Leaf, Product
from powerspec.algebra.grammar import parse
from powerspec.algebra.kinds import Combination
from powerspec.factors import from_matrix
from powerspec.queries.invariants import invariants
from powerspec.tiers.invariant_blocks import (
    MAX_WORK,
    diagonal_bounds,
    laplacian_blocks,
    laplacian_ends,
    operands,
)
from powerspec.tiers.symmetry import SymmetryError, plan
from powerspec.tiers.symmetry import extremes as ex
from powerspec.tiers.symmetry.block import block_matrix, compute_block, prepare

P3 = np.array([[0.0, 1, 0], [1, 0, 1], [0, 1, 0]])
STAR = np.array([[0.0, 1, 1, 1], [1, 0, 0, 0], [1, 0, 0, 0], [1, 0, 0, 0]])
P4 = np.array([[0.0, 1, 0, 0], [1, 0, 1, 0], [0, 1, 0, 1], [0, 0, 1, 0]])
WPATH = np.array([[0.0, 1.0, 0, 0], [1.0, 0, 2.5, 0], [0, 2.5, 0, 0.5], [0, 0, 0.5, 0]])  # weighted path
LOOPED = P3 + np.diag([0.5, 0.0, 0.0])  # non-bipartite: its direct powers are connected
SIGNED = np.array([[0.0, 1, 0, 0], [1, 0, -0.5, 0], [0, -0.5, 0, 2.0], [0, 0, 2.0, 0]])  # L not >= 0
RULES = {"direct": (0, 1), "strong": (1, 1), "mix(0,0.5)": (0, 0.5)}


def _node(adj: np.ndarray, k: int, rule: str, other: tuple[np.ndarray, int] | None = None):
    ops = ((Leaf(from_matrix(adj)), k),)
    if other is not None:
        ops += ((Leaf(from_matrix(other[0])), other[1]),)
    return Product(Combination(*RULES[rule]), ops)


def _explicit(adj: np.ndarray, k: int, rule: str, other=None) -> np.ndarray:
    a, b = RULES[rule]
    factors = [(adj, adj.sum(axis=1), k)]
    if other is not None:
        factors.append((other[0], other[0].sum(axis=1), other[1]))
    return explicit_product(factors, a, b, "laplacian")


def _covers(pair, value, allowance) -> bool:
    return pair[0] - allowance <= value <= pair[1] + allowance


GRID = [(P3, 2, "direct"), (P3, 5, "direct"), (P3, 6, "strong"), (STAR, 3, "direct"),
        (STAR, 4, "strong"), (P4, 4, "direct"), (P4, 3, "strong"), (WPATH, 3, "direct"),
        (WPATH, 4, "strong"), (LOOPED, 5, "direct"), (LOOPED, 4, "strong"), (P3, 4, "mix(0,0.5)"),
        (STAR, 3, "mix(0,0.5)"), (SIGNED, 3, "direct"), (SIGNED, 3, "strong")]


@pytest.mark.parametrize("large_from", [1, 10**9])
@pytest.mark.parametrize(("adj", "k", "rule"), GRID)
def test_ends_contain_the_explicit_extremes(adj, k, rule, large_from):
    # source: numpy eigvalsh of the explicit product, within numpy's allowance 8 N u ||L||
    ref, allow = reference_eigenvalues(_explicit(adj, k, rule))
    e = laplacian_ends(_node(adj, k, rule), large_from=large_from)
    assert _covers(e.largest, ref[-1], allow)
    assert _covers(e.second, ref[1], allow)
    scale = max(1.0, abs(float(ref[-1])))
    assert e.largest[1] - e.largest[0] < 1e-10 * scale  # tight, not just valid
    assert e.second[1] - e.second[0] < 1e-10 * scale


def test_ends_of_products_of_two_powers():
    # source: numpy eigvalsh of the explicit direct and strong products P(3)^3 x K(1,3)^2
    for rule in ("direct", "strong"):
        ref, allow = reference_eigenvalues(_explicit(P3, 3, rule, (STAR, 2)))
        e = laplacian_ends(_node(P3, 3, rule, (STAR, 2)), large_from=1)
        assert _covers(e.largest, ref[-1], allow) and _covers(e.second, ref[1], allow)


@pytest.mark.parametrize(("adj", "k", "rule"), [(P3, 3, "strong"), (STAR, 2, "strong"),
                                                (LOOPED, 3, "direct"), (WPATH, 2, "direct")])
def test_tiny_products_against_mpmath(adj, k, rule):
    # source: mpmath's symmetric eigensolver at 50 digits on the explicit product (the float entries
    # are exact binary numbers); its error is far below the 1e-30 allowance
    m = _explicit(adj, k, rule)
    with mpmath.workdps(50):
        ev = sorted(mpmath.eigsy(mpmath.matrix(m.tolist()), eigvals_only=True))
        top, second = float(ev[-1]), float(ev[1])
        err_top, err_second = abs(ev[-1] - top), abs(ev[1] - second)
    e = laplacian_ends(_node(adj, k, rule), large_from=1)
    assert _covers(e.largest, top, float(err_top) + 1e-30)
    assert _covers(e.second, second, float(err_second) + 1e-30)


@settings(max_examples=25, deadline=None)
@given(n=st.integers(3, 4), k=st.integers(2, 4), seed=st.integers(0, 10**6),
       rule=st.sampled_from(["direct", "strong"]))
def test_ends_of_random_weighted_powers(n, k, seed, rule):
    # source: numpy eigvalsh of the explicit product of a random weighted graph's power
    adj = random_weighted_graph(np.random.default_rng(seed), n)
    ref, allow = reference_eigenvalues(_explicit(adj, k, rule))
    e = laplacian_ends(_node(adj, k, rule), large_from=1)
    assert _covers(e.largest, ref[-1], allow) and _covers(e.second, ref[1], allow)


@pytest.mark.parametrize("expr", ["direct(K(1, 3)^6)", "strong(K(1, 3)^5)", "strong(P(3)^12)",
                                  "direct(loops(1/2, P(3))^8)"])
def test_dense_and_cholesky_routes_agree_with_the_full_spectrum(expr):
    # source: the tier's full certified spectrum (laplacian_blocks, itself tested against numpy in
    # test_symmetry_blocks): both routes' intervals overlap its bounds, and each other
    node = parse(expr)
    full = laplacian_blocks(node)
    top_full, second_full = full.largest_bounds(), full.kth_smallest(2)
    dense, chol = laplacian_ends(node, large_from=10**9), laplacian_ends(node, large_from=1)
    for got in (dense, chol):
        assert got.largest[0] <= top_full[1] and top_full[0] <= got.largest[1]
        assert got.second[0] <= second_full[1] and second_full[0] <= got.second[1]
    assert chol.largest[0] <= dense.largest[1] and dense.largest[0] <= chol.largest[1]
    assert chol.large > 0 and dense.large == 0


def _block(expr: str, pick: int = 0):
    ops, a, b, _ = operands(parse(expr))
    p = plan(ops, a, b, "laplacian")
    prepared = prepare(list(p.factors), a, b, "laplacian")
    spec = sorted(p.specs, key=lambda s: -s.dim)[pick]
    parts = [(prepared[fi], k) for fi, k in p.terms[spec.term].parts]
    return parts, spec.shapes, a, b


@pytest.mark.parametrize("expr", ["direct(K(1, 3)^7)", "strong(P(4)^4)"])
def test_block_ends_agree_with_the_dense_block(expr):
    # source: the dense certified block (compute_block: all eigenvalues with rigorous radii)
    parts, shapes, a, b = _block(expr)
    blk = compute_block(parts, shapes, a, b, "laplacian", 1)
    e = ex.block_ends(parts, shapes, a, b, top=True, bottom=True, second=True, large_from=1)
    assert e.route == "cholesky"
    v, r = blk.values, blk.radius
    for pair, i in ((e.low, 0), (e.second, 1), (e.high, -1)):
        assert pair[0] <= v[i] + r[i] and v[i] - r[i] <= pair[1]


def test_certificate_refuses_a_wrong_shift():
    # source: numpy eigvalsh of an explicit symmetric matrix (eigenvalues 1, 2, 3 apart by 1)
    q, _ = np.linalg.qr(np.random.default_rng(4).standard_normal((60, 60)))
    m = (q * np.arange(1.0, 61.0)) @ q.T
    m = 0.5 * (m + m.T)
    lam = np.linalg.eigvalsh(m)
    assert ex.shift_psd_bound(m, lam[0] + 0.5) is None  # an eigenvalue lies below the shift
    assert ex.shift_psd_bound(-m, -lam[-1] + 0.5) is None  # the top side, mirrored
    good = ex.shift_psd_bound(m, lam[0] - 1e-6)
    assert good is not None and lam[0] - 1e-5 < good <= lam[0]
    # a rank-one push along a wrong vector (e_1) does not lift λ_1: no lower bound near λ_2
    y = np.zeros(60)
    y[0] = 10.0
    assert ex.shift_psd_bound(m, lam[1] - 1e-6, rank_one=y) is None


def test_wrong_candidates_are_refused_not_reported():
    # source: numpy eigvalsh of the same block matrix (the exact float block B̃)
    parts, shapes, a, b = _block("direct(K(1, 3)^7)")
    bt, err, _ = block_matrix(parts, shapes, a, b, "laplacian")
    lam = np.linalg.eigvalsh(bt)
    gap = float(lam[-1] - lam[0])
    # candidates a quarter of the spread too high miss the bottom; too low, the top
    assert ex.certify_ends(bt, err, top=False, bottom=True, second=False, theta=lam + 0.25 * gap) is None
    assert ex.certify_ends(bt, err, top=True, bottom=False, second=False, theta=lam - 0.25 * gap) is None
    # a right λ_1 but a second candidate a quarter of the spread above λ_2: refused as well
    high_second = np.concatenate([lam[:1], lam[1:] + 0.25 * gap])
    assert ex.certify_ends(bt, err, top=False, bottom=True, second=True, theta=high_second) is None
    right = ex.certify_ends(bt, err, top=True, bottom=True, second=True, theta=lam)
    assert right is not None and _covers(right.high, lam[-1], 0.0) and _covers(right.low, lam[0], 0.0)


def test_a_refused_block_falls_back_to_the_dense_solve(monkeypatch):
    # source: numpy eigvalsh of the explicit product; the candidates are made wrong on purpose
    monkeypatch.setattr(ex, "candidates", lambda b: np.linalg.eigvalsh(b) + 0.3 * np.ptp(
        np.linalg.eigvalsh(b)))
    parts, shapes, a, b = _block("strong(K(1, 3)^4)")
    e = ex.block_ends(parts, shapes, a, b, top=True, bottom=True, second=False, large_from=1)
    assert e.route == "dense"
    ref, allow = reference_eigenvalues(_explicit(STAR, 4, "strong"))
    ends = laplacian_ends(_node(STAR, 4, "strong"), large_from=1)
    assert _covers(ends.largest, ref[-1], allow) and _covers(ends.second, ref[1], allow)


@pytest.mark.parametrize(("adj", "k", "rule"), [(P3, 5, "direct"), (STAR, 3, "strong"),
                                                (WPATH, 3, "direct"), (LOOPED, 4, "strong")])
def test_cheap_bounds_hold_before_any_block_is_built(adj, k, rule):
    # source: numpy eigvalsh of the explicit product: every eigenvalue lies in some block's Weyl
    # enclosure, the diagonal floor is below λ_max and Fiedler's ceiling above λ_2
    ref, allow = reference_eigenvalues(_explicit(adj, k, rule))
    node = _node(adj, k, rule)
    ops, a, b, widen = operands(node)
    p = plan(ops, a, b, "laplacian")
    ranges = ex.WeylRanges(prepare(list(p.factors), a, b, "laplacian"), a, b, widen)
    enc = [ranges.block(list(p.terms[s.term].parts), s.shapes) for s in p.specs]
    assert all(any(lo - allow <= x <= hi + allow for lo, hi in enc) for x in ref)
    floor, ceiling = diagonal_bounds(ops, a, b, widen)
    assert floor <= ref[-1] + allow and ref[1] <= ceiling + allow


def test_plan_is_refused_before_any_work():
    # the budget is checked from the dimension formulas; no block is built
    with pytest.raises(SymmetryError, match="decided before any block was built"):
        laplacian_ends(parse("strong(K(1, 3)^12)"), max_work=10)


@pytest.mark.parametrize(("k", "want"), [(150, 2**150 + 1)])
def test_direct_path_power_far_beyond_the_dense_budget(k, want):
    # source: closed form λ_max = 2^k + 1: the all-middle vertex of direct(P(3)^k) and its 2^k
    # neighbours (all-end vertices, degree 1) form a star component K(1, 2^k) (Laplacian top
    # m + 1); every other vertex has degree <= 2^(k-1), so λ_max <= 2^k elsewhere (Anderson-Morley)
    node = parse(f"direct(P(3)^{k})")
    with pytest.raises(SymmetryError):
        laplacian_blocks(node)  # the full spectrum is refused at this k
    e = laplacian_ends(node, bottom=False)
    assert e.largest[0] <= want <= e.largest[1]
    assert e.largest[1] - e.largest[0] < 1e-12 * want


def test_invariants_use_the_ends_past_the_dense_budget():
    # sources: λ_max(direct(K(1,3)^k)) = 3^k + 1 (the star component K(1, 3^k) around the all-centre
    # vertex; other degrees <= 3^(k-1), Anderson-Morley) and λ_max(strong(K(1,3)^k)) = 4^k (the
    # all-centre vertex is adjacent to every other vertex)
    for expr, want in (("direct(K(1, 3)^20)", 3**20 + 1), ("strong(K(1, 3)^17)", 4**17)):
        ops, a, b, _ = operands(parse(expr))
        assert plan(ops, a, b, "laplacian").work > MAX_WORK  # beyond the dense full-spectrum budget
        inv = invariants(expr).invariants
        top = inv["laplacian_spectral_radius"]
        assert "largest eigenvalue, symmetry reduction" in top["method"]
        assert top["lower"] <= want <= top["upper"] and top["upper"] - top["lower"] < 1e-9 * want
    ac = inv["algebraic_connectivity"]  # strong(K(1, 3)^17) is connected
    assert "2nd smallest eigenvalue, symmetry reduction" in ac["method"]
    # Fiedler: a(L) <= N/(N-1) d_min with d_min = 2^17 - 1 (an all-leaf vertex); a(L) > 0 (connected)
    assert 0 < ac["lower"] <= ac["upper"] <= (2**17 - 1) * (1 + 1e-9)


def test_dense_budget_agrees_with_the_ends_where_both_run():
    # source: the full certified block spectrum (laplacian_blocks) at the edge of its budget
    node = parse("strong(K(1, 3)^14)")
    full = laplacian_blocks(node)
    e = laplacian_ends(node)
    lo, hi = full.kth_smallest(2)
    assert e.second[0] <= hi and lo <= e.second[1]
    lo, hi = full.largest_bounds()
    assert e.largest[0] <= hi and lo <= e.largest[1]
    assert math.isfinite(e.second[0]) and e.second[1] - e.second[0] < 1e-6 * 4**14
