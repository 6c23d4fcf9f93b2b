"""Certified brackets of the eigenvalue distribution of a power, by grid convolution.

The factor eigenvalues (in s-space, see :mod:`powerspec.products`) are put
on a grid of spacing h: each value v of block i becomes c_i + h * round((v -
c_i) / h), c_i the block's smallest value, so it moves by at most d_i <= h/2
(d_i is the measured largest move, 0 when the values lie on the grid).  The
k-fold distribution of grid indices is computed by FFT convolution (binary
powering), exactly in exact arithmetic.  If the true sum S and the rounded
sum S' differ by at most D = sum_i k_i (d_i + atol_i), then

    P(S' <= x - D) <= P(S <= x) <= P(S' <= x + D),

which is the bracket -- on the *fraction* of eigenvalues (multiplicities on
the grid are probabilities, floats).

* **additive rules** (Cartesian): the grid holds the values themselves;
* **multiplicative rules** (direct; strong via s = 1 + lambda; mix(1, b) via
  s = 1 + b lambda; mix(0, b) via s = b lambda): the grid holds log|s| of the
  non-zero values, with the sign parity carried exactly as a second (signed)
  vector -- the even/odd parts are (P + M)/2 and (P - M)/2 of the powers of
  P = E + O and M = E - O -- and the exact zero mass 1 - prod (1 - p0_i)^k_i
  kept apart.  D then bounds the error in log|s|.

Floating-point error is accounted for explicitly.  Each FFT convolution of
vectors a, b of length N adds at most ``FFT_C * eps * log2(N) * ||a||_2 *
||b||_2`` to the 2-norm of the error (the FFT error bound of Higham, Accuracy
and Stability of Numerical Algorithms, 2nd ed., Thm. 24.2, with a safety
factor -- constant from memory), converted to the 1-norm by sqrt(N); errors
of the inputs propagate by ||a~ * b~ - a * b||_1 <= e_a ||b~||_1 + e_b.
Vectors are trimmed to a Hoeffding window after every step and the trimmed
true mass (at most TRIM_MASS) is added; the cumulative sum adds N * eps.  The
total error E widens the bracket on both sides.  Grids over ``grid_limit``
points are refused with :class:`~powerspec.errors.SizeLimitError` before any
work.

>>> b = AddBracket([([-1.0, 1.0], [0.5, 0.5], 10, 0.0)], h=2.0)   # the 10-cube
>>> est, lo, hi = b.evaluate(0.0)
>>> round(est, 12), lo <= 638 / 1024 <= hi, hi - lo < 1e-9
(0.623046875, True, True)
"""

from __future__ import annotations

import math
from fractions import Fraction

import numpy as np
from scipy import fft as sfft

from powerspec.errors import SizeLimitError
from powerspec.tiers.laws import lattice_span

GRID_LIMIT = 1 << 23
"""Default largest grid (points) of one bracket; about 1 GiB of FFT work space at most."""

FFT_C = 32.0
"""Safety constant in the FFT error bound (see module docstring)."""

TRIM_MASS = 1e-18
"""Largest true probability mass dropped by one Hoeffding trim."""

EPS = float(np.finfo(float).eps)


class _Grid:
    """A vector on grid indices offset..offset+len-1 with a 1-norm error bound."""

    __slots__ = ("a", "offset", "err")

    def __init__(self, a: np.ndarray, offset: int, err: float):
        self.a, self.offset, self.err = a, offset, err


def _conv(x: _Grid, y: _Grid) -> _Grid:
    n = x.a.size + y.a.size - 1
    if min(x.a.size, y.a.size) <= 32:
        c = np.convolve(x.a, y.a)  # direct sums: error <= n eps |a||b| (below the FFT bound)
        nfft = n
    else:
        nfft = sfft.next_fast_len(n, real=True)
        c = sfft.irfft(sfft.rfft(x.a, nfft) * sfft.rfft(y.a, nfft), nfft)[:n]
    fft_err = FFT_C * EPS * max(1.0, math.log2(nfft)) * float(np.linalg.norm(x.a) * np.linalg.norm(y.a))
    err = x.err * float(np.abs(y.a).sum()) + y.err + fft_err * math.sqrt(n)
    return _Grid(c, x.offset + y.offset, err)


