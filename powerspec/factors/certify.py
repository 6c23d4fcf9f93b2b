"""Certified eigenvalues of one factor's matrix: exact where rational, rigorous balls elsewhere.

Three routes, tried in order:

1. **Closed forms** of the families (cycles, paths, complete and complete
   bipartite graphs, J_n, weighted directed cycles), evaluated in exact
   rationals where the value is rational and in Arb balls otherwise.
2. **Exact characteristic polynomial** (n <= :data:`CHARPOLY_MAX`): the
   matrix is taken exactly as the rationals of its float64 entries (degrees
   summed exactly), its characteristic polynomial is computed over Q with
   FLINT, factored into irreducibles, and the roots of each factor are
   isolated by FLINT's certified complex root finder.  Linear factors give
   exact rational eigenvalues; the multiplicity of every root is the exact
   algebraic multiplicity.  The normalized Laplacian I - D^-1/2 A D^-1/2 is
   similar to the rational matrix I - D^-1 A, so it is exact too.
3. **Residual bound** for larger symmetric matrices: numpy ``eigh`` gives
   (V, mu); with R = A V - V diag(mu) and delta = ||V^T V - I||_2 < 1, every
   sorted exact eigenvalue lies within (||R||_2 + 2 delta ||mu||_inf) / (1 -
   delta) of the sorted mu (write V = U H, H = (V^T V)^(1/2), ||H - I|| <=
   delta; then U^T A U - diag(mu) = (R + (H - I) diag(mu) - diag(mu)(H - I))
   H^-1 is symmetric, and Weyl's inequality applies).  The 2-norms are
   bounded by Frobenius norms plus the rounding of forming R and V^T V
   (gamma_m = m u / (1 - m u), Higham, Accuracy and Stability of Numerical
   Algorithms, 2nd ed., section 3.5 -- from memory) and the difference
   between the float matrix and the exact one (degrees, scalings).

>>> from powerspec.factors.families import P
>>> vals = P(3).certified("laplacian")            # via the closed form
>>> [str(v) for v, m in vals]                 # x(x - 1)(x - 3): exact rationals
['0', '1', '3']
>>> from powerspec.factors.factor import from_matrix
>>> g = from_matrix([[0, 1, 0], [1, 0, 1], [0, 1, 0]])  # no closed form: exact charpoly
>>> sorted(str(v) for v, m in g.certified("laplacian"))
['0', '1', '3']
"""

from __future__ import annotations

import math
from fractions import Fraction

import numpy as np
from flint import acb, arb, fmpq, fmpq_mat

from powerspec.errors import InputError, SizeLimitError
from powerspec.numbers.hp import HP, working

CHARPOLY_MAX = 128
"""Largest factor order certified through the exact characteristic polynomial."""

DENSE_MAX = 4000
"""Largest factor order certified through a dense symmetric eigensolver and residual bound."""

_U = 2.0**-53


def exact_degrees(adj, direction: str = "out") -> list[Fraction]:
    """Exact weighted degrees (row or column sums of the exact float64 entries) as Fractions."""
    mat = adj.tocsr() if direction == "out" else adj.T.tocsr()
    data = mat.data
    if data.size == 0 or (np.all(data == np.round(data)) and np.sum(np.abs(data)) < 2.0**52):
        sums = np.asarray(mat.sum(axis=1)).ravel()
        return [Fraction(int(s)) for s in sums]
    out = []
    for i in range(mat.shape[0]):
        row = data[mat.indptr[i]:mat.indptr[i + 1]]
        out.append(sum((Fraction(float(x)) for x in row), Fraction(0)))
    return out


def _exact_matrix(adj, kind: str, degrees: list[Fraction]) -> fmpq_mat:
    """The kind's matrix over Q (normalized via its rational similar form I - D^-1 A)."""
    n = adj.shape[0]
    dense = adj.toarray()
    q = [[fmpq(*float(x).as_integer_ratio()) if x else fmpq(0) for x in row] for row in dense]
    d = [fmpq(f.numerator, f.denominator) for f in degrees]
    if kind in ("laplacian", "signless"):
        s = -1 if kind == "laplacian" else 1
        for i in range(n):
            for j in range(n):
                q[i][j] = s * q[i][j]
            q[i][i] += d[i]
    elif kind in ("transition", "normalized"):
        for i in range(n):
            inv = 1 / d[i]
            for j in range(n):
                q[i][j] = q[i][j] * inv
                if kind == "normalized":
                    q[i][j] = -q[i][j]
            if kind == "normalized":
                q[i][i] += 1
    return fmpq_mat(q)


def _charpoly_eigenvalues(mat: fmpq_mat, symmetric: bool) -> list[tuple[HP, int]]:
    poly = mat.charpoly()
    _, factors = poly.factor()
    out: list[tuple[HP, int]] = []
    with working():
        for g, e in factors:
            if g.degree() == 1:
                c = g.coeffs()
                out.append((-c[0] / c[1], int(e)))
                continue
            for r, m in g.numer().complex_roots():
                # FLINT returns certified real roots as arb.  An acb root whose imaginary part
                # excludes 0 is certainly not real, whatever the caller believed about its
                # matrix (D^-1 A of a symmetric A with degrees of both signs is not similar to a
                # symmetric matrix): its imaginary part is kept, never dropped.
                if isinstance(r, acb) and symmetric and r.imag.contains(0):
                    r = r.real  # eigenvalues of symmetric matrices are real
                out.append((r, int(e) * int(m)))
    return out


