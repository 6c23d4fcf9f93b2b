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
  when the order has more than :data:`COUNT_INT_BITS` bits);
* Laplacian-type kinds of direct/strong products of non-regular factors are
  not exact functions of the factor spectra: NotExactError.

All access to spectrum and engine objects goes through the adapter section
below (:func:`_atoms` and the ``_engine_*`` helpers).

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

from powerspec.algebra.engine import DEFAULT_LIMIT, Engine, Leaf, Node, Product
from powerspec.algebra.kinds import CARTESIAN, MATRIX_KINDS, MATRIX_RULES
from powerspec.answers.answer import Answer
from powerspec.errors import InputError, NotExactError, SizeLimitError
from powerspec.numbers.counts import bit_length, log2
from powerspec.queries.common import matrix_label, resolve
from powerspec.queries.distsolve import quantiles
from powerspec.queries.disttiers import (
    AddBracketTier,
    AddLaw,
    Atoms,
    ExactTier,
    MulBracketTier,
    MulLaw,
)
from powerspec.tiers.bracket import GRID_LIMIT
from powerspec.tiers.exact import exact_feasible, exact_spectrum

METHODS = ("auto", "exact", "bracket", "law")
DEFAULT_TOL = 1e-3
"""Bound width aimed at by ``auto`` when no tolerance is given."""

COST_RATIO = 10.0
"""``auto`` never takes a tier costing more than this times the cheapest one meeting the width."""

COST_SPREAD = 3.0
"""Measured spread of the cost estimates (estimate / measured seconds, benchmarks/distribution.py)."""

OUT_SLACK = 1e-12
"""Relative widening of bracket/law bounds for the rounding of their final sums."""

COUNT_INT_BITS = 100_000
"""Orders up to this many bits give exact-integer count bounds; larger give mpmath numbers."""

EPS = float(np.finfo(float).eps)


# ---------------------------------------------------------------- adapter
def _atoms(sp) -> Atoms:
    """The one reader of spectrum objects: real values, exact multiplicities, rigorous radii.

    Returns :class:`~powerspec.queries.disttiers.Atoms`: float64 real parts of
    the certified midpoints (+-inf beyond the double range), exact Python-int
    multiplicities, and per atom a float64 radius that bounds the distance of
    the true eigenvalue from that float (the ball radius plus the rounding of
    the conversion, so exact integers keep radius 0), a relative radius (for
    values beyond the double range) and a function giving atom i's midpoint
    as a float or an mpmath number.
    """
    b = sp.as_balls()
    with np.errstate(over="ignore", under="ignore", invalid="ignore", divide="ignore"):
        mid = b.to_floats()
        values = np.asarray(mid.real if mid.dtype.kind == "c" else mid, dtype=float)
        radius = np.asarray(b.radii(), dtype=float)
        # the scaled midpoint is exact in a double unless a non-zero one lands in the subnormal range
        tiny = (np.abs(values) < 2.3e-308) & (np.asarray(b.mid) != 0)
        radius = np.where(tiny, radius + 1e-323 * 2, radius)
        # beyond the double range the value is +-inf and its error lives in the relative radius
        radius = np.where(np.isfinite(values), radius, 0.0)
        rel = np.where(b.mid != 0, b.rad / np.abs(b.mid), np.inf) * (1 + 1e-12)
    mult = [int(m) for m in sp.mult.tolist()]
    return Atoms(values, mult, radius, int(sp.order), bool(sp.is_real), sp.value,
                 np.asarray(np.real(rel), dtype=float))


def _engine_spectrum(eng: Engine, node: Node, kind: str) -> Atoms:
    # the exact tier's routes: product rules, symmetry blocks, explicit build
    return _atoms(exact_spectrum(eng, node, kind)[0])


def _engine_fits(eng: Engine, node: Node, kind: str) -> bool:
    return exact_feasible(eng, node, kind)


def _engine_bound(eng: Engine, node: Node, kind: str) -> int:
    return eng.bound(node, kind)


