"""A frozen spectral distribution: the eigenvalue distribution of a product as one object.

In the manner of a frozen law of a statistics library, :func:`distribution`
builds the answering tier once (exact atoms, certified bracket, limit law or
moment bounds) and then evaluates arrays: ``cdf(x)``, ``sf(x)``, ``ppf(q)``,
``isf(q)``, ``interval(confidence)``, ``median()``, ``pdf(x)`` where a
density exists, and the exact moments ``mean()``, ``var()``, ``std()``,
``moment(p)``.  ``cdf``, ``sf`` and ``ppf`` take ``bounds=True`` to return
``(estimate, lower, upper)`` arrays with the rigorous bounds of the tier
that answered.  A curve of a thousand points costs one setup plus
vectorised work.

:class:`SpectralDistribution` derives everything from two primitives --
``_cdf3(x, strict)`` and ``_ppf3(levels)`` -- implemented by one small
subclass per tier.  Quantile levels are read as the decimals they were
written as (0.1 is 1/10).

>>> d = distribution("cart(K(2)^10)")
>>> d.tier, float(d.cdf(0.0)), d.ppf([0.5, 0.99]).tolist(), d.mean(), d.var()
('exact', 0.623046875, [0.0, 8.0], 0.0, 10.0)
>>> est, lo, hi = distribution("cart(K(2)^1000000000)", method="law").cdf([0.0], bounds=True)
>>> bool(lo[0] <= 0.5 <= hi[0])
True
"""

from __future__ import annotations

import math
from fractions import Fraction

import mpmath
import numpy as np

from powerspec.algebra.moments import MomentEngine, trace_moments
from powerspec.errors import InputError, NotExactError, SizeLimitError
from powerspec.queries.common import matrix_label
from powerspec.queries.distnumbers import bound_width, decimal_level, float_up
from powerspec.queries.distribution import _Query
from powerspec.queries.distsolve import quantiles
from powerspec.queries.distsource import engine_top_degree
from powerspec.queries.disttiers import AddBracketTier, AddLaw, ExactTier, MulLaw
from powerspec.tiers.momentbounds import DEFAULT_ORDER, cdf_bounds


class NoDensityError(InputError):
    """The distribution has atoms (or a lattice), so it has no density: use cdf differences."""


def _levels(q) -> tuple[list[Fraction], tuple]:
    qa = np.asarray(q, dtype=object if isinstance(q, (str, Fraction)) else None)
    flat = [decimal_level(v.item() if isinstance(v, np.generic) else v) for v in np.ravel(qa)]
    return flat, np.shape(qa)


def _as_array(values, shape):
    """A float array when every value is a float, else an object array (mpmath beyond range)."""
    if all(isinstance(v, float) for v in values):
        return np.array(values, dtype=float).reshape(shape)
    out = np.empty(len(values), dtype=object)
    out[:] = values
    return out.reshape(shape)


