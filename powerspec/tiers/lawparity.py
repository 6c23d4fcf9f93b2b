"""The sign parity of a product law without a per-j window: memory and time independent of k.

:class:`~powerspec.tiers.lawproduct.BinomialWindow` mixes over every j (the
number of negative factors of the one operand whose signs depend on their
magnitudes) in a window of about 19 binomial standard deviations: 2.8 * 10^5
values of j at k = 10^9, but 9 * 10^9 at k = 10^18.  Past
:data:`WINDOW_CAP` values :class:`ParityWindow` takes its place.  With J the
number of negative factors, b_j = P(J = j), F_j(u) = P(log|S| <= u | J = j)
and q the sign balance of the independent operands (their signs do not
depend on their magnitudes):

    P(S > 0, log|S| <= u | S != 0) = 1/2 H(u) + q/2 T(u),
    P(S < 0, log|S| <= u | S != 0) = 1/2 H(u) - q/2 T(u),

with H(u) = sum_j b_j F_j(u), the law of a sum of k i.i.d. draws of log|s|
pooled over both signs plus the independent operands (a
:class:`~powerspec.tiers.laws.SumLaw`, rigorous Berry--Esseen and Chernoff
bounds), and T(u) = sum_j (-1)^j b_j F_j(u), bounded uniformly in u:

* F_j = Phi(z_j) + delta_j with |delta_j| <= eps_j (Berry--Esseen given j),
  so sum_j b_j |delta_j| <= max of eps_j over the window + the binomial mass
  outside it (Chernoff);
* z_j = (u - mu_j) / sd_j has a numerator and a denominator affine in j, so
  Phi(z_j) is monotone on at most two runs of j; b_j is unimodal (log-concave),
  so every partial alternating sum of b_j is at most 2 max_j b_j in absolute
  value, and Abel summation over a run where c_j in [0, 1] is monotone gives
  at most 2 * 2 max b_j; two runs give 8 max b_j, and a j with var_j = 0
  (possible at j = 0 or j = k only) at most one more max b_j;
* max_j b_j is Loader's value at the mode (relative error of a few ulps,
  from memory; taken with a margin of 1e-10).

So |T(u)| <= 9 max b_j + max eps_j + outside mass: all of order 1/sqrt(k), the
order of the Berry--Esseen bound itself.  The estimate takes T = 0.

>>> import math
>>> a = math.log1p(math.sqrt(2))
>>> w = ParityWindow(10**18, 1 / 3, (a / 2, a * a / 4, (a / 2) ** 3), (-a, 0.0, 0.0),
...                  [math.log(1 + math.sqrt(2)), 0.0, -a], [1 / 3, 1 / 3, 1 / 3])
>>> est, lo, hi = w.g(np.array([w.mean_log]), 1, False)
>>> bool(lo[0] <= 0.25 <= hi[0]), bool(hi[0] - lo[0] < 1e-5)  # the rounding of k * mean dominates
(True, True)
"""

from __future__ import annotations

import math

import numpy as np

from powerspec.tiers.lawproduct import BinomialWindow, _window, binom_pmf
from powerspec.tiers.laws import SumLaw

WINDOW_CAP = 1 << 21
"""Most values of j mixed one by one (about 170 MB of block sums); wider windows use the parity bound."""

LOADER_REL = 1e-10
"""Margin on Loader's binomial value at the mode (its error is a few ulps, from memory)."""


def window_points(k: int, r: float) -> int:
    """Number of j a :class:`BinomialWindow` would hold at its smallest tail budget (1e-13)."""
    jlo, jhi, _ = _window(k, r, 1e-13)
    return jhi - jlo + 1


def binom_max(k: int, r: float) -> float:
    """An upper bound of max_j P(J = j) for J ~ Binomial(k, r) (at the mode floor((k + 1) r))."""
    m = int(math.floor((k + 1) * r))
    js = np.array([float(j) for j in (m - 1, m, m + 1) if 0 <= j <= k])
    return float(np.max(binom_pmf(js, k, r))) * (1 + LOADER_REL)


