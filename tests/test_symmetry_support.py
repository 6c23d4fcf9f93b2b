"""Independent references for the symmetry-tier tests (no powerspec numerics are used here).

Products are built explicitly with numpy Kronecker products from their matrix
definitions: direct = A (x) B, strong = (A + I) (x) (B + I) - I, Cartesian =
A (x) I + I (x) B, generalized mix(a, b) = a (A (x) I + I (x) B) + b A (x) B,
with the degree matrices combined by the same rule.  Reference eigenvalues come
from numpy's eigvalsh (backward stable: error <= c N u ||M||_2 with a modest c;
we allow c = 8, a textbook bound quoted from memory) or from python-flint's
certified ``acb_mat.eig`` at 128 bits.  The dense references run with one BLAS thread
(powerspec's thread switch only; on a shared 2-core machine OpenBLAS threads spin-wait).
"""

from __future__ import annotations

from functools import reduce

import flint
import numpy as np
import pytest

from powerspec.tiers.symmetry.blas import single_blas_thread

U = 2.0**-53


@pytest.fixture(autouse=True)
def one_blas_thread():
    """Run each symmetry test with one OpenBLAS thread (restored afterwards)."""
    with single_blas_thread():
        yield


def combine(x: np.ndarray, y: np.ndarray, a: float, b: float) -> np.ndarray:
    """a (X (x) I + I (x) Y) + b X (x) Y."""
    ix, iy = np.eye(x.shape[0]), np.eye(y.shape[0])
    return a * (np.kron(x, iy) + np.kron(ix, y)) + b * np.kron(x, y)


def explicit_product(factors: list[tuple[np.ndarray, np.ndarray, int]], a: float, b: float,
                     kind: str) -> np.ndarray:
    """The product matrix of ``kind`` for factors (adjacency, degrees, copies), built explicitly."""
    adjs, degs = [], []
    for adj, deg, k in factors:
        adjs += [adj] * k
        degs += [np.diag(deg)] * k
    big_a = reduce(lambda x, y: combine(x, y, a, b), adjs)
    big_d = reduce(lambda x, y: combine(x, y, a, b), degs)
    if kind == "laplacian":
        return big_d - big_a
    if kind == "signless":
        return big_d + big_a
    if kind == "adjacency":
        return big_a
    s = 1.0 / np.sqrt(np.diag(big_d))
    norm = big_a * np.outer(s, s)  # similar to D^-1 A (transition) when degrees are positive
    return np.eye(len(s)) - norm if kind == "normalized" else norm


def reference_eigenvalues(m: np.ndarray) -> tuple[np.ndarray, float]:
    """numpy eigvalsh of the explicit matrix and its error allowance 8 N u ||M||_2 (from memory)."""
    with single_blas_thread():
        vals = np.linalg.eigvalsh(m)
    return vals, 8 * m.shape[0] * U * float(np.max(np.abs(vals)) + 1e-300)


def certified_eigenvalues(m: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Sorted midpoints and radii of python-flint's certified eigenvalue balls at 128 bits."""
    old = flint.ctx.prec
    try:
        for prec in (128, 512):  # near-multiple eigenvalues may need more bits to be isolated
            flint.ctx.prec = prec
            try:
                eig = flint.acb_mat([[float(v) for v in row] for row in m]).eig(multiple=True)
                break
            except ValueError:
                if prec == 512:
                    raise
        mids = np.array([float(e.real.mid()) for e in eig])
        rads = np.array([float(e.real.rad()) + float(e.imag.rad()) + abs(float(e.imag.mid()))
                         for e in eig])
    finally:
        flint.ctx.prec = old
    order = np.argsort(mids)
    return mids[order], rads[order] + U * np.abs(mids[order])


def expand(blocks) -> tuple[np.ndarray, np.ndarray, int]:
    """Sorted values and radii of the blocks with multiplicities expanded, and the total count."""
    vals, rads, total = [], [], 0
    for blk in blocks:
        vals.append(np.repeat(blk.values, blk.multiplicity))
        rads.append(np.repeat(blk.radius, blk.multiplicity))
        total += blk.multiplicity * blk.values.size
    v = np.concatenate(vals)
    r = np.concatenate(rads)
    order = np.argsort(v, kind="stable")
    return v[order], r[order], total


def sorted_cover(values: np.ndarray, radius: np.ndarray, ref: np.ndarray, ref_err) -> bool:
    """True if each sorted reference eigenvalue lies within (local radius) + ref_err of the sorted value.

    If a bijection pairs every true eigenvalue with a computed value c_j within r_j, then
    the i-th smallest true and computed values differ by at most the largest r_j among the
    c_j within 2 max(r) of c_(i) (counting argument), and a reference within e of the true
    values moves the sorted list by at most e.
    """
    if values.shape != ref.shape:
        return False
    big = 2 * float(np.max(radius)) if radius.size else 0.0
    lo = np.searchsorted(values, values - big, side="left")
    hi = np.searchsorted(values, values + big, side="right")
    local = np.array([radius[a:b].max() for a, b in zip(lo, hi, strict=True)])
    return bool(np.all(np.abs(values - ref) <= local + ref_err))


def random_weighted_graph(rng: np.random.Generator, n: int, density: float = 0.6) -> np.ndarray:
    """A connected symmetric weighted adjacency (a weighted path plus random extra edges)."""
    a = np.zeros((n, n))
    for i in range(n - 1):
        a[i, i + 1] = rng.uniform(0.2, 3.0)
    extra = np.triu(rng.uniform(0.1, 2.5, (n, n)) * (rng.random((n, n)) < density), 2)
    a = a + extra
    return a + a.T
