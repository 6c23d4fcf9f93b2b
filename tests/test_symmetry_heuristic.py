"""The sorted-degree approximation and the Weyl brackets against exact spectra.

References: numpy eigvalsh on explicit products (test_symmetry_support), the exact
algebra of regular factors (D = c I commutes with everything, so the approximation
is exact), and Weyl's inequalities for sums of symmetric matrices.
"""

from __future__ import annotations

import numpy as np
import pytest
from test_symmetry_support import (  # noqa: F401
    explicit_product,
    one_blas_thread,
    random_weighted_graph,
    reference_eigenvalues,
)

from powerspec.tiers.symmetry import PowerOperand, blocks
from powerspec.tiers.symmetry.heuristic import (
    compare_sorted,
    sorted_degree_laplacian,
    weyl_laplacian_brackets,
)

CYCLE5 = np.roll(np.eye(5), 1, axis=1) + np.roll(np.eye(5), -1, axis=1)


def _atoms_from_blocks(blks):
    return [(float(v), b.multiplicity) for b in blks for v in b.values]


@pytest.mark.parametrize("a,b", [(0, 1), (1, 1), (0, 0.5), (1, 0.5)])
def test_exact_for_regular_factors(a, b):
    # for a regular factor D = c I, so pairing degrees with Laplacian eigenvalues is exact
    op = PowerOperand(CYCLE5, CYCLE5.sum(axis=1), 3)
    est = sorted_degree_laplacian([op], a, b)
    exact = _atoms_from_blocks(blocks([op], a, b, "laplacian"))
    worst, mean = compare_sorted(est, exact)
    assert worst < 1e-12 and mean < 1e-12


@pytest.mark.parametrize("a,b", [(0, 1), (1, 1), (1, 0)])
@pytest.mark.parametrize("seed", [1, 2, 3])
def test_weyl_brackets_contain_explicit_spectrum(a, b, seed):
    # Weyl's inequalities hold for every symmetric sum: each sorted eigenvalue of the explicit
    # product (numpy) lies in its bracket
    rng = np.random.default_rng(seed)
    g, h = random_weighted_graph(rng, 3), random_weighted_graph(rng, 4)
    ops = [PowerOperand(g, g.sum(axis=1), 2), PowerOperand(h, h.sum(axis=1), 1)]
    ref, err = reference_eigenvalues(explicit_product([(g, g.sum(axis=1), 2), (h, h.sum(axis=1), 1)],
                                                      a, b, "laplacian"))
    pos = 0
    for count, lo, hi in weyl_laplacian_brackets(ops, a, b):
        seg = ref[pos:pos + count]
        assert np.all(seg >= lo - err) and np.all(seg <= hi + err)
        pos += count
    assert pos == ref.size


def test_estimate_is_a_multiset_of_the_right_size_and_cartesian_is_exact():
    rng = np.random.default_rng(9)
    g = random_weighted_graph(rng, 4)
    op = PowerOperand(g, g.sum(axis=1), 3)
    for a, b in [(0, 1), (1, 1)]:
        assert sum(m for _, m in sorted_degree_laplacian([op], a, b)) == 4**3
    # Cartesian: the estimate reduces to sums of Laplacian eigenvalues, the exact spectrum
    est = sorted_degree_laplacian([op], 1, 0)
    ref, err = reference_eigenvalues(explicit_product([(g, g.sum(axis=1), 3)], 1, 0, "laplacian"))
    worst, _ = compare_sorted(est, [(float(v), 1) for v in ref])
    assert worst < 1e-12 + err


def test_estimate_error_is_measured_not_assumed():
    # for an irregular factor the estimate is off; compare_sorted measures by how much
    star = np.array([[0.0, 1, 1, 1], [1, 0, 0, 0], [1, 0, 0, 0], [1, 0, 0, 0]])
    op = PowerOperand(star, star.sum(axis=1), 4)
    exact = _atoms_from_blocks(blocks([op], 0, 1, "laplacian"))
    worst, mean = compare_sorted(sorted_degree_laplacian([op], 0, 1), exact)
    assert 0 < mean <= worst
    ref, err = reference_eigenvalues(explicit_product([(star, star.sum(axis=1), 4)], 0, 1, "laplacian"))
    w2, m2 = compare_sorted(sorted_degree_laplacian([op], 0, 1), [(float(v), 1) for v in ref])
    assert abs(w2 - worst) < 1e-9 and abs(m2 - mean) < 1e-9


def test_weyl_brackets_of_a_non_negative_laplacian_start_at_zero():
    # D - A with non-negative weights and degrees = row sums is positive semidefinite
    # (Gershgorin); the brackets are clipped there and still contain every eigenvalue of the
    # explicit product (numpy)
    path3 = np.array([[0.0, 1, 0], [1, 0, 1], [0, 1, 0]])
    ops = [PowerOperand(path3, path3.sum(axis=1), 3)]
    ref, err = reference_eigenvalues(explicit_product([(path3, path3.sum(axis=1), 3)], 0, 1,
                                                      "laplacian"))
    segs = weyl_laplacian_brackets(ops, 0, 1)
    assert min(lo for _, lo, _ in segs) == 0.0
    pos = 0
    for count, lo, hi in segs:
        seg = ref[pos:pos + count]
        assert np.all(seg >= lo - err) and np.all(seg <= hi + err)
        pos += count
    # a negative weight breaks semidefiniteness: no clipping then
    signed = path3.copy()
    signed[0, 1] = signed[1, 0] = -1.0
    raw = weyl_laplacian_brackets([PowerOperand(signed, signed.sum(axis=1), 3)], 0, 1)
    assert min(lo for _, lo, _ in raw) < 0
