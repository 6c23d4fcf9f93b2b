"""Tests of powerspec.factors: families, matrices, spectra, conversion and file reading.

Every numeric expectation names its source in a comment.  "numpy" means the
value is recomputed with numpy/scipy directly on an explicitly built matrix,
independently of the code under test.
"""

from __future__ import annotations

import numpy as np
import pytest
import scipy.io
import scipy.sparse as sp
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.extra.numpy import arrays
from scipy.optimize import linear_sum_assignment
from scipy.sparse.csgraph import connected_components

from powerspec.errors import FactorFileError, InputError
from powerspec.factors import (
    MATRIX_KINDS,
    C,
    Factor,
    K,
    P,
    dicycle,
    from_matrix,
    load,
    loops,
    motif,
    scale,
)

# ----------------------------------------------------------------------------- helpers


def _star(n):
    """The star K_{1,n}."""
    return K(1, n)


def same_multiset(got, expected, tol=1e-9):
    """True when two (complex) multisets agree up to tol * max(1, scale) after matching."""
    got = np.asarray(got, dtype=complex)
    expected = np.asarray(expected, dtype=complex)
    if got.shape != expected.shape:
        return False
    if got.size == 0:
        return True
    cost = np.abs(got[:, None] - expected[None, :])
    rows, cols = linear_sum_assignment(cost)
    scale_ = max(1.0, float(np.max(np.abs(expected))))
    return float(np.max(cost[rows, cols])) <= tol * scale_


def is_sorted_real_imag(values):
    keys = [(complex(v).real, complex(v).imag) for v in values]
    return keys == sorted(keys)


def assert_one_line_error(excinfo, phrase):
    msg = str(excinfo.value)
    assert "\n" not in msg
    assert phrase.lower() in msg.lower(), msg


def dense_path(n):
    a = np.zeros((n, n))
    for i in range(n - 1):
        a[i, i + 1] = a[i + 1, i] = 1
    return a


def dense_cycle(n):
    a = np.zeros((n, n))
    for i in range(n):
        a[i, (i + 1) % n] = a[(i + 1) % n, i] = 1
    return a


def dense_dicycle(n):
    a = np.zeros((n, n))
    for i in range(n):
        a[i, (i + 1) % n] += 1
    return a


def dense_complete_bipartite(m, n):
    a = np.zeros((m + n, m + n))
    a[:m, m:] = 1
    a[m:, :m] = 1
    return a


# ------------------------------------------------------------------- family spectra


@pytest.mark.parametrize("n", [1, 2, 3, 4, 7, 12])
def test_path_closed_form_matches_numpy(n):
    g = P(n)
    assert np.array_equal(g.adjacency.toarray(), dense_path(n))
    # source: numpy.linalg.eigvalsh on the explicitly built path matrix
    ref = np.linalg.eigvalsh(dense_path(n))
    assert g.closed_form is not None
    assert np.allclose(g.eigenvalues(), ref, atol=1e-12)
    assert g.closed_form is not None
    assert g.eigenvalues().dtype == np.float64
    assert g.name == f"P({n})"


@pytest.mark.parametrize("n", [3, 4, 5, 6, 10, 13])
def test_cycle_closed_form_matches_numpy(n):
    g = C(n)
    assert np.array_equal(g.adjacency.toarray(), dense_cycle(n))
    # source: numpy.linalg.eigvalsh on the explicitly built cycle matrix
    assert np.allclose(g.eigenvalues(), np.linalg.eigvalsh(dense_cycle(n)), atol=1e-12)
    assert g.name == f"C({n})"


@pytest.mark.parametrize("n", [1, 2, 3, 6])
def test_complete_closed_form_matches_numpy(n):
    a = np.ones((n, n)) - np.eye(n)
    g = K(n)
    assert np.array_equal(g.adjacency.toarray(), a)
    # source: numpy.linalg.eigvalsh on the explicitly built J - I
    assert np.allclose(g.eigenvalues(), np.linalg.eigvalsh(a), atol=1e-12)
    # source: closed form n-1, -1^(n-1), Brouwer & Haemers, Spectra of Graphs (from memory)
    assert g.eigenvalues().tolist() == [-1.0] * (n - 1) + [n - 1.0]


@pytest.mark.parametrize("n", [1, 2, 4, 9])
def test_star_closed_form_matches_numpy(n):
    a = dense_complete_bipartite(1, n)
    g = K(1, n)
    assert g.n == n + 1
    assert np.array_equal(g.adjacency.toarray(), a)
    # source: numpy.linalg.eigvalsh on the explicitly built K_{1,n}
    assert np.allclose(g.eigenvalues(), np.linalg.eigvalsh(a), atol=1e-12)


