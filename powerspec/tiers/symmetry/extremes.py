"""Certified extreme eigenvalues of one symmetry-tier block without a full certified solve.

For the ends of a block's spectrum (its smallest one or two and its largest
eigenvalue) the dense certified solve (:func:`~powerspec.tiers.symmetry.rigor.certify_symmetric`:
all eigenvectors, then residual and orthogonality products, about 12 d^3 flops of
products on top of the eigensolver) does far more than needed.  Large blocks take
this route instead:

1. *Candidates*: the eigenvalues of the float block from LAPACK (values only: one
   tridiagonal reduction).  They only choose where to test and are never reported.
   Lanczos (ARPACK, ``scipy.sparse.linalg.eigsh``) was measured for this and rejected:
   on the d = 945 block of ``direct(K(1,3)^24)`` the bottom end (a cluster of
   eigenvalues near 0 under a spread of 10^9) took 200 s against 0.07 s for the
   values-only solve, and even the well separated top end was 5 times slower.
2. *Certificate below an end* -- inertia by Cholesky.  If the factorisation of the
   float matrix A = fl(B̃ - σ I) runs to completion, the computed factor R̂ satisfies
   R̂^T R̂ = A + ΔA with |ΔA| <= γ_(d+1) |R̂^T| |R̂| entrywise (Higham, *Accuracy and
   Stability of Numerical Algorithms*, 2nd ed., Thm 10.3; the analysis holds for any
   order of the inner products).  A + ΔA is then congruent to I, so by Sylvester's law
   of inertia it has no eigenvalue below 0, and

       λ_min(B) >= σ - ||F||_2 - ||ΔA||_2 - err,

   F the rounding of the diagonal shift (|F_ii| <= u |A_ii|/(1-u)), err >= ||B̃ - B||_2
   the block's build error.  ||ΔA||_2 <= γ_(d+1) ρ(|R̂|^T |R̂|), and the Perron root is
   bounded above by the Collatz--Wielandt quotient max_i (N v)_i / v_i of a positive v
   (Horn & Johnson, *Matrix Analysis*, 2nd ed., Thm 8.1.26 -- from memory), evaluated
   with outward rounding.  LAPACK's ``potrf`` multiplies by a rounded reciprocal of r_jj
   (one more rounding per entry than the textbook algorithm) and its blocked updates sum
   in another order; the generous constant 2 γ_(d+3) in place of γ_(d+1) covers both,
   and 4 d (d + 2 + max r̂_jj) 2^-1074 covers underflow (which the standard model
   excludes).  This is the verified positive-definiteness test of S. M. Rump (BIT 46,
   2006).  A Bunch--Kaufman LDL^T count was not used: its backward error bound (Higham,
   Thm 11.3 -- from memory) is first order with an unspecified polynomial p(n), so a
   rigorous count would need the residual L D L^T - A (three more d^3 products).  A
   failed factorisation proves nothing and confirms nothing: the candidate is refused.
3. *The other side* of an end: the Rayleigh quotient x^T B̃ x / x^T x of a vector from
   inverse iteration with that Cholesky factor (Courant--Fischer: λ_min <= it <= λ_max),
   enclosed rigorously with error-free split products.
4. *The second smallest* of a block whose multiplicity is 1 (the one holding the
   eigenvalue 0 of a connected product): by interlacing, λ_1(B̃ + y y^T) <= λ_2(B̃) for any
   vector y (Horn & Johnson, Cor. 4.3.9 -- from memory), so a Cholesky certificate of
   B̃ + y y^T - σ I, with y ≈ √s times the bottom eigenvector, bounds λ_2 from below;
   from above, λ_2 is at most the larger Ritz value of B̃ on a plane (Courant--Fischer),
   enclosed in ball arithmetic.

When a certificate is refused the shift moves 32 times farther out (up to
:data:`WIDEN_STEPS` times) and then the block falls back to the dense certified solve;
an unconfirmed end is never returned.

>>> b = np.diag([1.0, 2.0, 5.0])
>>> lo = shift_psd_bound(b, 0.9)
>>> 0.89 < lo <= 0.9, shift_psd_bound(b, 1.5) is None   # 1.5 is above λ_min = 1: refused
(True, True)
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import scipy.linalg
from flint import arb

from powerspec.numbers.hp import working
from powerspec.tiers.symmetry.blas import single_blas_thread
from powerspec.tiers.symmetry.block import PreparedOperand, block_matrix, compute_block, scale_gamma
from powerspec.tiers.symmetry.combinatorics import Partition, weyl_dimension
from powerspec.tiers.symmetry.errors import SymmetryError
from powerspec.tiers.symmetry.parallel import SMALL_BLOCK
from powerspec.tiers.symmetry.patterns import U, gamma
from powerspec.tiers.symmetry.rigor import fro_up, split_matmul, up

LARGE_FROM = 320
"""Blocks of at least this size take the candidates + Cholesky route; smaller ones the dense solve."""

WIDEN_STEPS = 3
"""Retries of a refused Cholesky certificate, each with a shift 32 times farther out."""

POWER_STEPS = 4
"""Power iterations for the positive vector of the Collatz--Wielandt bound."""

ETA = 2.0**-1074
"""The smallest positive subnormal (underflow term)."""


def _down(x: float) -> float:
    return float(np.nextafter(x, -math.inf)) if math.isfinite(x) else x


def _upx(x: float) -> float:
    return float(np.nextafter(x, math.inf)) if math.isfinite(x) else x


def perron_upper(r: np.ndarray) -> float:
    """An upper bound of ρ(|R|^T |R|) = || |R| ||_2^2 (Collatz--Wielandt, outward rounding).

    >>> perron_upper(np.array([[2.0, 0.0], [0.0, 1.0]])) >= 4.0
    True
    """
    ar = np.abs(r)
    d = ar.shape[0]
    v = np.ones(d)
    for _ in range(POWER_STEPS):
        w = ar.T @ (ar @ v)
        top = float(np.max(w))
        if not (top > 0 and math.isfinite(top)):
            break
        v = w / top
    v = np.maximum(v, 2.0**-20)  # any positive vector gives an upper bound
    w = ar.T @ (ar @ v)  # nonnegative sums: computed >= (1 - γ_d) exact at each of the two steps
    g = gamma(d + 2)
    ratio = float(np.max(w / v))
    return up(ratio / (1.0 - g) ** 2 * (1.0 + 4 * U))


def _factor(b: np.ndarray, sigma: float, negate: bool, rank_one: np.ndarray | None
            ) -> tuple[float, np.ndarray] | None:
    """(η, R̂): the upper Cholesky factor of fl(M - σ I), R̂^T R̂ = M - σ I + E with ||E||_2 <= η.

    M = B̃ (or -B̃), plus y y^T; E gathers the rounding of forming the matrix and the
    factorisation's backward error (module docstring).  None when the factorisation fails.
    """
    if not math.isfinite(sigma):
        return None
    a = -b if negate else b.copy()
    extra = 0.0
    if rank_one is not None:
        # fl(y_i y_j) (relative error u: Frobenius u ||y||^2), then one addition each
        # (error <= u |sum| <= γ_1 |computed sum|)
        a += np.outer(rank_one, rank_one)
        extra = U * float(np.dot(rank_one, rank_one)) * (1 + gamma(a.shape[0] + 2))
        extra += gamma(1) * fro_up(a)
    diag = np.diag_indices(a.shape[0])
    a[diag] -= sigma
    f = up(float(np.max(np.abs(a[diag]))) * U / (1 - U))
    if not np.all(np.isfinite(a)) or float(np.max(np.abs(a))) > 1e300:
        return None
    try:
        r = scipy.linalg.cholesky(a, lower=False, overwrite_a=True, check_finite=False)
    except (np.linalg.LinAlgError, ValueError):
        return None
    if not np.all(np.isfinite(r)):
        return None
    d = r.shape[0]
    backward = 2 * gamma(d + 3) * perron_upper(r)
    backward += 4 * d * (d + 2 + float(np.max(np.abs(np.diag(r))))) * ETA
    return up(f + backward + extra), r


def shift_psd_bound(b: np.ndarray, sigma: float, err: float = 0.0, negate: bool = False,
                    rank_one: np.ndarray | None = None) -> float | None:
    """A rigorous lower bound of λ_min(M) just below σ, or None when the certificate is refused.

    M is B̃ (or -B̃ with ``negate``), plus y y^T when ``rank_one`` = y is given, and the
    bound also covers every exact matrix within ``err`` of it in the 2-norm.  Cholesky of
    fl(M - σ I) must run to completion (see the module docstring for the bound).

    >>> shift_psd_bound(np.array([[2.0, 1.0], [1.0, 2.0]]), 0.5) > 0.49   # eigenvalues 1, 3
    True
    >>> shift_psd_bound(np.array([[2.0, 1.0], [1.0, 2.0]]), 1.2) is None
    True
    """
    got = _factor(b, sigma, negate, rank_one)
    if got is None:
        return None
    return _down(sigma - up(got[0] + err) * (1 + 4 * U))


def _quad(x: np.ndarray, y: np.ndarray, ey: float, d: int) -> arb:
    """A ball around the exact x^T Y for float x and a float y within ey (2-norm) of Y."""
    val = float(np.dot(x, y))
    rad = gamma(d + 2) * float(np.dot(np.abs(x), np.abs(y))) * (1 + gamma(d + 2)) + fro_up(x) * ey
    return arb(val) + arb(0, up(rad))


def rayleigh_enclosure(b: np.ndarray, x: np.ndarray) -> tuple[float, float]:
    """(lo, hi) around the exact Rayleigh quotient x^T B̃ x / x^T x of the float matrix and vector.

    >>> lo, hi = rayleigh_enclosure(np.diag([1.0, 3.0]), np.array([1.0, 1.0]))
    >>> lo <= 2.0 <= hi, hi - lo < 1e-14
    (True, True)
    """
    d = x.shape[0]
    y, ey = split_matmul(b, x[:, None])
    with working():
        q = _quad(x, y[:, 0], ey, d) / _quad(x, x, 0.0, d)
        if not q.is_finite():
            return -math.inf, math.inf
        lo, hi = float(q.lower()), float(q.upper())
    return _down(lo), _upx(hi)


def second_upper(b: np.ndarray, x1: np.ndarray, x2: np.ndarray) -> float:
    """An upper bound of λ_2(B̃): the larger Ritz value of B̃ on span{x1, x2} (Courant--Fischer).

    λ_2 <= max over the plane of the Rayleigh quotient = the larger root t of
    det(H - t G) = 0, H = X^T B̃ X, G = X^T X (ball arithmetic); +inf if G is not certainly
    positive definite.

    >>> second_upper(np.diag([1.0, 2.0, 7.0]), np.array([1.0, 0, 0]), np.array([0, 1.0, 0])) >= 2.0
    True
    """
    d = x1.shape[0]
    xx = np.stack([x1, x2], axis=1)
    y, ey = split_matmul(b, xx)
    with working():
        h11, h22 = _quad(x1, y[:, 0], ey, d), _quad(x2, y[:, 1], ey, d)
        h12 = _quad(x1, y[:, 1], ey, d)
        g11, g22, g12 = _quad(x1, x1, 0.0, d), _quad(x2, x2, 0.0, d), _quad(x1, x2, 0.0, d)
        qa = g11 * g22 - g12 * g12
        if not qa > 0:
            return math.inf
        qb = -(h11 * g22 + h22 * g11 - 2 * h12 * g12)
        qc = h11 * h22 - h12 * h12
        disc = qb * qb - 4 * qa * qc
        top = disc.upper()  # the larger root grows with the discriminant (qa > 0)
        if top < 0:  # impossible for a symmetric pencil with G > 0
            return math.inf
        t = (-qb + arb(top).sqrt()) / (2 * qa)
        if not t.is_finite():
            return math.inf
        return _upx(float(t.upper()))


def _inverse_iteration(r: np.ndarray, steps: int = 3) -> np.ndarray:
    """The lowest eigenvector of R^T R, approximately (a few solves with the Cholesky factor)."""
    x = np.random.default_rng(12345).standard_normal(r.shape[0])
    for _ in range(steps):
        with np.errstate(all="ignore"):  # a nearly singular factor may overflow: keep the last x
            y = scipy.linalg.solve_triangular(r, x, trans="T", lower=False, check_finite=False)
            y = scipy.linalg.solve_triangular(r, y, lower=False, check_finite=False)
        top = float(np.max(np.abs(y)))
        if not (top > 0 and math.isfinite(top)):
            break  # any finite vector gives valid (if looser) Rayleigh enclosures
        x = y / top
    return x


@dataclass(frozen=True)
class RawEnds:
    """Rigorous bounds on the exact block's (unscaled) ends; infinite where not asked."""

    low: tuple[float, float] = (-math.inf, math.inf)
    second: tuple[float, float] = (-math.inf, math.inf)
    high: tuple[float, float] = (-math.inf, math.inf)