class SpectralDistribution:
    """Frozen eigenvalue distribution (real parts for complex spectra) of one product.

    Attributes: ``expression``, ``matrix``, ``order`` (exact vertex count),
    ``tier`` (exact | bracket | law | moments), ``method`` (how answers are
    obtained and bounded), ``params`` (the limit law's parameters, also set as
    attributes: ``mu``/``sigma2`` of the eigenvalues for Cartesian rules;
    ``zero_mass``, ``negative_share``, ``positive_share`` and
    ``log_mu``/``log_sigma2`` of log|s| given s != 0 for multiplicative rules,
    s = lambda for direct, 1 + b lambda for strong / mix(1, b), b lambda for
    mix(0, b)).  Subclasses implement ``_cdf3`` and ``_ppf3``.
    """

    tier = "?"

    def __init__(self, query: _Query, tier_obj):
        self._q, self._t = query, tier_obj
        self.expression = query.label
        self.matrix = matrix_label(query.matrix, query.node, query.degrees)
        self.order = query.node.order
        self.method = tier_obj.method
        self.params: dict = {}
        self._moments: dict[int, object] = {}
        self._set_params()

    # ------------------------------------------------------------ primitives
    def _cdf3(self, x: np.ndarray, strict: bool):
        """Float arrays (estimate, lower, upper) of P(X <= x) (P(X < x) if strict).

        The one primitive each tier's subclass defines (exact, bracket, law, moments);
        every public method is derived from it and from :meth:`_ppf3`.
        """
        raise NotImplementedError(f"{type(self).__name__} is a base class: each tier's "
                                  "distribution defines _cdf3")

    def _ppf3(self, levels: list[Fraction]):
        """Lists (estimate, lower, upper) of the quantiles at exact rational levels."""
        return quantiles(self._q, self._t, levels)

    # ------------------------------------------------------------ derived
    def cdf(self, x, bounds: bool = False):
        """P(X <= x), vectorised; with ``bounds`` the arrays (estimate, lower, upper).

        Bounds are rigorous; upper bounds below the double range are reported
        as 1e-300 (the scalar ``powerspec.cdf`` gives them as mpmath numbers).
        """
        xa = self._x(x)
        est, lo, hi = self._cdf3(xa, False)
        return (est, lo, hi) if bounds else est

    def sf(self, x, bounds: bool = False):
        """P(X > x) = 1 - cdf(x); with ``bounds`` (estimate, lower, upper)."""
        est, lo, hi = self._cdf3(self._x(x), False)
        return (1 - est, 1 - hi, 1 - lo) if bounds else 1 - est

    def ppf(self, q, bounds: bool = False):
        """The q-quantile inf{x : cdf(x) >= q}, vectorised; q read as written (0.1 = 1/10).

        With ``bounds`` the arrays (estimate, lower, upper): the true quantile
        lies in [lower, upper].  Values beyond the double range make object
        arrays of mpmath numbers.
        """
        levels, shape = _levels(q)
        est, lo, hi = self._ppf3(levels)
        out = tuple(_as_array(v, shape) for v in (est, lo, hi))
        return out if bounds else out[0]

    def isf(self, q, bounds: bool = False):
        """Inverse survival function: ppf(1 - q) (exact rational complement)."""
        levels, shape = _levels(q)
        comp = [1 - f for f in levels]
        est, lo, hi = self._ppf3(comp)
        out = tuple(_as_array(v, shape) for v in (est, lo, hi))
        return out if bounds else out[0]

    def interval(self, confidence, bounds: bool = False):
        """The central interval (ppf((1 - c)/2), ppf((1 + c)/2)) holding a fraction c.

        With ``bounds`` each end is an (estimate, lower, upper) triple.
        """
        c = decimal_level(confidence)
        lo_q, hi_q = (1 - c) / 2, (1 + c) / 2
        res = self._ppf3([lo_q, hi_q])
        if bounds:
            return tuple(r[0] for r in res), tuple(r[1] for r in res)
        return res[0][0], res[0][1]

    def median(self):
        """ppf(1/2)."""
        return self._ppf3([Fraction(1, 2)])[0][0]

    def pdf(self, x):
        """Density of the distribution at x where one exists (an estimate); else NoDensityError."""
        raise NoDensityError(
            f"{self.expression}: the {self.tier} tier describes a distribution with atoms, which has "
            "no density; use cdf differences (or method='law' for a limit density)")

    # ------------------------------------------------------------ moments
    def moment(self, p: int, exact: bool = False):
        """E[lambda^p] = tr(M^p) / order, exact (a Fraction with ``exact``, else a float).

        Beyond what exact rationals can hold (direct powers at huge k) the value
        is an mpmath number computed from the factors' eigenvalues.  For complex
        spectra only p = 1 is the moment of the real parts (trace moments are
        moments of the complex eigenvalues): other p raise InputError.
        """
        if not isinstance(p, int) or isinstance(p, bool) or p < 0:
            raise InputError(f"the moment order must be a non-negative integer, got {p!r}")
        if p == 0:
            return Fraction(1) if exact else 1.0
        if self._q.node.directed and p > 1:
            raise InputError(
                "moments of the real parts of a complex spectrum are not trace moments; use mean() "
                "and var() (from the law of the real parts), or moment(1)")
        v = self._exact_moment(p)
        if exact:
            if isinstance(v, mpmath.mpf):
                raise SizeLimitError(f"tr(M^{p}) / order of {self.expression} is too large to hold "
                                     "exactly; call moment(p) without exact=True")
            return v
        return _plain(v)

    def _exact_moment(self, p: int):
        if p not in self._moments:
            try:
                vals = trace_moments(self._q.node, self._q.matrix, order=p,
                                     direction=self._q.degrees, per_vertex=True)
                for i, v in vals:
                    self._moments[i] = Fraction(v)
            except SizeLimitError:
                if p > 1:
                    self._exact_moment(p - 1)  # lower orders may still be exact
                self._moments[p] = self._float_moment(p)
        return self._moments[p]

    def _float_moment(self, p: int):
        """E[X^p] in mpmath from the flattened factor atoms (X = alpha + beta s)."""
        _, parts, alpha, beta = self._q._flat()
        mpmath.mp.dps = max(mpmath.mp.dps, 30)
        ms = []
        for j in range(p + 1):
            if self._q.mode == "mul":
                m = mpmath.mpf(1)
                for at, k in parts:
                    m *= mpmath.fsum(mpmath.mpf(float(pr)) * mpmath.mpf(float(v)) ** j
                                     for v, pr in zip(at.values, at.probs(), strict=True)) ** k
            else:
                raise SizeLimitError("additive moments are exact; this should not happen")
            ms.append(m)
        a, b = mpmath.mpf(alpha), mpmath.mpf(beta)
        return mpmath.fsum(mpmath.binomial(p, j) * a ** (p - j) * b**j * ms[j] for j in range(p + 1))

    def mean(self):
        """Mean of the (real parts of the) eigenvalues: tr(M) / order, exact."""
        return self.moment(1)

    def var(self):
        """Variance of the (real parts of the) eigenvalues: exact from tr(M) and tr(M^2)."""
        if self._q.node.directed:
            return float(self.params.get("sigma2", math.nan))
        m1, m2 = self._exact_moment(1), self._exact_moment(2)
        if isinstance(m1, Fraction) and isinstance(m2, Fraction):
            return _plain(m2 - m1 * m1)
        return mpmath.mpf(m2) - mpmath.mpf(m1) ** 2 if not isinstance(m1, Fraction) else \
            mpmath.mpf(m2) - (mpmath.mpf(m1.numerator) / m1.denominator) ** 2

    def std(self):
        """sqrt(var())."""
        v = self.var()
        return mpmath.sqrt(v) if isinstance(v, mpmath.mpf) else math.sqrt(v)

    # ------------------------------------------------------------ helpers
    @staticmethod
    def _x(x) -> np.ndarray:
        xa = np.asarray(x, dtype=float)
        if not np.all(np.isfinite(xa)):
            raise InputError("x must be finite real numbers")
        return xa

    def _set_params(self):
        q = self._q
        try:
            law = self._t if isinstance(self._t, (AddLaw, MulLaw)) else q.law()
        except (NotExactError, SizeLimitError, InputError):
            return
        a, b = q.alpha, q.beta
        if isinstance(law, AddLaw):
            p = {"mu": a + b * law.params["mean"], "sigma2": b * b * law.params["variance"]}
        else:
            p = {k: float(v) for k, v in law.params.items()}
            p["log_mu"], p["log_sigma2"] = p.pop("log_mean"), p.pop("log_variance")
        self.params = p
        for k, v in p.items():
            setattr(self, k, v)

    def __repr__(self) -> str:
        return (f"<{type(self).__name__} of {self.expression} ({self.matrix}), tier {self.tier}, "
                f"order {self.order}>")


