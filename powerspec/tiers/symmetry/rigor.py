"""Rigorous floating-point error bounds used by the symmetry tier.

All bounds here are upper bounds of exact real quantities, computed in
float64 with explicit safety factors, from the standard model of IEEE
arithmetic ``fl(x op y) = (x op y)(1 + e)``, ``|e| <= u = 2^-53`` (no
underflow; results are checked to be finite).  Notation: γ_m = m u/(1 - m u)
(Higham, *Accuracy and Stability of Numerical Algorithms*, 2nd ed., §3.1);
a dot product of length m computed in any order (with or without FMA) has
error at most γ_m times the dot product of the absolute values.

* :func:`fro_up` -- an upper bound of a Frobenius norm (sum of N squares:
  relative error <= γ_{N+1}; the square root adds one more rounding).
* :func:`split_matmul` -- X @ Y with a rigorous Frobenius error bound that
  does not grow with the inner dimension m.  Each row of X (column of Y) is
  split as X = X_hi + X_lo, X_hi holding t = floor((53 - ceil(log2 m))/2) bits
  relative to the row's largest entry (integer multiples of 2^(e_i - t) of
  modulus <= 2^t).  Every partial sum of X_hi @ Y_hi is then an integer
  multiple of 2^(e_i + f_j - 2t) of modulus <= m 2^(2t) <= 2^53, hence exact
  in any summation order (the error-free splitting of Ozaki, Ogita, Oishi and
  Rump, Numer. Algorithms 59, 2012).  X_hi @ Y_lo and X_lo @ Y are ordinary
  products whose γ_m error is 2^-t times smaller, and the final two additions
  round once each.  Cost: three matrix products.
* :func:`certify_symmetric` -- eigenvalues of a symmetric float matrix with a
  rigorous radius (see its docstring for the bound).

>>> import numpy as np
>>> x = np.random.default_rng(0).standard_normal((50, 40))
>>> c, err = split_matmul(x, x.T)
>>> bool(np.abs(c - x @ x.T).max() < 1e-12), err < 1e-12
(True, True)
"""

from __future__ import annotations

import math

import numpy as np

from powerspec.tiers.symmetry.patterns import U, gamma

SAFE = 1.0 + 1e-10
"""Relative inflation applied to scalar bounds computed with libm functions (exp, log), whose
errors are a few ulp (many orders of magnitude below this factor)."""


def up(x: float) -> float:
    """x rounded up by a relative 4u (for results of a few correctly rounded operations).

    >>> up(1.0) > 1.0
    True
    """
    return float(x) * (1.0 + 4 * U) + 5e-324


def fro_up(x: np.ndarray) -> float:
    """An upper bound of the Frobenius norm of x (infinite on overflow).

    >>> fro_up(np.array([[3.0, 4.0]])) >= 5.0
    True
    """
    x = np.asarray(x)
    if x.size == 0:
        return 0.0
    if np.iscomplexobj(x):
        return math.hypot(fro_up(x.real), fro_up(x.imag)) * (1 + 4 * U)
    flat = np.ravel(x)
    s = float(np.dot(flat, flat))  # any summation order: relative error <= gamma(N + 1)
    if 1e-280 < s < 1e280:
        return math.sqrt(s * (1.0 + gamma(flat.size + 4))) * (1.0 + gamma(4))
    scale = float(np.max(np.abs(flat)))
    if scale == 0.0 or not math.isfinite(scale):
        return scale
    y = flat / scale  # relative error u per entry, covered by the gamma factors
    s = float(np.dot(y, y))
    return math.sqrt(s * (1.0 + gamma(flat.size + 4))) * scale * (1.0 + gamma(6))


def _split(x: np.ndarray, t: int, axis: int) -> tuple[np.ndarray, np.ndarray, float]:
    """x = hi + lo exactly, hi with t bits relative to the max of each row (axis=-1) or column.

    Also returns an upper bound of ||lo||_F from the row (column) exponents alone:
    |lo_ij| <= 2^(e_i - t - 1) where max_j |x_ij| < 2^(e_i).
    """
    m = np.max(np.abs(x), axis=axis, keepdims=True)
    _, e = np.frexp(m)  # m < 2^e (and e = 0 for m = 0)
    scale = np.ldexp(1.0, t - e)  # powers of two: multiplying by them is exact
    hi = np.multiply(x, scale)
    np.rint(hi, out=hi)
    np.divide(hi, scale, out=hi)
    lo = np.subtract(x, hi)
    half_ulp = np.where(m > 0, np.ldexp(1.0, e - t - 1), 0.0)
    lo_bound = math.sqrt(float(np.sum(half_ulp * half_ulp)) * x.shape[axis]) * (1 + gamma(x.size + 4))
    return hi, lo, lo_bound