def _certify_below(b: np.ndarray, err: float, theta: float, spread: float, *,
                   negate: bool = False, rank_one: np.ndarray | None = None
                   ) -> tuple[float, np.ndarray] | None:
    """(certified lower bound of λ_min near the candidate θ, Cholesky factor), or None."""
    guess = 2 * gamma(b.shape[0] + 3) * max(spread, abs(theta), 1e-300)
    for _ in range(WIDEN_STEPS + 1):
        sigma = theta - guess
        got = _factor(b, sigma, negate, rank_one)
        if got is not None:
            return _down(sigma - up(got[0] + err) * (1 + 4 * U)), got[1]
        guess *= 32
    return None


def candidates(b: np.ndarray) -> np.ndarray:
    """All eigenvalues of the float block (LAPACK, ascending): where to test, nothing certified.

    >>> candidates(np.diag([3.0, 1.0])).tolist()
    [1.0, 3.0]
    """
    return scipy.linalg.eigvalsh(b, check_finite=False, driver="evd")


def certify_ends(b: np.ndarray, err: float, *, top: bool, bottom: bool, second: bool,
                 theta: np.ndarray | None = None) -> RawEnds | None:
    """Certified ends of every exact block within ``err`` of the float block B̃; None if refused.

    ``top``: λ_max; ``bottom``: λ_1; ``second`` (with bottom): also λ_2.  ``theta`` are the
    candidates (default :func:`candidates`); a wrong candidate makes the certificate fail
    (None) or the interval wider, never wrong.

    >>> e = certify_ends(np.diag(np.arange(1.0, 51.0)), 0.0, top=True, bottom=True, second=True)
    >>> [round(x, 9) for x in e.low + e.second + e.high]
    [1.0, 1.0, 2.0, 2.0, 50.0, 50.0]
    """
    d = b.shape[0]
    th = candidates(b) if theta is None else np.sort(np.asarray(theta, dtype=float))
    spread = float(th[-1] - th[0])
    out: dict[str, tuple[float, float]] = {}
    if top:
        got = _certify_below(b, err, -float(th[-1]), spread, negate=True)
        if got is None:
            return None
        lo, _ = rayleigh_enclosure(b, _inverse_iteration(got[1]))
        out["high"] = (_down(lo - err), -got[0])
    if bottom:
        got = _certify_below(b, err, float(th[0]), spread)
        if got is None:
            return None
        x1 = _inverse_iteration(got[1])
        _, hi = rayleigh_enclosure(b, x1)
        out["low"] = (got[0], _upx(hi + err))
        if second and d > 1:
            th1, th2 = float(th[0]), float(th[1])
            # push the bottom direction past λ_2 (and past λ_3 when λ_1 ≈ λ_2, so that the
            # second direction is well defined); any s >= 0 keeps the bound valid
            th3 = float(th[min(2, d - 1)])
            s = max(2.0 * (th2 - th1), th3 - th1, 0.0) + 4 * gamma(d + 3) * spread + 1e-300
            y = x1 * (math.sqrt(s) / math.sqrt(float(np.dot(x1, x1))))
            got2 = _certify_below(b, err, th2, spread, rank_one=y)
            if got2 is None:
                return None
            x2 = _inverse_iteration(got2[1])
            x2 = x2 - x1 * (float(np.dot(x1, x2)) / float(np.dot(x1, x1)))  # better conditioned G
            out["second"] = (got2[0], _upx(second_upper(b, x1, x2) + err))
    return RawEnds(**out)


