"""Certified brackets of the eigenvalue distribution of a power: one FFT, a pointwise power, one inverse.

The factor eigenvalues (in s-space, see :mod:`powerspec.algebra.kinds`) are
put on a grid of spacing h: value v of block i becomes g(v) = c_i + h *
round((v - c_i) / h), c_i the block's smallest value.  The sum S of the k
copies is then S = S' + Delta, with S' = sum c_i k_i + h J on the grid and
Delta = sum of the rounding moves delta(X) = v - g(v) of the k summands.

* **Rounding moves** are i.i.d. per block with an exactly known mean m_i
  (exact rationals) and range: by Bernstein's inequality
  P(Delta - M >= t) <= exp(-t^2 / (2 (V + b t / 3))), M = sum k_i m_i,
  V = sum k_i var_i, b = max |delta - m_i| (Bernstein 1924; any probability
  text), so with probability 1 - eta per side |Delta - M| <= tau ~ h sqrt(k).
  The certified bracket is therefore
  ``P(S' <= x - M - tau - R) - eta <= P(S <= x) <= P(S' <= x - M + tau + R) + eta``
  with R = sum k_i (largest radius of block i) for the values' own error.
  (The deterministic bound tau = sum k_i b_i, eta = 0, is used when it is
  smaller -- e.g. 0 for lattice factors, whose grid is exact.)  Because tau
  grows like sqrt(k) and not like k, the grid needed for a given ``tol``
  grows like sqrt(k) only.
* **One transform**: the distribution of J is the k-fold convolution power of
  each block's grid vector a_i.  We take one forward rfft of a_i at the final
  length N (a power of two), the pointwise power X^k (modulus and phase
  separately), the product over blocks, one irfft and a cumulative sum.
* **Aliasing**: the transform computes J modulo N.  N covers a window of J
  around its mean holding all but theta of the mass on each side (Bernstein
  again, for J), so every cumulative sum is off by at most 2 theta (mass
  below the window plus mass folded into it).  When the whole range of J fits
  in N there is no aliasing (theta = 0).
* **FFT rounding**: Higham, *Accuracy and Stability of Numerical
  Algorithms*, 2nd ed., Thm. 24.2 (from memory): for the radix-2 FFT the
  computed y^ = fl(F x) has ||y^ - y||_2 <= log2(N) eta / (1 - log2(N) eta)
  ||y||_2 with eta = mu + gamma_4 (sqrt 2 + mu), mu the twiddle error.  We take
  eta = 8 eps and a safety factor :data:`FFT_SAFETY` for the mixed-radix
  pocketfft behind numpy.fft (an assumption).  The forward error E propagates
  through the k-th power as k E (1 + E)^(k-1); the power's own rounding is
  bounded per frequency by |X|^k (4 k eps (pi + |log|X||) + 4 eps); the
  inverse adds the same relative bound; 2-norms of frequency vectors become
  1-norm bounds on the probability vector through ||IDFT v||_1 <= ||v||_2
  (Cauchy--Schwarz with Parseval); the cumulative sum adds N eps.
* **Multiplicative rules** (direct; strong via s = 1 + lambda; mix(1, b);
  mix(0, b)): the grid holds log|s| of the non-zero values, the sign parity
  is carried exactly as a second, signed vector (even/odd parts are
  (P + M)/2 and (P - M)/2 of the powers of P = E + O and M = E - O), and the
  exact zero mass 1 - prod (1 - p0_i)^k_i is kept apart.

Grids over ``grid_limit`` points are refused with
:class:`~powerspec.errors.SizeLimitError` before any work.

>>> b = AddBracket([([-1.0, 1.0], [0.5, 0.5], 10, 0.0)], h=2.0)   # the 10-cube
>>> est, lo, hi = b.evaluate(0.0)
>>> round(float(est), 12), bool(lo <= 638 / 1024 <= hi), bool(hi - lo < 1e-9)
(0.623046875, True, True)
"""

from __future__ import annotations

import math
from fractions import Fraction

import numpy as np

from powerspec.errors import SizeLimitError
from powerspec.tiers.laws import lattice_span

