"""Product laws: direct / strong / mix(1, b) / mix(0, b) powers in s-space, with rigorous bounds.

S is a product of independent factor values.  :class:`ProductLaw` holds the
exact point mass of S = 0, the exact sign shares and, given S != 0, laws for
log|S| -- a log-normal law of |S|.  When signs and magnitudes of one
many-copy operand depend on each other, the law is a mixture over the
number j of its negative factors: :class:`BinomialWindow`.

The window is the expensive part (about 19 binomial standard deviations of
j, ~280,000 values of j at k = 10^9).  It is *grouped into blocks* once, at
construction, and each evaluation then costs one normal CDF per block:

* each j has its normal law N(mu_j, var_j) (mu_j, var_j affine in j) and its
  Berry--Esseen bound eps_j, so P(log|S| <= u | j) lies in
  [Phi(z_j) - eps_j, Phi(z_j) + eps_j] (z_j at u -+ the rounding slack);
* in a block with weights w_j (binomial times the exact sign parity),
  sum w_j Phi(z_j) = W Phi(z(jbar)) + R with jbar the w-weighted mean and
  |R| <= 1/2 max|f''| sum w_j (j - jbar)^2 (second-order Taylor: the linear
  term cancels exactly), f(j) = Phi(z(j)) -- max|f''| is bounded in closed
  form from |m1| / s_min and |v1| / s_min^2 of the block, with the global
  maxima of |t|^n phi(t);
* the per-j clipping to [0, 1] becomes per-block clipping to [0, W]
  (Jensen: sum max(a_j, 0) >= max(sum a_j, 0)), so the bounds are the old
  per-j bounds up to sum R (budgeted at 1e-3 of the smallest eps, and
  at least 1e-13) -- rigour kept.

j with var_j = 0 (exact points) are summed exactly by sorted prefix sums.
The binomial weights come from Loader's saddle-point formula
(C. Loader, "Fast and accurate computation of binomial probabilities",
2000 -- relative error of a few ulps, from memory), and the mass outside the
window from the Chernoff bound exp(-k D(a || r)) of the binomial tail.

>>> from powerspec.tiers.laws import SumLaw
>>> L = SumLaw([([0.0, math.log(2)], [0.5, 0.5], 10, 0.0)])
>>> law = ProductLaw(0.0, [(0.5, 0.5, L)])
>>> est, lo, hi = law.evaluate(np.array([1, -1]), np.array([0.0, 20.0]))
>>> np.round(est, 4).tolist(), bool(lo[0] <= 0.5 + 0.5 / 1024 <= hi[0] < 0.50049)
([0.5005, 0.0], True)
"""

from __future__ import annotations

import math

import mpmath
import numpy as np
from scipy import special

from powerspec.errors import InputError
from powerspec.tiers.laws import BERRY_ESSEEN_IID, BERRY_ESSEEN_NONIID, REL_SLACK, TINY, ncdf

# sup_t |t|^n phi(t) for n = 0, 1, 2, 3 (phi(0), phi(1), 2 phi(sqrt 2), 3^1.5 phi(sqrt 3)),
# rounded up; the second-derivative bound combines them as K = A a^2 + B a c + C c^2
_PHI0 = 0.3989422805
_K_A, _K_B, _K_C = 0.2420, 1.3850, 1.1885

EPS = float(np.finfo(float).eps)

MAX_BLOCKS = 40_000
"""Most blocks of one window (the quadrature budget is relaxed beyond)."""


def iid_vec(rho: float, var: float, n: np.ndarray) -> np.ndarray:
    """Berry--Esseen i.i.d. bound over an array of counts n (0 where n = 0 or var = 0).

    >>> iid_vec(1.0, 1.0, np.array([0.0, 100.0])).tolist()
    [0.0, 0.04748]
    """
    if var <= 0:
        return np.zeros_like(n, dtype=float)
    with np.errstate(divide="ignore"):
        return np.where(n > 0, np.minimum(1.0, BERRY_ESSEEN_IID * rho / (var**1.5 * np.sqrt(
            np.maximum(n, 1)))), 0.0)


