"""Limit laws of eigenvalue distributions of high graph powers, with error bounds.

Each law is a frozen distribution in the manner of a probability text: a
small set of primitives (:meth:`Law.cdf`, :meth:`Law.pdf`,
:meth:`Law.cumulants`) from which :class:`Law` derives ``sf``, ``ppf`` (by
the safeguarded secant of :mod:`powerspec.tiers.lawsolve`), ``interval``,
``mean``, ``var`` and ``std``.

* :class:`Normal`, :class:`Affine` (image under x -> shift + factor x),
  :class:`Mixture` (finite mixture) and :class:`BivariateNormal` (complex
  spectra of directed factors: the real part is its first marginal);
* :class:`SumLaw` -- the eigenvalue distribution of a Cartesian power (or of a
  sum of several powers): the exact distribution of a sum of independent
  copies of the factors' eigenvalue distributions.  :meth:`SumLaw.evaluate`
  returns the estimate and rigorous bounds of the CDF in one pass (one
  saddlepoint per point serves both):

  - the *estimate* is Edgeworth (two terms) in the centre and Lugannani--Rice
    in the tails, continuity-corrected on lattices;
  - the *bounds* are rigorous: the Berry--Esseen sup bound (C = 0.4748 for
    i.i.d. summands, I. Shevtsova 2011; C = 0.5600 for non-identical summands,
    Shevtsova 2010; the smaller of that and the sum of the per-block i.i.d.
    bounds), the exact support, and the Chernoff bound exp(K(theta) - theta x),
    valid for *any* theta of the right sign (the saddlepoint makes it sharp).

The product laws (direct / strong powers) live in :mod:`powerspec.tiers.lawproduct`.
Probabilities are floats; bounds are widened by :data:`REL_SLACK` for the
rounding of their own evaluation.  No scipy.stats: the normal law comes from
scipy.special (ndtr, ndtri, owens_t), which imports in milliseconds.

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
from scipy import special

from powerspec.tiers.lawsolve import step_bracket

BERRY_ESSEEN_IID = 0.4748
"""Berry--Esseen constant for i.i.d. summands (I. Shevtsova 2011, arXiv:1111.6554)."""

BERRY_ESSEEN_NONIID = 0.5600
"""Berry--Esseen constant for independent non-identical summands (I. Shevtsova 2010)."""

REL_SLACK = 1e-10
"""Relative widening of law-tier bounds for the floating-point rounding of their evaluation."""

_EPS = float(np.finfo(float).eps)

TINY = 1e-300
"""Upper bounds that underflow are reported as at least this (never as a false zero)."""


def ncdf(z):
    """Standard normal CDF (vectorised, scipy.special.ndtr)."""
    return special.ndtr(z)


def npdf(z):
    """Standard normal density (vectorised)."""
    with np.errstate(over="ignore", under="ignore"):
        return np.exp(-0.5 * np.square(z)) / math.sqrt(2 * math.pi)


def _out(a):
    """A Python float for 0-d results, the array otherwise."""
    a = np.asarray(a, dtype=float)
    return float(a) if a.ndim == 0 else a


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

    def ppf(self, q):
        """Quantile inf{x : cdf(x) >= q} (vectorised), to 1e-13 standard deviations.

        Safeguarded secant from the normal guess mu + sd * ndtri(q); the result
        is the verified upper end of the final bracket.
        """
        qa = np.asarray(q, dtype=float)
        if not np.all((qa > 0) & (qa < 1)):
            raise ValueError("q must lie strictly between 0 and 1")
        mu = float(self.mean())
        sd = self.std() if self.var() > 0 else 1.0
        guess = mu + sd * special.ndtri(qa)
        span = 1e3 * sd * (1 + abs(mu) / sd)
        _, b, _ = step_bracket(lambda y: self.cdf(y), qa, mu - span, mu + span,
                               xtol=1e-13 * sd * (1 + abs(mu) / sd), guess=guess, step=0.1 * sd)
        return _out(b.reshape(qa.shape))

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

    def ppf(self, q):
        """Closed form mu + sd * ndtri(q)."""
        qa = np.asarray(q, dtype=float)
        if not np.all((qa > 0) & (qa < 1)):
            raise ValueError("q must lie strictly between 0 and 1")
        return _out(self.mu + self.sd * special.ndtri(qa))

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
    >>> b.real_marginal().var(), b.mean(), round(b.cdf(1.0, 0.0), 12)
    (2.0, (1+0j), 0.25)
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
        d = np.stack([np.asarray(x, dtype=float) - self.mu[0], np.asarray(y, dtype=float) - self.mu[1]])
        det = float(np.linalg.det(self.cov))
        if not det > 0:
            raise ValueError("the bivariate density needs a non-singular covariance")
        inv = np.linalg.inv(self.cov)
        quad = np.einsum("i...,ij,j...->...", d, inv, d)
        return np.exp(-0.5 * quad) / (2 * math.pi * math.sqrt(det))

    def cdf(self, x, y) -> float:
        """P(Re <= x, Im <= y), by Owen's T function (accurate to about 1e-15).

        Phi2(h, k; rho) = (Phi(h) + Phi(k)) / 2 - T(h, a_h) - T(k, a_k) - beta
        (D. B. Owen 1956; beta = 1/2 when h k < 0 or h k = 0 with h + k < 0).
        """
        sx, sy = math.sqrt(self.cov[0, 0]), math.sqrt(self.cov[1, 1])
        h, k = (float(x) - self.mu[0]) / sx, (float(y) - self.mu[1]) / sy
        rho = float(self.cov[0, 1]) / (sx * sy) if sx > 0 and sy > 0 else 0.0
        rho = min(1.0, max(-1.0, rho))
        if rho >= 1.0 - 1e-15:
            return float(ncdf(min(h, k)))
        if rho <= -1.0 + 1e-15:
            return float(max(0.0, ncdf(h) - ncdf(-k)))
        r = math.sqrt((1 - rho) * (1 + rho))

        def owen(u, v):  # T(u, (v - rho u) / (u r)); T(0, +-inf) = +-1/4
            if u == 0:
                return math.copysign(0.25, v)
            return float(special.owens_t(u, (v - rho * u) / (u * r)))

        if h == 0 and k == 0:
            return 0.25 + math.asin(rho) / (2 * math.pi)
        beta = 0.5 if (h * k < 0 or (h * k == 0 and h + k < 0)) else 0.0
        val = 0.5 * (float(ncdf(h)) + float(ncdf(k))) - owen(h, k) - owen(k, h) - beta
        return min(1.0, max(0.0, val))


# ----------------------------------------------------------------- sums
def _block(values, probs, copies, atol):
    v = np.asarray(values, dtype=float)
    p = np.asarray(probs, dtype=float)
    p = p / p.sum()
    m1 = float(p @ v)
    c = v - m1
    mu2, mu3, mu4 = (float(p @ c**j) for j in (2, 3, 4))
    with np.errstate(divide="ignore"):
        logp = np.log(p)
    return {"v": v, "p": p, "k": float(copies), "m1": m1, "mu2": mu2, "mu3": mu3, "mu4": mu4,
            "rho": float(p @ np.abs(c) ** 3), "lo": float(v.min()), "hi": float(v.max()),
            "atol": float(atol), "logp": logp}


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
    N(sum k_i m1_i, sum k_i s_i^2) uses the cumulants of the sum (additive over the
    blocks, evaluated in double precision; the rounding of the mean is in ``slack``).

    >>> q = SumLaw([([-1.0, 1.0], [0.5, 0.5], 100, 0.0)])   # the 100-cube
    >>> q.mean(), q.var(), q.lattice
    (0.0, 100.0, (-100.0, 2.0))
    >>> est, lo, hi = q.evaluate(0.0)
    >>> round(float(est), 3), bool(lo < 0.5397946186935895 < hi)
    (0.54, True)
    """

    def __init__(self, parts):
        self.shift = 0.0
        self.blocks = []
        slack = 0.0
        for values, probs, copies, atol in parts:
            v = np.asarray(values, dtype=float)
            # the values' own error, and the rounding of the mean sum p v computed from them
            slack += float(copies) * (float(atol) + 4 * (v.size + 2) * _EPS * float(np.max(np.abs(v))))
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
        self.rho = sum(x["k"] * x["rho"] for x in b)
        self.lo = self.shift + sum(x["k"] * x["lo"] for x in b)
        self.hi = self.shift + sum(x["k"] * x["hi"] for x in b)
        self.sd = math.sqrt(self.variance)
        self.degenerate = not b
        self.eps = self._berry_esseen()
        self.lattice = self._lattice()
        self.width = max((x["hi"] - x["lo"] for x in b), default=1.0)

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
        joint = BERRY_ESSEEN_NONIID * self.rho / self.variance**1.5
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
            k2 = k2 + x["k"] * np.maximum(w @ x["v"] ** 2 - mean**2, 0.0)
        return k0, k1, k2

    def saddlepoint(self, x, theta0=None):
        """theta solving K'(theta) = x (damped Newton, vectorised), and a converged mask.

        Points outside the open support have no saddlepoint: their mask is False.
        """
        x = np.asarray(x, dtype=float)
        width = self.width
        inside = (x > self.lo) & (x < self.hi)
        # at an end of the support theta runs off to infinity: its iterates still give valid
        # (and ever sharper) Chernoff bounds, but never a converged saddlepoint
        edge = (x == self.lo) | (x == self.hi)
        xs = np.where(inside | edge, x, self.mu)
        th = np.clip((xs - self.mu) / self.variance, -5 / width, 5 / width) if theta0 is None \
            else np.where(inside, theta0, 0.0)
        ok = np.zeros(x.shape, dtype=bool)
        for _ in range(200):
            _, k1, k2 = self._kfun(th)
            f = k1 - xs
            ok = np.abs(f) <= 1e-9 * (self.sd + np.abs(xs) * 1e-3)
            if np.all(ok):
                break
            step = np.clip(f / np.maximum(k2, 1e-300), -2 / width, 2 / width)
            th = np.where(ok, th, th - step)
        return th, ok & inside

    def chernoff(self, x, side: int):
        """Rigorous Markov--Chernoff bound exp(K(theta) - theta x): P(S <= x) (side -1), P(S >= x) (+1).

        Any theta of the right sign gives a valid bound; the saddlepoint makes it nearly sharp.
        """
        x = np.asarray(x, dtype=float)
        th, _ = self.saddlepoint(x)
        return np.exp(np.minimum(self._chernoff_log(th, x, side), 0.0))

    def _chernoff_log(self, th, x, side):
        th = np.minimum(th, 0.0) if side < 0 else np.maximum(th, 0.0)
        k0, _, _ = self._kfun(th)
        expo = k0 - th * x
        return expo + 1e-12 * (np.abs(k0) + np.abs(th * x)) + 1e-12

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
        """Best estimate of P(S <= x) (P(S < x) when strict): not a bound (see :meth:`evaluate`)."""
        return self.evaluate(x, strict)[0]

    def bounds(self, x):
        """Rigorous (lower, upper) for both P(S <= x) and P(S < x) (see :meth:`evaluate`)."""
        _, lo, hi, _ = self.evaluate(x, False, with_log=True)
        return lo, hi

    def evaluate(self, x, strict: bool = False, with_log: bool = False, pad=0.0):
        """(estimate, lower, upper) of P(S <= x) (P(S < x) if strict), elementwise, in one pass.

        The estimate is Edgeworth (two terms) for |z| < 2 and Lugannani--Rice
        beyond (at the continuity-corrected point on lattices); lower/upper are
        rigorous: Berry--Esseen with the mean and variance (rounding in the slack), Chernoff
        tails at the same saddlepoint, the exact support (with the values'
        rounding allowance), widened by REL_SLACK.  Upper bounds that underflow
        stay at least :data:`TINY`.  With ``with_log`` a fourth array holds the
        natural log of an upper bound (the Chernoff exponent where that is the
        smaller one), for callers that report bounds below the double range.
        ``pad`` (>= 0, per point) widens the bounds for an uncertain point x +- pad.
        """
        x = np.asarray(x, dtype=float)
        with np.errstate(all="ignore"):
            return self._evaluate(x, strict, with_log, self.slack + np.asarray(pad, dtype=float))

    def _evaluate(self, x, strict, with_log, slack):
        if self.degenerate:
            est = (x > self.shift if strict else x >= self.shift).astype(float)
            lo = (x > self.shift + slack).astype(float)
            hi = (x >= self.shift - slack).astype(float)
            out = (est, lo, hi)
            return out + (np.log(np.maximum(hi, TINY)),) if with_log else out
        xc, d = self._corrected_point(x, strict)
        z = (xc - self.mu) / self.sd
        est = self._edgeworth(z)
        xl, xh = x - slack, x + slack
        lo = ncdf((xl - self.mu) / self.sd) - self.eps
        hi = ncdf((xh - self.mu) / self.sd) + self.eps
        log_hi = np.log(np.maximum(hi, TINY))
        below, above = xh < self.mu, xl > self.mu
        tail_est = (np.abs(z) >= 2) & (xc > self.lo) & (xc < self.hi)
        need = (below | above) & (x >= self.lo - slack) & (x <= self.hi + slack)
        # Chernoff cannot beat a small Berry-Esseen bound within 1.5 sd of the mean (its rate is
        # about z^2 / 2 there): skipping it costs no tightness and saves a saddlepoint
        if self.eps < 0.05:
            need &= np.abs((x - self.mu) / self.sd) >= 1.5
        if np.any(need | tail_est):
            # one saddlepoint per point serves the Chernoff bounds (any theta of the right sign is
            # valid) and, off lattices, the Lugannani-Rice estimate
            th, ok = self.saddlepoint(np.where(need | tail_est, x, self.mu))
            lh = self._chernoff_log(th, xh, -1)
            ll = self._chernoff_log(th, xl, 1)
            use_h = need & below & (lh < log_hi)
            hi = np.where(use_h, np.exp(np.minimum(lh, 0.0)), hi)
            log_hi = np.where(use_h, lh, log_hi)
            lo = np.where(need & above, np.maximum(lo, 1.0 - np.exp(np.minimum(ll, 0.0))), lo)
            if np.any(tail_est):
                if d is not None:  # lattice: the saddlepoint of the corrected point
                    th, ok = self.saddlepoint(np.where(tail_est, xc, self.mu))
                lr = self._lugannani_rice(np.where(tail_est, xc, self.mu + 3 * self.sd), th, ok, d)
                est = np.where(tail_est, lr, est)
        est = np.where(x < self.lo - slack, 0.0, est)
        est = np.where(x >= self.hi + slack, 1.0, est)
        lo = np.where(xl > self.hi, 1.0, lo)
        hi = np.where(xh < self.lo, 0.0, hi)
        log_hi = np.where(xh < self.lo, -np.inf, log_hi)
        lo = np.clip(lo * (1 - REL_SLACK) - REL_SLACK * 1e-3, 0.0, 1.0)
        hi = np.clip(hi * (1 + REL_SLACK), 0.0, 1.0)
        hi = np.where((hi < TINY) & (xh >= self.lo), TINY, hi)  # an underflowed bound is not zero
        log_hi = log_hi + 2 * REL_SLACK
        est = np.clip(np.nan_to_num(est, nan=0.5), lo, hi)
        return (est, lo, hi, log_hi) if with_log else (est, lo, hi)

    def _lugannani_rice(self, x, th, ok, d):
        k0, _, k2 = self._kfun(th)
        arg = np.maximum(2 * (th * x - k0), 0.0)
        w = np.sign(th) * np.sqrt(arg)
        if d is None:
            u = th * np.sqrt(k2)
        else:
            u = 2 * np.sinh(th * d / 2) * np.sqrt(k2) / d
        est = ncdf(w) + npdf(w) * (1 / w - 1 / u)
        far = ok & (w < -30)
        for i in np.flatnonzero(far):  # underflow region: mpmath
            wi, ui = mpmath.mpf(float(w.flat[i])), mpmath.mpf(float(u.flat[i]))
            est.flat[i] = float(mpmath.ncdf(wi) + mpmath.npdf(wi) * (1 / wi - 1 / ui))
        fallback = self._edgeworth((x - self.mu) / self.sd)
        good = ok & np.isfinite(est) & (np.abs(w) > 1e-6)
        return np.where(good, est, fallback)

    def pdf(self, x):
        """Normal density with the law's mean and variance (an estimate)."""
        return npdf((np.asarray(x, dtype=float) - self.mu) / self.sd) / self.sd


__all__ = [
    "BERRY_ESSEEN_IID", "BERRY_ESSEEN_NONIID", "Law", "Normal", "Affine", "Mixture",
    "BivariateNormal", "SumLaw", "iid_bound", "lattice_span", "ncdf", "npdf", "REL_SLACK", "TINY",
]
