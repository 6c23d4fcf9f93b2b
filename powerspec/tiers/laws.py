"""Limit laws of eigenvalue distributions of high graph powers, with error bounds.

Each law is a frozen distribution in the manner of a probability text: a
small set of primitives (:meth:`Law.cdf`, :meth:`Law.pdf`,
:meth:`Law.cumulants`) from which :class:`Law` derives ``sf``, ``ppf`` (by
bracketing root-finding), ``interval``, ``mean``, ``var`` and ``std``.

* :class:`Normal`, :class:`Affine` (image under x -> shift + factor x),
  :class:`Mixture` (finite mixture) and :class:`BivariateNormal` (complex
  spectra of directed factors: the real part is its first marginal);
* :class:`SumLaw` -- the eigenvalue distribution of a Cartesian power (or of a
  sum of several powers): the exact distribution of a sum of independent
  copies of the factors' eigenvalue distributions.  Its :meth:`SumLaw.cdf` is
  the best available *estimate* (Edgeworth in the centre, Lugannani--Rice
  saddlepoint in the tails, continuity-corrected on lattices);
  :meth:`SumLaw.bounds` gives *rigorous* lower/upper bounds on the true CDF:
  the Berry--Esseen sup bound (C = 0.4748 for i.i.d. summands,
  I. Shevtsova 2011; C = 0.5600 for non-identical summands, Shevtsova 2010;
  the smaller of that and the sum of the per-block i.i.d. bounds is used),
  the exact support, and the Chernoff bound exp(K(theta) - theta x);
* :class:`ProductLaw` -- direct / strong / mix(1, b) / mix(0, b) powers in
  s-space: the exact point mass at zero, exact sign shares, and a normal law
  for log|s| (a log-normal law of |s|), mixed over the number of negative
  factors when signs and magnitudes are dependent.

All probabilities here are plain floats; bounds are widened by
:data:`REL_SLACK` for the rounding of the computation itself.

>>> law = Normal(0.0, 4.0)
>>> round(law.cdf(2.0), 6), round(law.ppf(0.5), 9), law.std()
(0.841345, 0.0, 2.0)
"""

from __future__ import annotations

import math
from abc import ABC, abstractmethod
from collections.abc import Sequence
from fractions import Fraction

import mpmath
import numpy as np
from scipy import optimize, special, stats

from powerspec.errors import InputError

BERRY_ESSEEN_IID = 0.4748
"""Berry--Esseen constant for i.i.d. summands (I. Shevtsova 2011, arXiv:1111.6554)."""

BERRY_ESSEEN_NONIID = 0.5600
"""Berry--Esseen constant for independent non-identical summands (I. Shevtsova 2010)."""

REL_SLACK = 1e-10
"""Relative widening of law-tier bounds for the floating-point rounding of their evaluation."""


def ncdf(z):
    """Standard normal CDF (vectorised)."""
    return special.ndtr(z)


def _keep(v):
    """A float, or the mpmath number itself when it is below the double range."""
    if isinstance(v, np.ndarray) and v.ndim == 0:
        v = v[()]
    if isinstance(v, mpmath.mpf) and float(v) == 0 and v != 0:
        return v
    return float(v)


def _out(a):
    """A Python float for 0-d results, the array otherwise."""
    a = np.asarray(a, dtype=float)
    return float(a) if a.ndim == 0 else a


def npdf(z):
    """Standard normal density (vectorised)."""
    return np.exp(-0.5 * np.square(z)) / math.sqrt(2 * math.pi)