@pytest.mark.parametrize("m,n", [(1, 1), (2, 3), (3, 3), (4, 2)])
def test_complete_bipartite_closed_form_matches_numpy(m, n):
    a = dense_complete_bipartite(m, n)
    g = K(m, n)
    assert np.array_equal(g.adjacency.toarray(), a)
    # source: numpy.linalg.eigvalsh on the explicitly built K_{m,n}
    assert np.allclose(g.eigenvalues(), np.linalg.eigvalsh(a), atol=1e-12)
    assert g.name == f"K({m}, {n})"


@pytest.mark.parametrize("n", [3, 4, 5, 8])
def test_dicycle_closed_form_matches_numpy(n):
    a = dense_dicycle(n)
    g = dicycle(n)
    assert g.directed
    assert np.array_equal(g.adjacency.toarray(), a)
    ev = g.eigenvalues()
    assert ev.dtype == np.complex128
    # source: numpy.linalg.eigvals on the explicitly built cyclic permutation matrix
    assert same_multiset(ev, np.linalg.eigvals(a), tol=1e-12)
    assert is_sorted_real_imag(ev)


def test_dicycle_two_is_symmetric_with_real_spectrum():
    g = dicycle(2)
    assert not g.directed
    # source: numpy.linalg.eigvalsh on [[0, 1], [1, 0]]
    assert g.eigenvalues().tolist() == np.linalg.eigvalsh(dense_dicycle(2)).tolist()


@pytest.mark.parametrize(
    "family,args,minimum",
    [
        (P, (0,), "1"),
        (C, (2,), "3"),
        (K, (0,), "1"),
        (_star, (0,), "1"),
        (K, (0, 2), "1"),
        (K, (2, 0), "1"),
        (dicycle, (1,), "2"),
    ],
)
def test_family_too_small(family, args, minimum):
    with pytest.raises(InputError) as excinfo:
        family(*args)
    assert_one_line_error(excinfo, f">= {minimum}")


@pytest.mark.parametrize("bad", [3.0, 2.5, True, "4", None])
@pytest.mark.parametrize("family", [P, C, K, _star, dicycle])
def test_family_non_integer(family, bad):
    with pytest.raises(InputError) as excinfo:
        family(bad)
    assert_one_line_error(excinfo, "integer")


def test_family_accepts_numpy_integer():
    assert C(np.int64(5)).n == 5


# ------------------------------------------------------------------------ snapping


def test_cycle4_has_exact_zero():
    ev = C(4).eigenvalues()
    # source: closed form 2cos(2 pi j/4) = 2, 0, -2, 0 (from memory); rational by Niven's theorem
    assert ev.tolist() == [-2.0, 0.0, 0.0, 2.0]
    assert np.count_nonzero(ev == 0.0) == 2
    assert not np.any(np.signbit(ev[ev == 0.0]))


def test_path3_middle_eigenvalue_is_exact_zero():
    # source: closed form 2cos(pi/2) = 0 (from memory); exact (Niven), not a float cos of 6e-17
    assert P(3).eigenvalues()[1] == 0.0


def test_hypercube_factor_is_exact():
    # source: closed form of K_2, eigenvalues +-1 (from memory)
    assert K(2).eigenvalues().tolist() == [-1.0, 1.0]


def test_no_snapping():
    # source: the eigenvalue of a 1 x 1 matrix is its entry (definition); nothing is rounded to
    # a nearby integer, however close
    assert from_matrix([[1 + 1e-14]]).eigenvalues().tolist() == [1 + 1e-14]
    assert from_matrix([[1 + 1e-9]]).eigenvalues().tolist() == [1 + 1e-9]
    assert from_matrix([[1000 + 1e-10]]).eigenvalues().tolist() == [1000 + 1e-10]


def test_real_valued_directed_spectrum_is_float():
    a = np.array([[1.0, 2.0, 0.0], [0.0, 3.0, 5.0], [0.0, 0.0, -1.0]])  # triangular
    g = from_matrix(a)
    assert g.directed
    ev = g.eigenvalues()
    assert ev.dtype == np.float64
    # source: eigenvalues of a triangular matrix are its diagonal (from memory)
    assert ev.tolist() == [-1.0, 1.0, 3.0]


# ------------------------------------------------------------------------- degrees


def test_degrees_with_weights_and_loops():
    a = np.array([[2.0, 1.0, 0.0], [1.0, 0.0, 0.5], [0.0, 0.5, 0.0]])
    g = from_matrix(a)
    assert g.has_loops
    # source: numpy row sums of the explicit matrix; the loop counts once
    assert g.degrees().tolist() == a.sum(axis=1).tolist() == [3.0, 1.5, 0.5]
    assert g.degrees("in").tolist() == a.sum(axis=0).tolist()
    assert not g.is_regular()