def _engine_top_degree(eng: Engine, node: Node) -> float | None:
    """The largest vertex degree (rounded up), or None when some weight is negative or too many."""
    if any((f.adjacency.data < 0).any() for f in node.leaves()) or not eng.fits_degrees(node):
        return None
    at = _atoms(eng.degrees(node))
    return float(np.max(at.values + at.radius))


def _engine_linear_form(eng: Engine, node: Node, kind: str):
    """(combination, operand kind, (shift, factor) as floats) of the engine's linear form."""
    comb, use, post = eng.linear_form(node, kind)
    return comb, use, tuple(_to_float(v) for v in post)


def _to_float(v) -> float:
    """A float from an exact Fraction, a flint fmpq or the midpoint of a flint ball."""
    if isinstance(v, (int, float, Fraction)):
        return float(v)
    if hasattr(v, "p") and hasattr(v, "q"):
        return float(Fraction(int(v.p), int(v.q)))
    return float(v.mid()) if hasattr(v, "mid") else float(v)


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


def _check_real(x, what: str) -> float:
    if isinstance(x, bool) or not isinstance(x, (int, float, np.integer, np.floating)):
        raise InputError(f"{what} must be a real number, got {x!r}")
    x = float(x)
    if not math.isfinite(x):
        raise InputError(f"{what} must be finite, got {x!r}")
    return x


def decimal_level(q) -> Fraction:
    """The quantile level as the exact rational the user wrote (0.1 -> 1/10), checked in (0, 1).

    Floats are read as their shortest decimal representation, so 0.1 means 1/10.

    >>> decimal_level(0.1), decimal_level("3/8"), decimal_level(Fraction(1, 3))
    (Fraction(1, 10), Fraction(3, 8), Fraction(1, 3))
    """
    bad = InputError(f"the quantile level must lie strictly between 0 and 1, got {q!r}")
    if isinstance(q, bool):
        raise bad
    try:
        if isinstance(q, (float, np.floating)):
            if not math.isfinite(float(q)):
                raise bad
            f = Fraction(repr(float(q)))
        elif isinstance(q, (int, np.integer, Fraction)):
            f = Fraction(q)
        elif isinstance(q, str):
            f = Fraction(q.strip())
        elif hasattr(q, "as_integer_ratio"):  # decimal.Decimal and friends: their exact value
            f = Fraction(*q.as_integer_ratio())
        else:
            raise bad
    except (ValueError, ZeroDivisionError, OverflowError) as exc:
        raise bad from exc
    if not 0 < f < 1:
        raise bad
    return f


def float_up(f: Fraction) -> float:
    """The smallest float >= f (so that for floats v: v >= f <=> v >= float_up(f))."""
    v = float(f)
    return v if Fraction(v) >= f else math.nextafter(v, math.inf)