@dataclass(frozen=True)
class Ends:
    """Rigorous bounds on one block's ends, in the product's units (scaled, degree-widened).

    ``low``, ``second`` and ``high`` enclose λ_1, λ_2 and λ_max of the block (infinite where
    not computed); ``route`` is "dense" or "cholesky".
    """

    low: tuple[float, float]
    second: tuple[float, float]
    high: tuple[float, float]
    route: str


def _scaled(pair: tuple[float, float], scale: float, g: float, widen: float) -> tuple[float, float]:
    out = []
    for x, side in zip(pair, (-1, 1), strict=True):
        if not math.isfinite(x):
            out.append(x)
            continue
        v = x * scale
        rad = abs(v) * (2 * g + 4 * U) + widen
        out.append(_down(v - rad) if side < 0 else _upx(v + rad))
    return out[0], out[1]


def block_ends(parts: list[tuple[PreparedOperand, int]], shapes: tuple[Partition, ...], a: float,
               b: float, *, top: bool, bottom: bool, second: bool, widen: float = 0.0,
               large_from: int = LARGE_FROM) -> Ends:
    """Certified ends of one Laplacian block (see the module docstring), scaled to the product.

    ``widen`` (a bound on the degree perturbation) is added to every radius.  Blocks under
    ``large_from`` and blocks whose certificate is refused take the dense solve; blocks
    under the tier's ``SMALL_BLOCK`` run with one BLAS thread, as in the full tier.
    """
    dim = _block_dim(parts, shapes)
    if dim < SMALL_BLOCK:
        with single_blas_thread():
            return _block_ends(parts, shapes, a, b, dim, top, bottom, second, widen, large_from)
    return _block_ends(parts, shapes, a, b, dim, top, bottom, second, widen, large_from)