def test_directed_in_and_out_degrees():
    a = np.array([[0.0, 1.0, 1.0], [0.0, 0.0, 3.0], [0.0, 0.0, 0.0]])
    g = from_matrix(a)
    assert g.directed
    # source: numpy row / column sums of the explicit matrix
    assert g.degrees("out").tolist() == a.sum(axis=1).tolist()
    assert g.degrees("in").tolist() == a.sum(axis=0).tolist()
    assert g.degrees().dtype == np.float64


def test_regularity():
    assert C(7).is_regular()
    assert K(4).is_regular()
    assert dicycle(5).is_regular("out") and dicycle(5).is_regular("in")
    assert not P(3).is_regular()
    assert not K(1, 2).is_regular()
    # regularity is exact: degrees 1 + 1e-14 and 1 differ, so the graph is not regular
    assert not from_matrix([[0, 1 + 1e-14], [1, 0]]).is_regular()
    assert from_matrix([[0, 0.1, 0.2], [0.1, 0, 0.2], [0.2, 0.1, 0]]).is_regular("in") is False
    assert from_matrix([[0, 0.1, 0.2], [0.2, 0, 0.1], [0.1, 0.2, 0]]).is_regular()
    a = np.array([[0.0, 1.0], [0.0, 0.0]])
    assert not from_matrix(a).is_regular("out")


def test_has_loops_and_directed_flags():
    assert not C(5).has_loops
    assert loops(0.5, C(5)).has_loops
    assert not C(5).directed
    assert from_matrix([[0, 1], [1.0000001, 0]]).directed


def test_bad_direction():
    for call in (
        lambda: C(3).degrees("both"),
        lambda: C(3).is_regular("up"),
        lambda: C(3).matrix("laplacian", "sideways"),
        lambda: C(3).eigenvalues("adjacency", "OUT"),
    ):
        with pytest.raises(InputError) as excinfo:
            call()
        assert_one_line_error(excinfo, "direction")


# ------------------------------------------------------------------- matrix kinds


def direct_matrix(a, kind, direction="out"):
    """Independent dense construction of each matrix kind from its definition."""
    d = a.sum(axis=1) if direction == "out" else a.sum(axis=0)
    if kind == "adjacency":
        return a
    if kind == "laplacian":
        return np.diag(d) - a
    if kind == "signless":
        return np.diag(d) + a
    if kind == "normalized":
        s = np.diag(d ** -0.5)
        return np.eye(len(a)) - s @ a @ s
    return np.diag(1.0 / d) @ a


WEIGHTED_UNDIRECTED = np.array(
    [
        [1.0, 2.0, 0.0, 0.5],
        [2.0, 0.0, 1.0, 0.0],
        [0.0, 1.0, 0.0, 3.0],
        [0.5, 0.0, 3.0, 0.0],
    ]
)
WEIGHTED_DIRECTED = np.array(
    [
        [0.0, 2.0, 0.0, 1.0],
        [1.0, 0.0, 1.0, 0.0],
        [0.0, 0.5, 0.0, 3.0],
        [1.0, 0.0, 1.0, 0.5],
    ]
)


@pytest.mark.parametrize("kind", MATRIX_KINDS)
def test_matrix_kinds_undirected(kind):
    g = from_matrix(WEIGHTED_UNDIRECTED)
    m = g.matrix(kind)
    assert isinstance(m, sp.csr_array) and m.dtype == np.float64
    ref = direct_matrix(WEIGHTED_UNDIRECTED, kind)
    # source: direct numpy construction from the definition (e.g. L = diag(A.sum(1)) - A)
    assert np.allclose(m.toarray(), ref, atol=1e-14)
    # source: numpy.linalg.eigvals on the directly built matrix
    assert same_multiset(g.eigenvalues(kind), np.linalg.eigvals(ref))
    assert g.eigenvalues(kind).dtype == np.float64


@pytest.mark.parametrize("direction", ["out", "in"])
@pytest.mark.parametrize("kind", ["adjacency", "laplacian", "signless", "transition"])
def test_matrix_kinds_directed(kind, direction):
    g = from_matrix(WEIGHTED_DIRECTED)
    m = g.matrix(kind, direction)
    ref = direct_matrix(WEIGHTED_DIRECTED, kind, direction)
    # source: direct numpy construction from the definition with D = diag(row or column sums)
    assert np.allclose(m.toarray(), ref, atol=1e-14)
    # source: numpy.linalg.eigvals on the directly built matrix
    assert same_multiset(g.eigenvalues(kind, direction), np.linalg.eigvals(ref))
    assert is_sorted_real_imag(g.eigenvalues(kind, direction))


def test_directed_laplacian_in_differs_from_out():
    g = from_matrix(WEIGHTED_DIRECTED)
    out_l = g.matrix("laplacian", "out").toarray()
    in_l = g.matrix("laplacian", "in").toarray()
    # source: numpy row vs column sums of the explicit matrix differ
    assert not np.allclose(out_l, in_l)
    assert np.allclose(out_l.sum(axis=1), 0)  # rows of D_out - A sum to zero