class ParityWindow(BinomialWindow):
    """The mixture over the number of negative factors, bounded without enumerating j.

    Same interface as :class:`~powerspec.tiers.lawproduct.BinomialWindow`
    (``g``, ``density``, ``mean_log``, ``var_log``, ``wp_total``, ``wn_total``,
    ``extra``, ``eps_max``, ``quad_err``) with memory and time independent of
    k.  ``pooled`` / ``pooled_p``: the dependent operand's log|s| values given
    s != 0 and their probabilities; ``rest_parts``: the independent operands'
    SumLaw parts.  ``quad_err`` is the bound on |T| (module docstring).
    """

    def __init__(self, k: int, r: float, pos, neg, pooled, pooled_p, rest_parts=(),
                 q_rest: float = 1.0, slack: float = 0.0, rest: SumLaw | None = None):
        (mp, vp, rp), (mn, vn, rn) = pos, neg
        self.k, self.r, self.q = k, r, q_rest
        self.rp, self.vp, self.rn, self.vn = rp, vp, rn, vn
        self.r_rho = rest.rho if rest is not None else 0.0
        self.r_eps = rest.eps if rest is not None else 0.0
        self.mu0 = k * mp + (rest.mu if rest is not None else 0.0)
        self.m1 = mn - mp
        self.v0 = k * vp + (rest.variance if rest is not None else 0.0)
        self.v1 = vn - vp
        self.h = SumLaw(list(rest_parts) + [(np.asarray(pooled, dtype=float),
                                            np.asarray(pooled_p, dtype=float), k, 0.0)])
        self.h.slack += slack
        self.slack = self.h.slack
        self.mean_log, self.var_log = self.h.mu, self.h.variance
        # the window only bounds eps_j (no array over it): mass outside goes into the T bound
        self.jlo, self.jhi, outside = _window(k, r, 1e-13)
        if self.v0 == 0 and self.v1 == 0:
            eps = 0.0  # every F_j is an exact step: no Berry-Esseen term
        else:
            eps = float(self._eps_max(np.array([float(self.jlo)]), np.array([float(self.jhi)]))[0])
        self.eps_max = max(eps, self.h.eps)
        self.quad_err = (9 * binom_max(k, r) + eps + outside) * (1 + 1e-12)
        self.extra = 0.0  # the outside mass is inside quad_err
        self.weight_rel = 0.0
        self.nblocks, self._blocks = 0, None
        # non-empty when the conditional laws are exact points (as in BinomialWindow, whose point
        # positions it holds): readers such as the frozen distribution then refuse a density
        self.pt_mu = np.zeros(1) if self.v0 == 0 and self.v1 == 0 else np.zeros(0)
        qd = 1 - 2 * r
        big_q = 0.0
        if qd != 0:
            sgn = -1.0 if (qd < 0 and k % 2) else 1.0
            big_q = q_rest * sgn * math.exp(k * math.log(abs(qd)))
        self.wp_total, self.wn_total = (1 + big_q) / 2, (1 - big_q) / 2
        self.jlo = self.jhi = 0  # nothing enumerated (the cost model reads jhi - jlo)

    def density(self, u, side: int) -> np.ndarray:
        """Half the density of H (the parity term has no density estimate)."""
        return 0.5 * np.asarray(self.h.pdf(np.asarray(u, dtype=float)), dtype=float)

    def g(self, u, side: int, strict: bool, pad=0.0):
        """(estimate, lower, upper) of P(S >< 0, log|S| <= u | S != 0) for S > 0 (side > 0) or S < 0."""
        u = np.asarray(u, dtype=float)
        he, hl, hh = self.h.evaluate(u, strict, pad=pad)
        t = abs(self.q) * self.quad_err / 2
        top = self.wp_total if side > 0 else self.wn_total
        lo = np.maximum(0.5 * hl - t, 0.0)
        hi = np.minimum(0.5 * hh + t, top * (1 + 1e-12))
        return np.clip(0.5 * he, lo, hi), lo, hi


__all__ = ["ParityWindow", "WINDOW_CAP", "window_points", "binom_max"]