class Law(ABC):
    """Base class: derive sf, ppf, interval, mean, var from cdf, pdf and cumulants."""

    @abstractmethod
    def cdf(self, x):
        """P(X <= x)."""

    @abstractmethod
    def pdf(self, x):
        """Density at x (of the continuous part)."""

    @abstractmethod
    def cumulants(self) -> tuple[float, ...]:
        """(kappa1, kappa2, ...) -- at least the mean and the variance."""

    def sf(self, x):
        """P(X > x) = 1 - cdf(x)."""
        return _out(1.0 - np.asarray(self.cdf(x), dtype=float))

    def mean(self) -> float:
        """kappa1."""
        return self.cumulants()[0]

    def var(self) -> float:
        """kappa2."""
        return self.cumulants()[1]

    def std(self) -> float:
        """sqrt(kappa2)."""
        return math.sqrt(self.var())

    def ppf(self, q: float) -> float:
        """Quantile inf{x : cdf(x) >= q}, by bracket expansion and Brent's method."""
        if not 0.0 < q < 1.0:
            raise ValueError("q must lie strictly between 0 and 1")
        mu = self.mean()
        sd = self.std() if self.var() > 0 else 1.0
        lo, hi = mu - sd, mu + sd
        for _ in range(200):
            if float(self.cdf(lo)) < q:
                break
            lo = mu - 2 * (mu - lo)
        for _ in range(200):
            if float(self.cdf(hi)) >= q:
                break
            hi = mu + 2 * (hi - mu)
        return float(optimize.brentq(lambda t: float(self.cdf(t)) - q, lo, hi, xtol=1e-13 * sd))

    def interval(self, confidence: float) -> tuple[float, float]:
        """Central interval holding the given probability."""
        return self.ppf((1 - confidence) / 2), self.ppf((1 + confidence) / 2)


class Normal(Law):
    """The normal law N(mu, var), var > 0.

    >>> round(Normal(1.0, 1.0).sf(1.0), 12)
    0.5
    """

    def __init__(self, mu: float, var: float):
        if not var > 0:
            raise ValueError("a normal law needs a positive variance")
        self.mu, self.variance = float(mu), float(var)
        self.sd = math.sqrt(self.variance)

    def cdf(self, x):
        return _out(ncdf((np.asarray(x, dtype=float) - self.mu) / self.sd))

    def pdf(self, x):
        return npdf((np.asarray(x, dtype=float) - self.mu) / self.sd) / self.sd

    def cumulants(self):
        return (self.mu, self.variance, 0.0, 0.0)


class Affine(Law):
    """The law of shift + factor * X for a continuous law X (factor != 0).

    >>> round(Affine(Normal(0.0, 1.0), 1.0, -2.0).cdf(1.0), 12), Affine(Normal(0, 1), 1, 3).var()
    (0.5, 9.0)
    """

    def __init__(self, base: Law, shift: float, factor: float):
        if factor == 0:
            raise ValueError("an affine image needs a non-zero factor")
        self.base, self.shift, self.factor = base, float(shift), float(factor)

    def cdf(self, x):
        y = (np.asarray(x, dtype=float) - self.shift) / self.factor
        return _out(self.base.cdf(y) if self.factor > 0 else self.base.sf(y))

    def pdf(self, x):
        y = (np.asarray(x, dtype=float) - self.shift) / self.factor
        return self.base.pdf(y) / abs(self.factor)

    def cumulants(self):
        c = self.base.cumulants()
        return (self.shift + self.factor * c[0],) + tuple(
            self.factor ** (j + 2) * cj for j, cj in enumerate(c[1:]))


class Mixture(Law):
    """A finite mixture sum_i w_i X_i (weights summing to one).

    >>> m = Mixture([0.5, 0.5], [Normal(-1.0, 1.0), Normal(1.0, 1.0)])
    >>> round(m.cdf(0.0), 12), m.mean(), m.var()
    (0.5, 0.0, 2.0)
    """

    def __init__(self, weights: Sequence[float], laws: Sequence[Law]):
        w = np.asarray(weights, dtype=float)
        self.weights, self.laws = w / w.sum(), list(laws)

    def cdf(self, x):
        pairs = zip(self.weights, self.laws, strict=True)
        return _out(sum(w * np.asarray(law.cdf(x), dtype=float) for w, law in pairs))

    def pdf(self, x):
        pairs = zip(self.weights, self.laws, strict=True)
        return sum(w * np.asarray(law.pdf(x), dtype=float) for w, law in pairs)

    def cumulants(self):
        means = np.array([law.mean() for law in self.laws])
        vars_ = np.array([law.var() for law in self.laws])
        m = float(self.weights @ means)
        return (m, float(self.weights @ (vars_ + (means - m) ** 2)))