def test_transition_is_row_stochastic():
    p = from_matrix(WEIGHTED_DIRECTED).matrix("transition").toarray()
    # source: definition of D^-1 A with non-negative weights (rows sum to 1)
    assert np.allclose(p.sum(axis=1), 1.0)


def test_matrix_canonical_and_copy():
    g = loops(-2, C(4))
    lap = g.matrix("laplacian")
    assert lap.has_canonical_format
    # D - A with loops -2: degree 0 and diagonal 0 - (-2) = 2
    # source: direct numpy construction diag(A.sum(1)) - A
    a = dense_cycle(4) - 2 * np.eye(4)
    assert np.allclose(lap.toarray(), np.diag(a.sum(1)) - a)
    lap.data[:] = 99.0
    assert not np.any(g.matrix("laplacian").toarray() == 99.0)


@pytest.mark.parametrize("n", [3, 5, 6])
def test_regular_closed_form_paths_match_numpy(n):
    for g, a in ((C(n), dense_cycle(n)), (dicycle(n), dense_dicycle(n))):
        for kind in ("laplacian", "signless", "transition"):
            ref = direct_matrix(a, kind)
            # source: numpy.linalg.eigvals on the directly built matrix
            assert same_multiset(g.eigenvalues(kind), np.linalg.eigvals(ref), tol=1e-12)
    ref = direct_matrix(dense_cycle(n), "normalized")
    # source: numpy.linalg.eigvalsh on the directly built I - D^-1/2 A D^-1/2
    assert np.allclose(C(n).eigenvalues("normalized"), np.linalg.eigvalsh(ref))


def test_normalized_and_transition_of_irregular_graph():
    g = K(1, 3)
    a = dense_complete_bipartite(1, 3)
    for kind in ("normalized", "transition"):
        # source: numpy.linalg.eigvals on the directly built matrix
        assert same_multiset(g.eigenvalues(kind), np.linalg.eigvals(direct_matrix(a, kind)))
    # source: normalized Laplacian of a bipartite graph has eigenvalues 0 and 2, Chung,
    # Spectral Graph Theory (from memory)
    assert g.eigenvalues("normalized").tolist() == [0.0, 1.0, 1.0, 2.0]


def test_transition_with_signed_degrees():
    a = np.array([[0.0, 1.0, 0.0], [1.0, 0.0, -3.0], [0.0, -3.0, 0.0]])
    g = from_matrix(a)
    # source: numpy.linalg.eigvals on the directly built D^-1 A
    assert same_multiset(g.eigenvalues("transition"), np.linalg.eigvals(direct_matrix(a,
                                                                        "transition")))


def test_unknown_kind():
    with pytest.raises(InputError) as excinfo:
        C(4).matrix("random-walk")
    assert_one_line_error(excinfo, "laplacian, signless, normalized, transition")
    with pytest.raises(InputError):
        C(4).eigenvalues("spectral")


def test_normalized_requires_undirected():
    with pytest.raises(InputError) as excinfo:
        dicycle(4).matrix("normalized")
    assert_one_line_error(excinfo, "undirected")
    with pytest.raises(InputError):
        dicycle(4).eigenvalues("normalized")


def test_normalized_requires_positive_degrees():
    g = from_matrix(np.zeros((3, 3)))
    with pytest.raises(InputError) as excinfo:
        g.matrix("normalized")
    assert_one_line_error(excinfo, "3 vertices")
    h = from_matrix([[0, 1, 0], [1, 0, -1], [0, -1, 0]])  # degrees 1, 0, -1
    with pytest.raises(InputError) as excinfo:
        h.eigenvalues("normalized")
    assert_one_line_error(excinfo, "2 vertices")


def test_transition_requires_nonzero_degrees():
    g = from_matrix([[0, 1], [0, 0]])
    with pytest.raises(InputError) as excinfo:
        g.matrix("transition")
    assert_one_line_error(excinfo, "degree")
    # in-degrees of the same graph: vertex 0 has in-degree 0
    with pytest.raises(InputError):
        g.eigenvalues("transition", "in")


def test_eigenvalues_cached_and_copied():
    g = P(5)
    first = g.eigenvalues("laplacian")
    first[:] = 7.0
    second = g.eigenvalues("laplacian")
    # source: numpy.linalg.eigvalsh on the directly built path Laplacian
    assert np.allclose(second, np.linalg.eigvalsh(direct_matrix(dense_path(5), "laplacian")))
    assert g._cache  # cached results exist (the object is immutable)


def test_laplacian_has_exact_zero():
    # source: the Laplacian of a connected graph has a simple eigenvalue 0 (from memory)
    ev = P(6).eigenvalues("laplacian")
    assert ev[0] == 0.0 and ev[1] > 0