def _residual_eigenvalues(a: np.ndarray, extra: float) -> list[tuple[HP, int]]:
    """Sorted eigh eigenvalues, each with the rigorous radius of the module docstring."""
    n = a.shape[0]
    mu, v = np.linalg.eigh(a)
    gam = (n + 2) * _U / (1 - (n + 2) * _U)
    r = a @ v - v * mu
    r_err = gam * np.linalg.norm(np.abs(a) @ np.abs(v) + np.abs(v) * np.abs(mu))
    r_norm = (np.linalg.norm(r) + r_err) * (1 + 8 * _U)
    g = v.T @ v - np.eye(n)
    g_err = gam * np.linalg.norm(np.abs(v.T) @ np.abs(v)) + _U
    delta = (np.linalg.norm(g) + g_err) * (1 + 8 * _U)
    if delta >= 0.5:
        raise SizeLimitError("the dense eigensolver lost orthogonality; the factor cannot be certified")
    mu_max = float(np.max(np.abs(mu), initial=0.0))
    rad = ((r_norm + 2 * delta * mu_max) / (1 - delta) + extra) * (1 + 8 * _U)
    with working():
        return [(arb(fmpq(*float(x).as_integer_ratio())) + arb(0, rad), 1) for x in mu]


def numeric_eigenvalues(adj, kind: str, degrees: list[Fraction],
                        symmetric: bool) -> list[tuple[HP, int]]:
    """Certified eigenvalues of the kind's matrix without a closed form (routes 2 and 3).

    ``symmetric`` says the adjacency matrix is symmetric.  D^-1 A is then similar to the
    symmetric D^-1/2 A D^-1/2 only when the degrees share one sign; with degrees of both
    signs its eigenvalues may be complex (and are kept so).
    """
    n = adj.shape[0]
    if symmetric and kind in ("transition", "normalized"):
        symmetric = all(x > 0 for x in degrees) or all(x < 0 for x in degrees)
    if n <= CHARPOLY_MAX or (not symmetric and n <= 2 * CHARPOLY_MAX):
        return _charpoly_eigenvalues(_exact_matrix(adj, kind, degrees), symmetric)
    if not symmetric:
        raise SizeLimitError(
            f"a factor of order {n} whose matrix is not symmetric (directed, or D^-1 A with degrees "
            f"of both signs) has no closed form here and is beyond the certified solver's reach "
            f"({2 * CHARPOLY_MAX} vertices); use a smaller or undirected factor")
    if n > DENSE_MAX:
        raise SizeLimitError(
            f"a factor of order {n} without a closed form is beyond the dense certified solver "
            f"({DENSE_MAX} vertices); use a family with a closed form or a smaller factor")
    a = adj.toarray()
    d = np.array([float(x) for x in degrees])
    extra = 0.0
    if kind in ("laplacian", "signless"):
        s = -1.0 if kind == "laplacian" else 1.0
        m = s * a
        m[np.diag_indices(n)] += d
        # float degrees and the diagonal sums differ from the exact ones by at most 2u|value|
        exact = np.array([float(abs(x)) for x in degrees])
        extra = float(np.max(2 * _U * (exact + np.abs(np.diag(a))), initial=0.0)) + 1e-300
        a = m
    elif kind in ("transition", "normalized"):
        if np.any(d <= 0):
            raise InputError("this matrix kind needs positive degrees for factors of this size")
        s = 1.0 / np.sqrt(d)
        m = a * s[:, None] * s[None, :]
        # each entry is within 6u of the exact a_ij / sqrt(d_i d_j); the Frobenius norm bounds the 2-norm
        extra = 6 * _U * float(np.linalg.norm(m)) + 1e-300
        a = np.eye(n) - m if kind == "normalized" else m
    return _residual_eigenvalues(a, extra)


def regular_map(kind: str, d: Fraction, values: list[tuple[HP, int]]) -> list[tuple[HP, int]] | None:
    """The kind's eigenvalues of a d-regular graph from its adjacency eigenvalues, or None."""
    dq = fmpq(d.numerator, d.denominator)
    with working():
        if kind == "laplacian":
            return [(dq - v, m) for v, m in values]
        if kind == "signless":
            return [(dq + v, m) for v, m in values]
        if d == 0:
            return None
        if kind == "transition":
            return [(v / dq, m) for v, m in values]
        if kind == "normalized":
            return [(1 - v / dq, m) for v, m in values] if d > 0 else None
    return None


def check_order_affordable(n: int, has_closed_form: bool) -> None:
    """Refuse up front a factor whose certified spectrum would cost too much."""
    if not has_closed_form and n > DENSE_MAX:
        raise SizeLimitError(
            f"a factor of order {n} without a closed form is beyond the dense certified solver "
            f"({DENSE_MAX} vertices); use a family with a closed form or a smaller factor")
    if math.isinf(n):
        raise SizeLimitError("factor order is not finite")


__all__ = ["CHARPOLY_MAX", "DENSE_MAX", "check_order_affordable", "exact_degrees",
           "numeric_eigenvalues", "regular_map"]
