"""Independent references for the tests: explicit products and eigensolvers.

Nothing here uses powerspec's engine.  Products are built either with
``scipy.sparse.kron`` from the matrix formulas of each product kind, or --
for unweighted graphs -- vertex by vertex from the graph-theoretic
definition of adjacency in the product.
"""

from __future__ import annotations

import itertools

import numpy as np
import scipy.optimize
import scipy.sparse as sp


def kron_product(a: np.ndarray, b: np.ndarray, ca: float, cb: float) -> np.ndarray:
    """ca (A (x) I + I (x) B) + cb A (x) B, built with scipy.sparse.kron (dense result)."""
    a = sp.csr_array(a)
    b = sp.csr_array(b)
    ia = sp.identity(a.shape[0], format="csr")
    ib = sp.identity(b.shape[0], format="csr")
    out = ca * (sp.kron(a, ib) + sp.kron(ia, b)) + cb * sp.kron(a, b)
    return out.toarray()


def fold(mats: list[np.ndarray], ca: float, cb: float) -> np.ndarray:
    """Left fold ((M1 o M2) o M3) o ... of the generalized product."""
    acc = np.asarray(mats[0], dtype=float)
    for m in mats[1:]:
        acc = kron_product(acc, np.asarray(m, dtype=float), ca, cb)
    return acc


def definition_product(a: np.ndarray, b: np.ndarray, kind: str) -> np.ndarray:
    """0/1 adjacency of the product of two simple graphs from the vertex-pair definition.

    Cartesian: (u,v)~(u',v') iff u=u' and v~v', or v=v' and u~u'.
    Direct: u~u' and v~v'.  Strong: Cartesian or direct.
    """
    n, m = a.shape[0], b.shape[0]
    out = np.zeros((n * m, n * m))
    for (u, v), (u2, v2) in itertools.product(itertools.product(range(n), range(m)), repeat=2):
        cart = (u == u2 and b[v, v2] != 0) or (v == v2 and a[u, u2] != 0)
        direct = a[u, u2] != 0 and b[v, v2] != 0
        edge = {"cart": cart, "direct": direct, "strong": cart or direct}[kind]
        if edge:
            out[u * m + v, u2 * m + v2] = 1.0
    return out


def eigenvalues(m: np.ndarray) -> np.ndarray:
    """numpy eigenvalues: eigvalsh for symmetric input, eigvals otherwise."""
    m = np.asarray(m, dtype=float)
    if np.array_equal(m, m.T):
        return np.linalg.eigvalsh(m)
    return np.linalg.eigvals(m)


def expand(spectrum) -> np.ndarray:
    """Every eigenvalue of a powerspec Spectrum repeated by its multiplicity."""
    vals = [v for v, k in spectrum.atoms() for _ in range(int(k))]
    return np.array(vals, dtype=complex)


def multiset_distance(x, y) -> float:
    """Largest distance in the optimal one-to-one matching of two multisets (same size)."""
    x = np.asarray(x, dtype=complex)
    y = np.asarray(y, dtype=complex)
    assert x.shape == y.shape, (x.shape, y.shape)
    if x.size == 0:
        return 0.0
    if np.all(x.imag == 0) and np.all(np.abs(y.imag) < 1e-9):
        return float(np.max(np.abs(np.sort(x.real) - np.sort(y.real))))
    d = np.abs(x[:, None] - y[None, :])
    r, c = scipy.optimize.linear_sum_assignment(d)
    return float(d[r, c].max())
