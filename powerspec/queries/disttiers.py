"""The distribution tiers as the queries use them: exact atoms, law mixtures and brackets.

Every tier here works on plain arrays (:class:`Atoms`), never on spectrum
objects: :func:`powerspec.queries.distsource.atoms_of` is the one adapter
that reads them.  Each tier evaluates the CDF of s (the linearised product
variable, see :mod:`powerspec.algebra.kinds`) *vectorised*: ``evaluate``
takes arrays of points and returns arrays (estimate, lower, upper), so a
curve of a thousand points costs one setup and vectorised work.

* :class:`ExactTier` -- all atoms with exact integer counts; bounds widen by
  each atom's certified radius (an atom within its radius of x counts in the
  upper bound only);
* :class:`AddLaw`, :class:`MulLaw` -- the limit laws of
  :mod:`powerspec.tiers.laws` / :mod:`powerspec.tiers.lawproduct`, mixed over
  the exactly combined atoms of the few-copy operands;
* :class:`AddBracketTier`, :class:`MulBracketTier` -- the certified FFT
  brackets of :mod:`powerspec.tiers.bracket`.

>>> a = Atoms(np.array([-1.0, 1.0]), [1, 1], np.zeros(2), 2, True)
>>> t = ExactTier(a)
>>> t.counts(0.0, False), [float(v) for v in t.evaluate(np.array([0.0]))[0]]
((1, 1, 1), [0.5])
"""

from __future__ import annotations

import bisect
import math
from collections.abc import Callable
from fractions import Fraction
from typing import Any, NamedTuple

import mpmath
import numpy as np

from powerspec.errors import NotExactError, SizeLimitError
from powerspec.numbers.digits import mean_text
from powerspec.tiers.bracket import AddBracket, MulBracket, plan_cost, spacing
from powerspec.tiers.lawparity import WINDOW_CAP, ParityWindow, window_points
from powerspec.tiers.lawproduct import BinomialWindow, ProductLaw
from powerspec.tiers.laws import BERRY_ESSEEN_IID, BERRY_ESSEEN_NONIID, TINY, SumLaw

MIX_ATOMS = 2048
"""Most atoms of the exact part mixed with a law (additive rules)."""

MIX_ATOMS_MUL = 64
"""Most atoms of the exact part mixed with a law (multiplicative rules)."""

EPS = float(np.finfo(float).eps)


class Atoms(NamedTuple):
    """Real eigenvalue atoms as arrays: what every tier reads.

    ``values`` float64 (real parts; +-inf beyond the double range), ``mult``
    exact Python ints, ``radius`` a rigorous float64 bound on each value's
    error, ``order`` the exact total, ``real`` False when some atom is
    complex; ``value_of(i)`` atom i's midpoint as a float or an mpmath number
    (beyond the double range) and ``rel`` each atom's relative radius.
    """

    values: np.ndarray
    mult: list
    radius: np.ndarray
    order: int
    real: bool
    value_of: Callable[[int], Any] | None = None
    rel: np.ndarray | None = None

    def probs(self) -> np.ndarray:
        """Multiplicities / order as correctly rounded floats."""
        n = self.order
        return np.array([m / n for m in self.mult], dtype=float)

    def fractions(self) -> list[Fraction]:
        """Multiplicities / order as exact rationals."""
        return [Fraction(m, self.order) for m in self.mult]

    def mapped(self, shift: float, factor: float) -> Atoms:
        """The atoms of shift + factor * X (radii grown by the rounding of the map)."""
        v = shift + factor * self.values
        r = abs(factor) * self.radius + 2 * EPS * (abs(shift) + np.abs(v))
        return Atoms(v, self.mult, r, self.order, self.real)


# ------------------------------------------------------------------ exact
def ball_end(v, r, side: int):
    """The end v + side r of a ball as a float bound: stepped one ulp outward where r > 0, since
    v + side r rounds to nearest (back to v itself when r < ulp(v) / 2); v itself where r == 0.
    Arrays in, arrays out.

    >>> float(ball_end(1.0, 1e-20, 1)) > 1.0, float(ball_end(1.0, 0.0, -1))
    (True, 1.0)
    """
    with np.errstate(invalid="ignore"):
        return np.where(r > 0, np.nextafter(v + side * r, side * np.inf), v)


