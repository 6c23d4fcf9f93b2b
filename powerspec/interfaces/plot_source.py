"""What a spectrum plot draws, gathered from the queries (no matplotlib here).

:func:`gather` collects, for one expression and matrix kind:

* the **exact atoms** when the full spectrum fits (values, exact shares, and
  for multiplicative rules log|s| of every atom and the exact zero atom);
* the **frozen distribution** that certifies the CDF band (exact, bracket,
  law or moment tier; the bracket tier is preferred for the band and the
  histogram when it fits at a plotting tolerance);
* the **reference law** and its parameters (``mu``, ``sigma2`` for additive
  rules; ``zero_mass``, sign shares, ``log_mu``, ``log_sigma2`` of log|s| for
  multiplicative ones, s the linearised eigenvalue: λ for direct products,
  1 + bλ for strong products and mix(1, b));
* the **lattice** (origin, span) of the plotted variable when the
  eigenvalues lie on one, so that histogram bins hold whole lattice points.

It evaluates, vectorised, the CDF of the plotted variable with rigorous
bounds (:meth:`PlotSource.cdf`) and the certified mass of histogram bins
(:meth:`PlotSource.masses`).

Reading the linearisation (x = alpha + beta s), the law's lattice and the
log-space CDF uses the frozen distribution's tier objects directly (see
:func:`linear_form` and ``_tier_*``); they are the three things a public
attribute of :class:`~powerspec.queries.frozen.SpectralDistribution` would
replace.

>>> src = gather("cart(K(2)^6)")
>>> src.mode, src.lattice, src.atoms.share.tolist()[:2]
('add', (-6.0, 2.0), [0.015625, 0.09375])
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from flint import acb, arb, fmpq

from powerspec.errors import InputError, NotExactError, SizeLimitError
from powerspec.numbers.counts import fraction_of, log2
from powerspec.queries import planner
from powerspec.queries.frozen import SpectralDistribution, distribution
from powerspec.tiers.laws import lattice_span

PLOT_TOLS = (2e-4, 1e-3, 1e-2)
"""Bracket widths tried for the band and the histogram (a plot needs ~1e-3 of CDF)."""


@dataclass
class ExactAtoms:
    """The exact spectrum as plain arrays (ascending λ).

    ``x`` midpoints of λ (inf beyond the double range), ``share`` m / order as
    floats, ``log10_share`` (finite even below the double range), ``mult``
    the exact multiplicities; for multiplicative rules ``u`` = log|s| (nan
    at s = 0) and ``sign`` of s; ``zero`` the exact zero atom's multiplicity
    (s = 0) or None when no atom is exactly zero.
    """

    x: np.ndarray
    share: np.ndarray
    log10_share: np.ndarray
    mult: list
    u: np.ndarray | None = None
    sign: np.ndarray | None = None
    zero: object = None


@dataclass
class PlotSource:
    """Everything one spectrum plot draws (see the module docstring)."""

    expression: str
    matrix: str
    order: object
    mode: str | None                       # 'add', 'mul' or None (no linearised rule)
    c0: float = 0.0                        # s = c0 + c1 * λ
    c1: float = 1.0
    dist: SpectralDistribution | None = None   # certifies the CDF band
    params: dict = field(default_factory=dict)
    atoms: ExactAtoms | None = None
    lattice: tuple[float, float] | None = None   # in the plotted variable (λ or log|s|)
    notes: list[str] = field(default_factory=list)

    @property
    def s_text(self) -> str:
        """How s reads in λ: 'λ', '1 + λ', '1 + 0.5λ', '1 - λ', '2λ'."""
        return s_text(self.c0, self.c1)

    @property
    def tier(self) -> str:
        """The tier of the band: exact | bracket | law | moments | none."""
        return self.dist.tier if self.dist is not None else ("exact" if self.atoms else "none")

    # ---------------------------------------------------------------- CDF
    def cdf(self, t, log: bool = False):
        """(estimate, lower, upper) arrays of P(λ <= t), or with ``log`` of P(|s| <= e^t)
        (the exact zero mass included: P(log|s| <= t) with log 0 = -inf)."""
        t = np.asarray(t, dtype=float)
        if not log:
            if self.dist is not None:
                return self.dist.cdf(t, bounds=True)
            return _atom_cdf(self.atoms.x, self.atoms.share, t)
        if self.dist is not None and self.dist.tier in ("bracket", "law"):
            return _tier_log_cdf(self.dist, t)
        if self.atoms is not None and self.atoms.u is not None:
            u = np.where(np.isnan(self.atoms.u), -np.inf, self.atoms.u)
            order = np.argsort(u)
            return _atom_cdf(u[order], self.atoms.share[order], t)
        raise InputError("the log-magnitude view needs a multiplicative rule (direct, strong, "
                         "mix(a, b) with a in {0, 1})")

    def masses(self, edges: np.ndarray, log: bool = False):
        """(estimate, lower, upper) of the share of eigenvalues in each bin (a, b] of ``edges``."""
        est, lo, hi = self.cdf(edges, log)
        return (np.clip(np.diff(est), 0, 1), np.clip(lo[1:] - hi[:-1], 0, 1),
                np.clip(hi[1:] - lo[:-1], 0, 1))


def s_text(c0: float, c1: float) -> str:
    """The linearised eigenvalue s = c0 + c1 λ as text.

    >>> s_text(0, 1), s_text(1, 1), s_text(1, 0.5), s_text(1, -1), s_text(0, 2)
    ('λ', '1 + λ', '1 + 0.5λ', '1 - λ', '2λ')
    """
    slope = "λ" if c1 == 1 else "-λ" if c1 == -1 else f"{c1:g}λ"
    if c0 == 0:
        return slope
    if slope.startswith("-"):
        return f"{c0:g} - {slope[1:]}"
    return f"{c0:g} + {slope}"


def _atom_cdf(keys: np.ndarray, share: np.ndarray, t: np.ndarray):
    cum = np.concatenate([[0.0], np.cumsum(share)])
    f = np.clip(cum[np.searchsorted(keys, t.ravel(), side="right")], 0, 1).reshape(t.shape)
    return f, f, f


# ------------------------------------------------------ tier internals
def linear_form(d: SpectralDistribution) -> tuple[str | None, float, float, str | None]:
    """(mode, c0, c1, text) with s = c0 + c1 λ the linearised eigenvalue of the distribution's
    product rule (x = alpha + beta s); mode 'add', 'mul' or None when no rule applies.

    >>> linear_form(distribution("strong(K(3)^4)"))
    ('mul', 1.0, 1.0, '1 + λ')
    """
    q = d._q
    try:
        q._flat()
    except (NotExactError, SizeLimitError, InputError):
        return None, 0.0, 1.0, None
    c0, c1 = -q.alpha / q.beta, 1.0 / q.beta
    return q.mode, c0, c1, s_text(c0, c1)


def _tier_lattice(d: SpectralDistribution, mode: str | None, c0: float, c1: float):
    """The law's lattice in the plotted variable (λ for 'add', log|s| for 'mul'), or None."""
    try:
        law = d._t if d.tier == "law" else d._q.law()
    except (NotExactError, SizeLimitError, InputError):
        return None
    if mode == "add":
        if law.e.size != 1 or law.law.lattice is None:
            return None
        origin, span = law.law.lattice
        return (origin + float(law.e[0]) - c0) / c1, abs(span / c1)
    if mode == "mul" and law.law.window is None and law.e.size == 1 and law.e[0] == 1:
        return law.rest.lattice
    return None


