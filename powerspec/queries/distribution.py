"""Distribution queries: cdf, count and quantile of a product's eigenvalues, in three tiers.

* **exact** -- the full exact spectrum: exact integer counts, widened by the
  atoms' certified radii;
* **bracket** -- a certified bracket by one-FFT grid convolution
  (:mod:`powerspec.tiers.bracket`);
* **law** -- a limit law with rigorous Berry--Esseen / Chernoff bounds and an
  Edgeworth / saddlepoint estimate (:mod:`powerspec.tiers.laws`,
  :mod:`powerspec.tiers.lawproduct`); an exactly known small part of the
  product (operands with few copies) is kept exact and the answer is a
  mixture of shifted laws over its atoms.

``method='auto'`` picks among the tiers that meet the wanted width (``tol``,
or :data:`DEFAULT_TOL` when none is given) by a cost model (see
:meth:`_Query.choose`): the most accurate tier whose estimated cost is
within :data:`COST_RATIO` (less the estimates' spread, :data:`COST_SPREAD`) of
the cheapest one that meets the width.  With
``tol`` given and no tier meeting it, SizeLimitError; without ``tol`` the law
answers.  The chosen tier is named in ``Answer.method``.

Conventions (the user-visible contract):

* complex spectra (directed factors) are ranked by **real part**: cdf(x) is the
  fraction of eigenvalues with Re <= x.  For Cartesian rules this is exact
  (real parts add); multiplicative rules with complex spectra are exact-tier only;
* every atom carries a certified radius; an atom within it of x is counted in
  the upper bound only -- so a bound never depends on a rounding accident;
* a quantile level is taken as the decimal it was written as (0.1 is 1/10,
  not the binary double just above it);
* bounds of the bracket and law tiers are on the *fraction* of eigenvalues;
  ``count`` multiplies by the exact order (exact integers, or mpmath numbers
  when the order has more than
  :data:`~powerspec.queries.distnumbers.COUNT_INT_BITS` bits);
* Laplacian-type kinds of direct/strong products of non-regular factors are
  not exact functions of the factor spectra: NotExactError.

All access to spectrum and engine objects goes through the adapter module
:mod:`powerspec.queries.distsource`.

>>> a = cdf("cart(K(2)^10)", 0)
>>> a.estimate, a.lower, a.upper, a.method.split(":")[0]
(0.623046875, 0.623046875, 0.623046875, 'exact')
>>> count("cart(K(2)^10)", -2, 2).estimate   # C(10,4)+C(10,5)+C(10,6)
672
"""

from __future__ import annotations

import math
from fractions import Fraction

import mpmath
import numpy as np

from powerspec.algebra.engine import DEFAULT_LIMIT, Engine
from powerspec.algebra.kinds import MATRIX_KINDS
from powerspec.answers.answer import Answer
from powerspec.errors import InputError, NotExactError, SizeLimitError
from powerspec.numbers.counts import bit_length, log2
from powerspec.queries.common import matrix_label, resolve
from powerspec.queries.distends import WindowTier
from powerspec.queries.distnumbers import (
    bound_width,
    check_real,
    decimal_level,
    round_down,
    round_up,
    scale_count,
)
from powerspec.queries.distsolve import quantiles
from powerspec.queries.distsource import (
    ends_tiers,
    engine_bound,
    engine_fits,
    engine_spectrum,
    flatten,
    window_cost,
    window_tier,
)
from powerspec.queries.disttiers import (
    AddBracketTier,
    AddLaw,
    ExactTier,
    MulBracketTier,
    MulLaw,
)
from powerspec.tiers.bracket import GRID_LIMIT
from powerspec.tiers.exact import exact_seconds

METHODS = ("auto", "exact", "bracket", "law")
DEFAULT_TOL = 1e-3
"""Bound width aimed at by ``auto`` when no tolerance is given."""