def _plain(v):
    if isinstance(v, Fraction):
        f = float(v) if abs(v) < Fraction(10) ** 300 else math.inf
        if math.isfinite(f) and (f != 0 or v == 0):
            return f
        return mpmath.mpf(v.numerator) / v.denominator
    return v


class ExactDistribution(SpectralDistribution):
    """All atoms, exact counts (bounds widened by each atom's certified radius)."""

    tier = "exact"

    def _cdf3(self, x, strict):
        return self._t.evaluate(x, strict)

    def _ppf3(self, levels):
        res = [self._t.quantile(f) for f in levels]
        return tuple([r[i] for r in res] for i in range(3))


class BracketDistribution(SpectralDistribution):
    """Certified FFT bracket (the grid and its error bound fixed at construction)."""

    tier = "bracket"

    def _cdf3(self, x, strict):
        return self._q.x_eval(self._t, x, strict)

    def pdf(self, x):
        """Histogram density of the grid distribution, averaged over about 1% of a standard deviation.

        An estimate for additive rules off a lattice; NoDensityError otherwise.
        """
        t = self._t
        lat = isinstance(t, AddBracketTier) and t.b.shift == 0 and t.b.mean_shift == 0
        if not isinstance(t, AddBracketTier) or lat:
            return super().pdf(x)
        xa = self._x(x)
        s = (xa - self._q.alpha) / self._q.beta
        _, scale = t.bulk()
        w = max(t.h, 0.01 * scale)
        est_hi = t.b.evaluate(s + w / 2)[0]
        est_lo = t.b.evaluate(s - w / 2)[0]
        return (est_hi - est_lo) / (w * abs(self._q.beta))