GRID_LIMIT = 1 << 23
"""Default largest grid (points) of one bracket; a few hundred MiB of FFT work space at most."""

FFT_SAFETY = 4.0
"""Safety factor on Higham's radix-2 FFT error bound for the mixed-radix pocketfft (module doc)."""

ALIAS_MASS = 1e-13
"""Largest probability left outside the FFT window on each side (aliasing budget)."""

EPS = float(np.finfo(float).eps)


def _frac(p) -> Fraction:
    return p if isinstance(p, Fraction) else Fraction(float(p))


def _bernstein(v: float, b: float, eta: float) -> float:
    """t with exp(-t^2 / (2 (v + b t / 3))) <= eta (Bernstein's inequality), rounded up."""
    if eta <= 0:
        return math.inf
    ell = math.log(1.0 / eta)
    t = ell * b / 3 + math.sqrt((ell * b / 3) ** 2 + 2 * ell * v)
    return t * (1 + 1e-12) + 1e-300


class _Block:
    """One operand on the grid: indices, exact rounding moves and their statistics."""

    def __init__(self, values, probs, copies: int, radius, h: float, fh: Fraction):
        v = np.asarray(values, dtype=float)
        fp = [_frac(p) for p in probs]
        tot = sum(fp)
        fp = [p / tot for p in fp]
        self.k = int(copies)
        self.c = float(np.min(v))
        self.idx = np.rint((v - self.c) / h).astype(np.int64)
        fc = Fraction(self.c)
        moves = [Fraction(float(x)) - fc - fh * int(i) for x, i in zip(v, self.idx, strict=True)]
        self.mean_move = sum(p * d for p, d in zip(fp, moves, strict=True))
        dev = [float(d - self.mean_move) for d in moves]
        self.b = max(abs(d) for d in dev) * (1 + 1e-12)
        self.var = sum(float(p) * d * d for p, d in zip(fp, dev, strict=True)) * (1 + 1e-12)
        self.radius = float(np.max(np.asarray(radius, dtype=float), initial=0.0))
        self.p = np.array([float(p) for p in fp])
        self.width = int(self.idx.max())
        self.mean_idx = float(self.p @ self.idx)
        self.var_idx = float(self.p @ (self.idx - self.mean_idx) ** 2)
        self.b_idx = float(max(self.mean_idx, self.width - self.mean_idx))
        self.n = v.size


def spacing(blocks, tol: float) -> float:
    """Grid spacing for the wanted bracket width ``tol``: a common lattice span when there is one.

    ``blocks`` is a list of (values, probs, copies).  Off lattices the spacing
    makes the Bernstein shift tau cost about tol/4 of CDF at the normal
    density's peak: h = tol sigma sqrt(2 pi) / (4 sqrt(2 L K / 12)), L = log(8 / tol),
    K the total copies (rounding moves about uniform on [-h/2, h/2]).

    >>> spacing([([-1.0, 1.0], [0.5, 0.5], 10)], 1e-3)
    2.0
    """
    spans, var, copies = [], 0.0, 0.0
    for v, p, k in blocks:
        v = np.asarray(v, dtype=float)
        p = np.asarray([float(x) for x in p], dtype=float)
        p = p / p.sum()
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
    ell = math.log(8.0 / tol)
    return tol * math.sqrt(2 * math.pi * var) / (4 * math.sqrt(2 * ell * copies / 12))


choose_spacing = spacing  # the name used by earlier callers