# ----------------------------------------------------------------------- immutability


def test_factor_is_immutable():
    g = C(5)
    with pytest.raises(AttributeError):
        g.name = "other"
    with pytest.raises(AttributeError):
        g.adjacency = None
    adj = g.adjacency
    adj.data[:] = 5.0
    assert np.all(g.adjacency.data == 1.0)
    assert g.closed_form is not None


def test_factor_pickles():
    import pickle

    g = scale(2, C(5))
    h = pickle.loads(pickle.dumps(g))
    assert h.name == g.name
    assert np.array_equal(h.adjacency.toarray(), g.adjacency.toarray())
    assert np.array_equal(h.eigenvalues(), g.eigenvalues())


def test_repr_mentions_name():
    assert "C(6)" in repr(C(6))


# ------------------------------------------------------------------------ from_matrix


A3 = [[0, 1, 2], [1, 0, 0], [2, 0, 0]]


def check_a3(g):
    assert isinstance(g, Factor)
    assert g.n == 3
    assert g.adjacency.dtype == np.float64
    assert g.adjacency.has_canonical_format
    assert np.array_equal(g.adjacency.toarray(), np.array(A3, dtype=float))
    # source: numpy.linalg.eigvalsh on the explicit matrix
    assert np.allclose(g.eigenvalues(), np.linalg.eigvalsh(np.array(A3, dtype=float)))


def test_from_numpy():
    check_a3(from_matrix(np.array(A3)))
    check_a3(from_matrix(np.array(A3, dtype=np.float32)))
    check_a3(from_matrix(np.array(A3, dtype=np.complex128)))  # zero imaginary parts are fine


def test_from_nested_list():
    g = from_matrix(A3, name="tri")
    check_a3(g)
    assert g.name == "tri"
    assert from_matrix(A3).name == "matrix(3x3)"


def test_from_bool_array():
    g = from_matrix(np.array([[False, True], [True, False]]))
    assert g.adjacency.toarray().tolist() == [[0.0, 1.0], [1.0, 0.0]]


@pytest.mark.parametrize("fmt", ["coo", "csr", "csc", "lil", "dok"])
def test_from_scipy_sparse(fmt):
    check_a3(from_matrix(sp.coo_array(np.array(A3)).asformat(fmt)))
    check_a3(from_matrix(sp.coo_matrix(np.array(A3)).asformat(fmt)))


def test_from_sparse_sums_duplicates_and_drops_zeros():
    coo = sp.coo_array(
        (np.array([1.0, 1.0, 0.0, 2.0]), (np.array([0, 0, 1, 2]), np.array([1, 1, 2, 0]))),
        shape=(3, 3),
    )
    g = from_matrix(coo)
    adj = g.adjacency
    assert adj.nnz == 2
    assert adj.has_canonical_format
    # source: explicit sum of the duplicate entries
    assert adj.toarray().tolist() == [[0, 2, 0], [0, 0, 0], [2, 0, 0]]


def test_from_sympy_matrix():
    import sympy

    m = sympy.Matrix([[0, sympy.sqrt(2)], [sympy.sqrt(2), 0]])
    g = from_matrix(m)
    # source: closed form +-sqrt(2) for the weighted edge (from memory)
    assert np.allclose(g.eigenvalues(), [-np.sqrt(2), np.sqrt(2)])
    check_a3(from_matrix(sympy.Matrix(A3)))
    check_a3(from_matrix(sympy.ImmutableMatrix(A3)))


def test_from_sympy_symbolic_rejected():
    import sympy

    x = sympy.Symbol("x")
    with pytest.raises(InputError) as excinfo:
        from_matrix(sympy.Matrix([[0, x], [x, 0]]))
    assert_one_line_error(excinfo, "symbolic bridge")


def test_from_sympy_complex_rejected():
    import sympy

    with pytest.raises(InputError) as excinfo:
        from_matrix(sympy.Matrix([[0, sympy.I], [1, 0]]))
    assert_one_line_error(excinfo, "complex")


def test_from_powerspec_sparse_protocol():
    class Provider:
        def powerspec_sparse(self):
            return sp.csr_array(np.array(A3, dtype=float))

    check_a3(from_matrix(Provider()))

    class BadProvider:
        def powerspec_sparse(self):
            return "not sparse"

    with pytest.raises(InputError) as excinfo:
        from_matrix(BadProvider())
    assert_one_line_error(excinfo, "scipy sparse")


def test_from_array_protocol():
    class Wrapper:
        def __array__(self, dtype=None, copy=None):
            return np.array(A3, dtype=dtype)

    check_a3(from_matrix(Wrapper()))


def test_factor_returned_unchanged():
    g = C(5)
    assert from_matrix(g) is g


