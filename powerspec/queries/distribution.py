"""Distribution queries: cdf, count and quantile of a product's eigenvalues, in three tiers.

* **exact** -- the full exact spectrum (:meth:`Engine.spectrum` when
  :meth:`Engine.fits`): exact integer counts;
* **bracket** -- a certified bracket by grid convolution (:mod:`powerspec.bracket`);
* **law** -- a limit law with rigorous Berry--Esseen / Chernoff bounds and an
  Edgeworth / saddlepoint estimate (:mod:`powerspec.laws`); an exactly
  known small part of the product (operands with few copies) is kept exact and
  the answer is a mixture of shifted laws over its atoms.

``method='auto'`` takes the exact tier when the spectrum fits the limit;
without ``tol`` it then tries the bracket at :data:`DEFAULT_TOL` and falls
back to the law; with ``tol`` it takes the law when its bound is that narrow,
else the bracket built for that width, and raises SizeLimitError when neither
can meet it.  The chosen tier is named in ``Answer.method``.

Conventions (the user-visible contract):

* complex spectra (directed factors) are ranked by **real part**: cdf(x) is the
  fraction of eigenvalues with Re <= x.  For Cartesian rules this is exact
  (real parts add); multiplicative rules with complex spectra are exact-tier only;
* eigenvalues that the factor layer snapped to integers are taken as exact;
  every other atom carries the spectrum's rounding allowance (atol plus the
  merging tolerance), and an atom within it of x is counted in the upper bound
  only -- so a bound never depends on a rounding accident;
* bounds of the bracket and law tiers are on the *fraction* of eigenvalues;
  ``count`` multiplies by the exact order (exact integers, or mpmath numbers
  when the order has more than :data:`COUNT_INT_BITS` bits);
* Laplacian-type kinds of direct/strong products of non-regular factors are
  not exact functions of the factor spectra: NotExactError.

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
from scipy import stats

from powerspec.algebra.engine import DEFAULT_LIMIT, Engine, Leaf, Node, Product
from powerspec.algebra.kinds import CARTESIAN, MATRIX_KINDS, MATRIX_RULES
from powerspec.algebra.powers import outer, power
from powerspec.answers.answer import Answer
from powerspec.errors import InputError, NotExactError, SizeLimitError
from powerspec.numbers.counts import log2
from powerspec.queries.common import matrix_label, resolve
from powerspec.spectra.measures import RTOL, Spectrum
from powerspec.tiers.bracket import GRID_LIMIT, AddBracket, MulBracket, choose_spacing
from powerspec.tiers.laws import (
    BERRY_ESSEEN_IID,
    BERRY_ESSEEN_NONIID,
    ProductLaw,
    SumLaw,
    _keep,
)

METHODS = ("auto", "exact", "bracket", "law")
DEFAULT_TOL = 1e-3
"""Bracket width aimed at by ``auto`` when no tolerance is given."""

MIX_ATOMS = 2048
"""Most atoms of the exact part mixed with a law (additive rules)."""

MIX_WORK = 4_000_000
"""Most (exact atom x window component) evaluations of a multiplicative mixture."""

OUT_SLACK = 1e-12
"""Relative widening of bracket/law bounds for the rounding of their final sums."""

COUNT_INT_BITS = 100_000
"""Orders up to this many bits give exact-integer count bounds; larger give mpmath numbers."""

EPS = float(np.finfo(float).eps)


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


# ---------------------------------------------------------------- flatten
def _flatten(eng: Engine, node: Node, kind: str):
    """(comb, [(spectrum of kind, copies)], alpha, beta): X = alpha + beta * s, or None.

    Nested products with the same exact rule are merged (cart(cart(G^a)^b) is
    cart(G^(ab))); other operands must have exact spectra.
    """
    if isinstance(node, Leaf):
        # a single factor: one copy under the additive rule (its spectrum is exact anyway)
        return CARTESIAN, [(eng.spectrum(node, kind), 1)], 0.0, 1.0
    comb, use, post = eng.linear_form(node, kind)
    if comb.mode is None:
        return None
    parts = []  # operand spectra mapped to s-space
    to_shift, to_factor = comb.to_s()

    def collect(n, mult):
        for child, k in n.operands:
            if isinstance(child, Product) and MATRIX_RULES[use](child.comb) == comb:
                collect(child, mult * k)
            else:
                try:
                    parts.append((eng.spectrum(child, use).affine(to_shift, to_factor), mult * k))
                except SizeLimitError as exc:
                    raise SizeLimitError(
                        f"the distribution tiers need an exact spectrum of each operand of the "
                        f"outer product; {child.label()} is too large ({exc})") from exc

    collect(node, 1)
    back_shift, back_factor = comb.from_s()
    alpha = post[0] + post[1] * back_shift
    beta = post[1] * back_factor
    return comb, parts, alpha, beta


def _probs(sp: Spectrum) -> np.ndarray:
    n = sp.order
    return np.array([float(Fraction(int(m), n)) for m in sp.mult.tolist()])


def _atom_errors(sp: Spectrum, values: np.ndarray) -> np.ndarray:
    """Per-atom rounding allowance: 0 for integer-snapped values, else atol + merge tolerance."""
    atol = sp.atol or 0.0
    with np.errstate(invalid="ignore"):
        integer = np.isfinite(values) & (values == np.round(values))
    return np.where(integer, 0.0, atol + RTOL * np.abs(values))


def _block_atol(sp: Spectrum, values: np.ndarray) -> float:
    return float(np.max(_atom_errors(sp, values), initial=0.0))


# ------------------------------------------------------------ exact tier
class _Exact:
    name = "exact"

    def __init__(self, sp: Spectrum):
        self.sp = sp
        with np.errstate(over="ignore"):
            re = sp.real_parts()
        self.re = re
        self.err = _atom_errors(sp, re) if not sp.is_polar else np.where(
            np.isfinite(re), np.abs(re) * RTOL, 0.0)
        self.mult = [int(m) for m in sp.mult.tolist()]
        self.order = sp.order
        self.method = (
            "exact: the full spectrum combined from the factors' spectra, counted exactly "
            "(atoms within their rounding allowance of x count in the upper bound only)")

    def counts(self, x: float, strict: bool):
        """(count, certain count, possible count) of eigenvalues with Re <= x (< x if strict)."""
        re, e = self.re, self.err
        if strict:
            est, lo, hi = re < x, re + e < x, re - e < x
        else:
            est, lo, hi = re <= x, re + e <= x, re - e <= x
        m = self.mult
        return tuple(sum(mm for mm, f in zip(m, sel, strict=False) if f) for sel in (est, lo, hi))

    def quantile(self, q: float):
        n = self.order
        target = Fraction(q) * n
        run = 0
        for i, m in enumerate(self.mult):
            run += m
            if run >= target:
                v = self.sp.value(i)
                v = v.real if isinstance(v, complex) else v
                e = float(self.err[i])
                return v, v - e if e else v, v + e if e else v
        v = self.sp.value(len(self.mult) - 1)
        return v, v, v


# --------------------------------------------------------- law tier (add)
def _split(parts, mode: str, max_atoms: int):
    """(law parts, exact spectrum in s-space or None): few-copy operands stay exact."""
    order = sorted(range(len(parts)), key=lambda i: parts[i][1])
    exact = None
    law = []
    for pos, i in enumerate(order):
        sp, k = parts[i]
        if pos == len(order) - 1 and not law:
            law.append((sp, k))  # at least one operand goes to the law
            continue
        try:
            p = power(sp, k, mode, 4 * max_atoms, max_atoms)
            cand = p if exact is None else outer(exact, p, mode, 4 * max_atoms)
            if len(cand) > max_atoms:
                raise SizeLimitError("mixture too large")
            exact = cand
        except SizeLimitError:
            law.append((sp, k))
    return law, exact


class _AddLaw:
    name = "law"

    def __init__(self, parts):
        law_parts, exact = _split(parts, "add", MIX_ATOMS)
        blocks = []
        for sp, k in law_parts:
            re = sp.real_parts()
            blocks.append((re, _probs(sp), k, _block_atol(sp, re)))
        self.law = SumLaw(blocks)
        if exact is None:
            self.e, self.p, self.ea = np.zeros(1), np.ones(1), np.zeros(1)
        else:
            self.e = exact.real_parts()
            self.p = _probs(exact)
            self.ea = _atom_errors(exact, self.e)
        law = self.law
        lat = (f", continuity-corrected on the lattice of span {law.lattice[1]:.6g}"
               if law.lattice else "")
        if len(law.blocks) <= 1:
            be = f"Berry-Esseen sup bound {law.eps:.3g} (C = {BERRY_ESSEEN_IID}, Shevtsova 2011)"
        else:
            be = (f"Berry-Esseen sup bound {law.eps:.3g} (smaller of C = {BERRY_ESSEEN_NONIID} "
                  f"non-identical, Shevtsova 2010, and the per-block C = {BERRY_ESSEEN_IID})")
        mix = (f"; mixed over the {len(self.e)} exact atoms of the few-copy operands"
               if exact is not None else "")
        self.method = (
            f"law: normal limit of the Cartesian power (exact mean {law.mu:.6g}, variance "
            f"{law.variance:.6g}); bounds: {be}, Chernoff tails and the exact support; "
            f"estimate: Edgeworth in the centre, Lugannani-Rice saddlepoint in the tails{lat} "
            f"(an estimate, not a bound){mix}")

    def evaluate(self, t: float, strict: bool = False):
        y = t - self.e
        est = float(self.p @ self.law.cdf(y, strict))
        lo = float(self.p @ self.law.bounds(y - self.ea)[0])
        hi = _keep(np.dot(self.p.astype(object), self.law.bounds(y + self.ea)[1]))
        lo, hi = max(0.0, lo), min(1.0, hi)
        return min(max(est, lo), hi), lo, hi

    def support(self):
        s = self.law.slack + float(np.max(self.ea, initial=0.0))
        return self.law.lo + float(self.e.min()) - s - 1.0, self.law.hi + float(self.e.max()) + s + 1.0


# --------------------------------------------------------- law tier (mul)
def _real_or_refuse(sp: Spectrum, what: str) -> np.ndarray:
    if not sp.is_real:
        raise NotExactError(
            f"{what}: complex eigenvalues under a multiplicative product rule are covered by the "
            "exact tier only (ask for a smaller power, or use a Cartesian product)")
    if sp.is_polar:
        raise SizeLimitError(f"{what}: factor eigenvalues beyond the double range")
    return sp.values


def _sign_classes(v: np.ndarray, p: np.ndarray):
    nz = v != 0
    pos, neg = nz & (v > 0), nz & (v < 0)
    return float(p[~nz].sum()), pos, neg


def _same_shape(v, p, a, b) -> bool:
    """True when log|s| given s > 0 has the same law as given s < 0."""
    la, lb = np.log(np.abs(v[a])), np.log(np.abs(v[b]))
    pa, pb = p[a] / p[a].sum(), p[b] / p[b].sum()
    oa, ob = np.argsort(la), np.argsort(lb)
    if la.size != lb.size:
        return False
    return bool(np.allclose(la[oa], lb[ob], rtol=1e-10, atol=1e-12) and np.allclose(pa[oa], pb[ob]))


class _MulLaw:
    name = "law"

    def __init__(self, parts, label: str):
        law_parts, exact = _split(parts, "mul", 64)
        log_nz = 0.0
        indep, dep = [], []
        log_q, q_sign = 0.0, 1
        rel_slack = 0.0
        for sp, k in law_parts:
            v = _real_or_refuse(sp, label)
            p = _probs(sp)
            p0, a, b = _sign_classes(v, p)
            if p0 >= 1.0:
                log_nz = -math.inf
                continue
            log_nz += k * math.log1p(-p0)
            nzv = v != 0
            rel = float(np.max(_atom_errors(sp, v)[nzv] / np.abs(v[nzv]), initial=0.0))
            rel_slack += k * 1.0001 * math.log1p(rel)
            if a.any() and b.any() and not _same_shape(v, p, a, b):
                dep.append((v, p, a, b, k))
                continue
            # sign balance given s != 0, exactly +-1 for one-signed operands
            diff = 1.0 if not b.any() else -1.0 if not a.any() else float(
                (p[a].sum() - p[b].sum()) / (1 - p0))
            if diff == 0:
                log_q = -math.inf
            elif abs(diff) != 1.0:
                log_q += k * math.log(abs(diff))
            q_sign *= -1 if (diff < 0 and k % 2) else 1
            indep.append((np.log(np.abs(v[nzv])), p[nzv] / p[nzv].sum(), k, 0.0))
        if len(dep) > 1:
            raise NotExactError(
                f"{label}: the law tier handles at most one many-copy operand whose eigenvalue "
                "signs depend on their magnitudes; use --method bracket or exact")
        zero = -math.expm1(log_nz) if log_nz > -math.inf else 1.0
        q_rest = q_sign * math.exp(log_q) if log_q > -math.inf else 0.0
        rest = SumLaw(indep)
        rest.slack += rel_slack
        self.rest = rest
        if not dep:
            self.law = ProductLaw(zero, [((1 + q_rest) / 2, (1 - q_rest) / 2, rest)])
            how = "log-normal law of |s| with exact zero mass and exact sign shares"
            eps = rest.eps
        else:
            self.law, eps = self._window(zero, dep[0], rest, q_rest, rel_slack)
            how = ("mixture over the number of negative factors of log-normal laws of |s|, "
                   "exact zero mass and sign parity")
        if exact is None:
            self.e, self.p = np.ones(1), np.ones(1)
            self.erel = np.zeros(1)
        else:
            self.e = _real_or_refuse(exact, label)
            self.p = _probs(exact)
            with np.errstate(divide="ignore", invalid="ignore"):
                self.erel = np.where(self.e != 0, _atom_errors(exact, self.e) / np.abs(self.e), 0.0)
        width = 1 if self.law.window is None else self.law.window["mu"].size
        if len(self.e) * width > MIX_WORK:
            raise SizeLimitError(
                f"{label}: the law mixture would need {len(self.e) * width} evaluations; "
                "use --method bracket")
        mix = (f"; mixed over the {len(self.e)} exact atoms of the few-copy operands"
               if exact is not None else "")
        self.method = (
            f"law: {how} (exact point mass {zero:.6g} at s = 0); bounds: Berry-Esseen for log|s| "
            f"(largest sup bound {eps:.3g}; C = {BERRY_ESSEEN_IID} i.i.d., Shevtsova 2011, or "
            f"{BERRY_ESSEEN_NONIID} non-identical, Shevtsova 2010) and Chernoff tails; estimate: "
            f"Edgeworth / Lugannani-Rice for log|s| (an estimate, not a bound){mix}")

    @staticmethod
    def _window(zero, dep, rest, q_rest, slack):
        v, p, a, b, k = dep
        blocks = {}
        for name, sel in (("pos", a), ("neg", b)):
            lv = np.log(np.abs(v[sel]))
            pp = p[sel] / p[sel].sum()
            m = float(pp @ lv)
            c = lv - m
            blocks[name] = (m, float(pp @ c**2), float(pp @ np.abs(c) ** 3))
        r_neg = float(p[b].sum() / (p[a].sum() + p[b].sum()))
        dist = stats.binom(k, r_neg)
        # +-9.5 sd (+ a margin) holds all but ~1e-20 of a binomial; the mass left out is
        # computed (scipy's binomial cdf/sf) and added to the upper bounds.
        half = 9.5 * math.sqrt(k * r_neg * (1 - r_neg)) + 20
        jlo = int(max(0, math.floor(k * r_neg - half)))
        jhi = int(min(k, math.ceil(k * r_neg + half)))
        j = np.arange(jlo, jhi + 1, dtype=float)
        bj = dist.pmf(j)
        extra = float(dist.cdf(jlo - 1) + dist.sf(jhi)) + 1e-12
        (mp, vp, rp), (mn, vn, rn) = blocks["pos"], blocks["neg"]
        mu = (k - j) * mp + j * mn + rest.mu
        var = (k - j) * vp + j * vn + rest.variance
        rho = (k - j) * rp + j * rn + sum(x["k"] * x["rho"] for x in rest.blocks)
        iid = _iid_vec(rp, vp, k - j) + _iid_vec(rn, vn, j) + rest.eps
        with np.errstate(divide="ignore", invalid="ignore"):
            non = np.where(var > 0, BERRY_ESSEEN_NONIID * rho / np.where(var > 0, var, 1.0) ** 1.5, 0.0)
        eps = np.minimum(np.minimum(iid, non), 1.0)
        eps = np.where(var > 0, eps, 0.0)
        par = np.where(j % 2 == 0, 1.0, -1.0) * q_rest
        window = {"wp": bj * (1 + par) / 2, "wn": bj * (1 - par) / 2, "mu": mu, "var": var,
                  "eps": eps, "slack": slack + rest.slack + 1e-12 * (1 + float(np.max(np.abs(mu))))}
        return ProductLaw(zero, window=window, extra=extra), float(np.max(eps, initial=0.0))

    def evaluate(self, th, strict: bool = False):
        sign, u = th
        est = lo = hi = 0.0
        for e, p, er in zip(self.e, self.p, self.erel, strict=False):
            if e == 0:
                v = 1.0 if (sign > 0 or (sign == 0 and not strict)) else 0.0
                est, lo, hi = est + p * v, lo + p * v, hi + p * v
                continue
            le = math.log(abs(e))
            sl = math.log1p(er) * 1.0001 if er else 0.0
            if e > 0:
                a = self.law.evaluate(sign, u - le, strict)
                if sl and sign != 0:
                    a = (a[0], self.law.evaluate(sign, u - le - sign * sl, strict)[1],
                         self.law.evaluate(sign, u - le + sign * sl, strict)[2])
                est, lo, hi = est + p * a[0], lo + p * a[1], hi + p * a[2]
            else:
                # P(e S <= t) = 1 - P(S < t / e), t / e has the opposite sign
                a = self.law.evaluate(-sign, u - le, not strict)
                if sl and sign != 0:
                    a = (a[0], self.law.evaluate(-sign, u - le + sign * sl, not strict)[1],
                         self.law.evaluate(-sign, u - le - sign * sl, not strict)[2])
                est, lo, hi = est + p * (1 - a[0]), lo + p * (1 - a[2]), hi + p * (1 - a[1])
        lo, hi = max(0.0, lo), min(1.0, hi)
        return min(max(est, lo), hi), lo, hi

    def log_range(self):
        r = self.rest
        w = self.law.window
        lo, hi = r.lo, r.hi
        if w is not None:
            lo = float(np.min(w["mu"] - 40 * np.sqrt(w["var"]))) - 1
            hi = float(np.max(w["mu"] + 40 * np.sqrt(w["var"]))) + 1
        nz = self.e[self.e != 0]
        le = np.log(np.abs(nz)) if nz.size else np.zeros(1)
        return lo + float(le.min()) - 2.0, hi + float(le.max()) + 2.0


def _iid_vec(rho: float, var: float, n: np.ndarray) -> np.ndarray:
    """Vectorised :func:`~powerspec.laws.iid_bound` over counts n (0 where n = 0 or var = 0)."""
    if var <= 0:
        return np.zeros_like(n)
    with np.errstate(divide="ignore"):
        return np.where(n > 0, np.minimum(1.0, BERRY_ESSEEN_IID * rho / (var**1.5 * np.sqrt(
            np.maximum(n, 1)))), 0.0)


# ------------------------------------------------------------ bracket tier
class _AddBracket:
    name = "bracket"

    def __init__(self, parts, tol: float, grid_limit: int):
        blocks = []
        for sp, k in parts:
            re = sp.real_parts()
            blocks.append((re, _probs(sp), k, _block_atol(sp, re)))
        h = choose_spacing([(b[0], b[1], b[2]) for b in blocks], tol)
        self.b = AddBracket(blocks, h, grid_limit)
        self.method = (
            f"bracket: eigenvalues rounded to a grid of spacing {h:.3g}, the power's distribution "
            f"by FFT convolution on {self.b.points} points; certified bounds from the total rounding "
            f"shift {float(self.b.shift):.3g} and an explicit FFT error bound {self.b.err:.2g}")

    def evaluate(self, t, strict=False):
        return self.b.evaluate(t, strict)

    def support(self):
        return self.b.support()


class _MulBracket:
    name = "bracket"

    def __init__(self, parts, tol: float, grid_limit: int, label: str):
        blocks, logblocks = [], []
        for sp, k in parts:
            v = _real_or_refuse(sp, label)
            p = _probs(sp)
            nz = v != 0
            rel = float(np.max(_atom_errors(sp, v)[nz] / np.abs(v[nz]), initial=0.0))
            blocks.append((v, p, k, rel))
            if nz.any():
                logblocks.append((np.log(np.abs(v[nz])), p[nz], k))
        h = choose_spacing(logblocks, tol) if logblocks else 1.0
        self.b = MulBracket(blocks, h, grid_limit)
        self.method = (
            f"bracket: log|s| rounded to a grid of spacing {h:.3g} with exact sign parity and the exact "
            f"zero mass {self.b.zero:.6g}, the power's distribution by FFT convolution; certified "
            f"bounds from the rounding shift {self.b.shift:.3g} in log|s| and an explicit FFT error "
            f"bound {getattr(self.b, 'err', 0.0):.2g}")

    def evaluate(self, th, strict=False):
        return self.b.evaluate(th[0], th[1], strict)

    def log_range(self):
        return self.b.log_range()


# ---------------------------------------------------------------- driver
class _Query:
    """Resolved expression + chosen tier; evaluates P(X <= x) with bounds."""

    def __init__(self, expr, matrix, method, tol, limit, degrees, x_hint=None):
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
        self.tier = None

    # -- tier construction
    def _flat(self):
        if self.flat is None:
            self.flat = _flatten(self.eng, self.node, self.matrix)
            if self.flat is None:
                raise NotExactError(
                    f"{self.label}: the bracket and law tiers need an associative product (cart, "
                    "direct, strong, or mix with a in {0, 1}); mix with a outside {0, 1} is a left "
                    "fold that the law tier does not cover -- use the exact tier (smaller power)")
            self.mode = self.flat[0].mode
            self.alpha, self.beta = self.flat[2], self.flat[3]
        return self.flat

    def exact(self):
        if not self.eng.fits(self.node, self.matrix):
            raise SizeLimitError(
                f"the exact spectrum of {self.label} may hold up to "
                f"{self.eng.bound(self.node, self.matrix)} distinct eigenvalues with exact "
                f"multiplicities of up to {self.node.order.bit_length()} bits, beyond the limit of "
                f"{self.eng.limit} atoms / 2 GiB; use --method bracket or law")
        try:
            sp = self.eng.spectrum(self.node, self.matrix)
        except SizeLimitError as exc:
            raise SizeLimitError(
                f"the exact spectrum of {self.label} does not fit the limit ({exc}); use "
                "--method bracket or law") from exc
        return _Exact(sp)

    def law(self):
        _, parts, _, _ = self._flat()
        return _AddLaw(parts) if self.mode == "add" else _MulLaw(parts, self.label)

    def bracket(self, tol):
        _, parts, _, _ = self._flat()
        if self.mode == "add":
            return _AddBracket(parts, tol, self.grid_limit)
        return _MulBracket(parts, tol, self.grid_limit, self.label)

    def choose(self, width_of):
        """Pick the tier; ``width_of(tier)`` is the bound width of the query under that tier."""
        m = self.method_req
        if m == "exact":
            return self.exact()
        if m == "law":
            return self.law()
        if m == "bracket":
            return self.bracket(self.tol or DEFAULT_TOL)
        if self.eng.fits(self.node, self.matrix):
            try:
                return self.exact()
            except SizeLimitError:
                pass
        if self.tol is None:
            try:
                return self.bracket(DEFAULT_TOL)
            except SizeLimitError:
                return self.law()
        law = self.law()
        w_law = width_of(law)
        if w_law <= self.tol:
            return law
        try:
            br = self.bracket(self.tol)
        except SizeLimitError as exc:
            raise SizeLimitError(
                f"no tier meets tol={self.tol:g} for {self.label}: the law tier's bound is "
                f"{w_law:.3g} wide and the bracket is too large ({exc}); ask for a wider tol") from exc
        return br

    # -- evaluation in x
    def _thresholds(self, x: float):
        a, b = self.alpha, self.beta
        t = (x - a) / b
        if a == 0 and b == 1:
            d = 0.0
        else:
            d = 4 * EPS * ((abs(x) + abs(a)) / abs(b) + abs(t)) + 1e-300
        return t - d, t, t + d

    def _s(self, t):
        if self.mode == "add":
            return t
        if t == 0:
            return (0, 0.0)
        return (1 if t > 0 else -1, math.log(abs(t)))

    def x_cdf(self, tier, x: float, strict: bool = False):
        """(estimate, lower, upper) of P(Re X <= x) (P(Re X < x) if strict)."""
        if isinstance(tier, _Exact):
            c = tier.counts(x, strict)
            n = tier.order
            return tuple(Fraction(v, n) for v in c)
        self._flat()
        tl, tm, th = self._thresholds(x)
        ev = tier.evaluate
        if self.beta > 0:
            e = ev(self._s(tm), strict)[0]
            lo, hi = ev(self._s(tl), strict)[1], ev(self._s(th), strict)[2]
        else:
            e = 1 - ev(self._s(tm), not strict)[0]
            lo, hi = 1 - ev(self._s(th), not strict)[2], 1 - ev(self._s(tl), not strict)[1]
        # relative widening for the rounding of the final sums of probabilities
        lo, hi = max(0.0, lo * (1 - OUT_SLACK)), min(1.0, hi * (1 + OUT_SLACK))
        return min(max(e, lo), hi), lo, hi

    # -- evaluation by a monotone parameter (quantiles)
    def param_range(self, tier):
        if self.mode == "add":
            return tier.support()
        ulo, uhi = tier.log_range()
        self._umin = ulo
        span = uhi - ulo + 1.0
        return -span, span

    def param_cdf(self, tier, y: float):
        """P(X <= x(y)) with x(y) increasing in y; returns (est, lo, hi)."""
        if self.beta < 0:
            y = -y
        if self.mode == "add":
            th = y
        elif y == 0:
            th = (0, 0.0)
        else:
            th = (1 if y > 0 else -1, self._umin + abs(y))
        if self.beta > 0:
            return tier.evaluate(th, False)
        e, lo, hi = tier.evaluate(th, True)
        return 1 - e, 1 - hi, 1 - lo

    def param_x(self, y: float):
        if self.beta < 0:
            y = -y
        if self.mode == "add":
            return self.alpha + self.beta * y
        if y == 0:
            return float(self.alpha)
        u = self._umin + abs(y)
        s = mpmath.exp(u) * (1 if y > 0 else -1)
        x = mpmath.mpf(self.alpha) + mpmath.mpf(self.beta) * s
        f = float(x)
        return f if math.isfinite(f) and abs(f) < 1e300 else x


def _answer(query, q: _Query, tier, est, lo, hi, inputs):
    return Answer(query, q.label, matrix_label(q.matrix, q.node, q.degrees), q.node.order,
                  tier.method, estimate=est, lower=lo, upper=hi,
                  inputs={**inputs, "method": q.method_req, "tol": q.tol, "limit": q.eng.limit,
                          "degrees": q.degrees, "tier": tier.name})


def cdf(expr, x, matrix: str = "adjacency", *, method: str = "auto", tol: float | None = None,
        limit: int | None = None, degrees: str = "out") -> Answer:
    """Fraction of eigenvalues with (real part) <= x, with rigorous lower/upper bounds.

    Returns an :class:`Answer` (query "cdf") whose ``estimate``, ``lower`` and
    ``upper`` are floats in [0, 1] and whose ``method`` names the tier and the
    error bound used.  ``method`` is auto | exact | bracket | law; ``tol`` the
    wanted width upper - lower.

    >>> a = cdf("cart(K(2)^1000000000)", 0.0, method="law")
    >>> a.method.split(":")[0], a.lower <= 0.5 <= a.upper, a.upper - a.lower < 1e-4
    ('law', True, True)
    """
    q = _Query(expr, matrix, method, tol, limit, degrees)
    x = _check_real(x, "x")
    tier = q.choose(lambda t: _width(q.x_cdf(t, x)))
    est, lo, hi = q.x_cdf(tier, x)
    return _answer("cdf", q, tier, float(est), _float_down(lo), _float_up(hi), {"x": x})


def _float_down(v) -> float:
    """The largest float <= v (exact Fractions are rounded outward)."""
    f = float(v)
    return f if not isinstance(v, Fraction) or Fraction(f) <= v else math.nextafter(f, -math.inf)


def _float_up(v) -> float:
    """The smallest float >= v (an mpmath number is kept when below the double range)."""
    if isinstance(v, mpmath.mpf):
        return _keep(v)
    f = float(v)
    return f if not isinstance(v, Fraction) or Fraction(f) >= v else math.nextafter(f, math.inf)


def _width(b) -> float:
    return float(b[2] - b[1])


def _scale_count(n, frac, kind: str):
    """n * frac as a count: exact int (floor/ceil for bounds) or mpmath for enormous orders."""
    if isinstance(frac, mpmath.mpf):
        nn = mpmath.mpf(int(n)) if isinstance(n, int) else mpmath.power(2, mpmath.mpf(_log2_of(n)))
        return nn * frac
    if isinstance(n, int) and n.bit_length() <= COUNT_INT_BITS:
        v = Fraction(frac) * n
        if kind == "lo":
            return max(0, math.ceil(v))
        if kind == "hi":
            return min(n, math.floor(v))
        return float(v) if n.bit_length() <= 1000 else mpmath.mpf(v.numerator) / v.denominator
    nn = mpmath.mpf(int(n)) if isinstance(n, int) else mpmath.power(2, mpmath.mpf(_log2_of(n)))
    return nn * mpmath.mpf(float(frac))


def _log2_of(n) -> float:
    return log2(n)


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

    tier = q.choose(lambda t: _width(frac(t)))
    est, lo, hi = frac(tier)
    n = q.node.order
    if isinstance(tier, _Exact):
        vals = tuple(int(v * n) for v in (est, lo, hi))
        return _answer("count", q, tier, *vals, {"a": a, "b": b})
    lo = max(0.0, float(lo))
    est = min(max(float(est), lo), float(hi))
    vals = (_scale_count(n, est, "est"), _scale_count(n, lo, "lo"), _scale_count(n, hi, "hi"))
    return _answer("count", q, tier, *vals, {"a": a, "b": b})


def quantile(expr, p, matrix: str = "adjacency", *, method: str = "auto", tol: float | None = None,
             limit: int | None = None, degrees: str = "out") -> Answer:
    """The p-quantile inf{x : cdf(x) >= p} of the (real parts of the) eigenvalues, with bounds.

    ``lower``/``upper`` bracket the true quantile (from the inverse of the
    upper/lower CDF bounds); values beyond the double range are mpmath numbers.
    ``tol`` is a width on the CDF, as for :func:`cdf`.

    >>> quantile("cart(K(2)^10)", 0.5).estimate
    0.0
    """
    if isinstance(p, bool) or not isinstance(p, (int, float)) or not 0 < float(p) < 1:
        raise InputError(f"the quantile level must lie strictly between 0 and 1, got {p!r}")
    p = float(p)
    q = _Query(expr, matrix, method, tol, limit, degrees)

    def width_at_median(tier):
        return _width(q.x_cdf(tier, _rough_median(q, tier)))

    tier = q.choose(width_at_median)
    if isinstance(tier, _Exact):
        est, lo, hi = tier.quantile(p)
        return _answer("quantile", q, tier, est, lo, hi, {"q": p})
    y0, y1 = q.param_range(tier)
    y_est = _bisect(lambda y: q.param_cdf(tier, y)[0] >= p, y0, y1)
    y_lo = _bisect(lambda y: q.param_cdf(tier, y)[2] >= p, y0, y1)
    y_hi = _bisect(lambda y: q.param_cdf(tier, y)[1] >= p, y0, y1)
    # lower: the last y with upper bound < p; upper: the first y with lower bound >= p
    est, lo, hi = q.param_x(y_est[1]), q.param_x(y_lo[0]), q.param_x(y_hi[1])
    lo, hi = _widen(lo, -1), _widen(hi, 1)
    return _answer("quantile", q, tier, est, lo, hi, {"q": p})


def _widen(v, direction: int):
    """Move a bound outward (direction -1 down, +1 up) by a relative 1e-12 for the final rounding."""
    if isinstance(v, float):
        return v + direction * (1e-12 * abs(v) + 1e-300)
    return v + direction * abs(v) * mpmath.mpf(1e-12)


def _bisect(pred, lo: float, hi: float, iters: int = 80):
    """(a, b) with pred(a) false, pred(b) true (pred monotone); ends if pred holds at lo."""
    if pred(lo):
        return lo, lo
    if not pred(hi):
        return hi, hi
    for _ in range(iters):
        mid = 0.5 * (lo + hi)
        if mid in (lo, hi):
            break
        if pred(mid):
            hi = mid
        else:
            lo = mid
    return lo, hi


def _rough_median(q: _Query, tier) -> float:
    if isinstance(tier, _Exact):
        v = tier.quantile(0.5)[0]
        return float(v) if math.isfinite(float(v)) else 0.0
    y0, y1 = q.param_range(tier)
    y = _bisect(lambda y: q.param_cdf(tier, y)[0] >= 0.5, y0, y1, iters=40)[1]
    v = q.param_x(y)
    return float(v) if math.isfinite(float(v)) else 0.0


__all__ = ["cdf", "count", "quantile", "METHODS", "DEFAULT_TOL"]