# ------------------------------------------------------------ binomial
_SFE = [0.0] + [math.lgamma(n + 1.0) - (n + 0.5) * math.log(n) + n - 0.5 * math.log(2 * math.pi)
                for n in range(1, 16)]


def _stirlerr(n: np.ndarray) -> np.ndarray:
    """log(n!) - log(sqrt(2 pi n) (n/e)^n) (Stirling's error), n >= 1."""
    n = np.asarray(n, dtype=float)
    small = n <= 15
    nn = np.maximum(n, 1.0)
    inv = 1.0 / nn
    i2 = inv * inv
    big = inv * (1 / 12 - i2 * (1 / 360 - i2 * (1 / 1260 - i2 * (1 / 1680 - i2 / 1188))))
    table = np.asarray(_SFE)[np.clip(n, 0, 15).astype(int)]
    return np.where(small, table, big)


def _bd0(x: np.ndarray, m: float) -> np.ndarray:
    """Deviance term x log(x/m) + m - x, accurate near x = m (Loader's series)."""
    x = np.asarray(x, dtype=float)
    d = x - m
    with np.errstate(divide="ignore", invalid="ignore"):
        v = d / (x + m)
        s = d * v
        ej = 2 * x * v
        v2 = v * v
        series = s.copy()
        for j in range(1, 12):  # |v| < 0.1: v^22 < 1e-22
            ej = ej * v2
            series = series + ej / (2 * j + 1)
        direct = x * np.log(np.where(x > 0, x / m, 1.0)) + m - x
    return np.where(np.abs(d) < 0.1 * (x + m), series, direct)


def _log_pmf(j: np.ndarray, k: int, r: float) -> np.ndarray:
    """log of Binomial(k, r) probabilities at integer j in [0, k] (Loader's saddle-point form)."""
    j = np.asarray(j, dtype=float)
    q = 1.0 - r
    inner = (j > 0) & (j < k)
    ji = np.where(inner, j, 1.0)
    with np.errstate(all="ignore"):
        lc = (_stirlerr(np.array([float(k)]))[0] - _stirlerr(ji) - _stirlerr(k - ji)
              - _bd0(ji, k * r) - _bd0(k - ji, k * q))
        val = lc + 0.5 * np.log(k / (2 * math.pi * ji * (k - ji)))
        edge0 = k * math.log1p(-r) if r < 1 else -math.inf
        edgek = k * math.log(r) if r > 0 else -math.inf
    return np.where(j == 0, edge0, np.where(j == k, edgek, val))


def binom_pmf(j: np.ndarray, k: int, r: float) -> np.ndarray:
    """Binomial(k, r) probabilities at integer j in [0, k] (Loader's algorithm; relative error ~1e-14).

    >>> exact = math.comb(10, 3) * 0.3**3 * 0.7**7
    >>> bool(abs(binom_pmf(np.array([3]), 10, 0.3)[0] / exact - 1) < 1e-13)
    True
    """
    with np.errstate(under="ignore"):
        return np.exp(_log_pmf(j, k, r))


ANCHOR = 256
"""Steps of the ratio recurrence between two of Loader's exact anchors."""