def _hoeffding_half(m: float, width: int) -> float:
    """Half-width t with P(|J - E J| >= t) <= TRIM_MASS/2 for m summands in [0, width]."""
    return width * math.sqrt(m * math.log(4.0 / TRIM_MASS) / 2.0)


def _trim(g: _Grid, centre: float, half: float) -> _Grid:
    lo = max(0, int(math.floor(centre - half)) - g.offset)
    hi = min(g.a.size, int(math.ceil(centre + half)) - g.offset + 1)
    if lo == 0 and hi == g.a.size:
        return g
    return _Grid(g.a[lo:hi].copy(), g.offset + lo, g.err + TRIM_MASS)


def _power(base: _Grid, k: int, mean: float, width: int, plain: bool) -> _Grid:
    """k-fold convolution power by binary powering, trimmed to Hoeffding windows.

    ``mean`` is the mean grid index of one (normalized) summand; ``plain``
    vectors are the (sub-)probabilities, whose window also bounds the signed ones.
    """
    result: _Grid | None = None
    rk = 0
    sq, sk = base, 1
    while True:
        if k & 1:
            result = sq if result is None else _conv(result, sq)
            rk += sk
            result = _trim(result, rk * mean, _hoeffding_half(rk, width))
        k >>= 1
        if not k:
            return result
        sq = _conv(sq, sq)
        sk *= 2
        sq = _trim(sq, sk * mean, _hoeffding_half(sk, width))


def predicted_points(widths_copies) -> int:
    """Grid points of the final convolution for blocks of (index width, copies)."""
    total = 1
    for w, k in widths_copies:
        total += int(min(k * w, 2 * _hoeffding_half(k, w) + 2))
    return total


def _grid_of(values: np.ndarray, h: float):
    """(origin, integer indices, largest rounding move) of values on a grid of spacing h."""
    c = float(np.min(values))
    idx = np.rint((values - c) / h).astype(np.int64)
    move = float(np.max(np.abs(values - (c + idx * h)))) if values.size else 0.0
    return c, idx, move * (1 + 4 * EPS) + 4 * EPS * max(1.0, float(np.max(np.abs(values))))


def choose_spacing(blocks, tol: float) -> float:
    """Grid spacing for wanted bracket width ``tol``: a common lattice span when there is one.

    ``blocks`` is a list of (values, probs, copies); for non-lattice values
    h = tol sqrt(2 pi) sigma / (2 K), so that the shift 2D = K h costs about
    tol/2 of CDF at the largest normal density (sigma of the sum, K copies).
    """
    spans = []
    var = 0.0
    copies = 0.0
    for v, p, k in blocks:
        v = np.asarray(v, dtype=float)
        p = np.asarray(p, dtype=float) / np.sum(p)
        if np.ptp(v) == 0:
            continue
        spans.append(lattice_span(v))
        var += k * float(p @ (v - p @ v) ** 2)
        copies += k
    if not spans:
        return 1.0
    if all(s is not None for s in spans):
        common = lattice_span(np.array([0.0] + spans)) if len(spans) > 1 else spans[0]
        if common is not None and all(abs(s / common - round(s / common)) < 1e-9 for s in spans):
            return float(common)
    return tol * math.sqrt(2 * math.pi) * math.sqrt(var) / (2 * copies)