def _tier_log_cdf(d: SpectralDistribution, u: np.ndarray):
    """P(|s| <= e^u) = P(s <= e^u) - P(s < -e^u) with bounds, from the bracket / law tier."""
    t = d._t
    e1, l1, h1 = t.evaluate(np.ones_like(u), u)
    e2, l2, h2 = t.evaluate(-np.ones_like(u), u, True)
    est = np.clip(e1 - e2, 0, 1)
    lo, hi = np.clip(l1 - h2, 0, 1), np.clip(h1 - l2, 0, 1)
    return np.clip(est, lo, hi), lo, hi


# ------------------------------------------------------------- gathering
def _exact_atoms(sp, order, mode: str | None, c0: float, c1: float) -> ExactAtoms:
    mult = [m for m in sp.mult.tolist()]
    share = np.array([float(fraction_of(m, order).mid()) for m in mult])
    l10 = math.log10(2)
    log10_share = np.array([(log2(m) - log2(order)) * l10 for m in mult])
    out = ExactAtoms(sp.real_midpoints(), share, log10_share, mult)
    if mode == "mul":
        u, sign, zero = [], [], None
        for ball, m in zip(sp.balls(), mult, strict=True):
            x = ball.real if isinstance(ball, acb) else ball
            s = arb(c0) + arb(c1) * (arb(x) if isinstance(x, fmpq) else x)
            if s.is_zero():
                u.append(np.nan)
                sign.append(0.0)
                zero = m
                continue
            u.append(float(abs(s).log().mid()))
            sign.append(float(np.sign(float(s.mid()))))
        out.u, out.sign, out.zero = np.array(u), np.array(sign), zero
    return out