class ExactTier:
    """All atoms, exact counts; an atom within its radius of x counts in the upper bound only."""

    name = "exact"

    def __init__(self, atoms: Atoms):
        v, r = atoms.values, atoms.radius
        self.atoms = atoms
        self.order = atoms.order
        mult = np.array(atoms.mult, dtype=object)
        self.method = (
            "exact: the full certified spectrum (product rules, symmetry reduction or explicit "
            "build), counted exactly (atoms within their certified radius of x count in the upper "
            "bound only)")
        # three sorted views: by value (estimate), by value + radius (lower), by value - radius
        # (upper), the ball ends stepped outward (rounded to nearest, an atom with r < ulp(v) / 2
        # would count as certainly <= v)
        self._views = []
        for key in (v, ball_end(v, r, 1), ball_end(v, r, -1)):
            o = np.argsort(key, kind="stable")
            same = next((view for view in self._views if np.array_equal(view[2], o)), None)
            if same is not None:
                cum = same[1]  # the same order gives the same exact cumulative counts
            else:
                cum = [0]
                cum.extend(np.cumsum(mult[o]).tolist() if o.size else [])
            self._views.append((key[o], cum, o))

    def counts(self, x: float, strict: bool):
        """(count, certain count, possible count) of eigenvalues with Re <= x (< x if strict)."""
        side = "left" if strict else "right"
        return tuple(cum[int(np.searchsorted(key, x, side=side))] for key, cum, _ in self._views)

    def evaluate(self, x, strict: bool = False):
        """Float (estimate, lower, upper) arrays of the fraction <= x (bounds rounded outward)."""
        x = np.asarray(x, dtype=float)
        side = "left" if strict else "right"
        out = []
        for i, (key, cum, _) in enumerate(self._views):
            c = np.searchsorted(key, x.ravel(), side=side)
            f = np.array([cum[int(ci)] / self.order for ci in c], dtype=float).reshape(x.shape)
            if i == 1:
                f = np.nextafter(f, -np.inf)  # one ulp outward keeps the rounding rigorous
            elif i == 2:
                f = np.nextafter(f, np.inf)
            out.append(np.clip(f, 0.0, 1.0))
        return out[0], out[1], out[2]

    def _value(self, i: int, side: int):
        """Atom i's value moved by its radius towards ``side`` (floats, or mpmath beyond range)."""
        v = float(self.atoms.values[i])
        r = float(self.atoms.radius[i])
        if math.isfinite(v) and math.isfinite(r):
            return v if side == 0 else float(ball_end(v, r, side))
        big = self.atoms.value_of(i) if self.atoms.value_of is not None else v
        if not isinstance(big, mpmath.mpf):
            big = mpmath.mpf(big)
        rel = float(self.atoms.rel[i]) if self.atoms.rel is not None else 1e-10
        if side == 0:
            return big
        # two roundings to nearest of relative size 2^-53 each: widened by 2^-50 of |big|
        return big + side * abs(big) * (mpmath.mpf(rel) + mpmath.mpf(2) ** -50)

    def quantile_width(self, q: Fraction) -> float:
        """Width of the CDF bounds where the q-quantile is read: 0.0 (all atoms are listed)."""
        return 0.0

    def quantile(self, q: Fraction):
        """(estimate, lower, upper) of inf{x : F(x) >= q} for an exact rational q.

        The estimate is the first midpoint whose cumulative count reaches q n;
        the bounds invert the possible / certain counts (ball ends v -+ r).
        """
        need = math.ceil(q * self.order)
        out = []
        for view, side in ((0, 0), (2, -1), (1, 1)):
            _, cum, o = self._views[view]
            i = min(bisect.bisect_left(cum, need, lo=1) - 1, o.size - 1)
            out.append(self._value(int(o[i]), side))
        return tuple(out)