def _block_ends(parts, shapes, a, b, dim, top, bottom, second, widen, large_from) -> Ends:
    if dim >= large_from:
        bt, err, scale = block_matrix(parts, shapes, a, b, "laplacian")
        if not scale > 0:
            raise SymmetryError("symmetry tier: the extremes route needs a positive eigenvalue scale "
                                "b^(K-1); ask for the full spectrum instead")
        raw = certify_ends(bt, err, top=top, bottom=bottom, second=second)
        del bt
        if raw is not None:
            g = scale_gamma(parts) if scale != 1.0 else 0.0
            return Ends(_scaled(raw.low, scale, g, widen), _scaled(raw.second, scale, g, widen),
                        _scaled(raw.high, scale, g, widen), "cholesky")
    blk = compute_block(parts, shapes, a, b, "laplacian", 1)
    v, r = blk.values, blk.radius + widen

    def pair(i: int) -> tuple[float, float]:
        return _down(float(v[i] - r[i])), _upx(float(v[i] + r[i]))

    inf = (-math.inf, math.inf)
    return Ends(pair(0), pair(1) if v.size > 1 else inf, pair(v.size - 1), "dense")


def _block_dim(parts: list[tuple[PreparedOperand, int]], shapes: tuple[Partition, ...]) -> int:
    return math.prod(weyl_dimension(lam, op.n) for (op, _), lam in zip(parts, shapes, strict=True))