def test_edgeless_matrix_is_valid():
    g = from_matrix(np.zeros((4, 4)))
    assert g.n == 4 and g.adjacency.nnz == 0
    # source: the zero matrix has only the eigenvalue 0 (from memory)
    assert g.eigenvalues().tolist() == [0.0] * 4


@pytest.mark.parametrize(
    "bad,phrase",
    [
        (np.zeros(3), "2-D"),
        (np.zeros((2, 2, 2)), "2-D"),
        (5, "cannot read a matrix"),
        (np.zeros((2, 3)), "(2, 3)"),
        (sp.csr_array((2, 3)), "(2, 3)"),
        (np.zeros((0, 0)), "empty"),
        (sp.csr_array((0, 0)), "empty"),
        ([["a", "b"], ["c", "d"]], "non-numeric"),
        ([[0, None], [1, 0]], "not a number"),
        (np.array([[0, 1j], [1, 0]]), "complex"),
        (sp.csr_array(np.array([[0, 1j], [1, 0]])), "complex"),
        (np.array([[np.nan, 1.0], [np.inf, 0.0]]), "2 non-finite"),
        (sp.csr_array(np.array([[0.0, np.inf], [0.0, 0.0]])), "1 non-finite"),
        ([[0, 1], [1]], "same length"),
    ],
)
def test_from_matrix_validation(bad, phrase):
    with pytest.raises(InputError) as excinfo:
        from_matrix(bad)
    assert_one_line_error(excinfo, phrase)


def test_bad_name():
    with pytest.raises(InputError):
        from_matrix(A3, name=3)


# ---------------------------------------------------------------------- scale / loops


def test_scale():
    g = scale(0.5, C(6))
    assert g.name == "scale(0.5, C(6))"
    a = 0.5 * dense_cycle(6)
    assert np.array_equal(g.adjacency.toarray(), a)
    # source: numpy.linalg.eigvalsh on the explicitly built 0.5 * A
    assert np.allclose(g.eigenvalues(), np.linalg.eigvalsh(a))
    assert g.closed_form is not None
    # source: numpy.linalg.eigvalsh on the explicitly built Laplacian of 0.5 * A
    assert np.allclose(g.eigenvalues("laplacian"),
                       np.linalg.eigvalsh(direct_matrix(a, "laplacian")))


def test_scale_negative_and_zero():
    g = scale(-2, K(1, 3))
    assert g.name == "scale(-2, K(1, 3))"
    # source: numpy.linalg.eigvalsh on the explicitly built -2 * A
    assert np.allclose(g.eigenvalues(), np.linalg.eigvalsh(-2 * dense_complete_bipartite(1, 3)))
    z = scale(0, C(5))
    assert z.adjacency.nnz == 0
    assert z.eigenvalues().tolist() == [0.0] * 5


def test_scale_of_plain_matrix_has_no_closed_form():
    g = scale(3, from_matrix(A3))
    assert g.closed_form is None
    # source: numpy.linalg.eigvalsh on the explicitly built 3 * A
    assert np.allclose(g.eigenvalues(), np.linalg.eigvalsh(3 * np.array(A3, dtype=float)))


def test_loops():
    g = loops(1.5, P(4))
    assert g.name == "loops(1.5, P(4))"
    a = dense_path(4) + 1.5 * np.eye(4)
    assert np.array_equal(g.adjacency.toarray(), a)
    assert g.has_loops
    # source: numpy.linalg.eigvalsh on the explicitly built A + 1.5 I
    assert np.allclose(g.eigenvalues(), np.linalg.eigvalsh(a))
    # source: numpy row sums of A + 1.5 I (loop counted once)
    assert g.degrees().tolist() == a.sum(axis=1).tolist()
    # source: numpy.linalg.eigvalsh on diag(A.sum(1)) - A
    assert np.allclose(g.eigenvalues("laplacian"),
                       np.linalg.eigvalsh(direct_matrix(a, "laplacian")))


def test_loops_on_regular_closed_form():
    g = loops(2, dicycle(5))
    a = dense_dicycle(5) + 2 * np.eye(5)
    for kind in ("adjacency", "laplacian", "signless", "transition"):
        # source: numpy.linalg.eigvals on the directly built matrix
        assert same_multiset(g.eigenvalues(kind), np.linalg.eigvals(direct_matrix(a, kind)))


def test_loops_zero_has_no_loops():
    assert not loops(0, C(4)).has_loops


@pytest.mark.parametrize("bad", [float("nan"), float("inf"), 1j, "2", True, None])
def test_scale_and_loops_bad_constant(bad):
    for fn in (scale, loops):
        with pytest.raises(InputError) as excinfo:
            fn(bad, C(4))
        assert_one_line_error(excinfo, "c must be")


# ------------------------------------------------------------------------------ load