# -------------------------------------------------------- exact few-copy part
def _merge(v, p, r):
    """Sort by value and merge atoms whose error balls overlap (union ball; probabilities add)."""
    o = np.argsort(v, kind="stable")
    v, p, r = v[o], p[o], r[o]
    if v.size <= 1:
        return v, p, r
    lo, hi = v - r, v + r
    run_hi = np.maximum.accumulate(hi)
    start = np.r_[True, lo[1:] > run_hi[:-1]]
    idx = np.flatnonzero(start)
    gl = np.minimum.reduceat(lo, idx)
    gh = np.maximum.reduceat(hi, idx)
    gp = np.add.reduceat(p, idx)
    single = np.diff(np.r_[idx, v.size]) == 1
    mid = np.where(single, v[idx], (gl + gh) / 2)
    rad = np.where(single, r[idx], (gh - gl) / 2 * (1 + 4 * EPS))
    return mid, gp, rad


def _combine(a, b, mode):
    (va, pa, ra), (vb, pb, rb) = a, b
    if mode == "add":
        v = np.add.outer(va, vb).ravel()
        r = np.add.outer(ra, rb).ravel() + 2 * EPS * np.abs(v)
    else:
        v = np.multiply.outer(va, vb).ravel()
        r = (np.multiply.outer(np.abs(va), rb) + np.multiply.outer(ra, np.abs(vb))
             + np.multiply.outer(ra, rb)).ravel() + 2 * EPS * np.abs(v)
    p = np.multiply.outer(pa, pb).ravel()
    return _merge(v, p, r)


def split_exact(parts, mode: str, max_atoms: int):
    """(law parts, exact part (values, probs, radius) or None): few-copy operands stay exact.

    ``parts`` is a list of (Atoms, copies); operands are taken in order of
    copies, and each is kept exact while the combined atom count stays within
    ``max_atoms`` (checked before each combination); at least one operand
    goes to the law.
    """
    order = sorted(range(len(parts)), key=lambda i: parts[i][1])
    ident = (np.array([0.0 if mode == "add" else 1.0]), np.ones(1), np.zeros(1))
    exact, law = None, []
    for pos, i in enumerate(order):
        at, k = parts[i]
        if pos == len(order) - 1 and not law:
            law.append((at, k))
            continue
        base = _merge(at.values.copy(), at.probs(), at.radius.copy())
        acc = ident if exact is None else exact
        ok = True
        for _ in range(k):
            if acc[0].size * base[0].size > 4 * max_atoms:
                ok = False
                break
            acc = _combine(acc, base, mode)
            if acc[0].size > max_atoms:
                ok = False
                break
        if ok:
            exact = acc
        else:
            law.append((at, k))
    return law, exact