def binom_range(k: int, r: float, jlo: int, jhi: int) -> tuple[np.ndarray, float]:
    """(Binomial(k, r) probabilities at jlo..jhi, a rigorous bound on their relative error).

    Loader's formula at every ANCHOR-th j and the exact ratio recurrence
    b_(j+1) / b_j = (k - j) r / ((j + 1)(1 - r)) between anchors (one log per
    j).  The bound adds the rounding of at most ANCHOR ratio logs and of their
    running sum, and 1e-13 for Loader's own error (relative, from memory).

    >>> b, rel = binom_range(10, 0.3, 0, 10)
    >>> bool(np.max(np.abs(b / binom_pmf(np.arange(11), 10, 0.3) - 1)) < rel < 1e-11)
    True
    """
    n = jhi - jlo + 1
    j = np.arange(jlo, jhi + 1, dtype=float)
    lr = np.log((k - j[:-1]) / (j[:-1] + 1)) + math.log(r / (1 - r))
    c = np.concatenate([[0.0], np.cumsum(lr)])
    t = np.arange(n)
    anchor = (t // ANCHOR) * ANCHOR
    la = _log_pmf(j[::ANCHOR], k, r)
    with np.errstate(under="ignore"):
        b = np.exp(la[t // ANCHOR] + (c - c[anchor]))
    top_c = float(np.max(np.abs(c), initial=0.0))
    top_r = float(np.max(np.abs(lr), initial=0.0))
    err_log = ANCHOR * EPS * (2 * top_c + 4 * top_r + 8) + 1e-13
    return b, math.expm1(err_log) * 1.01


def _window(k: int, r: float, budget: float) -> tuple[int, int, float]:
    """(jlo, jhi, tail mass outside) of a window of Binomial(k, r) whose outside mass <= ~budget."""
    sd = math.sqrt(k * r * (1 - r))
    half = sd * math.sqrt(2 * math.log(2 / budget)) + 20
    for _ in range(60):
        jlo = int(max(0, math.floor(k * r - half)))
        jhi = int(min(k, math.ceil(k * r + half)))
        extra = (binom_tail_bound(k, r, jlo - 1, False) if jlo > 0 else 0.0) + \
            (binom_tail_bound(k, r, jhi + 1, True) if jhi < k else 0.0)
        if extra <= budget or (jlo == 0 and jhi == k):
            return jlo, jhi, extra
        half *= 1.1
    return jlo, jhi, extra


def binom_tail_bound(k: int, r: float, a: float, upper: bool) -> float:
    """Rigorous Chernoff bound on P(J >= a) (upper) or P(J <= a) for J ~ Binomial(k, r).

    exp(-k D(a/k || r)) with D the Kullback--Leibler divergence; 1 when a is on the mean's side.

    >>> binom_tail_bound(100, 0.5, 50.0, True), binom_tail_bound(100, 0.5, 90.0, True) < 2e-16
    (1.0, True)
    """
    x = a / k
    if (upper and x <= r) or (not upper and x >= r):
        return 1.0
    if x <= 0:
        return math.exp(k * math.log1p(-r))
    if x >= 1:
        return math.exp(k * math.log(r))
    d = x * math.log(x / r) + (1 - x) * math.log((1 - x) / (1 - r))
    return min(1.0, math.exp(-k * d * (1 - 1e-12)) * (1 + 1e-12))


# -------------------------------------------------------------- window
class BinomialWindow:
    """Mixture over j ~ Binomial(k, r) of normal laws of log|S|, grouped into blocks.

    ``pos`` / ``neg``: (mean, variance, E|X - mean|^3) of log|s| of the
    dependent operand given s > 0 / s < 0; ``rest``: a
    :class:`~powerspec.tiers.laws.SumLaw` of the independent operands' log|s|
    (or None) whose sign balance is ``q_rest``; ``slack`` bounds the rounding
    of log|S| itself.  The window holds all j but a binomial tail mass
    ``extra`` (Chernoff bound, budgeted at 1e-3 of the Berry--Esseen bound at
    the mean, and 1e-13 for exact points); that mass is added to upper bounds.
    """

    def __init__(self, k: int, r: float, pos, neg, rest=None, q_rest: float = 1.0,
                 slack: float = 0.0):
        (mp, vp, rp), (mn, vn, rn) = pos, neg
        self.k, self.r, self.q = k, r, q_rest
        self.rp, self.vp, self.rn, self.vn = rp, vp, rn, vn
        self.r_rho = rest.rho if rest is not None else 0.0
        self.r_eps = rest.eps if rest is not None else 0.0
        r_slack = rest.slack if rest is not None else 0.0
        self.mu0 = k * mp + (rest.mu if rest is not None else 0.0)
        self.m1 = mn - mp
        self.v0 = k * vp + (rest.variance if rest is not None else 0.0)
        self.v1 = vn - vp
        smooth = self.v0 > 0 or self.v1 != 0  # otherwise every j is an exact point
        # the window: smallest Berry-Esseen bound at the mean sets the tail budget
        eps_c = float(self._eps(np.array([k * r]))[0]) if smooth else 0.0
        budget = max(1e-13, 1e-3 * eps_c) if eps_c > 0 else 1e-13
        self.jlo, self.jhi, self.extra = _window(k, r, budget)
        j = np.arange(self.jlo, self.jhi + 1, dtype=float)
        b, self.weight_rel = binom_range(k, r, self.jlo, self.jhi)
        # exact sign parity: S > 0 given j iff j and the rest's sign agree (balance q_rest)
        even = 0 if self.jlo % 2 == 0 else 1
        wp = b * ((1 - q_rest) / 2)
        wp[even::2] = b[even::2] * ((1 + q_rest) / 2)
        wn = b - wp
        # rounding of mu_j = mu0 + m1 j, including that of the means mp, mn taken k times
        top_mu = max(abs(self.mu0), abs(self.mu0 + self.m1 * self.jhi))
        self.slack = slack + r_slack + 64 * EPS * (1 + top_mu + k * (abs(mp) + abs(mn)))
        self.wp_total, self.wn_total = float(wp.sum()), float(wn.sum())
        # law parameters of log|S| (binomial moments of j: k r and k r (1 - r))
        self.mean_log = self.mu0 + self.m1 * k * r
        self.var_log = max(0.0, self.v0 + self.v1 * k * r) + self.m1**2 * k * r * (1 - r)
        v_lo = self.v0 + self.v1 * self.jlo
        v_hi = self.v0 + self.v1 * self.jhi
        if min(v_lo, v_hi) > 0:
            point = None  # every j of the window has a normal law
        else:
            point = (self.v0 + self.v1 * j) <= 0
        self.nblocks, self.quad_err, self._blocks = 0, 0.0, None
        self.eps_max = 0.0
        self.pt_mu = np.zeros(0)
        self.pt_cp = self.pt_cn = np.zeros(1)
        if point is not None and point.any():
            # exact points (var_j = 0): mu_j is monotone in j, so sorting is a reversal at most
            mu = self.mu0 + self.m1 * j[point]
            o = slice(None) if self.m1 >= 0 else slice(None, None, -1)
            self.pt_mu = mu[o]
            self.pt_cp = np.concatenate([[0.0], np.cumsum(wp[point][o])])
            self.pt_cn = np.concatenate([[0.0], np.cumsum(wn[point][o])])
        if point is None or not point.all():
            sel = slice(None) if point is None else ~point
            budget_q = max(1e-13, 3e-3 * eps_c)
            self._build_blocks(j[sel], b[sel], wp[sel], wn[sel], budget_q)

    def _eps(self, j: np.ndarray) -> np.ndarray:
        """Berry--Esseen bound of log|S| given j negative factors (0 where the variance is 0)."""
        k = self.k
        var = self.v0 + self.v1 * j
        rho = (k - j) * self.rp + j * self.rn + self.r_rho
        iid = iid_vec(self.rp, self.vp, k - j) + iid_vec(self.rn, self.vn, j) + self.r_eps
        with np.errstate(divide="ignore", invalid="ignore"):
            non = np.where(var > 0, BERRY_ESSEEN_NONIID * rho / np.where(var > 0, var, 1.0) ** 1.5, 0.0)
        return np.where(var > 0, np.minimum(np.minimum(iid, non), 1.0), 0.0)

    def _eps_max(self, j1: np.ndarray, j2: np.ndarray) -> np.ndarray:
        """An upper bound of eps_j over each block [j1, j2].

        The i.i.d. part is a sum of convex functions of j (maximal at an end);
        rho_j / var_j^1.5 is unimodal in j (its derivative changes sign once),
        so ends and the stationary point bound it; min of maxima bounds the max of min.
        """
        k = self.k
        iid = np.maximum(iid_vec(self.rp, self.vp, k - j1) + iid_vec(self.rn, self.vn, j1),
                         iid_vec(self.rp, self.vp, k - j2) + iid_vec(self.rn, self.vn, j2)) + self.r_eps
        a, bb = k * self.rp + self.r_rho, self.rn - self.rp
        c, d = self.v0, self.v1

        def non(j):
            var = c + d * j
            with np.errstate(divide="ignore", invalid="ignore"):
                return np.where(var > 0, BERRY_ESSEEN_NONIID * (a + bb * j) / np.where(
                    var > 0, var, 1.0) ** 1.5, 1.0)

        with np.errstate(divide="ignore", invalid="ignore"):
            js = (bb * c - 1.5 * a * d) / (0.5 * bb * d) if bb * d != 0 else np.nan
        nm = np.maximum(non(j1), non(j2))
        if np.isfinite(js):
            inside = (js > j1) & (js < j2)
            nm = np.where(inside, np.maximum(nm, non(np.full(j1.shape, js))), nm)
        return np.minimum(np.minimum(iid, nm), 1.0) * (1 + 1e-12)

    def _starts(self, j: np.ndarray, beta: float) -> np.ndarray:
        """Block starts: sizes about beta * (b_j / b_max)^(-1/3) for the normal shape of b.

        The block count up to j is the integral of 1 / size, an error function of
        j; its integer crossings are found by ndtri, one per block (no per-j work).
        """
        sd = math.sqrt(self.k * self.r * (1 - self.r))
        s3 = math.sqrt(3.0) * sd
        scale = s3 * math.sqrt(2 * math.pi) / beta
        p0, p1 = (special.ndtr((float(x) - self.k * self.r) / s3) for x in (j[0], j[-1]))
        n = int(math.floor((p1 - p0) * scale))
        if n < 1:
            return np.zeros(1, dtype=np.int64)
        cut = self.k * self.r + s3 * special.ndtri(np.clip(p0 + np.arange(1, n + 1) / scale, 0, 1))
        pos = np.searchsorted(j, np.ceil(cut))
        return np.unique(np.concatenate([[0], pos[(pos > 0) & (pos < j.size)]]))

    def _build_blocks(self, j, b, wp, wn, budget):
        beta = 8.0
        for _ in range(5):
            starts = self._starts(j, beta)
            blk = self._block_sums(j, wp, wn, starts)
            r_tot = float(np.sum(blk["Rp"] + blk["Rn"]))
            if r_tot <= budget or starts.size >= MAX_BLOCKS or beta <= 1.0:
                break
            beta = max(1.0, beta * math.sqrt(budget / r_tot) * 0.9)
        self._blocks = blk
        self.nblocks = int(starts.size)
        self.quad_err = r_tot

    def _block_sums(self, j, wp, wn, starts):
        ends = np.r_[starts[1:], j.size] - 1
        j1, j2 = j[starts], j[ends]
        d = j - np.repeat(j1, np.diff(np.r_[starts, j.size]))  # local offsets (exact integers)
        out = {}
        s_min2 = np.minimum(self.v0 + self.v1 * j1, self.v0 + self.v1 * j2) * (1 - 1e-12)
        s_min = np.sqrt(s_min2)
        a = abs(self.m1) / s_min
        c = abs(self.v1) / (2 * s_min2)
        kk = _K_A * a * a + _K_B * a * c + _K_C * c * c
        eps = self._eps_max(j1, j2)
        self.eps_max = float(np.max(eps, initial=0.0))
        for name, w in (("p", wp), ("n", wn)):
            wd = w * d
            s0 = np.add.reduceat(w, starts)
            s1 = np.add.reduceat(wd, starts)
            s2 = np.add.reduceat(wd * d, starts)
            with np.errstate(divide="ignore", invalid="ignore"):
                dbar = np.where(s0 > 0, s1 / np.where(s0 > 0, s0, 1.0), 0.0)
            v = np.maximum(s2 - dbar * s1, 0.0) + 1e-12 * s2  # sum w (j - jbar)^2, rounded up
            jbar = j1 + dbar
            rq = 0.5 * kk * v
            out["W" + name] = s0
            out["mu" + name] = self.mu0 + self.m1 * jbar
            out["sd" + name] = np.sqrt(np.maximum(self.v0 + self.v1 * jbar, s_min2))
            out["R" + name] = rq
            extra = s0 * (eps + self.slack * _PHI0 / s_min + self.weight_rel)
            out["D" + name] = (rq + extra) * (1 + 1e-12)
            out["L" + name] = s0 * _PHI0 / s_min * (1 + 1e-12)  # Lipschitz constant in u
        return out

    def density(self, u, side: int) -> np.ndarray:
        """Sum over blocks of W phi((u - mu) / sd) / sd (the smooth part's density in u)."""
        u = np.asarray(u, dtype=float)
        if self._blocks is None:
            return np.zeros(u.shape)
        nm = "p" if side > 0 else "n"
        w, m, s = self._blocks["W" + nm], self._blocks["mu" + nm], self._blocks["sd" + nm]
        z = (u.reshape(-1, 1) - m) / s
        return ((w / s) * np.exp(-0.5 * z * z)).sum(axis=1).reshape(u.shape) * _PHI0

    def g(self, u, side: int, strict: bool, pad=0.0):
        """(estimate, lower, upper) of sum_j w_j P(log|S| <= u | j), w = wp (side > 0) or wn.

        ``strict`` asks for P(log|S| < u | j) (it matters for exact points only);
        ``pad`` widens the bounds for an uncertain point u +- pad.
        """
        u = np.asarray(u, dtype=float)
        pad = np.broadcast_to(np.asarray(pad, dtype=float), u.shape)
        nm = "p" if side > 0 else "n"
        est = np.zeros(u.shape)
        lo = np.zeros(u.shape)
        hi = np.zeros(u.shape)
        if self.pt_mu.size:
            cp = self.pt_cp if side > 0 else self.pt_cn
            sl = self.slack + pad
            e_idx = np.searchsorted(self.pt_mu, u, side="left" if strict else "right")
            lo_idx = np.searchsorted(self.pt_mu, u - sl, side="left" if strict else "right")
            hi_idx = np.searchsorted(self.pt_mu, u + sl, side="left" if strict else "right")
            wr = self.weight_rel
            est, lo, hi = est + cp[e_idx], lo + cp[lo_idx] * (1 - wr), hi + cp[hi_idx] * (1 + wr)
        if self._blocks is not None:
            blk = self._blocks
            w, m, s, dd = blk["W" + nm], blk["mu" + nm], blk["sd" + nm], blk["D" + nm]
            lip = blk["L" + nm]
            flat = u.ravel()
            fpad = pad.ravel()
            chunk = max(1, 2_000_000 // max(1, w.size))
            e_out, l_out, h_out = (np.empty(flat.size) for _ in range(3))
            for i in range(0, flat.size, chunk):
                uu = flat[i:i + chunk, None]
                eb = w * ncdf((uu - m) / s)
                dp = dd + fpad[i:i + chunk, None] * lip
                e_out[i:i + chunk] = eb.sum(axis=1)
                l_out[i:i + chunk] = np.maximum(eb - dp, 0.0).sum(axis=1)
                h_out[i:i + chunk] = np.minimum(eb + dp, w).sum(axis=1)
            est = est + e_out.reshape(u.shape)
            lo = lo + l_out.reshape(u.shape)
            hi = hi + h_out.reshape(u.shape)
        return est, lo, hi


# ------------------------------------------------------------- product law
class ProductLaw:
    """Law of S = product of independent factor values (s-space of a multiplicative rule).

    S = 0 with the exact probability ``zero``.  Given S != 0, sign and log|S|
    are described by ``components``, a list of (w_pos, w_neg, L) with L a
    :class:`~powerspec.tiers.laws.SumLaw` for log|S| (P(S > 0, log|S| <= u |
    S != 0) = sum w_pos L(u), likewise for S < 0) and, when one operand's
    signs depend on its magnitudes, a :class:`BinomialWindow` ``window``.
    ``extra`` is probability left out of the window (dropped from lower
    bounds, added to upper bounds).
    """

    def __init__(self, zero: float, components=(), window: BinomialWindow | None = None,
                 extra: float = 0.0, log_nonzero: float | None = None):
        self.zero = float(zero)
        self.components = list(components)
        self.window = window
        self.extra = float(extra) + (window.extra if window is not None else 0.0)
        # P(S != 0) from its logarithm when given: 1 - zero loses it when zero rounds to 1, and a
        # non-zero mass below the double range must still keep upper bounds above 0
        self.nonzero = math.exp(log_nonzero) if log_nonzero is not None else 1.0 - self.zero
        self.mass_possible = (log_nonzero is None and self.nonzero > 0) or (
            log_nonzero is not None and log_nonzero > -math.inf)
        # exact sign shares given S != 0: 1/2 (1 -+ Q) with Q the product of the sign balances
        if window is not None:
            qd = 1 - 2 * window.r  # sign balance of the dependent operand
            big_q = 0.0
            if qd != 0:
                sgn = -1.0 if (qd < 0 and window.k % 2) else 1.0
                big_q = window.q * sgn * math.exp(window.k * math.log(abs(qd)))
            self.neg_total, self.pos_total = (1 - big_q) / 2, (1 + big_q) / 2
        else:
            self.neg_total = sum(c[1] for c in self.components)
            self.pos_total = sum(c[0] for c in self.components)

    def _g(self, u, side: int, strict: bool, pad):
        est = np.zeros(u.shape)
        lo = np.zeros(u.shape)
        hi = np.zeros(u.shape)
        for wp, wn, law in self.components:
            w = wp if side > 0 else wn
            if w == 0:
                continue
            e, bl, bh = law.evaluate(u, strict, pad=pad)
            est, lo, hi = est + w * e, lo + w * bl, hi + w * bh
        if self.window is not None:
            e, bl, bh = self.window.g(u, side, strict, pad)
            est, lo, hi = est + e, lo + bl, hi + bh
        return est, lo, hi

    def evaluate(self, sign, u, strict: bool = False, pad=0.0):
        """(estimate, lower, upper) arrays of P(S <= t) (P(S < t) if strict), t = sign * exp(u).

        ``sign`` is -1, 0 or 1 per point (0 means t = 0, u is then ignored).
        At t = 0 the answer is exact: the zero mass and the sign shares are.
        ``pad`` (in u) widens the bounds for an uncertain point.
        """
        sign, u, pad = np.broadcast_arrays(np.asarray(sign, dtype=float), np.asarray(u, dtype=float),
                                           np.asarray(pad, dtype=float))
        nz = self.nonzero
        neg_mass = nz * self.neg_total
        ex = self.extra  # probability outside the window: in upper bounds of G only
        est = np.zeros(sign.shape)
        lo = np.zeros(sign.shape)
        hi = np.zeros(sign.shape)
        with np.errstate(all="ignore"):
            pos = sign > 0
            if pos.any():
                e, bl, bh = self._g(u[pos], 1, strict, pad[pos])
                base = self.zero + neg_mass
                est[pos], lo[pos], hi[pos] = base + nz * e, base + nz * bl, base + nz * (bh + ex)
            neg = sign < 0
            if neg.any():
                # S <= t < 0  <=>  log|S| >= u: the complement of G(u-) within the negative mass
                e, bl, bh = self._g(u[neg], -1, not strict, pad[neg])
                est[neg] = nz * (self.neg_total - e)
                lo[neg] = nz * (self.neg_total - bh - ex)
                hi[neg] = nz * (self.neg_total - bl)
            hi = np.minimum(1.0, hi * (1 + REL_SLACK))
            floor = TINY if self.mass_possible else 0.0  # the non-zero part may underflow
            hi = np.where(hi > 0, np.maximum(hi, TINY), floor)
            lo = np.maximum(0.0, lo * (1 - REL_SLACK) - REL_SLACK * 1e-3)
            zer = sign == 0
            base = neg_mass + (0.0 if strict else self.zero)
            lo = np.where(zer, base * (1 - 4 * EPS), lo)
            hi = np.where(zer, min(1.0, max(base * (1 + 4 * EPS), floor if self.neg_total > 0
                                            else 0.0)), hi)
            est = np.where(zer, base, est)
            est = np.clip(np.nan_to_num(est, nan=0.5), lo, hi)
        return est, lo, hi

    def cdf(self, x, strict: bool = False):
        """Estimate of P(S <= x), elementwise."""
        x = np.asarray(x, dtype=float)
        with np.errstate(divide="ignore"):
            u = np.log(np.abs(x))
        e = self.evaluate(np.sign(x), np.where(x == 0, 0.0, u), strict)[0]
        return float(e) if e.ndim == 0 else e

    def pdf(self, x):
        raise InputError("the product law has a point mass at zero and no density; use cdf")

    def log_density(self, sign, u):
        """d/du P(S >< 0, log|S| <= u) for S > 0 (sign > 0) or S < 0: the estimate's density in u."""
        sign, u = np.broadcast_arrays(np.asarray(sign, dtype=float), np.asarray(u, dtype=float))
        out = np.zeros(u.shape)
        for side in (1, -1):
            sel = sign == side
            if not sel.any():
                continue
            d = np.zeros(int(sel.sum()))
            for wp, wn, law in self.components:
                d += (wp if side > 0 else wn) * law.pdf(u[sel])
            if self.window is not None:
                d += self.window.density(u[sel], side)
            out[sel] = self.nonzero * d
        return out

    def log_params(self) -> tuple[float, float]:
        """(mean, variance) of log|S| given S != 0 under the law (mixture of its normal laws)."""
        parts = [(wp + wn, law.mu, law.variance) for wp, wn, law in self.components]
        if self.window is not None:
            w = self.window
            parts.append((w.wp_total + w.wn_total, w.mean_log, w.var_log))
        tot = sum(p[0] for p in parts) or 1.0
        m = sum(p[0] * p[1] for p in parts) / tot
        v = sum(p[0] * (p[2] + (p[1] - m) ** 2) for p in parts) / tot
        return m, v

    def cumulants(self):
        """Mean and variance of S under the log-normal approximation (mpmath numbers)."""
        m, v = self.log_params()
        q = (self.pos_total - self.neg_total) / max(self.pos_total + self.neg_total, 1e-300)
        m1 = self.nonzero * q * mpmath.exp(mpmath.mpf(m) + mpmath.mpf(v) / 2)
        m2 = self.nonzero * mpmath.exp(2 * mpmath.mpf(m) + 2 * mpmath.mpf(v))
        return (m1, m2 - m1**2)


__all__ = ["ProductLaw", "BinomialWindow", "binom_pmf", "binom_tail_bound", "iid_vec"]