def test_load_mtx_roundtrip(tmp_path):
    a = np.array([[0.0, 2.0, 0.0], [2.0, 1.0, 0.5], [0.0, 0.5, 0.0]])
    p = tmp_path / "g.mtx"
    scipy.io.mmwrite(str(p), sp.coo_array(a), symmetry="symmetric")
    g = load(p)
    assert g.name == f'load("{p}")'
    # source: the matrix written with scipy.io.mmwrite
    assert np.array_equal(g.adjacency.toarray(), a)
    assert not g.directed


def test_load_mtx_general_and_upper_case(tmp_path):
    a = np.array([[0.0, 1.0], [3.0, 0.0]])
    written = tmp_path / "g.mtx"
    scipy.io.mmwrite(str(written), sp.coo_array(a))
    p = written.rename(tmp_path / "G.MTX")
    g = load(str(p))
    assert g.directed
    # source: the matrix written with scipy.io.mmwrite
    assert np.array_equal(g.adjacency.toarray(), a)
    assert g.name == f'load("{p}")'


def test_load_mtx_dense_array_format(tmp_path):
    a = np.array([[0.0, 1.0], [1.0, 0.0]])
    p = tmp_path / "d.mtx"
    scipy.io.mmwrite(str(p), a)
    # source: the matrix written with scipy.io.mmwrite
    assert np.array_equal(load(p).adjacency.toarray(), a)


@pytest.mark.parametrize(
    "text,phrase",
    [
        ("garbage\n", "cannot parse"),
        ("", "cannot parse"),
        ("%%MatrixMarket matrix coordinate complex general\n2 2 1\n1 2 1 2\n", "complex"),
        ("%%MatrixMarket matrix coordinate real general\n2 3 1\n1 2 1\n", "square"),
        ("%%MatrixMarket matrix coordinate real general\n2 2 1\n1 2 inf\n", "non-finite"),
        ("%%MatrixMarket matrix coordinate real general\n0 0 0\n", "empty"),
    ],
)
def test_load_mtx_errors(tmp_path, text, phrase):
    p = tmp_path / "bad.mtx"
    p.write_text(text)
    with pytest.raises(FactorFileError) as excinfo:
        load(p)
    assert_one_line_error(excinfo, phrase)


def test_load_edge_list_weights_comments_and_integer_order(tmp_path):
    p = tmp_path / "g.txt"
    p.write_text(
        "# a comment line\n"
        "% another comment\n"
        "\n"
        "10 2 0.5   # trailing comment\n"
        "2 3\n"
        "  3   10  2e0 \n"
    )
    g = load(p)
    # vertices ordered numerically: 2, 3, 10
    expected = np.array([[0.0, 1.0, 0.5], [1.0, 0.0, 2.0], [0.5, 2.0, 0.0]])
    # source: the edge list, written out by hand
    assert np.array_equal(g.adjacency.toarray(), expected)
    assert g.name == f'load("{p}")'


def test_load_edge_list_string_labels_first_appearance(tmp_path):
    p = tmp_path / "g.edges"
    p.write_text("zeta alpha\nalpha 7\n7 zeta 3\n")
    g = load(p)
    # vertex order: zeta, alpha, 7 (first appearance; not all labels are integers)
    expected = np.array([[0.0, 1.0, 3.0], [1.0, 0.0, 1.0], [3.0, 1.0, 0.0]])
    # source: the edge list, written out by hand
    assert np.array_equal(g.adjacency.toarray(), expected)


def test_load_edge_list_loops_and_repeats(tmp_path):
    p = tmp_path / "g.txt"
    p.write_text("a a 2\na b\nb a\na b 0.5\n")
    g = load(p)
    # a loop adds its weight once; repeated lines add up: a-b = 1 + 1 + 0.5
    # source: the edge list, written out by hand
    assert g.adjacency.toarray().tolist() == [[2.0, 2.5], [2.5, 0.0]]
    assert g.degrees().tolist() == [4.5, 2.5]


def test_load_edge_list_directed(tmp_path):
    p = tmp_path / "g.txt"
    p.write_text("1 2\n2 3 4\n3 1\n1 2\n3 3 1\n")
    g = load(p, directed=True)
    # source: the edge list, written out by hand
    assert g.adjacency.toarray().tolist() == [[0, 2, 0], [0, 0, 4], [1, 0, 1]]
    assert g.directed
    # same file undirected
    u = load(p)
    assert u.adjacency.toarray().tolist() == [[0, 2, 1], [2, 0, 4], [1, 4, 1]]


def test_load_edge_list_cancelling_weights_gives_edgeless_vertices(tmp_path):
    p = tmp_path / "g.txt"
    p.write_text("a b 1\na b -1\n")
    g = load(p)
    assert g.n == 2 and g.adjacency.nnz == 0