# -------------------------------------------------------------- law (add)
class AddLaw:
    """Normal limit of a Cartesian power, mixed over the exact atoms of few-copy operands."""

    name = "law"

    def __init__(self, parts):
        law_parts, exact = split_exact(parts, "add", MIX_ATOMS)
        self.law = SumLaw([(at.values, at.probs(), k, float(np.max(at.radius, initial=0.0)))
                           for at, k in law_parts])
        if exact is None:
            self.e, self.p, self.ea = np.zeros(1), np.ones(1), np.zeros(1)
        else:
            self.e, self.p, self.ea = exact
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
            f"law: normal limit of the Cartesian power (mean "
            f"{mean_text(law.mu, math.sqrt(max(law.variance, 0.0)))}, variance "
            f"{law.variance:.6g}, in double precision from the factors' eigenvalues, their rounding "
            f"inside the bounds); bounds: {be}, Chernoff tails and the exact support; "
            f"estimate: Edgeworth in the centre, Lugannani-Rice saddlepoint in the tails{lat} "
            f"(an estimate, not a bound){mix}")
        self.params = {"mean": law.mu + float(self.p @ self.e),
                       "variance": law.variance + float(self.p @ (self.e - self.p @ self.e) ** 2)}

    def evaluate(self, t, strict: bool = False, pad=0.0):
        """(estimate, lower, upper) arrays of P(S <= t) (P(S < t) if strict); ``pad`` as in SumLaw."""
        t = np.asarray(t, dtype=float)
        y = t.reshape(-1, 1) - self.e
        pd = np.broadcast_to(np.asarray(pad, dtype=float), t.shape).reshape(-1, 1)
        # the exact atoms' radii widen the point like the pad does: one evaluation serves all three
        est, lo, hi = self.law.evaluate(y, strict, pad=pd + self.ea)
        est, lo, hi = est @ self.p, lo @ self.p, hi @ self.p
        lo, hi = np.clip(lo, 0.0, 1.0), np.clip(hi, 0.0, 1.0)
        hi = np.where(hi > 0, np.maximum(hi, TINY), 0.0)
        return (np.clip(est, lo, hi).reshape(t.shape), lo.reshape(t.shape), hi.reshape(t.shape))

    def log_upper(self, t: float):
        """An upper bound of P(S <= t) as an mpmath number (for bounds below the double range)."""
        y = t - self.e + self.ea
        *_, lh = self.law.evaluate(y, False, with_log=True)
        with np.errstate(divide="ignore"):
            terms = np.log(self.p) + lh
        m = float(np.max(terms))
        if not math.isfinite(m):
            return mpmath.mpf(0)
        return mpmath.exp(mpmath.mpf(m) + mpmath.log(float(np.sum(np.exp(terms - m))))) * (1 + 1e-9)

    def bulk(self) -> tuple[float, float]:
        """(centre, scale) of s where the mass lies (quantile search starts there)."""
        return self.params["mean"], math.sqrt(max(self.params["variance"], 1e-300))

    def support(self):
        s = self.law.slack + float(np.max(self.ea, initial=0.0))
        return self.law.lo + float(self.e.min()) - s - 1.0, self.law.hi + float(self.e.max()) + s + 1.0

    def cost(self, points: int = 1) -> float:
        """Estimated seconds for ``points`` evaluations (built already: measured ~1 ms + 0.3 ms each)."""
        return 1e-3 + 3e-4 * points * (1 + self.e.size / 64)


# -------------------------------------------------------------- law (mul)
def real_or_refuse(at: Atoms, what: str) -> np.ndarray:
    """The real values of an operand of a multiplicative rule, or a clear refusal."""
    if not at.real:
        raise NotExactError(
            f"{what}: complex eigenvalues under a multiplicative product rule are covered by the "
            "exact tier only (ask for a smaller power, or use a Cartesian product)")
    if not np.all(np.isfinite(at.values)):
        raise SizeLimitError(f"{what}: factor eigenvalues beyond the double range")
    return at.values


def _same_shape(v, p, a, b) -> bool:
    """True when log|s| given s > 0 has the same law as given s < 0."""
    la, lb = np.log(np.abs(v[a])), np.log(np.abs(v[b]))
    pa, pb = p[a] / p[a].sum(), p[b] / p[b].sum()
    oa, ob = np.argsort(la), np.argsort(lb)
    if la.size != lb.size:
        return False
    return bool(np.allclose(la[oa], lb[ob], rtol=1e-10, atol=1e-12) and np.allclose(pa[oa], pb[ob]))


def _log_stats(v, p, sel):
    lv = np.log(np.abs(v[sel]))
    pp = p[sel] / p[sel].sum()
    m = float(pp @ lv)
    c = lv - m
    return m, float(pp @ c**2), float(pp @ np.abs(c) ** 3)