class LawDistribution(SpectralDistribution):
    """Limit law with rigorous Berry--Esseen / Chernoff bounds."""

    tier = "law"

    def _cdf3(self, x, strict):
        return self._q.x_eval(self._t, x, strict)

    def pdf(self, x):
        """Density of the limit law (an estimate) -- normal mixtures for Cartesian rules.

        NoDensityError on lattices and for product laws with a point mass.
        """
        t, q = self._t, self._q
        xa = self._x(x)
        s = (xa - q.alpha) / q.beta
        if isinstance(t, AddLaw):
            if t.law.lattice is not None:
                raise NoDensityError(
                    f"{self.expression}: the eigenvalues lie on a lattice of span "
                    f"{t.law.lattice[1]:.6g}; there is no density (the local limit gives the atoms: "
                    "span * normal density)")
            dens = t.law.pdf(s.reshape(-1, 1) - t.e) @ t.p
            return dens.reshape(xa.shape) / abs(q.beta)
        law = t.law
        if law.zero > 0 or (law.window is not None and law.window.pt_mu.size):
            return super().pdf(x)
        nz = t.e != 0
        if not nz.all():
            return super().pdf(x)
        out = np.zeros(s.shape)
        with np.errstate(divide="ignore", invalid="ignore"):
            for e, p in zip(t.e, t.p, strict=True):
                y = s / e  # S = y: density of e S at s is f_S(s / e) / |e|
                u = np.log(np.abs(y))
                sign = np.sign(y)
                g = law.log_density(sign, u)
                out += p * np.where(y != 0, g / np.abs(y), 0.0) / abs(e)
        return out / abs(q.beta)


