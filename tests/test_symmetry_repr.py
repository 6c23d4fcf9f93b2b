"""Representation layer of the symmetry tier: dimensions, Lie relations, ρ_λ, Schur polynomials.

Every check names its reference in a comment: exact integer identities of
Schur--Weyl duality, the gl_n commutation relations, the bialternant formula for
Schur polynomials evaluated by mpmath at 50 digits, and explicit tensor powers built
with numpy and restricted to isotypic components.
"""

from __future__ import annotations

import itertools
import math
from fractions import Fraction

import mpmath
import numpy as np
import pytest
from test_symmetry_support import one_blas_thread  # noqa: F401  (autouse fixture)

from powerspec.tiers.symmetry.combinatorics import (
    conjugate,
    partitions,
    specht_dimension,
    weyl_dimension,
)
from powerspec.tiers.symmetry.patterns import GTModule
from powerspec.tiers.symmetry.represent import drho, rho, rho_diagonal, rho_orthogonal, rho_symmetric


@pytest.mark.parametrize("n,k", [(1, 5), (2, 7), (3, 6), (3, 12), (4, 9), (5, 8), (9, 5)])
def test_schur_weyl_dimension_sums(n, k):
    # Schur-Weyl duality: sum_λ f^λ d_λ = n^k exactly (exact Python integers)
    assert sum(specht_dimension(lam) * weyl_dimension(lam, n) for lam in partitions(k, n)) == n**k


@pytest.mark.parametrize("k", range(1, 11))
def test_specht_dimensions_square_sum_to_factorial(k):
    # the regular representation of S_k: sum (f^λ)^2 = k! (exact integers)
    assert sum(specht_dimension(lam) ** 2 for lam in partitions(k, k)) == math.factorial(k)


def test_partition_counts():
    # partition numbers p(10) = 42, p(20) = 627 (from memory; OEIS A000041)
    assert len(list(partitions(10, 10))) == 42
    assert len(list(partitions(20, 20))) == 627
    # conjugation is an involution on partitions of 8
    assert all(conjugate(conjugate(lam)) == lam for lam in partitions(8, 8))


@pytest.mark.parametrize("lam,n", [((2, 1), 3), ((3, 1, 1), 3), ((4, 2), 4), ((3, 2, 1), 5), ((2,), 6)])
def test_weyl_dimension_formula_and_patterns(lam, n):
    # Weyl's dimension formula prod_{i<j} (λ_i - λ_j + j - i)/(j - i), exact Fractions
    full = list(lam) + [0] * (n - len(lam))
    weyl = Fraction(1)
    for i, j in itertools.combinations(range(n), 2):
        weyl *= Fraction(full[i] - full[j] + j - i, j - i)
    assert weyl == weyl_dimension(lam, n) == GTModule(lam, n).dim


@pytest.mark.parametrize("lam,n", [((2, 1), 3), ((3, 1), 3), ((2, 1, 1), 4), ((3, 2, 1), 4), ((2, 2), 3),
                                   ((3, 1), 5)])
def test_commutation_relations(lam, n):
    # gl_n: [E_ij, E_kl] = δ_jk E_il - δ_li E_kj (pins the signs of the GT coefficients)
    m = GTModule(lam, n)
    e = {(i, j): m.e_matrix(i, j) for i in range(1, n + 1) for j in range(1, n + 1)}
    for (i, j), (k, q) in itertools.product(e, e):
        lhs = e[i, j] @ e[k, q] - e[k, q] @ e[i, j]
        rhs = (j == k) * e[i, q] - (q == i) * e[k, j]
        assert np.abs(lhs - rhs).max() < 1e-12
    # unitarity of the basis: dρ(E_ij)^T = dρ(E_ji)
    assert all(np.array_equal(e[i, j].T, e[j, i]) for i, j in e if i < j)


def _rng():
    return np.random.default_rng(20240601)


@pytest.mark.parametrize("lam,n", [((2, 1), 3), ((3,), 2), ((2, 1, 1), 4), ((2, 2), 3), ((3, 1), 3)])
def test_homomorphism_and_transpose(lam, n):
    # ρ is a polynomial representation: ρ(XY) = ρ(X)ρ(Y), ρ(X^T) = ρ(X)^T
    rng = _rng()
    m = GTModule(lam, n)
    x, y = rng.standard_normal((n, n)), rng.standard_normal((n, n))
    rx, ry = rho(m, x), rho(m, y)
    scale = max(1.0, np.abs(rx).max() * np.abs(ry).max())
    assert np.abs(rho(m, x @ y) - rx @ ry).max() < 1e-12 * scale
    assert np.abs(rho(m, x.T) - rx.T).max() < 1e-12 * max(1.0, np.abs(rx).max())
    q = np.linalg.qr(rng.standard_normal((n, n)))[0]
    rq = rho_orthogonal(m, q)
    assert np.abs(rq @ rq.T - np.eye(m.dim)).max() < 1e-13
    # the Lie algebra image is the derivative at the identity: (ρ(I + tX) - ρ(I - tX))/2t -> dρ(X)
    t = 1e-5
    deriv = (rho(m, np.eye(n) + t * x) - rho(m, np.eye(n) - t * x)) / (2 * t)
    assert np.abs(deriv - drho(m, x)).max() < 1e-6 * max(1.0, np.abs(drho(m, x)).max())