class MulLaw:
    """Log-normal laws with exact zero mass and sign shares, mixed over few-copy exact atoms."""

    name = "law"

    def __init__(self, parts, label: str):
        law_parts, exact = split_exact(parts, "mul", MIX_ATOMS_MUL)
        log_nz, log_q, q_sign, rel_slack = 0.0, 0.0, 1, 0.0
        indep, dep = [], []
        for at, k in law_parts:
            v = real_or_refuse(at, label)
            p = at.probs()
            nzv = v != 0
            p0 = float(p[~nzv].sum())
            a, b = nzv & (v > 0), nzv & (v < 0)
            if p0 >= 1.0:
                log_nz = -math.inf
                continue
            log_nz += k * math.log1p(-p0)
            rel = float(np.max(at.radius[nzv] / np.abs(v[nzv]), initial=0.0))
            rel_slack += k * (1.0001 * math.log1p(rel) + 4 * EPS)
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
        zero = -math.expm1(log_nz) + 0.0 if log_nz > -math.inf else 1.0  # + 0.0: no negative zero
        q_rest = q_sign * math.exp(log_q) if log_q > -math.inf else 0.0
        rest = SumLaw(indep)
        rest.slack += rel_slack
        self.rest = rest
        if not dep:
            self.law = ProductLaw(zero, [((1 + q_rest) / 2, (1 - q_rest) / 2, rest)],
                                  log_nonzero=log_nz)
            how = "log-normal law of |s| with exact zero mass and exact sign shares"
            eps = rest.eps
        else:
            v, p, a, b, k = dep[0]
            r_neg = float(p[b].sum() / (p[a].sum() + p[b].sum()))
            lv = np.abs(np.log(np.abs(v[v != 0])))
            mean_round = k * 4 * (lv.size + 2) * EPS * float(np.max(lv, initial=1.0))
            stats = (_log_stats(v, p, a), _log_stats(v, p, b))
            if window_points(k, r_neg) <= WINDOW_CAP:
                win = BinomialWindow(k, r_neg, *stats, rest if indep else None, q_rest,
                                     mean_round + (0.0 if indep else rest.slack))
                how = ("mixture over the number of negative factors of log-normal laws of |s| "
                       f"({win.nblocks} blocks, quadrature error <= {win.quad_err:.1g}), exact "
                       "zero mass and sign parity")
            else:  # too many j to enumerate: the parity term is bounded instead (lawparity)
                nzv = v != 0
                win = ParityWindow(k, r_neg, *stats, np.log(np.abs(v[nzv])), p[nzv] / p[nzv].sum(),
                                   indep, q_rest, rel_slack, rest if indep else None)
                how = ("log-normal law of |s| pooled over the signs, exact zero mass; the sign "
                       f"parity term bounded by {win.quad_err:.2g} (Abel summation over the "
                       "unimodal binomial law of the number of negative factors)")
            self.law = ProductLaw(zero, window=win, log_nonzero=log_nz)
            eps = win.eps_max
        if exact is None:
            self.e, self.p, self.erel = np.ones(1), np.ones(1), np.zeros(1)
        else:
            self.e, self.p, ea = exact
            with np.errstate(divide="ignore", invalid="ignore"):
                self.erel = np.where(self.e != 0, ea / np.abs(self.e), 0.0)
        mix = (f"; mixed over the {len(self.e)} exact atoms of the few-copy operands"
               if exact is not None else "")
        self.method = (
            f"law: {how} (exact point mass {zero:.6g} at s = 0); bounds: Berry-Esseen for log|s| "
            f"(largest sup bound {eps:.3g}; C = {BERRY_ESSEEN_IID} i.i.d., Shevtsova 2011, or "
            f"{BERRY_ESSEEN_NONIID} non-identical, Shevtsova 2010) and Chernoff tails; estimate: "
            f"Edgeworth / Lugannani-Rice for log|s| (an estimate, not a bound){mix}")
        m, var = self.law.log_params()
        nzm = self.law.nonzero
        self.params = {"zero_mass": zero, "positive_share": nzm * self.law.pos_total,
                       "negative_share": nzm * self.law.neg_total, "log_mean": m, "log_variance": var}

    def evaluate(self, sign, u, strict: bool = False, pad=0.0):
        """(estimate, lower, upper) arrays of P(S <= t), t = sign * exp(u) (mixture over exact atoms).

        ``pad`` (in u) widens the bounds for an uncertain point.
        """
        sign, u, pad = np.broadcast_arrays(np.asarray(sign, dtype=float), np.asarray(u, dtype=float),
                                           np.asarray(pad, dtype=float))
        est = np.zeros(sign.shape)
        lo = np.zeros(sign.shape)
        hi = np.zeros(sign.shape)
        ev = self.law.evaluate
        for e, p, er in zip(self.e, self.p, self.erel, strict=True):
            if e == 0:
                v = ((sign > 0) | ((sign == 0) & (not strict))).astype(float)
                est, lo, hi = est + p * v, lo + p * v, hi + p * v
                continue
            le = math.log(abs(e))
            # the atom's relative radius is an uncertainty of u: it widens the pad
            sl = math.log1p(er) * 1.0001 + 4 * EPS * (1 + abs(le)) if er else 4 * EPS * (1 + abs(le))
            if e > 0:
                a0, a1, a2 = ev(sign, u - le, strict, pad + sl)
                est, lo, hi = est + p * a0, lo + p * a1, hi + p * a2
            else:
                # P(e S <= t) = 1 - P(S < t / e); t / e has the opposite sign
                b0, b1, b2 = ev(-sign, u - le, not strict, pad + sl)
                est, lo, hi = est + p * (1 - b0), lo + p * (1 - b2), hi + p * (1 - b1)
        lo, hi = np.clip(lo, 0.0, 1.0), np.clip(hi, 0.0, 1.0)
        return np.clip(est, lo, hi), lo, hi

    def bulk(self) -> tuple[float, float]:
        """(centre, scale) of log|s| given s != 0 (quantile search starts there)."""
        nz = self.e != 0
        le = np.log(np.abs(self.e[nz])) if nz.any() else np.zeros(1)
        pe = self.p[nz] / self.p[nz].sum() if nz.any() else np.ones(1)
        m = self.params["log_mean"] + float(pe @ le)
        v = self.params["log_variance"] + float(pe @ (le - pe @ le) ** 2)
        return m, math.sqrt(max(v, 1e-300)) + 1e-12 * (1 + abs(m))

    def log_range(self):
        r = self.rest
        w = self.law.window
        lo, hi = r.lo, r.hi
        if w is not None:
            sd = math.sqrt(max(w.var_log, 0.0))
            lo = min(lo, w.mean_log - 60 * sd - 1) if r.blocks else w.mean_log - 60 * sd - 1
            hi = max(hi, w.mean_log + 60 * sd + 1) if r.blocks else w.mean_log + 60 * sd + 1
        nz = self.e[self.e != 0]
        le = np.log(np.abs(nz)) if nz.size else np.zeros(1)
        return lo + float(le.min()) - 2.0, hi + float(le.max()) + 2.0

    def cost(self, points: int = 1) -> float:
        """Estimated seconds for ``points`` evaluations (measured: 0.3 ms each, more with blocks)."""
        w = self.law.window
        per = (1 + (w.nblocks if w is not None else 0) / 2000) * 3e-4
        build = 1e-3 + (1e-7 * (w.jhi - w.jlo) if w is not None else 0.0)
        return build + per * points * self.e.size