COST_RATIO = 10.0
"""``auto`` never takes a tier costing more than this times the cheapest one meeting the width."""

COST_SPREAD = 3.0
"""Measured spread of the cost estimates (estimate / measured seconds, benchmarks/distribution.py)."""

OUT_SLACK = 1e-12
"""Relative widening of bracket/law bounds for the rounding of their final sums."""

ENDS_GATE = 0.02
"""Predicted seconds of the cheapest tier meeting the width above which the ends tier is tried."""

ENDS_BUDGET = 0.5
"""Most predicted seconds of ends-tier search before a dearer tier that meets the width."""

ENDS_TAIL = 10**12
"""Eigenvalues on one side of a query up to which a law or bracket answer is refined by the ends."""

ENDS_TAIL_FRACTION = 1e-6
"""... or up to this fraction of them (the multiplicities of far tails are large: few atoms)."""

ENDS_SURE = 4096
"""... up to which the search surely lists them all within ENDS_BUDGET (at most one atom each)."""

ENDS_PROBE = 0.05
"""Predicted seconds of ends-tier search past ENDS_SURE (two rounds from each end)."""

ENDS_REACH = 2.0
"""Most predicted seconds of ends-tier search for ``method='exact'`` past the exact tier's limit."""


EPS = float(np.finfo(float).eps)

EXACT_TIERS = (ExactTier, WindowTier)
"""Tiers whose counts are exact integers (bounds widened only by certified radii)."""


# ----------------------------------------------------------------- checks
def _check_method(method, tol):
    if method not in METHODS:
        raise InputError(f"unknown method {method!r}; choose one of {', '.join(METHODS)}")
    if tol is not None:
        if isinstance(tol, bool) or not isinstance(tol, (int, float)) or not math.isfinite(tol) \
                or tol <= 0:
            raise InputError(
                f"tol must be a positive finite number (the wanted bound width), got {tol!r}")
        if tol >= 1:
            raise InputError(
                f"tol is a width on the fraction of eigenvalues; use a value below 1, got {tol!r}")