def _bialternant(lam, xs):
    """Schur polynomial s_λ(x) = det(x_i^(λ_j + n - j)) / det(x_i^(n - j)) (Jacobi), mpmath 50 digits."""
    n = len(xs)
    full = list(lam) + [0] * (n - len(lam))
    with mpmath.workdps(50):
        xs = [mpmath.mpmathify(x) for x in xs]
        num = mpmath.matrix([[x ** (full[j] + n - 1 - j) for j in range(n)] for x in xs])
        den = mpmath.matrix([[x ** (n - 1 - j) for j in range(n)] for x in xs])
        return complex(mpmath.det(num) / mpmath.det(den))


@pytest.mark.parametrize("lam,n", [((2, 1), 3), ((4, 2, 1), 3), ((3, 1), 4), ((2, 2, 1), 4), ((5,), 2)])
def test_trace_is_schur_polynomial(lam, n):
    # character of the GL_n-module = Schur polynomial of the eigenvalues (Weyl character formula)
    rng = _rng()
    x = rng.standard_normal((n, n))
    sym = x + x.T
    for mat in (sym, x):
        got = np.trace(rho(GTModule(lam, n), mat))
        ref = _bialternant(lam, np.linalg.eigvals(mat))
        tol = max(1.0, abs(ref))
        assert abs(got - ref.real) < 1e-11 * tol and abs(ref.imag) < 1e-9 * tol
    # diagonal X: ρ(diag(t)) has the monomials t^w, whose sum is again s_λ(t); 0^0 = 1
    t = np.array([2.0, -1.5, 0.0, 0.5][:n])
    assert abs(rho_diagonal(GTModule(lam, n), t).sum() - _bialternant(lam, t + 1e-30).real) < 1e-10


# characters of S_2 and S_3 on classes (identity, transposition, 3-cycle); from memory, checked by
# the orthogonality of the projectors built from them below
_CHARS = {
    2: {(2,): {1: 1, 2: 1}, (1, 1): {1: 1, 2: -1}},
    3: {(3,): {1: 1, 2: 1, 3: 1}, (2, 1): {1: 2, 2: 0, 3: -1}, (1, 1, 1): {1: 1, 2: -1, 3: 1}},
}


def _cycle_type(perm):
    seen, longest = set(), 1
    for s in range(len(perm)):
        length, i = 0, s
        while i not in seen:
            seen.add(i)
            i = perm[i]
            length += 1
        longest = max(longest, length)
    return longest  # for k <= 3 the class is determined by the longest cycle


def _permute(n, k, perm):
    """The operator permuting the k tensor factors of (R^n)^(x)k (explicit matrix)."""
    dim = n**k
    out = np.zeros((dim, dim))
    for idx in itertools.product(range(n), repeat=k):
        src = np.ravel_multi_index(idx, (n,) * k)
        dst = np.ravel_multi_index(tuple(idx[perm[t]] for t in range(k)), (n,) * k)
        out[dst, src] = 1.0
    return out


@pytest.mark.parametrize("n,k", [(2, 2), (3, 2), (2, 3), (3, 3)])
def test_isotypic_restriction_of_tensor_power(n, k):
    # X^(x)k restricted to the λ-isotypic component is ρ_λ(X) (x) I_{f^λ} (Schur-Weyl duality);
    # the projector P_λ = f^λ/k! sum_σ χ^λ(σ) π(σ) is built explicitly with numpy
    rng = _rng()
    x = rng.standard_normal((n, n))
    sym = x + x.T
    perms = list(itertools.permutations(range(k)))
    ops = {p: _permute(n, k, p) for p in perms}
    projectors = {}
    for lam, chi in _CHARS[k].items():
        if len(lam) > n:
            continue
        f = specht_dimension(lam)
        projectors[lam] = f / math.factorial(k) * sum(chi[_cycle_type(p)] * ops[p] for p in perms)
    total = sum(projectors.values())
    assert np.abs(total - np.eye(n**k)).max() < 1e-12  # completeness (checks the character table)
    big_sym = sym
    big_x = x
    for _ in range(k - 1):
        big_sym = np.kron(big_sym, sym)
        big_x = np.kron(big_x, x)
    for lam, p in projectors.items():
        m = GTModule(lam, n)
        f = specht_dimension(lam)
        w_vals, w_vecs = np.linalg.eigh(p)
        basis = w_vecs[:, w_vals > 0.5]
        assert basis.shape[1] == f * m.dim
        restricted = basis.T @ big_sym @ basis
        expect = np.repeat(np.linalg.eigvalsh(rho_symmetric(m, sym)), f)
        assert np.abs(np.sort(np.linalg.eigvalsh(restricted)) - np.sort(expect)).max() < 1e-11
        gen = basis.T @ big_x @ basis
        rx = rho(m, x)
        for j in (1, 2, 3):
            a = np.trace(np.linalg.matrix_power(gen, j))
            b = f * np.trace(np.linalg.matrix_power(rx, j))
            assert abs(a - b) < 1e-10 * max(1.0, abs(a))
