"""The explicit last resort: small products built as matrices and solved with certified radii.

A product of at most :data:`EXPLICIT_MAX` vertices that no rule covers (the
Laplacian of a direct product of two irregular factors, a non-associative
``mix`` of directed factors, ...) is built from its definition --
a(X (x) I + I (x) Y) + b X (x) Y for the adjacency and for the degree vector,
folded over the operands -- and its spectrum certified: through the exact
characteristic polynomial over Q when it is small (the build is then exact
in rationals), else by the residual bound of
:mod:`powerspec.factors.certify` for symmetric matrices, widened by a bound
on the rounding of the float build (every entry is a sum of products of at
most ``depth`` float operations, so |error| <= gamma_depth |entry|
entrywise, Higham 2nd ed. section 3.1 -- from memory).

>>> from powerspec.algebra.grammar import parse
>>> sp = explicit_spectrum(parse("direct(P(3), K(1, 2))"), "laplacian")
>>> sp.order, sp.atoms()                      # exact: characteristic polynomial over Q
(9, [(0.0, 2), (1.0, 3), (2.0, 2), (4.0, 1), (5.0, 1)])
"""

from __future__ import annotations

from fractions import Fraction

import numpy as np
from flint import fmpq, fmpq_mat

from powerspec.algebra.tree import Leaf, Node
from powerspec.errors import InputError, SizeLimitError
from powerspec.factors.certify import CHARPOLY_MAX, _charpoly_eigenvalues, _residual_eigenvalues
from powerspec.spectra.spectrum import Spectrum

EXPLICIT_MAX = 3000
"""Largest product (vertices) built explicitly."""

_U = 2.0**-53


def _fold_float(node: Node, direction: str) -> tuple[np.ndarray, np.ndarray, int]:
    """(adjacency, degree vector, depth of float operations) of a node, in floats."""
    if isinstance(node, Leaf):
        f = node.factor
        return f.adjacency.toarray(), np.array([float(d) for d in f.exact_degrees(direction)]), 1
    a, b = float(node.comb.a), float(node.comb.b)
    # a coefficient that is not a double (a third) is one more relative rounding per fold
    coef = node.comb.rounded_coefficients
    acc = None
    depth = 0
    for child, k in node.operands:
        x, dx, dep = _fold_float(child, direction)
        for _ in range(k):
            if acc is None:
                acc, dacc, depth = x, dx, dep
                continue
            n1, n2 = acc.shape[0], x.shape[0]
            i1, i2 = np.eye(n1), np.eye(n2)
            acc = a * (np.kron(acc, i2) + np.kron(i1, x)) + b * np.kron(acc, x)
            dacc = a * (np.add.outer(dacc, dx).ravel()) + b * np.multiply.outer(dacc, dx).ravel()
            depth = depth + dep + 3 + coef
    return acc, dacc, depth


def _fold_exact(node: Node, direction: str) -> tuple[list[list[Fraction]], list[Fraction]]:
    """(adjacency, degrees) of a node as exact rationals (small products only)."""
    if isinstance(node, Leaf):
        f = node.factor
        dense = f.adjacency.toarray()
        return [[Fraction(float(v)) for v in row] for row in dense], f.exact_degrees(direction)
    a, b = node.comb.a, node.comb.b
    acc = dacc = None
    for child, k in node.operands:
        x, dx = _fold_exact(child, direction)
        for _ in range(k):
            if acc is None:
                acc, dacc = x, dx
                continue
            n1, n2 = len(acc), len(x)
            acc = [[a * ((acc[i1][j1] if i2 == j2 else 0) + (x[i2][j2] if i1 == j1 else 0))
                    + b * acc[i1][j1] * x[i2][j2]
                    for j1 in range(n1) for j2 in range(n2)]
                   for i1 in range(n1) for i2 in range(n2)]
            dacc = [a * (p + q) + b * p * q for p in dacc for q in dx]
    return acc, dacc


def _kind_exact(adj: list[list[Fraction]], deg: list[Fraction], kind: str) -> fmpq_mat:
    n = len(adj)
    m = [[fmpq(v.numerator, v.denominator) for v in row] for row in adj]
    d = [fmpq(v.numerator, v.denominator) for v in deg]
    if kind in ("laplacian", "signless"):
        s = -1 if kind == "laplacian" else 1
        m = [[s * m[i][j] + (d[i] if i == j else 0) for j in range(n)] for i in range(n)]
    elif kind in ("transition", "normalized"):
        if any(x == 0 for x in d):
            raise InputError(f"the {kind} matrix needs non-zero degrees")
        m = [[m[i][j] / d[i] for j in range(n)] for i in range(n)]
        if kind == "normalized":
            m = [[(1 if i == j else 0) - m[i][j] for j in range(n)] for i in range(n)]
    return fmpq_mat(m)


def explicit_spectrum(node: Node, kind: str, direction: str = "out") -> Spectrum:
    """The certified spectrum of the explicitly built product matrix of the given kind.

    Exact characteristic polynomial for at most CHARPOLY_MAX vertices (any
    matrix), residual bound for symmetric matrices up to EXPLICIT_MAX vertices.
    Raises SizeLimitError beyond, InputError for undefined kinds.
    """
    n = node.order
    if not isinstance(n, int) or n > EXPLICIT_MAX:
        raise SizeLimitError(f"{node.label()} has {n} vertices, more than the {EXPLICIT_MAX} an "
                             "explicit build may have")
    if kind == "normalized" and node.directed:
        raise InputError("the normalized Laplacian is defined for undirected graphs only")
    symmetric = not node.directed
    if n <= CHARPOLY_MAX:
        adj, deg = _fold_exact(node, direction)
        if kind == "normalized" and any(x <= 0 for x in deg):
            raise InputError("the normalized Laplacian needs positive degrees")
        vals = _charpoly_eigenvalues(_kind_exact(adj, deg, kind), symmetric)
        return Spectrum.from_hp([v for v, _ in vals], [m for _, m in vals])
    if not symmetric:
        raise SizeLimitError(f"{node.label()} is directed with {n} vertices; its spectrum is "
                             f"certified explicitly only up to {CHARPOLY_MAX} vertices")
    adj, deg, depth = _fold_float(node, direction)
    gam = (depth + 2) * _U / (1 - (depth + 2) * _U)
    extra = gam * (float(np.linalg.norm(np.abs(adj))) + float(np.max(np.abs(deg), initial=0.0)))
    if kind in ("laplacian", "signless"):
        m = (-adj if kind == "laplacian" else adj) + np.diag(deg)
    elif kind in ("transition", "normalized"):
        if np.any(deg <= 0):
            raise InputError(f"the {kind} matrix of a product this large is certified only for "
                             "positive degrees")
        s = 1.0 / np.sqrt(deg)
        m = adj * s[:, None] * s[None, :]
        # relative error of the degrees (gam) and of the scaling (6u) per entry
        extra = (gam + 6 * _U) * 2 * float(np.linalg.norm(m))
        if kind == "normalized":
            m = np.eye(n) - m
    else:
        m = adj
    vals = _residual_eigenvalues(m, extra)
    return Spectrum.from_hp([v for v, _ in vals], [mm for _, mm in vals])


__all__ = ["EXPLICIT_MAX", "explicit_spectrum"]