class BivariateNormal:
    """Bivariate normal law of (Re, Im) of a complex spectrum; ``real_marginal`` is what cdf uses.

    >>> b = BivariateNormal([1.0, 0.0], [[2.0, 0.0], [0.0, 3.0]])
    >>> b.real_marginal().var(), b.mean()
    (2.0, (1+0j))
    """

    def __init__(self, mean: Sequence[float], cov: Sequence[Sequence[float]]):
        self.mu = np.asarray(mean, dtype=float)
        self.cov = np.asarray(cov, dtype=float)

    def mean(self) -> complex:
        """E[Re] + i E[Im]."""
        return complex(self.mu[0], self.mu[1])

    def real_marginal(self) -> Normal:
        """The normal law of the real part."""
        return Normal(self.mu[0], self.cov[0, 0])

    def pdf(self, x, y):
        """Joint density at (x, y) (needs a non-singular covariance)."""
        return stats.multivariate_normal(self.mu, self.cov).pdf(np.stack([x, y], axis=-1))

    def cdf(self, x, y) -> float:
        """P(Re <= x, Im <= y)."""
        return float(stats.multivariate_normal(self.mu, self.cov, allow_singular=True).cdf([x, y]))


# ----------------------------------------------------------------- sums
def _block(values, probs, copies, atol):
    v = np.asarray(values, dtype=float)
    p = np.asarray(probs, dtype=float)
    p = p / p.sum()
    m1 = float(p @ v)
    c = v - m1
    mu2, mu3, mu4 = (float(p @ c**j) for j in (2, 3, 4))
    return {"v": v, "p": p, "k": float(copies), "m1": m1, "mu2": mu2, "mu3": mu3, "mu4": mu4,
            "rho": float(p @ np.abs(c) ** 3), "lo": float(v.min()), "hi": float(v.max()),
            "atol": float(atol), "logp": np.log(p)}


def iid_bound(rho: float, var: float, n: float) -> float:
    """Berry--Esseen sup bound C rho / (sigma^3 sqrt(n)) for n i.i.d. summands (0 if var = 0).

    >>> round(iid_bound(1.0, 1.0, 100.0), 6)
    0.04748
    """
    if var <= 0 or n <= 0:
        return 0.0
    return min(1.0, BERRY_ESSEEN_IID * rho / (var**1.5 * math.sqrt(n)))


def lattice_span(values: np.ndarray, tol: float = 1e-9) -> float | None:
    """Largest d with all values in v0 + d Z (rational ratios, denominators <= 64), or None.

    >>> lattice_span(np.array([-1.0, 1.0])), lattice_span(np.array([0.0, 2.0, 3.0]))
    (2.0, 1.0)
    """
    d = np.unique(np.asarray(values, dtype=float) - np.min(values))
    d = d[d > tol * max(1.0, float(d[-1]))]  # near-duplicates are one value
    if d.size == 0:
        return None
    base = float(d[0])
    fr = [Fraction(float(x / base)).limit_denominator(64) for x in d]
    if any(abs(float(f) - x / base) > tol * max(1.0, x / base) for f, x in zip(fr, d, strict=False)):
        return None
    lcm = math.lcm(*[f.denominator for f in fr])
    g = math.gcd(*[int(f * lcm) for f in fr])
    return base * g / lcm