class AddBracket:
    """Certified bracket of P(S <= x) for S a sum of independent copies (Cartesian rule).

    ``blocks``: list of (values, probs, copies, atol); ``h``: grid spacing.
    """

    def __init__(self, blocks, h: float, grid_limit: int = GRID_LIMIT):
        self.h = float(h)
        # Grid positions origin + h J and the shift D are exact rationals (Fractions of
        # the floats involved), so ties at lattice points are decided exactly.
        fh = Fraction(self.h)
        origin = Fraction(0)
        shift = Fraction(0)
        prepared = []
        for v, p, k, atol in blocks:
            v = np.asarray(v, dtype=float)
            p = np.asarray(p, dtype=float) / np.sum(p)
            c = float(np.min(v))
            idx = np.rint((v - c) / self.h).astype(np.int64)
            fc = Fraction(c)
            move = max(abs(Fraction(float(x)) - fc - fh * int(i)) for x, i in zip(v, idx, strict=False))
            origin += k * fc
            shift += k * (move + Fraction(float(atol)))
            prepared.append((idx, p, k))
        self.origin, self.shift = origin, shift
        need = predicted_points([(int(i.max()), k) for i, _, k in prepared])
        if need > grid_limit:
            raise SizeLimitError(
                f"the certified bracket needs a grid of about {need} points, over the limit of "
                f"{grid_limit}; ask for a wider tolerance (--tol) or use --method law")
        total = _Grid(np.ones(1), 0, 0.0)
        for idx, p, k in prepared:
            a = np.bincount(idx, weights=p).astype(float)
            mean = float(p @ idx)
            total = _conv(total, _power(_Grid(a, 0, 0.0), k, mean, max(1, int(idx.max())), True))
        self.pmf = total
        self.cum = np.cumsum(total.a)
        self.err = total.err + total.a.size * EPS * 2
        self.points = total.a.size
        self._fh = fh

    def _cum_at(self, y: Fraction, strict: bool = False) -> float:
        r = (y - self.origin) / self._fh
        j = (math.ceil(r) - 1 if strict else math.floor(r)) - self.pmf.offset
        if j < 0:
            return 0.0
        if j >= self.cum.size:
            return float(self.cum[-1])
        return float(self.cum[j])

    def evaluate(self, t: float, strict: bool = False):
        """(estimate, lower, upper) of P(S <= t) (P(S < t) if strict)."""
        ft = Fraction(float(t))
        # S' <= t - D implies S <= t; S <= t implies S' <= t + D (same with < for strict).
        lo = self._cum_at(ft - self.shift, strict) - self.err
        hi = self._cum_at(ft + self.shift, strict) + self.err
        est = self._cum_at(ft, strict)
        lo, hi = max(0.0, lo), min(1.0, hi)
        return min(max(est, lo), hi), lo, hi

    def support(self) -> tuple[float, float]:
        """Range of s covered by the grid (for quantile search)."""
        a = float(self.origin - self.shift) + self.h * self.pmf.offset
        return a - self.h, a + self.h * (self.points + 1) + 2 * float(self.shift)