# ---------------------------------------------------------------- flatten
def _flatten(eng: Engine, node: Node, kind: str):
    """(comb, [(Atoms in s-space, copies)], alpha, beta): X = alpha + beta * s, or None.

    Nested products with the same exact rule are merged (cart(cart(G^a)^b) is
    cart(G^(ab))); other operands must have exact spectra.
    """
    if isinstance(node, Leaf):
        # a single factor: one copy under the additive rule (its spectrum is exact anyway)
        return CARTESIAN, [(_engine_spectrum(eng, node, kind), 1)], 0.0, 1.0
    comb, use, post = _engine_linear_form(eng, node, kind)
    if comb.mode not in ("add", "mul"):
        return None  # a left fold (a outside {0, 1}) or the zero rule (a = b = 0)
    parts = []  # operand spectra mapped to s-space
    to_shift, to_factor = (float(v) for v in comb.to_s())

    def collect(n, mult):
        for child, k in n.operands:
            if isinstance(child, Product) and MATRIX_RULES[use](child.comb) == comb:
                collect(child, mult * k)
            else:
                try:
                    at = _engine_spectrum(eng, child, use)
                except SizeLimitError as exc:
                    raise SizeLimitError(
                        f"the distribution tiers need an exact spectrum of each operand of the "
                        f"outer product; {child.label()} is too large ({exc})") from exc
                if not np.all(np.isfinite(at.values)):
                    raise SizeLimitError(
                        f"{child.label()}: operand eigenvalues beyond the double range; ask for a "
                        "smaller operand")
                parts.append((at if (to_shift, to_factor) == (0.0, 1.0)
                              else at.mapped(to_shift, to_factor), mult * k))

    collect(node, 1)
    back_shift, back_factor = comb.from_s()
    alpha = post[0] + post[1] * back_shift
    beta = post[1] * back_factor
    return comb, parts, alpha, beta


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
        self.costs: dict[str, float] = {}  # estimated seconds of the tiers considered by choose
        self.meeting: dict[str, float] = {}  # ... of those predicted to meet the width

    # -- tier construction
    def _flat(self):
        if self.flat is None:
            self.flat = _flatten(self.eng, self.node, self.matrix)
            if self.flat is None:
                raise NotExactError(
                    f"{self.label}: the bracket and law tiers need cart, direct, strong or mix(a, b) "
                    "with a in {0, 1} and b != 0 (other mix rules are left folds or the zero "
                    "matrix); use the exact tier (a smaller power, or a larger --limit)")
            self.mode = self.flat[0].mode
            self.alpha, self.beta = self.flat[2], self.flat[3]
        return self.flat

    def exact(self):
        if not _engine_fits(self.eng, self.node, self.matrix):
            raise SizeLimitError(
                f"the exact spectrum of {self.label} may hold up to "
                f"{_engine_bound(self.eng, self.node, self.matrix)} distinct eigenvalues with exact "
                f"multiplicities of up to {bit_length(self.node.order)} bits, beyond the limit of "
                f"{self.eng.limit} atoms / 2 GiB; use --method bracket or law")
        try:
            at = _engine_spectrum(self.eng, self.node, self.matrix)
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

    def exact_cost(self, evaluations: int = 1) -> float:
        """Estimated seconds of the exact tier (measured: ~3.5 us per candidate atom, 1 ms fixed).

        The per-atom cost covers the spectrum and the exact tier's three sorted
        views with exact cumulative counts (cart(C(5)^1000): 5 * 10^5 atoms,
        3.8 s measured; cart(C(7)^200): 1.4 * 10^6 atoms, 5.5 s).
        """
        bound = _engine_bound(self.eng, self.node, self.matrix)
        bits = max(1, bit_length(self.node.order))
        return 1e-3 + 3.5e-6 * bound * (1 + bits / 2048) + 2e-5 * evaluations

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
            return self.exact()
        if m == "law":
            return self.law()
        if m == "bracket":
            return self.bracket(self.tol or DEFAULT_TOL)
        tol = self.tol if self.tol is not None else DEFAULT_TOL
        cands: dict[str, tuple[float, float]] = {}  # name -> (cost, width)
        if _engine_fits(self.eng, self.node, self.matrix):
            cands["exact"] = (self.exact_cost(evaluations), 0.0)
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
        rank = {"exact": 0, "bracket": 1, "law": 2}
        widths = {"law": w_law}  # of the tiers tried
        while meet:
            cheapest = min(v[0] for v in meet.values())
            name = min((k for k, v in meet.items() if v[0] <= COST_RATIO / COST_SPREAD * cheapest),
                       key=lambda k: (meet[k][1], rank[k]))
            if name == "law":
                return law
            try:
                tier = self.exact() if name == "exact" else self.bracket(tol)
                w = width_of(tier)
                if w <= tol:
                    return tier
                widths[name] = w
            except SizeLimitError:
                widths[name] = math.inf
            del meet[name]  # it does not meet the width after all: choose again among the rest
            self.meeting.pop(name)
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