def _distribution(expr, matrix: str, limit, degrees: str, notes: list[str]):
    """(banded distribution, auto distribution): the bracket at a plotting width when it fits."""
    try:
        auto = distribution(expr, matrix, limit=limit, degrees=degrees)
    except (NotExactError, SizeLimitError, InputError) as exc:
        notes.append(f"no certified CDF band: {exc}")
        return None, None
    if auto.tier in ("exact", "bracket", "moments"):
        return auto, auto
    for tol in PLOT_TOLS:
        try:
            return distribution(expr, matrix, method="bracket", tol=tol, limit=limit,
                                degrees=degrees), auto
        except (SizeLimitError, NotExactError):
            continue
    notes.append("no bracket fits at a plotting width; the band and bin masses are the law "
                 "tier's rigorous bounds")
    return auto, auto


def _params(d: SpectralDistribution | None, mode: str | None) -> dict:
    """The law's parameters; for additive rules the exact mean and variance tr(M)/n, tr(M^2)/n."""
    if d is None:
        return {}
    p = dict(d.params)
    if mode == "add" and "mu" in p:
        try:
            p["mu"], p["sigma2"] = float(d.mean()), float(d.var())
        except (InputError, SizeLimitError, OverflowError, TypeError, ValueError):
            pass
    return p


def gather(expr, matrix: str = "adjacency", *, limit: int | None = None, degrees: str = "out",
           workers: int = 1, scheduler: str | None = None, progress=None) -> PlotSource:
    """Collect the data of a spectrum plot (see the module docstring)."""
    node = planner.resolve(expr)
    notes: list[str] = []
    sp = None
    try:
        sp = planner.spectrum(node, matrix, limit=limit, degrees=degrees, workers=workers,
                              scheduler=scheduler, progress=progress).atoms
    except (SizeLimitError, NotExactError):
        pass
    if sp is not None and not sp.is_real:
        raise InputError("plots show real spectra; this one is complex (plot the real parts "
                         "with the Python API's distribution(...))")
    band, auto = _distribution(node, matrix, limit, degrees, notes)
    mode, c0, c1, _ = linear_form(auto) if auto is not None else (None, 0.0, 1.0, None)
    if sp is None and band is None:
        raise InputError(f"nothing to plot for {node.label()}: neither the exact spectrum nor a "
                         f"distribution tier answers ({'; '.join(notes)})")
    if band is not None and band.tier == "moments":
        notes.append("band from exact-moment (Chebyshev-Markov-Stieltjes) bounds")
    src = PlotSource(node.label(), matrix, node.order, mode, c0, c1, band,
                     _params(auto, mode), notes=notes)
    if sp is not None:
        src.atoms = _exact_atoms(sp, node.order, mode, c0, c1)
        vals = src.atoms.u if mode == "mul" else src.atoms.x
        finite = vals[np.isfinite(vals)] if vals is not None else np.zeros(0)
        if 1 < finite.size <= 100_000:
            span = lattice_span(finite)
            src.lattice = (float(finite.min()), span) if span else None
    elif auto is not None:
        src.lattice = _tier_lattice(auto, mode, c0, c1)
    return src


__all__ = ["ExactAtoms", "PLOT_TOLS", "PlotSource", "gather", "linear_form", "s_text"]