def split_matmul(x: np.ndarray, y: np.ndarray) -> tuple[np.ndarray, float]:
    """(c, err) with c ≈ x @ y and ||c - x @ y||_F <= err rigorously (see the module docstring).

    Stacks (ndim > 2) are multiplied matrix by matrix; err then bounds the Frobenius norm
    of the whole stack of errors.

    >>> c, err = split_matmul(np.array([[1.0, 2.0]]), np.array([[3.0], [4.0]]))
    >>> c.tolist(), err < 1e-14
    ([[11.0]], True)
    """
    x = np.asarray(x, dtype=float)
    y = np.asarray(y, dtype=float)
    m = x.shape[-1]
    if m == 0 or x.size == 0 or y.size == 0:
        return x @ y, 0.0
    t = (53 - max(1, math.ceil(math.log2(m)))) // 2
    xrow = np.max(np.abs(x), axis=-1)
    ycol = np.max(np.abs(y), axis=-2)
    xmax, ymax = float(np.max(xrow)), float(np.max(ycol))
    tiny = xmax == 0.0 or ymax == 0.0 or not (math.isfinite(xmax) and math.isfinite(ymax))
    if not tiny:
        # the exact splitting needs every scaled product 2^(e_i + f_j - 2t) to stay normal
        lo_x = float(np.min(xrow[xrow > 0]))
        lo_y = float(np.min(ycol[ycol > 0]))
        tiny = math.log2(lo_x) + math.log2(lo_y) - 2 * t < -960 or math.log2(xmax * ymax * m) > 1000
    if tiny:
        c = x @ y
        bound = gamma(m + 2) * fro_up(np.abs(x) @ np.abs(y)) * (1 + gamma(m + 2))
        return c, up(bound)
    xh, xl, xl_f = _split(x, t, axis=-1)
    yh, yl, yl_f = _split(y, t, axis=-2)
    t1 = xh @ yh  # exact
    t2 = xh @ yl
    t3 = xl @ y
    c = t1 + (t2 + t3)
    # stacked operands: Frobenius norms of the whole stacks bound the root-sum-square of the
    # per-matrix bounds (Cauchy-Schwarz), so the bound holds for the stack as one matrix.
    # ||fl(t2)||_F <= (1 + γ) ||xh||_F ||yl||_F and likewise for t3, so only x, y, c are scanned.
    g = gamma(m + 2)
    x_f, y_f = fro_up(x), fro_up(y)
    e2 = (x_f + xl_f) * yl_f
    e3 = xl_f * y_f
    err = g * (e2 + e3) + gamma(3) * (fro_up(c) + (1 + g) * (e2 + e3))
    return c, up(err)


def norm2_sym_up(g: np.ndarray, g_err: float = 0.0) -> float:
    """An upper bound of the 2-norm of a symmetric (or Hermitian) matrix g + E, ||E||_F <= g_err.

    Uses ||g||_2 <= ||g^T g||_F^(1/2) (one symmetric product with its γ_m error), which is
    closer to the 2-norm than ||g||_F when g is a noise-like defect matrix.

    >>> norm2_sym_up(np.diag([1.0, -3.0])) >= 3.0
    True
    """
    g = np.asarray(g)
    m = g.shape[0]
    fro = fro_up(g)
    if m <= 2 or fro == 0.0:
        return up(fro + g_err)
    g2 = g.conj().T @ g  # symmetric product (BLAS syrk)
    e2 = gamma(m + 2) * fro * fro
    bound = math.sqrt(fro_up(g2) + e2) * SAFE
    return up(min(fro, bound) + g_err)


def gram_defect(v: np.ndarray) -> float:
    """An upper bound of ||V^T V - I||_2 for a real square or tall V.

    Split V = V_hi + V_lo as in :func:`split_matmul`: V_hi^T V_hi is exact, the cross
    term V_hi^T V_lo and V_lo^T V_lo are ordinary products (γ_m error, 2^-t and 2^-2t
    smaller); three additions round each entry.

    >>> gram_defect(np.eye(3)) < 1e-14
    True
    """
    m, k = v.shape
    t = (53 - max(1, math.ceil(math.log2(max(m, 2))))) // 2
    vh, vl, _ = _split(v, t, axis=0)
    g = vh.T @ vh  # exact (column-wise split with the same t as split_matmul)
    cross = vh.T @ vl
    quad = vl.T @ vl  # symmetric product (BLAS syrk)
    g += (cross + cross.T) + quad  # three more roundings per entry
    g[np.diag_indices(k)] -= 1.0
    fl_vl = fro_up(vl)
    err = gamma(m + 2) * (2 * fro_up(vh) * fl_vl + fl_vl * fl_vl)
    err += gamma(4) * (fro_up(g) + 2 * fro_up(cross) + fro_up(quad) + k**0.5)
    if err == 0.0 and not np.any(g):
        return 0.0
    return norm2_sym_up(g, err)


def certify_symmetric(b: np.ndarray) -> tuple[np.ndarray, float]:
    """Eigenvalues (ascending) of the symmetric float matrix b and one rigorous radius.

    With (mu, V) from LAPACK, R = b V - V diag(mu) and G = V^T V - I, ||G||_2 <= δ < 1,
    every sorted eigenvalue of b lies within

        r = (||R||_2 + 2 δ max|mu - c|) / (1 - δ)

    of the sorted mu, for any shift c (R does not change under b -> b - cI; c is the
    midpoint of mu).  Proof: with the polar factor V = W P, P = (I + G)^(1/2),
    W^T b W - diag(mu) = R P^-1 + ... has norm <= r, and Weyl's theorem applies to the
    orthogonally similar W^T b W.  R and G are formed with :func:`split_matmul`.

    >>> mu, r = certify_symmetric(np.array([[2.0, 1.0], [1.0, 2.0]]))
    >>> mu.round(12).tolist(), r < 1e-14
    ([1.0, 3.0], True)
    """
    d = b.shape[0]
    if d == 0:
        return np.zeros(0), 0.0
    mu, v = np.linalg.eigh(b)
    bv, e_bv = split_matmul(b, v)
    vmu = v * mu  # entrywise: relative error u
    r = bv - vmu
    r_err = e_bv + U * fro_up(vmu) + gamma(2) * (fro_up(bv) + fro_up(vmu))
    r_norm = fro_up(r) + r_err
    delta = gram_defect(v)
    if not delta < 0.5:
        return mu, math.inf
    c = 0.5 * (float(mu[0]) + float(mu[-1]))
    spread = up(float(np.max(np.abs(mu - c))))
    radius = (r_norm + 2 * delta * spread) / (1 - delta)
    return mu, up(radius)