def _float_down(v) -> float:
    """The largest float <= v (exact Fractions are rounded outward)."""
    f = float(v)
    return f if not isinstance(v, Fraction) or Fraction(f) <= v else math.nextafter(f, -math.inf)


def _float_up(v):
    """The smallest float >= v (an mpmath number is kept when below the double range)."""
    if isinstance(v, mpmath.mpf):
        f = float(v)
        return v if (f == 0 and v != 0) else (f if f >= v else math.nextafter(f, math.inf))
    f = float(v)
    return f if not isinstance(v, Fraction) or Fraction(f) >= v else math.nextafter(f, math.inf)


def _width(b) -> float:
    return float(np.ravel(b[2])[0]) - float(np.ravel(b[1])[0])


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
    x = _check_real(x, "x")
    tier = q.choose(lambda t: _width(q.x_eval(t, np.array([x]))))
    est, lo, hi = q.x_cdf(tier, x)
    return _answer("cdf", q, tier, float(est), _float_down(lo), _float_up(hi), {"x": x})


def _scale_count(n, frac, kind: str):
    """n * frac as a count: exact int (floor/ceil for bounds) or mpmath for enormous orders."""
    if isinstance(frac, mpmath.mpf):
        nn = mpmath.mpf(int(n)) if isinstance(n, int) else mpmath.power(2, mpmath.mpf(log2(n)))
        return nn * frac
    if isinstance(n, int) and n.bit_length() <= COUNT_INT_BITS:
        v = Fraction(frac) * n
        if kind == "lo":
            return max(0, math.ceil(v))
        if kind == "hi":
            return min(n, math.floor(v))
        return float(v) if n.bit_length() <= 1000 else mpmath.mpf(v.numerator) / v.denominator
    nn = mpmath.mpf(int(n)) if isinstance(n, int) else mpmath.power(2, mpmath.mpf(log2(n)))
    return nn * mpmath.mpf(float(frac))


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
    a = _check_real(a, "a")
    b = _check_real(b, "b")
    if a > b:
        raise InputError(f"count needs a <= b, got a = {a!r} > b = {b!r}")

    def frac(tier):
        hb = q.x_cdf(tier, b, False)
        ha = q.x_cdf(tier, a, True)
        return hb[0] - ha[0], max(0, hb[1] - ha[2]), min(1, hb[2] - ha[1])

    tier = q.choose(lambda t: _width(frac(t)), evaluations=2)
    est, lo, hi = frac(tier)
    n = q.node.order
    if isinstance(tier, ExactTier):
        vals = tuple(int(v * n) for v in (est, lo, hi))
        return _answer("count", q, tier, *vals, {"a": a, "b": b})
    lo = max(0.0, float(lo))
    hi = float(hi) if not isinstance(hi, mpmath.mpf) else hi
    est = min(max(float(est), lo), float(hi))
    vals = (_scale_count(n, est, "est"), _scale_count(n, lo, "lo"), _scale_count(n, hi, "hi"))
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
    from_law: dict[int, tuple] = {}

    def width_at_estimate(tier):
        if isinstance(tier, ExactTier):
            return 0.0
        res = quantiles(q, tier, [level])
        from_law[id(tier)] = res
        x = res[0][0]
        x = float(x) if isinstance(x, float) or abs(x) < 1e300 else math.copysign(1e300, float(x))
        return _width(q.x_eval(tier, np.array([x])))

    tier = q.choose(width_at_estimate, evaluations=30)
    if isinstance(tier, ExactTier):
        est, lo, hi = tier.quantile(level)
        return _answer("quantile", q, tier, est, lo, hi, {"q": float(level)})
    est, lo, hi = (v[0] for v in from_law.get(id(tier)) or quantiles(q, tier, [level]))
    return _answer("quantile", q, tier, est, lo, hi, {"q": float(level)})


__all__ = ["cdf", "count", "quantile", "METHODS", "DEFAULT_TOL", "decimal_level"]