# ---------------------------------------------------------------- driver
class _Query:
    """Resolved expression + chosen tier; evaluates P(X <= x) with bounds, vectorised."""

    def __init__(self, expr, matrix, method, tol, limit, degrees):
        _check_method(method, tol)
        if matrix not in MATRIX_KINDS:
            raise InputError(f"unknown matrix kind {matrix!r}; choose one of {', '.join(MATRIX_KINDS)}")
        self.node = resolve(expr)
        self.matrix, self.method_req, self.tol = matrix, method, tol
        self.degrees = degrees
        self.eng = Engine(DEFAULT_LIMIT if limit is None else limit, direction=degrees)
        self.grid_limit = GRID_LIMIT
        self.label = self.node.label()
        self.flat = None
        self.mode = None
        self.at_points = False  # set by cdf, count, quantile: the ends tier answers at points only
        # set by count: a window tier may answer, and an ends tier may hold a factored order
        # (no fraction of it is formed)
        self.window: tuple[float, float] | None = None
        self.costs: dict[str, float] = {}  # estimated seconds of the tiers considered by choose
        self.meeting: dict[str, float] = {}  # ... of those predicted to meet the width

    # -- tier construction
    def _flat(self):
        if self.flat is None:
            self.flat = flatten(self.eng, self.node, self.matrix)
            if self.flat is None:
                raise NotExactError(
                    f"{self.label}: the bracket and law tiers need cart, direct, strong or mix(a, b) "
                    "with a in {0, 1} and b != 0 (other mix rules are left folds or the zero "
                    "matrix); use the exact tier (a smaller power, or a larger --limit)")
            self.mode = self.flat[0].mode
            self.alpha, self.beta = self.flat[2], self.flat[3]
        return self.flat

    def exact(self):
        if not engine_fits(self.eng, self.node, self.matrix):
            raise SizeLimitError(
                f"the exact spectrum of {self.label} may hold up to "
                f"{engine_bound(self.eng, self.node, self.matrix)} distinct eigenvalues with exact "
                f"multiplicities of up to {bit_length(self.node.order)} bits, beyond the limit of "
                f"{self.eng.limit} atoms / 2 GiB; use --method bracket or law")
        try:
            at = engine_spectrum(self.eng, self.node, self.matrix)
        except SizeLimitError as exc:
            raise SizeLimitError(
                f"the exact spectrum of {self.label} does not fit the limit ({exc}); use "
                "--method bracket or law") from exc
        return ExactTier(at)

    def law(self):
        _, parts, _, _ = self._flat()
        return AddLaw(parts) if self.mode == "add" else MulLaw(parts, self.label)

    def bracket(self, tol, plan_only: bool = False):
        _, parts, _, _ = self._flat()
        if self.mode == "add":
            return AddBracketTier(parts, tol, self.grid_limit, plan_only)
        return MulBracketTier(parts, tol, self.grid_limit, self.label, plan_only)

    def ends(self, width_of, tol: float, budget: float):
        """The first ends tier (atoms listed from the bottom or the top of the spectrum, see
        :func:`~powerspec.queries.distsource.ends_tiers`) whose width meets ``tol`` within
        ``budget`` seconds of predicted search, or None."""
        if not self.at_points or not (isinstance(self.node.order, int) or self.window):
            return None  # cdf and quantile form fractions of the order: it must be an int
        for tier in ends_tiers(self.eng, self.node, self.matrix, budget):
            if width_of(tier) <= tol:
                return tier
        return None

    def window_cost(self) -> float | None:
        """Predicted seconds of the window tier (count queries of additive rules), else None."""
        if self.window is None:
            return None
        return window_cost(self.eng, self.node, self.matrix)

    def window_tier(self, seconds: float = math.inf) -> WindowTier:
        """The window tier of the count's [a, b] (SizeLimitError past its limits, or when its
        candidates would take more than about ``seconds`` to certify)."""
        try:
            return window_tier(self.eng, self.node, self.matrix, *self.window, seconds)
        except NotExactError as exc:
            raise SizeLimitError(str(exc)) from exc

    def refine(self, tier, width_of, below, above):
        """An ends tier in place of ``tier`` where that is narrower and cheap to find.

        ``below`` / ``above`` are ``tier``'s upper bounds on the fractions of
        eigenvalues on either side of the query; when one of them holds at most
        ENDS_TAIL eigenvalues (or the fraction ENDS_TAIL_FRACTION), the
        best-first search from that end may list few atoms (never more than
        the eigenvalues, often far fewer), so it is tried: with
        ENDS_BUDGET when the side holds at most ENDS_SURE eigenvalues (the
        search then surely reaches the query), else with ENDS_PROBE.
        Returns ``tier`` itself when nothing narrower is found.
        """
        if isinstance(tier, EXACT_TIERS) or self.method_req != "auto":
            return tier
        tail = min(mpmath.mpf(below), mpmath.mpf(above))  # an mpmath number below the double range
        count = -math.inf if tail <= 0 else float(mpmath.log(tail, 2)) + log2(self.node.order)
        if count > math.log2(ENDS_TAIL) and tail > ENDS_TAIL_FRACTION:
            return tier
        budget = ENDS_BUDGET if count <= math.log2(ENDS_SURE) else ENDS_PROBE
        # half the width (which may have underflowed to 0: then only an exact count will do)
        return self.ends(width_of, width_of(tier) / 2, budget) or tier

    def exact_cost(self, evaluations: int = 1) -> float:
        """Estimated seconds of the exact tier (measured: ~3.5 us per candidate atom, 1 ms fixed).

        The per-atom cost covers the spectrum and the exact tier's three sorted
        views with exact cumulative counts (cart(C(5)^1000): 5 * 10^5 atoms,
        3.8 s measured; cart(C(7)^200): 1.4 * 10^6 atoms, 5.5 s).  Spectra that
        the product rules do not give cost what their route costs
        (:func:`~powerspec.tiers.exact.exact_seconds`: symmetry blocks or an
        explicit build).
        """
        bits = max(1, bit_length(self.node.order))
        per_atom = 3.5e-6 * (1 + bits / 2048)
        return 1e-3 + exact_seconds(self.eng, self.node, self.matrix, per_atom) + 2e-5 * evaluations

    def choose(self, width_of, evaluations: int = 1):
        """Pick the tier; ``width_of(tier)`` is the bound width of the query under that tier.

        Candidates are the tiers whose width meets ``tol`` (DEFAULT_TOL when not
        given): exact (width measured once built), bracket (width predicted
        from its grid plan, measured once built), law (measured: it is cheap).
        Among those estimated at most COST_RATIO / COST_SPREAD times the cheapest
        (so that, with the estimates' measured spread, none costs COST_RATIO
        times the cheapest), the narrowest is built first; one that turns out
        wider than ``tol`` is passed over.
        Costs: :meth:`exact_cost`, the bracket plan's FFT size, the law's
        per-evaluation cost (all measured on this project's 2-core machine,
        see benchmarks/distribution.py); ``evaluations`` is how many CDF
        evaluations the query needs (about 30 for a quantile).
        """
        m = self.method_req
        if m == "exact":
            fits = engine_fits(self.eng, self.node, self.matrix)
            full = self.exact_cost(evaluations) if fits else math.inf
            cost = self.window_cost()
            if cost is not None and cost < full:
                try:
                    return self.window_tier(full)
                except SizeLimitError:
                    pass
            if full > ENDS_GATE:
                # the atoms at one end may answer exactly before the full spectrum is built
                tier = self.ends(width_of, self.tol or 0.0, ENDS_BUDGET if fits else ENDS_REACH)
                if tier is not None:
                    return tier
            return self.exact()
        if m == "law":
            return self.law()
        if m == "bracket":
            return self.bracket(self.tol or DEFAULT_TOL)
        tol = self.tol if self.tol is not None else DEFAULT_TOL
        cands: dict[str, tuple[float, float]] = {}  # name -> (cost, width)
        if engine_fits(self.eng, self.node, self.matrix):
            cands["exact"] = (self.exact_cost(evaluations), 0.0)
        if (cost := self.window_cost()) is not None:
            cands["window"] = (cost, 0.0)
        law, w_law, plan = None, math.inf, None
        try:
            self._flat()
            law = self.law()
        except (NotExactError, SizeLimitError):
            if not cands:
                raise
        if law is not None:
            w_law = width_of(law)
            cands["law"] = (law.cost(evaluations), w_law)
            try:
                plan = self.bracket(tol, plan_only=True)
                cands["bracket"] = (plan.cost(evaluations), plan.predicted_width)
            except SizeLimitError:
                pass
        self.costs = {k: v[0] for k, v in cands.items()}
        meet = {k: v for k, v in cands.items() if v[1] <= tol}
        self.meeting = {k: v[0] for k, v in meet.items()}
        cheapest = min((v[0] for v in meet.values()), default=math.inf)
        ends_tried = cheapest > ENDS_GATE
        if ends_tried:
            # near an end of the spectrum a few listed atoms count exactly: try them for a
            # fraction of what the cheapest tier meeting the width would cost
            tier = self.ends(width_of, tol, min(ENDS_BUDGET, cheapest / COST_SPREAD))
            if tier is not None:
                return tier
        rank = {"window": 0, "exact": 1, "bracket": 2, "law": 3}
        widths = {"law": w_law}  # of the tiers tried
        while meet:
            cheapest = min(v[0] for v in meet.values())
            name = min((k for k, v in meet.items() if v[0] <= COST_RATIO / COST_SPREAD * cheapest),
                       key=lambda k: (meet[k][1], rank[k]))
            if name == "law":
                return law
            try:
                others = [v[0] for k, v in meet.items() if k != name]
                tier = (self.exact() if name == "exact"
                        else self.window_tier(min(others, default=math.inf)) if name == "window"
                        else self.bracket(tol))
                w = width_of(tier)
                if w <= tol:
                    return tier
                widths[name] = w
            except SizeLimitError:
                widths[name] = math.inf
            del meet[name]  # it does not meet the width after all: choose again among the rest
            self.meeting.pop(name)
        if not ends_tried:  # every tier predicted to meet the width turned out wider
            tier = self.ends(width_of, tol, ENDS_BUDGET)
            if tier is not None:
                return tier
        if self.tol is None:
            if law is not None:
                return law
            return self.exact()
        tried = ", ".join(f"{k} {v:.3g}" for k, v in widths.items() if math.isfinite(v))
        raise SizeLimitError(
            f"no tier meets tol={self.tol:g} for {self.label} (certified widths: {tried}; an "
            "eigenvalue known only to its error radius at the query point also widens the exact "
            "tier); ask for a wider tol or another point")

    # -- evaluation in x
    def _s(self, t):
        """(sign, log|t|) arrays for the multiplicative tiers."""
        with np.errstate(divide="ignore"):
            u = np.log(np.abs(t))
        return np.sign(t), np.where(t == 0, 0.0, u)

    def _ev(self, tier, t, strict, d=None):
        """The tier at s = t, its bounds widened for |s - t| <= d (one evaluation serves all three)."""
        if self.mode == "add":
            return tier.evaluate(t, strict, 0.0 if d is None else d)
        sign, u = self._s(t)
        if d is None:
            return tier.evaluate(sign, u, strict)
        with np.errstate(divide="ignore", invalid="ignore"):
            du = np.log1p(d / np.abs(t)) * (1 + 1e-12)  # |log|s| - log|t|| for |s - t| <= d < |t|
        return tier.evaluate(sign, u, strict, du)

    def _threshold(self, x):
        """(t, d): s = (x - alpha) / beta rounded, and a bound d on its rounding error (no overflow)."""
        a, b = self.alpha, self.beta
        with np.errstate(over="ignore", invalid="ignore"):
            t = (x - a) / b
            if a == 0 and b == 1:
                return t, np.zeros_like(t)
            d = 4 * EPS * np.abs(x) / abs(b) + 4 * EPS * abs(a) / abs(b) + 4 * EPS * np.abs(t) + 1e-300
        return t, d

    def x_eval(self, tier, x, strict: bool = False):
        """Float arrays (estimate, lower, upper) of P(Re X <= x) (P(Re X < x) if strict)."""
        x = np.asarray(x, dtype=float)
        if isinstance(tier, ExactTier):
            return tier.evaluate(x, strict)
        self._flat()
        b = self.beta
        t, d = self._threshold(x)
        # the rounding d of s = (x - alpha) / beta is folded into the tier's own bounds; only a
        # multiplicative rule with t within d of 0 (the sign of s unknown) needs separate points
        split = self.mode == "mul" and bool(np.any(np.abs(t) <= 2 * d))
        if b > 0:
            e = self._ev(tier, t, strict, None if split else d)
            lo = self._ev(tier, t - d, strict)[1] if split else e[1]
            hi = self._ev(tier, t + d, strict)[2] if split else e[2]
            e = e[0]
        else:
            c = self._ev(tier, t, not strict, None if split else d)
            lo = 1 - (self._ev(tier, t + d, not strict)[2] if split else c[2])
            hi = 1 - (self._ev(tier, t - d, not strict)[1] if split else c[1])
            e = 1 - c[0]
        lo = np.maximum(0.0, lo * (1 - OUT_SLACK) - OUT_SLACK * 1e-3)
        hi = np.minimum(1.0, hi * (1 + OUT_SLACK))
        hi = np.where(hi > 0, np.maximum(hi, 1e-300), 0.0)
        return np.clip(np.nan_to_num(e, nan=0.5), lo, hi), lo, hi

    def x_cdf(self, tier, x: float, strict: bool = False):
        """(estimate, lower, upper) of P(Re X <= x) for one x: exact Fractions in the exact tier."""
        if isinstance(tier, ExactTier):
            n = tier.order
            return tuple(Fraction(v, n) for v in tier.counts(x, strict))
        e, lo, hi = (float(v[0]) for v in self.x_eval(tier, np.array([x]), strict))
        if hi <= 1e-290 and isinstance(tier, AddLaw) and self.beta > 0 and self.mode == "add":
            # the upper bound underflows: report it as an mpmath number from the Chernoff exponent
            t, d = self._threshold(np.array([x]))
            hi = min(mpmath.mpf(1), max(mpmath.mpf(0), tier.log_upper(float(t[0] + d[0])))
                     * (1 + 2 * OUT_SLACK))
        return e, lo, hi