def _monomial_range(bases: list[arb], lam: Partition) -> arb:
    """A ball holding prod_i x_i^(w_i) for every weight w of the GL_n-module λ and x_i in the balls.

    The weights are the integer vectors majorized by λ (dominance order; Kostka numbers),
    so a log-linear function peaks at a permutation of λ: for bases >= 0 the rearrangement
    inequality gives [prod asc(x)^λ, prod desc(x)^λ]; otherwise |.| <= prod desc(|x|)^λ.
    """
    n = len(bases)
    parts = list(lam) + [0] * (n - len(lam))
    if all(x >= 0 or x.is_zero() for x in bases):
        los = sorted((x.lower() for x in bases), key=float)
        his = sorted((x.upper() for x in bases), key=float, reverse=True)
        lo = math.prod((arb(x) ** p for x, p in zip(los, parts, strict=True)), start=arb(1))
        hi = math.prod((arb(x) ** p for x, p in zip(his, parts, strict=True)), start=arb(1))
        return arb(lo.lower()).union(arb(hi.upper()))
    mags = sorted((abs(x).upper() for x in bases), key=float, reverse=True)
    top = math.prod((arb(x) ** p for x, p in zip(mags, parts, strict=True)), start=arb(1))
    return arb(0, top.upper())


def _sum_range(bases: list[arb], lam: Partition) -> arb:
    """A ball holding sum_i w_i x_i over the weights of λ (the additive rule; rearrangement)."""
    parts = list(lam) + [0] * (len(bases) - len(lam))
    los = sorted((x.lower() for x in bases), key=float)
    his = sorted((x.upper() for x in bases), key=float, reverse=True)
    lo = sum((arb(x) * p for x, p in zip(los, parts, strict=True)), arb(0))
    hi = sum((arb(x) * p for x, p in zip(his, parts, strict=True)), arb(0))
    return arb(lo.lower()).union(arb(hi.upper()))