class MulBracket:
    """Certified bracket for S a product of independent copies (multiplicative rules).

    ``blocks``: list of (values, probs, copies, rel_atol) in s-space; values
    equal to 0 are the exact zero mass; ``h`` is the spacing in log|s|;
    ``rel_atol`` bounds the relative error of the non-zero values.
    """

    def __init__(self, blocks, h: float, grid_limit: int = GRID_LIMIT):
        self.h = float(h)
        self.origin = 0.0
        self.shift = 0.0
        log_nonzero = 0.0
        log_q = 0.0
        q_sign = 1
        prepared = []
        for v, p, k, rel in blocks:
            v = np.asarray(v, dtype=float)
            p = np.asarray(p, dtype=float) / np.sum(p)
            nz = v != 0
            p0 = float(p[~nz].sum())
            if p0 >= 1.0:
                log_nonzero = -math.inf
                continue
            log_nonzero += k * math.log1p(-p0)
            # sign balance r = (p+ - p-) / (1 - p0); exactly +-1 for one-signed blocks
            has_pos, has_neg = bool(np.any(v > 0)), bool(np.any(v < 0))
            r = 1.0 if not has_neg else -1.0 if not has_pos else float(
                (p[v > 0].sum() - p[v < 0].sum()) / (1 - p0))
            if r == 0:
                log_q = -math.inf
            elif abs(r) != 1.0:
                log_q += k * math.log(abs(r))
            q_sign *= -1 if (r < 0 and k % 2) else 1
            lv = np.log(np.abs(v[nz]))
            c, idx, move = _grid_of(lv, self.h)
            self.origin += k * c
            self.shift += k * (move + math.log1p(float(rel)) * 1.0001)
            sgn = np.where(v[nz] > 0, 1.0, -1.0)
            prepared.append((idx, p[nz], sgn, k))
        self.nonzero = math.exp(log_nonzero) if log_nonzero > -math.inf else 0.0
        self.zero = -math.expm1(log_nonzero) if log_nonzero > -math.inf else 1.0
        q = q_sign * math.exp(log_q) if log_q > -math.inf else 0.0  # normalized balance
        self.pos = self.nonzero * (1 + q) / 2
        self.neg = self.nonzero * (1 - q) / 2
        self.empty = self.nonzero == 0.0
        if self.empty:
            return
        need = predicted_points([(int(i.max()), k) for i, _, _, k in prepared])
        if need > grid_limit:
            raise SizeLimitError(
                f"the certified bracket needs a grid of about {need} points, over the limit of "
                f"{grid_limit}; ask for a wider tolerance (--tol) or use --method law")
        tot_p = _Grid(np.ones(1), 0, 0.0)
        tot_m = _Grid(np.ones(1), 0, 0.0)
        for idx, p, sgn, k in prepared:
            a = np.bincount(idx, weights=p).astype(float)
            m = np.bincount(idx, weights=p * sgn).astype(float)
            pn = p / p.sum()
            mean = float(pn @ idx)
            width = max(1, int(idx.max()))
            tot_p = _conv(tot_p, _power(_Grid(a, 0, 0.0), k, mean, width, True))
            tot_m = _conv(tot_m, _power(_Grid(m, 0, 0.0), k, mean, width, False))
        # Align the two vectors on one index range.
        off = min(tot_p.offset, tot_m.offset)
        end = max(tot_p.offset + tot_p.a.size, tot_m.offset + tot_m.a.size)
        pa = np.zeros(end - off)
        ma = np.zeros(end - off)
        pa[tot_p.offset - off: tot_p.offset - off + tot_p.a.size] = tot_p.a
        ma[tot_m.offset - off: tot_m.offset - off + tot_m.a.size] = tot_m.a
        self.offset = off
        self.even = np.cumsum((pa + ma) / 2)
        self.odd = np.cumsum((pa - ma) / 2)
        self.err = (tot_p.err + tot_m.err) / 2 + pa.size * EPS * 4
        self.points = pa.size
        self.shift = self.shift * (1 + 8 * EPS) + 8 * EPS * (abs(self.origin) + self.h * self.points)

    def _cum(self, arr, u: float) -> float:
        j = math.floor((u - self.origin) / self.h) - self.offset
        if j < 0:
            return 0.0
        return float(arr[min(j, arr.size - 1)])

    def evaluate(self, sign: int, u: float, strict: bool = False):
        """(estimate, lower, upper) of P(S <= t) (P(S < t) if strict), t = sign * exp(u)."""
        if sign == 0 or self.empty:
            if self.empty:
                v = 1.0 if (sign > 0 or (sign == 0 and not strict)) else 0.0
                return v, v, v
            base = self.neg + (0.0 if strict else self.zero)
            return base, base, base
        tiny = self.h * 1e-9
        if sign > 0:
            base = self.zero + self.neg
            lo = base + self._cum(self.even, u - self.shift) - self.err
            hi = base + self._cum(self.even, u + self.shift) + self.err
            est = base + self._cum(self.even, u - tiny if strict else u + tiny)
        else:
            # S <= t < 0  <=>  log|S| >= u: negative mass minus P(neg, log|S| < u).
            lo = self.neg - self._cum(self.odd, u + self.shift) - self.err
            hi = self.neg - self._cum(self.odd, u - self.shift) + self.err
            est = self.neg - self._cum(self.odd, u + tiny if strict else u - tiny)
        lo, hi = max(0.0, lo), min(1.0, hi)
        return min(max(est, lo), hi), lo, hi

    def log_range(self) -> tuple[float, float]:
        """Range of log|s| covered by the grid (for quantile search)."""
        if self.empty:
            return 0.0, 0.0
        a = self.origin + self.h * self.offset - self.shift
        return a, a + self.h * self.points + 2 * self.shift


__all__ = ["AddBracket", "MulBracket", "choose_spacing", "predicted_points", "GRID_LIMIT"]