class MomentDistribution(SpectralDistribution):
    """Chebyshev--Markov--Stieltjes bounds from exact moments (non-factoring Laplacians)."""

    tier = "moments"

    def __init__(self, query: _Query):
        node = query.node
        self._tau = MomentEngine(DEFAULT_ORDER, query.degrees).normalised(node, query.matrix)
        self._lattice = node.order if isinstance(node.order, int) else None
        self._q = query
        self.expression = query.label
        self.matrix = matrix_label(query.matrix, node, query.degrees)
        self.order = node.order
        self.method = (f"moments: Chebyshev-Markov-Stieltjes bounds from the exact moments up to "
                       f"order {DEFAULT_ORDER}; estimate: midpoint of the bounds")
        self.params = {}
        self._moments = {}

    def _cdf3(self, x, strict):
        flat = np.ravel(x)
        lo = np.empty(flat.size)
        hi = np.empty(flat.size)
        for i, v in enumerate(flat):
            lo[i], hi[i] = cdf_bounds(self._tau, float(v), lattice=self._lattice)
        lo, hi = lo.reshape(x.shape), hi.reshape(x.shape)
        return (lo + hi) / 2, lo, hi

    def _ppf3(self, levels):
        # with non-negative weights the Laplacian / signless spectrum lies in [0, 2 d_max]
        # (Gershgorin); otherwise within +-sqrt(tau_2 * order) (Cauchy-Schwarz on the traces).
        # Bisection on the bounds, 60 halvings.
        top = engine_top_degree(self._q.eng, self._q.node)
        if top is not None:
            x0, x1 = 0.0, 2.0 * top * (1 + 1e-12) + 1e-300
        else:
            n = float(self.order) if isinstance(self.order, int) else 1e300
            x1 = math.sqrt(max(float(self._tau[2]), 0.0) * n) + 1.0
            x0 = -x1
        out = ([], [], [])
        for f in levels:
            t = float_up(f)
            res = []
            for side in (1, 0):
                a, b = x0, x1
                for _ in range(60):
                    m = (a + b) / 2
                    if cdf_bounds(self._tau, m, lattice=self._lattice)[side] >= t:
                        b = m
                    else:
                        a = m
                res.append((a, b))
            lower, upper = res[0][0], res[1][1]
            out[0].append((lower + upper) / 2)
            out[1].append(lower)
            out[2].append(upper)
        return out


def distribution(expr, matrix: str = "adjacency", *, method: str = "auto", tol: float | None = None,
                 limit: int | None = None, degrees: str = "out") -> SpectralDistribution:
    """The frozen eigenvalue distribution of an expression (text or node) and matrix kind.

    ``method`` is auto | exact | bracket | law (as for :func:`powerspec.cdf`);
    ``auto`` picks, among the tiers meeting ``tol`` (default 1e-3) at the
    median, the most accurate one costing at most 10x the cheapest.
    Laplacian-type kinds of non-regular direct/strong products get the
    moment-bound tier.

    >>> d = distribution("direct(K(3)^1000000000)")
    >>> d.tier, round(d.zero_mass, 12), round(d.negative_share, 3)
    ('law', 0.0, 0.5)
    """
    q = _Query(expr, matrix, method, tol, limit, degrees)
    half = [Fraction(1, 2)]

    def width_at_median(tier):
        if isinstance(tier, ExactTier):
            return 0.0
        x = quantiles(q, tier, half)[0][0]
        x = float(x) if abs(x) < 1e300 else math.copysign(1e300, float(x))
        return bound_width(q.x_eval(tier, np.array([x])))

    try:
        tier = q.choose(width_at_median, evaluations=100)
    except NotExactError as exc:
        if matrix in ("laplacian", "signless") and not q.node.directed and "not exact" in str(exc) \
                and method in ("auto", "law"):
            return MomentDistribution(q)
        raise
    if isinstance(tier, ExactTier):
        return ExactDistribution(q, tier)
    if tier.name == "bracket":
        return BracketDistribution(q, tier)
    return LawDistribution(q, tier)


__all__ = ["distribution", "SpectralDistribution", "ExactDistribution", "BracketDistribution",
           "LawDistribution", "MomentDistribution", "NoDensityError"]