class WeylRanges:
    """Cheap rigorous enclosures of every eigenvalue of each Laplacian block, before building any.

    A block is Dd - C with Dd the diagonal of degree monomials and C orthogonally similar to
    the diagonal of eigenvalue monomials (the module docstring of
    :mod:`~powerspec.tiers.symmetry.block`), so by Weyl's inequalities its spectrum lies in
    [min Dd - max C, max Dd - min C]; the ranges of both monomials over the block's weights
    follow from its partitions alone (:func:`_monomial_range`).  Eigenvalues of the factor
    operands are taken with their certified radius φ.

    >>> from powerspec.tiers.symmetry.reduction import Factor
    >>> from powerspec.tiers.symmetry.block import prepare
    >>> p3 = np.array([[0., 1, 0], [1, 0, 1], [0, 1, 0]])
    >>> ops = prepare([Factor(p3, p3.sum(axis=1))], 0, 1, "laplacian")
    >>> lo, hi = WeylRanges(ops, 0, 1).block([(0, 2)], ((2,),))
    >>> lo <= 0.0 and hi >= 5.0          # numpy on the 9-vertex build: this block holds 0 and 5
    True
    """

    def __init__(self, ops: list[PreparedOperand], a: float, b: float, widen: float = 0.0):
        self.ops, self.a, self.b, self.widen = ops, float(a), float(b), widen
        self.additive = self.a == 1.0 and self.b == 0.0
        self._cache: dict = {}
        with working():
            self._deg = []
            self._eig = []
            for op in ops:
                if self.additive or self.a == 0.0:
                    self._deg.append([arb(float(x)) for x in op.degrees])
                else:
                    self._deg.append([1 + arb(self.b) * arb(float(x)) for x in op.degrees])
                phi = op.spectrum.phi
                self._eig.append([arb(float(x)) + arb(0, phi) for x in op.spectrum.values])

    def _part(self, fi: int, lam: Partition) -> tuple[arb, arb]:
        key = (fi, lam)
        if key not in self._cache:
            rng = _sum_range if self.additive else _monomial_range
            self._cache[key] = (rng(self._deg[fi], lam), rng(self._eig[fi], lam))
        return self._cache[key]

    def block(self, parts: list[tuple[int, int]], shapes: tuple[Partition, ...]) -> tuple[float, float]:
        """(lo, hi) around every eigenvalue of the block (factor index, copies) x partitions."""
        with working():
            dd = cc = None
            for (fi, _), lam in zip(parts, shapes, strict=True):
                d_r, c_r = self._part(fi, lam)
                if dd is None:
                    dd, cc = d_r, c_r
                elif self.additive:
                    dd, cc = dd + d_r, cc + c_r
                else:
                    dd, cc = dd * d_r, cc * c_r
            total = sum(k for _, k in parts)
            if self.additive:
                ev = dd - cc
            elif self.a == 1.0:
                ev = (dd - cc) / arb(self.b)
            else:
                ev = arb(self.b) ** (total - 1) * (dd - cc)
            if not ev.is_finite():
                return -math.inf, math.inf
            return _down(float(ev.lower()) - self.widen), _upx(float(ev.upper()) + self.widen)