# ----------------------------------------------------------- bracket tiers
MIN_POINTS = 1 << 16
"""Off lattices a grid this small is refined (cheaply) beyond what ``tol`` asks for."""


def _grid(spec, blocks, tol, mul, grid_limit, eta):
    """(h, points, cost, predicted width): spacing from tol, refined while the grid stays small."""
    h = spacing(spec, tol)
    n, cost, width = plan_cost(blocks, h, mul, grid_limit, eta)
    lattice = spacing(spec, tol / 2) == h
    if not lattice and n < MIN_POINTS:
        h2 = h * max(n / MIN_POINTS, 1 / 64)
        try:
            n2, cost2, width2 = plan_cost(blocks, h2, mul, grid_limit, eta)
            return h2, n2, cost2, width2
        except SizeLimitError:
            pass
    return h, n, cost, width


class AddBracketTier:
    """Certified FFT bracket of a Cartesian power (grid chosen from tol)."""

    name = "bracket"

    def __init__(self, parts, tol: float, grid_limit: int, plan_only: bool = False):
        blocks = [(at.values, at.fractions(), k, at.radius) for at, k in parts]
        self.eta = tol / 8
        self.h, self.points, self.estimated_cost, self.predicted_width = _grid(
            [(b[0], b[1], b[2]) for b in blocks], blocks, tol, False, grid_limit, self.eta)
        if plan_only:
            return
        self.b = AddBracket(blocks, self.h, grid_limit, eta=self.eta)
        self.method = (
            f"bracket: eigenvalues rounded to a grid of spacing {self.h:.3g}, the power's "
            f"distribution by one FFT of {self.b.points} points, a pointwise power and one inverse; "
            f"certified bounds from the exact mean rounding move, a Bernstein shift "
            f"{self.b.tau:.3g} (tail {self.b.eta:.2g}), the values' radii and an explicit FFT, "
            f"aliasing and summation error bound {self.b.err:.2g}")

    def evaluate(self, t, strict: bool = False, pad=0.0):
        return self.b.evaluate(t, strict, pad)

    def support(self):
        return self.b.support()

    def bulk(self) -> tuple[float, float]:
        bl = self.b.blocks
        mean = float(self.b.origin + self.b.mean_shift) + self.h * sum(b.k * b.mean_idx for b in bl)
        return mean, self.h * math.sqrt(max(sum(b.k * b.var_idx for b in bl), 1.0))

    def cost(self, points: int = 1) -> float:
        return self.estimated_cost + 5e-5 * points