def _answer(query, q: _Query, tier, est, lo, hi, inputs):
    return Answer(query, q.label, matrix_label(q.matrix, q.node, q.degrees), q.node.order,
                  tier.method, estimate=est, lower=lo, upper=hi,
                  inputs={**inputs, "method": q.method_req, "tol": q.tol, "limit": q.eng.limit,
                          "degrees": q.degrees, "tier": tier.name})


def cdf(expr, x, matrix: str = "adjacency", *, method: str = "auto", tol: float | None = None,
        limit: int | None = None, degrees: str = "out") -> Answer:
    """Fraction of eigenvalues with (real part) <= x, with rigorous lower/upper bounds.

    Returns an :class:`Answer` (query "cdf") whose ``estimate``, ``lower`` and
    ``upper`` are floats in [0, 1] (an upper bound below the double range is an
    mpmath number) and whose ``method`` names the tier and the error bound
    used.  ``method`` is auto | exact | bracket | law; ``tol`` the wanted width
    upper - lower.

    >>> a = cdf("cart(K(2)^1000000000)", 0.0, method="law")
    >>> a.method.split(":")[0], a.lower <= 0.5 <= a.upper, a.upper - a.lower < 1e-4
    ('law', True, True)
    """
    q = _Query(expr, matrix, method, tol, limit, degrees)
    q.at_points = True
    x = check_real(x, "x")

    def width(t):
        return bound_width(q.x_eval(t, np.array([x])))

    tier = q.choose(width)
    est, lo, hi = q.x_cdf(tier, x)
    better = q.refine(tier, width, hi, 1 - lo)
    if better is not tier:
        tier, (est, lo, hi) = better, q.x_cdf(better, x)
    return _answer("cdf", q, tier, float(est), round_down(lo), round_up(hi), {"x": x})