class SumLaw(Law):
    """The law of a sum of independent blocks: ``copies`` i.i.d. draws from each (values, probs).

    ``parts`` is a sequence of (values, probs, copies, atol) -- atol bounds the
    absolute error of the values (0 for exact ones).  The normal approximation
    N(sum k_i m1_i, sum k_i s_i^2) uses the *exact* cumulants of the sum.

    >>> q = SumLaw([([-1.0, 1.0], [0.5, 0.5], 100, 0.0)])   # the 100-cube
    >>> q.mean(), q.var(), q.lattice
    (0.0, 100.0, (-100.0, 2.0))
    >>> lo, hi = q.bounds(0.0)
    >>> round(float(q.cdf(0.0)), 3), bool(lo[()] < 0.5397946186935895 < hi[()])
    (0.54, True)
    """

    def __init__(self, parts):
        self.shift = 0.0
        self.blocks = []
        slack = 0.0
        for values, probs, copies, atol in parts:
            v = np.asarray(values, dtype=float)
            slack += float(copies) * float(atol)
            if np.ptp(v) == 0:
                self.shift += float(copies) * float(v[0])  # a constant summand is exact
            else:
                self.blocks.append(_block(v, probs, copies, atol))
        b = self.blocks
        self.slack = slack
        self.mu = self.shift + sum(x["k"] * x["m1"] for x in b)
        self.variance = sum(x["k"] * x["mu2"] for x in b)
        self.k3 = sum(x["k"] * x["mu3"] for x in b)
        self.k4 = sum(x["k"] * (x["mu4"] - 3 * x["mu2"] ** 2) for x in b)
        self.lo = self.shift + sum(x["k"] * x["lo"] for x in b)
        self.hi = self.shift + sum(x["k"] * x["hi"] for x in b)
        self.sd = math.sqrt(self.variance)
        self.degenerate = not b
        self.eps = self._berry_esseen()
        self.lattice = self._lattice()

    # ---------------------------------------------------------- primitives
    def cumulants(self):
        return (self.mu, self.variance, self.k3, self.k4)

    def _berry_esseen(self) -> float:
        b = self.blocks
        if not b:
            return 0.0
        per_block = sum(iid_bound(x["rho"], x["mu2"], x["k"]) for x in b)
        if len(b) == 1:
            return per_block
        joint = BERRY_ESSEEN_NONIID * sum(x["k"] * x["rho"] for x in b) / self.variance**1.5
        return min(1.0, per_block, joint)

    def _lattice(self):
        if not self.blocks:
            return None
        spans = [lattice_span(x["v"]) for x in self.blocks]
        if any(s is None for s in spans):
            return None
        d = lattice_span(np.array([0.0] + spans)) if len(spans) > 1 else spans[0]
        if d is None or any(abs(s / d - round(s / d)) > 1e-9 for s in spans):
            return None
        origin = self.shift + sum(x["k"] * x["lo"] for x in self.blocks)
        return (origin, d)

    # ---------------------------------------------------------- saddlepoint
    def _kfun(self, theta):
        """K, K', K'' of the sum at an array of theta."""
        th = np.asarray(theta, dtype=float)[..., None]
        k0 = th[..., 0] * self.shift
        k1 = np.full(th.shape[:-1], self.shift)
        k2 = np.zeros(th.shape[:-1])
        for x in self.blocks:
            a = x["logp"] + th * x["v"]
            m = np.max(a, axis=-1, keepdims=True)
            e = np.exp(a - m)
            s = e.sum(axis=-1)
            w = e / s[..., None]
            mean = w @ x["v"]
            k0 = k0 + x["k"] * (m[..., 0] + np.log(s))
            k1 = k1 + x["k"] * mean
            k2 = k2 + x["k"] * (w @ x["v"] ** 2 - mean**2)
        return k0, k1, k2

    def saddlepoint(self, x):
        """theta solving K'(theta) = x (Newton, damped), and a converged mask."""
        x = np.asarray(x, dtype=float)
        width = max(x_["hi"] - x_["lo"] for x_ in self.blocks)
        th = np.clip((x - self.mu) / self.variance, -5 / width, 5 / width)
        ok = np.zeros(x.shape, dtype=bool)
        for _ in range(200):
            _, k1, k2 = self._kfun(th)
            f = k1 - x
            ok = np.abs(f) <= 1e-9 * (self.sd + np.abs(x) * 1e-3)
            if np.all(ok):
                break
            step = np.clip(f / np.maximum(k2, 1e-300), -2 / width, 2 / width)
            th = np.where(ok, th, th - step)
        return th, ok

    def chernoff(self, x, side: int):
        """Rigorous Markov--Chernoff bound exp(K(theta) - theta x): P(S <= x) (side -1), P(S >= x) (+1).

        Any theta of the right sign gives a valid bound; the saddlepoint makes it nearly sharp.
        """
        x = np.asarray(x, dtype=float)
        th, _ = self.saddlepoint(x)
        th = np.minimum(th, 0.0) if side < 0 else np.maximum(th, 0.0)
        k0, _, _ = self._kfun(th)
        expo = k0 - th * x
        expo = expo + 1e-12 * (np.abs(k0) + np.abs(th * x)) + 1e-12
        self._last_log = np.minimum(expo, 0.0)
        return np.minimum(1.0, np.exp(np.minimum(expo, 0.0)))

    # ---------------------------------------------------------- estimates
    def _edgeworth(self, z):
        g1 = self.k3 / self.sd**3
        g2 = self.k4 / self.sd**4
        he2, he3, he5 = z**2 - 1, z**3 - 3 * z, z**5 - 10 * z**3 + 15 * z
        return ncdf(z) - npdf(z) * (g1 / 6 * he2 + g2 / 24 * he3 + g1**2 / 72 * he5)

    def _corrected_point(self, x, strict):
        """(evaluation point, lattice span or None): x, or the continuity-corrected midpoint."""
        if self.lattice is None:
            return x, None
        origin, d = self.lattice
        r = (x - origin) / d
        n = np.ceil(r - 1e-9) - 1 if strict else np.floor(r + 1e-9)
        return origin + (n + 0.5) * d, d

    def cdf(self, x, strict: bool = False):
        """Best estimate of P(S <= x) (P(S < x) when strict): not a bound.

        Edgeworth (two terms) for |z| < 2, Lugannani--Rice beyond; both at the
        continuity-corrected point on lattices (Daniels' second correction in
        the tails).  Values below 1e-300 come from mpmath (as floats, possibly 0
        only when below the double range).
        """
        x = np.asarray(x, dtype=float)
        if self.degenerate:
            return (x > self.shift if strict else x >= self.shift).astype(float)
        xc, d = self._corrected_point(x, strict)
        z = (xc - self.mu) / self.sd
        est = self._edgeworth(z)
        tail = (np.abs(z) >= 2) & (xc > self.lo) & (xc < self.hi)
        if np.any(tail):
            est = np.where(tail, self._lugannani_rice(np.where(tail, xc, self.mu + 3 * self.sd), d), est)
        est = np.where(x < self.lo - self.slack, 0.0, est)
        est = np.where(x >= self.hi + self.slack, 1.0, est)
        return np.clip(est, 0.0, 1.0)

    def _lugannani_rice(self, x, d):
        th, ok = self.saddlepoint(x)
        k0, _, k2 = self._kfun(th)
        arg = np.maximum(2 * (th * x - k0), 0.0)
        w = np.sign(th) * np.sqrt(arg)
        if d is None:
            u = th * np.sqrt(k2)
        else:
            u = 2 * np.sinh(th * d / 2) * np.sqrt(k2) / d
        with np.errstate(divide="ignore", invalid="ignore"):
            est = ncdf(w) + npdf(w) * (1 / w - 1 / u)
        far = ok & (w < -30)
        for i in np.flatnonzero(far):  # underflow region: mpmath
            wi, ui = mpmath.mpf(float(w.flat[i])), mpmath.mpf(float(u.flat[i]))
            est.flat[i] = float(mpmath.ncdf(wi) + mpmath.npdf(wi) * (1 / wi - 1 / ui))
        fallback = self._edgeworth((x - self.mu) / self.sd)
        good = ok & np.isfinite(est) & (np.abs(w) > 1e-6)
        return np.where(good, est, fallback)

    def pdf(self, x):
        """Normal density with the exact mean and variance (estimate)."""
        return npdf((np.asarray(x, dtype=float) - self.mu) / self.sd) / self.sd

    # ---------------------------------------------------------- bounds
    def bounds(self, x):
        """Rigorous (lower, upper) for both P(S <= x) and P(S < x).

        Berry--Esseen (exact mean and variance), exact support [lo, hi] (with
        the values' rounding allowance), Chernoff tails; widened by REL_SLACK.
        """
        x = np.asarray(x, dtype=float)
        if self.degenerate:
            lo = (x > self.shift + self.slack).astype(float)
            hi = (x >= self.shift - self.slack).astype(float)
            return lo, hi
        xl, xh = x - self.slack, x + self.slack
        lo = ncdf((xl - self.mu) / self.sd) - self.eps
        hi = ncdf((xh - self.mu) / self.sd) + self.eps
        below = xh < self.mu
        above = xl > self.mu
        log_h = None
        if np.any(below | above):
            ch_h = self.chernoff(np.where(below, xh, self.mu - self.sd), -1)
            log_h = self._last_log
            ch_l = self.chernoff(np.where(above, xl, self.mu + self.sd), 1)
            hi = np.where(below, np.minimum(hi, ch_h), hi)
            lo = np.where(above, np.maximum(lo, 1.0 - ch_l), lo)
        lo = np.where(xl > self.hi, 1.0, lo)
        hi = np.where(xh < self.lo, 0.0, hi)
        lo = np.clip(lo * (1 - REL_SLACK) - REL_SLACK * 1e-3, 0.0, 1.0)
        hi = np.clip(hi * (1 + REL_SLACK) + np.where(hi > 0, 1e-300, 0.0), 0.0, 1.0)
        if log_h is not None:
            under = below & (hi == 0) & ~(xh < self.lo)
            if np.any(under):
                # The Chernoff bound is below the double range: keep it as an mpmath number.
                hi = np.array(hi, dtype=object)
                for i in np.flatnonzero(under):
                    hi.flat[i] = mpmath.exp(mpmath.mpf(float(np.ravel(log_h)[i]))) * (1 + REL_SLACK)
                hi = hi.reshape(np.shape(x)) if np.ndim(x) else hi.flat[0]
        return lo, hi