class MulBracketTier:
    """Certified FFT bracket of log|s| with exact sign parity and zero mass (multiplicative rules)."""

    name = "bracket"

    def __init__(self, parts, tol: float, grid_limit: int, label: str, plan_only: bool = False):
        blocks, logblocks = [], []
        for at, k in parts:
            v = real_or_refuse(at, label)
            nz = v != 0
            rel = float(np.max(at.radius[nz] / np.abs(v[nz]), initial=0.0))
            fr = at.fractions()
            blocks.append((v, fr, k, rel))
            if nz.any():
                logblocks.append((np.log(np.abs(v[nz])), [f for f, z in zip(fr, nz, strict=True) if z],
                                  k, np.full(int(nz.sum()), math.log1p(rel) * 1.0001)))
        self.eta = tol / 8
        self.h, self.points, self.estimated_cost, self.predicted_width = _grid(
            [(b[0], b[1], b[2]) for b in logblocks], logblocks, tol, True, grid_limit, self.eta) \
            if logblocks else (1.0, 1, 1e-4, 0.0)
        if plan_only:
            return
        self.b = MulBracket(blocks, self.h, grid_limit, eta=self.eta)
        self.method = (
            f"bracket: log|s| rounded to a grid of spacing {self.h:.3g} with exact sign parity and "
            f"the exact zero mass {self.b.zero:.6g}, the power's distribution by one FFT of "
            f"{self.b.points} points per parity vector, a pointwise power and one inverse; "
            f"certified bounds from the rounding shift {self.b.shift:.3g} in log|s| (Bernstein) and "
            f"an explicit FFT, aliasing and summation error bound {self.b.err:.2g}")

    def evaluate(self, sign, u, strict: bool = False, pad=0.0):
        return self.b.evaluate(sign, u, strict, pad)

    def log_range(self):
        return self.b.log_range()

    def bulk(self) -> tuple[float, float]:
        if self.b.empty:
            return 0.0, 1.0
        bl = self.b.blocks
        mean = self.b.origin + self.h * sum(b.k * b.mean_idx for b in bl)
        return mean, self.h * math.sqrt(max(sum(b.k * b.var_idx for b in bl), 1.0))

    def cost(self, points: int = 1) -> float:
        return self.estimated_cost + 5e-5 * points


__all__ = ["Atoms", "ball_end", "ExactTier", "AddLaw", "MulLaw", "AddBracketTier", "MulBracketTier",
           "split_exact", "real_or_refuse", "MIX_ATOMS"]