def count(expr, a, b, matrix: str = "adjacency", *, method: str = "auto", tol: float | None = None,
          limit: int | None = None, degrees: str = "out") -> Answer:
    """Number of eigenvalues with (real part) in [a, b], out of the exact order.

    Exact tier: exact Python ints.  Bracket/law tiers: the fraction bounds
    times the order -- lower rounded up and upper rounded down to integers
    (counts are integers), the estimate a float; mpmath numbers when the
    order is astronomically large.  ``tol`` is a width on the fraction.

    >>> count("direct(K(1, 3)^3)", 0, 0).estimate   # 4^3 - 2^3 zero eigenvalues
    56
    """
    q = _Query(expr, matrix, method, tol, limit, degrees)
    q.at_points = True
    a = check_real(a, "a")
    b = check_real(b, "b")
    if a > b:
        raise InputError(f"count needs a <= b, got a = {a!r} > b = {b!r}")

    n = q.node.order

    def cdf_at_ends(tier):
        return q.x_cdf(tier, b, False), q.x_cdf(tier, a, True)

    def frac(hb, ha):
        return hb[0] - ha[0], max(0, hb[1] - ha[2]), min(1, hb[2] - ha[1])

    def exact_counts(tier):
        # exact integers straight from the cumulative counts (no fractions of the order)
        if isinstance(tier, WindowTier):
            return tier.counts3
        cb, ca = tier.counts(b, False), tier.counts(a, True)
        return cb[0] - ca[0], max(0, cb[1] - ca[2]), min(n, cb[2] - ca[1])

    def width(tier):
        if not isinstance(tier, EXACT_TIERS):
            return bound_width(frac(*cdf_at_ends(tier)))
        _, lo, hi = exact_counts(tier)
        return 0.0 if hi == lo else 2.0 ** (log2(hi - lo) - log2(n))

    q.window = (a, b)
    tier = q.choose(width, evaluations=2)
    if not isinstance(tier, EXACT_TIERS):
        hb, ha = cdf_at_ends(tier)
        tier = q.refine(tier, width, hb[2], 1 - ha[1])  # the same tier, or an exact one
    if isinstance(tier, EXACT_TIERS):
        return _answer("count", q, tier, *exact_counts(tier), {"a": a, "b": b})
    est, lo, hi = frac(hb, ha)
    lo = max(0.0, float(lo))
    hi = float(hi) if not isinstance(hi, mpmath.mpf) else hi
    est = min(max(float(est), lo), float(hi))
    vals = (scale_count(n, est, "est"), scale_count(n, lo, "lo"), scale_count(n, hi, "hi"))
    vals = (min(max(vals[0], vals[1]), vals[2]), vals[1], vals[2])  # the estimate within its bounds
    return _answer("count", q, tier, *vals, {"a": a, "b": b})