@pytest.mark.parametrize(
    "text,phrase",
    [
        ("1 2\n3\n", "line 2"),
        ("1 2\n1 2 3 4\n", "line 2: expected 'u v' or 'u v weight' (2 or 3 fields), found 4"),
        ("1 2 heavy\n", "not a number"),
        ("1 2 1+2j\n", "not a number"),
        ("1 2 nan\n", "not finite"),
        ("1 2 inf\n", "not finite"),
        ("", "no edges"),
        ("# only comments\n\n% here\n", "no edges"),
    ],
)
def test_load_edge_list_errors(tmp_path, text, phrase):
    p = tmp_path / "bad.txt"
    p.write_text(text)
    with pytest.raises(FactorFileError) as excinfo:
        load(p)
    assert_one_line_error(excinfo, phrase)


def test_load_bad_line_reports_line_number_never_the_text(tmp_path):
    # The line could come from a system file (a password entry): name it, never quote it.
    p = tmp_path / "bad.txt"
    p.write_text("# header\n1 2\n\nx y z w\n")
    with pytest.raises(FactorFileError) as excinfo:
        load(p)
    assert_one_line_error(excinfo, "line 4")
    assert "x y z w" not in str(excinfo.value)
    p.write_text("1 2\n2 3 secret\n")
    with pytest.raises(FactorFileError) as excinfo:
        load(p)
    assert_one_line_error(excinfo, "line 2")
    assert "secret" not in str(excinfo.value)


def test_load_missing_file(tmp_path):
    p = tmp_path / "nope.txt"
    with pytest.raises(FactorFileError) as excinfo:
        load(p)
    assert_one_line_error(excinfo, "not found")
    assert str(p) in str(excinfo.value)
    with pytest.raises(FactorFileError):
        load(tmp_path / "nope.mtx")


def test_load_unreadable(tmp_path):
    with pytest.raises(FactorFileError) as excinfo:
        load(tmp_path)  # a directory
    assert_one_line_error(excinfo, "cannot read")
    p = tmp_path / "binary.txt"
    p.write_bytes(b"\xff\xfe\x00 1 2\n")
    with pytest.raises(FactorFileError) as excinfo:
        load(p)
    assert_one_line_error(excinfo, "UTF-8")


def test_load_bad_path_type():
    with pytest.raises(FactorFileError):
        load(42)


def test_file_error_is_input_error(tmp_path):
    with pytest.raises(InputError):
        load(tmp_path / "missing.txt")


# ----------------------------------------------------------------------------- motif


def test_motif():
    g = motif()
    assert g.name == "motif"
    assert g.n == 9
    assert not g.directed
    adj = g.adjacency
    # source: scipy.sparse.csgraph.connected_components
    count, _ = connected_components(adj, directed=False)
    assert count == 1
    assert not g.is_regular()
    a = adj.toarray()
    assert np.array_equal(a, a.T)
    offdiag_edges = np.count_nonzero(np.triu(a, 1))
    assert 12 <= offdiag_edges <= 14
    # not bipartite: an odd closed walk exists, tr(A^3) of the loop-free part > 0
    # source: numpy matrix power; tr(A^3) = 6 * (weighted) triangles (from memory)
    b = (a - np.diag(np.diag(a)) != 0).astype(float)
    assert np.trace(np.linalg.matrix_power(b, 3)) > 0
    weights = set(np.unique(a[a != 0]).tolist())
    assert len(weights) >= 2
    # source: numpy.linalg.eigvalsh on the adjacency read back
    assert np.allclose(g.eigenvalues(), np.linalg.eigvalsh(a))


def test_motif_matches_package_file():
    from importlib import resources

    ref = resources.files("powerspec").joinpath("data").joinpath("motif.mtx")
    with resources.as_file(ref) as p:
        # source: scipy.io.mmread of the data file directly
        direct = scipy.io.mmread(str(p))
        assert np.array_equal(motif().adjacency.toarray(), np.asarray(direct.todense()))
        text = p.read_text()
    assert "hand-made" in text.lower()


# ----------------------------------------------------------------- property test


@settings(max_examples=60, deadline=None)
@given(
    arrays(
        np.float64,
        st.tuples(st.integers(1, 6)).map(lambda t: (t[0], t[0])),
        elements=st.one_of(
            st.integers(-3, 3).map(float),
            st.floats(-5, 5, allow_nan=False, allow_infinity=False, width=32).map(float),
        ),
    ),
    st.booleans(),
)
def test_eigenvalues_match_numpy_property(a, symmetrize):
    if symmetrize:
        a = a + a.T
    g = from_matrix(a)
    ev = g.eigenvalues()
    assert len(ev) == a.shape[0]
    assert is_sorted_real_imag(ev)
    # source: numpy.linalg.eigvals on the same matrix
    assert same_multiset(ev, np.linalg.eigvals(a), tol=1e-8)