class _Plan:
    """Grid, shift and FFT length of one bracket, computed before any transform."""

    def __init__(self, blocks: list[_Block], h: float, eta: float, grid_limit: int):
        self.h = h
        self.eta = eta
        self.origin = sum((b.k * Fraction(b.c) for b in blocks), Fraction(0))
        self.mean_shift = sum((b.k * b.mean_move for b in blocks), Fraction(0))
        # (shift, tail) pairs, each a valid bracket: the deterministic shift, and Bernstein at
        # eta and at eta / 1000; evaluations intersect them (the best depends on the density at x)
        tau_det = sum(b.k * b.b for b in blocks) * (1 + 1e-12)
        v, bmax = sum(b.k * b.var for b in blocks), max((b.b for b in blocks), default=0.0)
        self.options = [(tau_det, 0.0)]
        for e in (eta, eta * 1e-3):
            t = _bernstein(v, bmax, e)
            if t < tau_det:
                self.options.append((t, e))
        self.tau, self.eta = self.options[1] if len(self.options) > 1 else self.options[0]
        self.radius = sum(b.k * b.radius for b in blocks) * (1 + 1e-12)
        jmax = sum(b.k * b.width for b in blocks)
        mean_j = sum(b.k * b.mean_idx for b in blocks)
        t_j = _bernstein(sum(b.k * b.var_idx for b in blocks), max(b.b_idx for b in blocks),
                         ALIAS_MASS)
        need_full = jmax + 1
        need_win = 2 * int(math.ceil(t_j)) + 3
        base = max(b.width + 1 for b in blocks)
        if need_full <= max(need_win, base):
            self.n = 1 << max(1, (need_full - 1).bit_length())
            self.offset, self.alias = 0, 0.0
        else:
            self.n = 1 << max(1, (max(need_win, base) - 1).bit_length())
            self.offset = int(min(max(0, round(mean_j) - self.n // 2), jmax - self.n + 1))
            self.alias = 2 * ALIAS_MASS
        if self.n > grid_limit:
            raise SizeLimitError(
                f"the certified bracket needs a grid of {self.n} points, over the limit of "
                f"{grid_limit}; ask for a wider tolerance (--tol) or use --method law")

    def predicted_error(self, blocks: list[_Block]) -> float:
        """A prediction (not a bound) of the certified error ``err``, computed without transforming."""
        n = self.n
        e_tot = 0.0
        sig_j = math.sqrt(max(sum(b.k * b.var_idx for b in blocks), 1.0))
        peak = math.sqrt(n / (2 * math.sqrt(math.pi) * sig_j) + 1)  # ~ ||X^k||_2 over the half spectrum
        for b in blocks:
            a = np.bincount(b.idx, weights=b.p, minlength=b.width + 1)
            e_fwd = _forward_error(a, n) + math.sqrt(n) * (b.n + 1) * EPS
            e_tot += b.k * e_fwd * math.exp(min(700.0, (b.k - 1) * math.log1p(e_fwd)))
            e_tot += 4 * b.k * EPS * (math.pi + 1) * peak
        return math.sqrt(2) * e_tot + _c_fft(n) * math.sqrt(2) * peak + self.alias + n * EPS

    def cost(self, vectors: int) -> float:
        """Rough cost in seconds (measured on a 2-core machine: 1 ms + 1.5e-8 N log2 N per vector)."""
        return 1e-3 + 1.5e-8 * vectors * self.n * max(1, self.n.bit_length())


DIRECT_ATOMS = 12
"""Bases with at most this many grid points are transformed by direct summation (smaller error)."""


def _c_fft(n: int) -> float:
    log2n = max(1, n.bit_length() - 1)
    return FFT_SAFETY * log2n * 8 * EPS / (1 - log2n * 8 * EPS)


def _forward(a: np.ndarray, n: int):
    """(rfft of a at length n, bound on the 2-norm of its rounding error over the half spectrum).

    Few non-zero entries: direct sums sum_g a_g exp(-2 pi i w g / n) with the phase w g
    reduced modulo n in exact integers, per-frequency error <= (m + 3) eps sum |a_g|.
    Otherwise the FFT with Higham's bound c(n) ||F a||_2 = c(n) sqrt(n) ||a||_2.
    """
    nzi = np.flatnonzero(a)
    if nzi.size <= DIRECT_ATOMS:
        w = np.arange(n // 2 + 1, dtype=np.int64)
        x = np.zeros(n // 2 + 1, dtype=complex)
        term = np.empty(n // 2 + 1, dtype=complex)
        pow2 = n & (n - 1) == 0  # the grids are powers of two: w g mod n is a mask
        for g in nzi.tolist():
            if g == 0:
                # exp(0) = 1 exactly: the same sum as the general branch, without cos and sin
                x.real += a[0]
                continue
            ang = (2 * np.pi / n) * (((w * g) & (n - 1)) if pow2 else ((w * g) % n))
            # cos and sin written in place (the same roundings as cos(ang) - i sin(ang))
            np.cos(ang, out=term.real)
            np.sin(ang, out=term.imag)
            np.negative(term.imag, out=term.imag)
            term *= a[g]
            x += term
        e = (nzi.size + 3) * EPS * float(np.abs(a).sum()) * math.sqrt(n // 2 + 1)
        return x, e
    return np.fft.rfft(a, n), _c_fft(n) * math.sqrt(n) * float(np.linalg.norm(a))


def _forward_error(a: np.ndarray, n: int) -> float:
    """The error bound of :func:`_forward` without transforming."""
    m = int(np.count_nonzero(a))
    if m <= DIRECT_ATOMS:
        return (m + 3) * EPS * float(np.abs(a).sum()) * math.sqrt(n // 2 + 1)
    return _c_fft(n) * math.sqrt(n) * float(np.linalg.norm(a))


def _power_spectrum(blocks: list[_Block], n: int, signs=None):
    """(product over blocks of rfft(a_i, n)^k_i, 2-norm error bound of it (half spectrum)).

    ``signs`` (per block, or None) turns a_i into the signed vector sum p_t sign_t e_idx_t.
    """
    c_fft = _c_fft(n)
    total = None
    err = 0.0  # 2-norm of the accumulated error of the half spectrum
    for i, b in enumerate(blocks):
        w = b.p if signs is None else b.p * signs[i]
        a = np.bincount(b.idx, weights=w, minlength=b.width + 1).astype(float)
        # entries are sums of rounded probabilities: 1-norm error <= (n_atoms + 1) eps
        e_in = (b.n + 1) * EPS * 1.01
        x, e_fwd = _forward(a, n)
        e_fwd += math.sqrt(n) * e_in
        with np.errstate(divide="ignore", under="ignore", over="ignore", invalid="ignore"):
            mod = np.abs(x)
            lmod = np.log(mod)
            phase = np.remainder(b.k * np.angle(x), 2 * np.pi)
            mag = np.exp(b.k * lmod)
            # mag * exp(i phase) with cos and sin written in place: the same roundings as the
            # complex exponential and product, without their complex temporaries
            y = np.empty(x.shape, dtype=complex)
            np.cos(phase, out=y.real)
            np.sin(phase, out=y.imag)
            y.real *= mag
            y.imag *= mag
        y = np.where(mod > 0, y, 0.0)
        lm = np.where(mod > 0, lmod, 0.0)
        # the power's own rounding, per frequency, then the forward error amplified by k
        own = np.abs(y) * (4 * b.k * EPS * (math.pi + np.abs(lm)) + 8 * EPS)
        amp = b.k * e_fwd * math.exp((b.k - 1) * math.log1p(e_fwd))
        e_blk = float(np.linalg.norm(own)) + amp
        if total is None:
            total, err = y, e_blk
        else:
            # |exact partial products| <= 1; complex products round by at most 4 eps
            err = err * (1 + e_blk) + e_blk + 4 * EPS * float(np.linalg.norm(total * y))
            total = total * y
    return total, err, c_fft


def _inverse(spec, err: float, c_fft: float, n: int, offset: int):
    """(probability vector on the window, 1-norm error bound) from a half spectrum and its error."""
    p = np.fft.irfft(spec, n)
    if offset:
        p = np.roll(p, -(offset % n))
    # ||IDFT v||_1 <= sqrt(n) ||IDFT v||_2 = ||v_full||_2 <= sqrt(2) ||v_half||_2
    e = math.sqrt(2) * err + c_fft * math.sqrt(2) * float(np.linalg.norm(spec))
    return p, e


class AddBracket:
    """Certified bracket of P(S <= x) for S a sum of independent copies (Cartesian rule).

    ``blocks``: list of (values, probs, copies, radius) -- probs may be exact
    Fractions, radius a float or per-value array bounding the values' error;
    ``h``: grid spacing; ``eta``: Bernstein tail budget per side (default tol/8
    of the width the spacing was chosen for, see :func:`spacing`).
    """

    def __init__(self, blocks, h: float, grid_limit: int = GRID_LIMIT, eta: float = 1e-4):
        self.h = float(h)
        fh = Fraction(self.h)
        self.blocks = [_Block(v, p, k, r, self.h, fh) for v, p, k, r in blocks]
        self.plan = plan = _Plan(self.blocks, self.h, eta, grid_limit)
        self.origin, self.mean_shift = plan.origin, plan.mean_shift
        self.tau, self.eta, self.radius = plan.tau, plan.eta, plan.radius
        self.points = plan.n
        spec, err, c_fft = _power_spectrum(self.blocks, plan.n)
        pmf, e1 = _inverse(spec, err, c_fft, plan.n, plan.offset)
        self.cum = np.cumsum(pmf)
        self.err = (e1 + plan.alias) * (1 + 1e-9) + plan.n * EPS * (1 + e1) * 1.01
        # the largest certified shift (the deterministic one) besides the exact mean move
        self.shift = plan.options[0][0] + self.radius
        self._fh = fh
        try:
            self._base = float(self.origin + self.mean_shift)
        except OverflowError as exc:  # an exact rational past the double range
            raise SizeLimitError("the bracket's grid origin lies beyond the double range; scale "
                                 "the factors down or ask for another tier") from exc

    def _index(self, y: np.ndarray, strict: bool) -> np.ndarray:
        """Grid indices j with S' = origin + h (offset + j) <= y (< y if strict), exact at ties."""
        o = float(self.origin)
        r = (y - o) / self.h - self.plan.offset
        j = np.ceil(r) - 1 if strict else np.floor(r)
        # the float r is within a few ulps of (|y| + |origin|) / h of the exact ratio
        tol = 8 * EPS * ((np.abs(y) + abs(o)) / self.h + np.abs(r) + self.plan.offset + 1)
        near = np.abs(r - np.rint(r)) <= tol
        for i in np.flatnonzero(near & np.isfinite(r)):
            ry = (Fraction(float(y.flat[i])) - self.origin) / self._fh - self.plan.offset
            j.flat[i] = (math.ceil(ry) - 1) if strict else math.floor(ry)
        return j

    def _cum(self, y: np.ndarray, strict: bool) -> np.ndarray:
        j = self._index(y, strict)
        with np.errstate(invalid="ignore"):
            jj = np.clip(np.nan_to_num(j, nan=-1.0, posinf=self.cum.size, neginf=-1.0), -1,
                         self.cum.size - 1).astype(np.int64)
        return np.where(jj < 0, 0.0, self.cum[np.maximum(jj, 0)])

    def evaluate(self, t, strict: bool = False, pad=0.0):
        """(estimate, lower, upper) of P(S <= t) (P(S < t) if strict), elementwise.

        ``pad`` (>= 0) widens the bounds for an uncertain point t +- pad.
        """
        t = np.asarray(t, dtype=float)
        pad = np.asarray(pad, dtype=float)
        m = float(self.mean_shift)
        est = self._cum(t - m, strict)
        lo = np.full(t.shape, -np.inf)
        hi = np.full(t.shape, np.inf)
        for tau, eta in self.plan.options:
            shift = tau + self.radius + pad
            if not np.any(shift) and self.mean_shift == 0:
                lo_y, hi_y = t, t  # exact grid: ties are decided exactly in _index
            else:
                wid = shift + 4 * EPS * (np.abs(t) + abs(self._base) + self.h * self.points)
                lo_y, hi_y = t - m - wid, t - m + wid
            lo = np.maximum(lo, self._cum(lo_y, strict) - self.err - eta)
            hi = np.minimum(hi, self._cum(hi_y, strict) + self.err + eta)
        lo, hi = np.clip(lo, 0.0, 1.0), np.clip(hi, 0.0, 1.0)
        return np.clip(est, lo, hi), lo, hi

    def support(self) -> tuple[float, float]:
        """Range of s covered by the grid (for quantile search)."""
        a = self._base + self.h * self.plan.offset - self.shift
        return a - self.h, a + self.h * (self.points + 1) + 2 * self.shift


class MulBracket:
    """Certified bracket for S a product of independent copies (multiplicative rules).

    ``blocks``: list of (values, probs, copies, rel_radius) in s-space; values
    equal to 0 are the exact zero mass; ``h`` is the spacing in log|s|;
    ``rel_radius`` bounds the relative error of the non-zero values.
    """

    def __init__(self, blocks, h: float, grid_limit: int = GRID_LIMIT, eta: float = 1e-4):
        self.h = float(h)
        fh = Fraction(self.h)
        log_nonzero, log_q, q_sign = 0.0, 0.0, 1
        prepared, signs = [], []
        for v, p, k, rel in blocks:
            v = np.asarray(v, dtype=float)
            fp = [_frac(x) for x in p]
            tot = sum(fp)
            fp = [x / tot for x in fp]
            nz = v != 0
            p0 = float(sum(x for x, z in zip(fp, nz, strict=True) if not z))
            if p0 >= 1.0:
                log_nonzero = -math.inf
                continue
            log_nonzero += k * math.log1p(-p0)
            # sign balance r = (p+ - p-) / (1 - p0); exactly +-1 for one-signed blocks
            pos = float(sum(x for x, z in zip(fp, v > 0, strict=True) if z))
            neg = float(sum(x for x, z in zip(fp, v < 0, strict=True) if z))
            r = 1.0 if neg == 0 else -1.0 if pos == 0 else (pos - neg) / (pos + neg)
            if r == 0:
                log_q = -math.inf
            elif abs(r) != 1.0:
                log_q += k * math.log(abs(r))
            q_sign *= -1 if (r < 0 and k % 2) else 1
            lv = np.log(np.abs(v[nz]))
            # log|s| carries the values' relative error and the rounding of the log itself
            rad = math.log1p(float(rel)) * 1.0001 + 4 * EPS * (1 + np.abs(lv))
            pn = [x for x, z in zip(fp, nz, strict=True) if z]
            prepared.append((lv, pn, k, rad))
            signs.append(np.where(v[nz] > 0, 1.0, -1.0))
        self.nonzero = math.exp(log_nonzero) if log_nonzero > -math.inf else 0.0
        self.zero = -math.expm1(log_nonzero) if log_nonzero > -math.inf else 1.0
        q = q_sign * math.exp(log_q) if log_q > -math.inf else 0.0  # normalized balance
        self.pos = self.nonzero * (1 + q) / 2
        self.neg = self.nonzero * (1 - q) / 2
        self.empty = log_nonzero == -math.inf  # exactly all zero
        # a non-zero mass below the double range: upper bounds of non-zero parts stay above 0
        self.floor = 1e-300 if (not self.empty and self.nonzero == 0.0) else 0.0
        self.points = 0
        self.err = 0.0
        self.shift = 0.0
        if self.empty:
            return
        self.blocks = [_Block(lv, pn, k, rad, self.h, fh) for lv, pn, k, rad in prepared]
        self.plan = plan = _Plan(self.blocks, self.h, eta, grid_limit)
        self.points = plan.n
        self.tau, self.eta, self.radius = plan.tau, plan.eta, plan.radius
        sp, ep, cf = _power_spectrum(self.blocks, plan.n)
        sm, em, _ = _power_spectrum(self.blocks, plan.n, signs)
        pa, e_p = _inverse(sp, ep, cf, plan.n, plan.offset)
        ma, e_m = _inverse(sm, em, cf, plan.n, plan.offset)
        # the blocks hold probabilities given s != 0: scale by the exact non-zero mass
        nzm = self.nonzero
        self.even = np.cumsum((pa + ma) * (nzm / 2))
        self.odd = np.cumsum((pa - ma) * (nzm / 2))
        self.err = nzm * ((e_p + e_m) / 2 + plan.alias) * (1 + 1e-9) + plan.n * EPS * 4
        self.origin = float(plan.origin + plan.mean_shift)
        pad = 8 * EPS * (abs(self.origin) + self.h * (plan.offset + plan.n))
        self.shifts = [((tau + self.radius) * (1 + 8 * EPS) + pad, eta) for tau, eta in plan.options]
        self.shift = self.shifts[0][0]

    def _cum(self, arr, u: np.ndarray) -> np.ndarray:
        with np.errstate(invalid="ignore", over="ignore"):
            j = np.floor((u - self.origin) / self.h) - self.plan.offset
            jj = np.clip(np.nan_to_num(j, nan=-1.0, posinf=arr.size, neginf=-1.0), -1,
                         arr.size - 1).astype(np.int64)
        return np.where(jj < 0, 0.0, arr[np.maximum(jj, 0)])

    def evaluate(self, sign, u, strict: bool = False, pad=0.0):
        """(estimate, lower, upper) of P(S <= t) (P(S < t) if strict), t = sign * exp(u), elementwise.

        ``pad`` (>= 0, in u) widens the bounds for an uncertain point.
        """
        sign, u, pad = np.broadcast_arrays(np.asarray(sign, dtype=float), np.asarray(u, dtype=float),
                                           np.asarray(pad, dtype=float))
        if self.empty:
            v = ((sign > 0) | ((sign == 0) & (not strict))).astype(float)
            return v, v, v
        est = np.zeros(sign.shape)
        lo = np.zeros(sign.shape)
        hi = np.zeros(sign.shape)
        zer = sign == 0
        base0 = self.neg + (0.0 if strict else self.zero)
        est[zer] = lo[zer] = hi[zer] = base0
        tiny = self.h * 1e-9
        pos = sign > 0
        if pos.any():
            uu, pp = u[pos], pad[pos]
            base = self.zero + self.neg
            lo[pos] = np.max([base + self._cum(self.even, uu - sh - pp) - self.err - eta
                              for sh, eta in self.shifts], axis=0)
            hi[pos] = np.min([base + self._cum(self.even, uu + sh + pp) + self.err + eta
                              for sh, eta in self.shifts], axis=0)
            est[pos] = base + self._cum(self.even, uu - tiny if strict else uu + tiny)
        neg = sign < 0
        if neg.any():
            # S <= t < 0  <=>  log|S| >= u: negative mass minus P(neg, log|S| < u)
            uu, pp = u[neg], pad[neg]
            lo[neg] = np.max([self.neg - self._cum(self.odd, uu + sh + pp) - self.err - eta
                              for sh, eta in self.shifts], axis=0)
            hi[neg] = np.min([self.neg - self._cum(self.odd, uu - sh - pp) + self.err + eta
                              for sh, eta in self.shifts], axis=0)
            est[neg] = self.neg - self._cum(self.odd, uu + tiny if strict else uu - tiny)
        lo, hi = np.clip(lo, 0.0, 1.0), np.clip(hi, 0.0, 1.0)
        hi = np.maximum(hi, self.floor)  # always a valid upper bound; > 0 when mass may underflow
        return np.clip(est, lo, hi), lo, hi

    def log_range(self) -> tuple[float, float]:
        """Range of log|s| covered by the grid (for quantile search)."""
        if self.empty:
            return 0.0, 0.0
        a = self.origin + self.h * self.plan.offset - self.shift
        return a, a + self.h * self.points + 2 * self.shift


def plan_cost(blocks, h: float, multiplicative: bool, grid_limit: int = GRID_LIMIT,
              eta: float = 1e-4) -> tuple[int, float, float]:
    """(grid points, estimated seconds, predicted CDF width) of a bracket, without building it.

    ``blocks`` as for :class:`AddBracket` (values already logs of |s| for the
    multiplicative rule).  The width is a prediction for choosing tiers, not a
    bound: 2 (err + eta) plus the shift tau + R at the peak of a normal density.
    SizeLimitError if the grid is over the limit.
    """
    fh = Fraction(float(h))
    bl = [_Block(v, p, k, r, float(h), fh) for v, p, k, r in blocks]
    plan = _Plan(bl, float(h), eta, grid_limit)
    sd = float(h) * math.sqrt(max(sum(b.k * b.var_idx for b in bl), 1.0))
    shift = 2 * (plan.tau + plan.radius) / (sd * math.sqrt(2 * math.pi))
    width = 2 * (plan.predicted_error(bl) + plan.eta) + shift
    return plan.n, plan.cost(len(bl) * (2 if multiplicative else 1)), width


__all__ = ["AddBracket", "MulBracket", "spacing", "choose_spacing", "plan_cost", "GRID_LIMIT"]