def quantile(expr, p, matrix: str = "adjacency", *, method: str = "auto", tol: float | None = None,
             limit: int | None = None, degrees: str = "out") -> Answer:
    """The p-quantile inf{x : cdf(x) >= p} of the (real parts of the) eigenvalues, with bounds.

    ``p`` is taken as the decimal it was written as (0.1 is exactly 1/10; a
    Fraction or a string such as "1/3" is exact too).  ``lower``/``upper``
    bracket the true quantile (points where the upper/lower CDF bound was
    evaluated below/at p); values beyond the double range are mpmath numbers.
    ``tol`` is a width on the CDF, as for :func:`cdf`.

    >>> quantile("cart(K(2)^10)", 0.5).estimate
    0.0
    >>> quantile("cart(P(5), P(2))", 0.1).estimate   # the smallest of 10 eigenvalues, -1 - sqrt(3)
    -2.732050807568877
    """
    level = decimal_level(p)
    q = _Query(expr, matrix, method, tol, limit, degrees)
    q.at_points = True
    from_law: dict[int, tuple] = {}

    def width_at_estimate(tier):
        if isinstance(tier, ExactTier):
            return tier.quantile_width(level)
        res = quantiles(q, tier, [level])
        from_law[id(tier)] = res
        x = res[0][0]
        x = float(x) if isinstance(x, float) or abs(x) < 1e300 else math.copysign(1e300, float(x))
        return bound_width(q.x_eval(tier, np.array([x])))

    tier = q.choose(width_at_estimate, evaluations=30)
    if isinstance(tier, ExactTier):
        est, lo, hi = tier.quantile(level)
        return _answer("quantile", q, tier, est, lo, hi, {"q": float(level)})
    est, lo, hi = (v[0] for v in from_law.get(id(tier)) or quantiles(q, tier, [level]))
    return _answer("quantile", q, tier, est, lo, hi, {"q": float(level)})


__all__ = ["cdf", "count", "quantile", "METHODS", "DEFAULT_TOL", "decimal_level"]