# ------------------------------------------------------------- products
class ProductLaw(Law):
    """Law of S = product of independent factor values (s-space of a multiplicative rule).

    S = 0 with the exact probability ``zero``.  Given S != 0, sign and log|S|
    are described by ``components``, a list of (w_pos, w_neg, L) with L a
    :class:`SumLaw` for log|S|: P(S > 0, log|S| <= u | S != 0) = sum w_pos
    L(u), likewise for S < 0 -- one component with independent signs is the
    log-normal law of |S| with exact sign shares.  When signs depend on
    magnitudes the law is a mixture over the number j of negative factors,
    given as ``window``: arrays ``wp, wn, mu, var, eps`` (one normal law
    N(mu_j, var_j) with Berry--Esseen bound eps_j per j; var_j = 0 is an exact
    point) and ``slack`` (rounding allowance in u).  ``extra`` is the
    probability of the j outside the window (dropped from lower bounds, added
    to upper bounds).

    >>> L = SumLaw([([0.0, math.log(2)], [0.5, 0.5], 10, 0.0)])
    >>> law = ProductLaw(0.0, [(0.5, 0.5, L)])
    >>> round(float(law.cdf(0.0)), 12), round(float(law.cdf(-2.0 ** 11)), 12)
    (0.5, 0.0)
    """

    def __init__(self, zero: float, components=(), window: dict | None = None, extra: float = 0.0):
        self.zero = float(zero)
        self.components = list(components)
        self.window = window
        self.extra = float(extra)
        self.nonzero = 1.0 - self.zero

    def _neg_total(self) -> float:
        t = sum(c[1] for c in self.components)
        if self.window is not None:
            t += float(np.sum(self.window["wn"]))
        return t

    def _window_g(self, u: float, strict: bool):
        """Per-j (estimate, lower, upper) of P(log|S| <= u | j) (or < u)."""
        w = self.window
        mu, var, eps, sl = w["mu"], w["var"], w["eps"], w["slack"]
        sd = np.sqrt(var)
        pos = var > 0
        with np.errstate(divide="ignore", invalid="ignore"):
            z = np.where(pos, (u - mu) / np.where(pos, sd, 1.0), 0.0)
            zl = np.where(pos, (u - sl - mu) / np.where(pos, sd, 1.0), 0.0)
            zh = np.where(pos, (u + sl - mu) / np.where(pos, sd, 1.0), 0.0)
        tie = np.abs(u - mu) <= sl
        step_est = np.where(tie, 0.0 if strict else 1.0, (u > mu).astype(float))
        est = np.where(pos, ncdf(z), step_est)
        lo = np.where(pos, np.maximum(ncdf(zl) - eps, 0.0), (u - sl > mu).astype(float))
        hi = np.where(pos, np.minimum(ncdf(zh) + eps, 1.0), (u + sl >= mu).astype(float))
        return est, lo, hi

    def evaluate(self, sign: int, u: float, strict: bool = False):
        """(estimate, lower, upper) of P(S <= t) (P(S < t) if strict), t = sign * exp(u)."""
        nz = self.nonzero
        if sign == 0:
            base = nz * self._neg_total() + (0.0 if strict else self.zero)
            return base, base, min(1.0, base + self.extra)
        parts = []  # (weights, est, lo, hi) of G = P(log|S| <= u) (strict: < u) per component
        for wp, wn, law in self.components:
            e = float(law.cdf(u, strict)) if sign > 0 else float(law.cdf(u, not strict))
            bl, bh = law.bounds(u)
            parts.append((wp if sign > 0 else wn, e, float(bl), _keep(bh)))
        if self.window is not None:
            e, bl, bh = self._window_g(u, strict if sign > 0 else not strict)
            parts.append((self.window["wp"] if sign > 0 else self.window["wn"], e, bl, bh))
        if sign > 0:
            base = self.zero + nz * self._neg_total()
            est = base + nz * sum(float(np.sum(w * e)) for w, e, _, _ in parts)
            lo = base + nz * sum(float(np.sum(w * b)) for w, _, b, _ in parts)
            hi = base + nz * sum(_keep(np.sum(w * b)) for w, _, _, b in parts)
        else:
            # S <= t < 0  <=>  log|S| >= u: the complement of G within the negative mass.
            est = nz * sum(float(np.sum(w * (1 - e))) for w, e, _, _ in parts)
            lo = nz * sum(float(np.sum(w * (1 - b))) for w, _, _, b in parts)
            hi = nz * sum(float(np.sum(w * (1 - b))) for w, _, b, _ in parts)
        hi = min(1.0, hi * (1 + REL_SLACK) + self.extra + (1e-300 if hi > 0 else 0.0))
        lo = max(0.0, lo * (1 - REL_SLACK))
        return min(max(est, lo), hi), lo, hi

    def cdf(self, x, strict: bool = False):
        x = float(x)
        if x == 0:
            return self.evaluate(0, 0.0, strict)[0]
        return self.evaluate(1 if x > 0 else -1, math.log(abs(x)), strict)[0]

    def pdf(self, x):
        raise InputError("the product law has a point mass at zero and no density; use cdf")

    def cumulants(self):
        """Mean and variance of S under the log-normal approximation (mpmath numbers)."""
        m1 = m2 = mpmath.mpf(0)
        comps = [(wp, wn, law.mu, law.variance) for wp, wn, law in self.components]
        if self.window is not None:
            w = self.window
            comps += list(zip(w["wp"], w["wn"], w["mu"], w["var"], strict=False))
        for wp, wn, mu, v in comps:
            mu, v = mpmath.mpf(float(mu)), mpmath.mpf(float(v))
            m1 += float(wp - wn) * mpmath.exp(mu + v / 2)
            m2 += float(wp + wn) * mpmath.exp(2 * mu + 2 * v)
        m1, m2 = self.nonzero * m1, self.nonzero * m2
        return (m1, m2 - m1**2)


__all__ = [
    "BERRY_ESSEEN_IID", "BERRY_ESSEEN_NONIID", "Law", "Normal", "Affine", "Mixture",
    "BivariateNormal", "SumLaw", "ProductLaw", "iid_bound", "lattice_span",
]
