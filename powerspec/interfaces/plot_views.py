"""The views of a spectrum plot, drawn with matplotlib from a :class:`PlotSource`.

Views (``view=``):

* ``density`` -- the eigenvalue axis λ: exact atoms as stems (share of the
  vertices; a log scale when the shares span many decades) or a density
  histogram (exact atoms, or the certified bin masses of the bracket / law
  tier, shaded between their rigorous lower and upper bounds), against the
  reference law's density;
* ``log`` -- log-magnitude, the axis log|s| (s = λ for direct products,
  1 + bλ for strong products and mix(1, b)): the same data against the
  normal law of log|s| with the exact zero mass and sign shares;
* ``cdf`` -- the certified CDF band (lower/upper) of λ or log|s| with the
  exact step function where atoms are known, against the law's CDF;
* ``standard`` -- the density view on the standardised axis (λ - μ)/σ, or
  (log|s| - μ)/σ for multiplicative rules, against N(0, 1).

``auto`` is ``density`` for additive rules and ``log`` for multiplicative ones.
Histogram bins hold whole lattice points when the spectrum lies on a lattice
(no aliasing combs).  Nothing here computes spectra: every number comes from
the source.

>>> from powerspec.interfaces.plot_source import gather
>>> fig, summary = draw(gather("cart(K(2)^8)"), PlotOptions())
>>> summary.split(";")[0]
'density view: 9 exact atoms as stems'
"""

from __future__ import annotations

import math
import textwrap
from dataclasses import dataclass

import numpy as np

# Figures are built with the object interface, never through pyplot: no global backend is
# chosen or changed (a notebook's backend stays as it was), and no figure outlives its file.
from matplotlib.figure import Figure
from matplotlib.lines import Line2D

from powerspec.answers.answer import count_text
from powerspec.errors import InputError
from powerspec.interfaces.plot_source import PlotSource
from powerspec.interfaces.report import share_text
from powerspec.numbers.digits import mean_text

VIEWS = ("auto", "density", "log", "cdf", "standard")
STEM_MAX = 120
"""Most exact atoms in view drawn as stems (more make a histogram)."""

OFFSET_AT = 1e4
"""An axis whose centre exceeds this many spreads is drawn relative to its rounded centre."""

LOG_DECADES = 4.0
"""Shares spanning more decades than this get a logarithmic axis (yscale auto)."""

SQRT2PI = math.sqrt(2 * math.pi)

NZ_VISIBLE = 1e-9
"""Below this share of non-zero s the log view draws the law of log|s| given s ≠ 0 alone."""


@dataclass
class PlotOptions:
    """How to draw: view, bins, figure size (inches), dpi, title, axis limits, y scale."""

    view: str = "auto"
    bins: int = 60
    size: tuple[float, float] = (7.0, 4.2)
    dpi: int = 150
    title: str | None = None
    xlim: tuple[float, float] | None = None
    ylim: tuple[float, float] | None = None
    yscale: str = "auto"


@dataclass
class _Axis:
    """The drawn variable: base 'x' (λ) or 'u' (log|s|), shown as (base - shift) / scale."""

    base: str
    shift: float = 0.0
    scale: float = 1.0
    label: str = ""

    def show(self, v):
        return (np.asarray(v, dtype=float) - self.shift) / self.scale

    def unshow(self, z):
        return np.asarray(z, dtype=float) * self.scale + self.shift


def _fmt(v) -> str:
    return f"{float(v):.6g}"


# ------------------------------------------------------------ reference law
def _law(src: PlotSource, ax: _Axis):
    """(pdf, cdf, legend) of the reference law in the drawn variable, or None."""
    p = src.params
    conditional = ""
    if ax.base == "x" and "mu" in p and p["sigma2"] > 0:
        mu, sd = p["mu"], math.sqrt(p["sigma2"])
        legend = f"normal law, μ = {mean_text(mu, sd)}, σ² = {_fmt(p['sigma2'])}"
        nz = 1.0
    elif ax.base == "u" and "log_mu" in p and p["log_sigma2"] > 0:
        mu, sd = p["log_mu"], math.sqrt(p["log_sigma2"])
        nz = 1.0 - p["zero_mass"]
        legend = (f"normal law of log|{src.s_text}| given {src.s_text} ≠ 0, μ = {mean_text(mu, sd)}, "
                  f"σ² = {_fmt(p['log_sigma2'])}" + (f", times P({src.s_text} ≠ 0) = {_fmt(nz)}"
                                                     if NZ_VISIBLE <= nz < 1 else ""))
        if nz < NZ_VISIBLE:
            # the non-zero part is too small to see beside the zero atom: draw its law alone
            share = _fmt(nz) if nz > 0 else "below 1e-308"
            conditional = (f" (drawn given {src.s_text} ≠ 0: P({src.s_text} ≠ 0) = {share} is too "
                           "small to show beside the exact zero mass)")
            legend += conditional
            nz = 1.0
    else:
        return None
    if ax.scale != 1.0:
        legend = "N(0, 1)" + (f" × {_fmt(nz)}" if nz < 1 else "") + \
            f"  (standardised by μ = {mean_text(mu, sd)}, σ = {_fmt(sd)})" + conditional

    def pdf(z):
        v = ax.unshow(z)
        return nz * np.exp(-0.5 * ((v - mu) / sd) ** 2) / (sd * SQRT2PI) * ax.scale

    def cdf(z):
        from scipy.special import ndtr

        v = ax.unshow(z)
        return (1 - nz) + nz * ndtr((v - mu) / sd)
    return pdf, cdf, legend


def _centre(src: PlotSource, base: str) -> tuple[float, float] | None:
    p = src.params
    if base == "x" and "mu" in p:
        return p["mu"], math.sqrt(max(p["sigma2"], 0.0))
    if base == "u" and "log_mu" in p:
        return p["log_mu"], math.sqrt(max(p["log_sigma2"], 0.0))
    if base == "x" and src.dist is not None:
        try:
            return float(src.dist.mean()), float(src.dist.std())
        except (InputError, OverflowError, TypeError, ValueError):
            return None
    return None


# ------------------------------------------------------------------ ranges
def _atom_values(src: PlotSource, base: str) -> tuple[np.ndarray, np.ndarray, np.ndarray] | None:
    """(values, shares, log10 shares) of the atoms in the base variable (finite values only)."""
    a = src.atoms
    if a is None:
        return None
    v = a.u if base == "u" else a.x
    if v is None:
        return None
    ok = np.isfinite(v)
    v, share, l10 = v[ok], a.share[ok], a.log10_share[ok]
    if base == "u":
        v, share, l10 = _merge_equal(v, share, l10)
    return v, share, l10


def _merge_equal(v: np.ndarray, share: np.ndarray, l10: np.ndarray):
    """Atoms with the same log|s| (s and -s) as one stem carrying both shares.

    >>> _merge_equal(np.array([1.0, 0.5, 1.0]), np.array([0.25, 0.5, 0.25]),
    ...              np.log10([0.25, 0.5, 0.25]))[:2]
    (array([0.5, 1. ]), array([0.5, 0.5]))
    """
    if v.size < 2:
        return v, share, l10
    order = np.argsort(v, kind="stable")
    v, share, l10 = v[order], share[order], l10[order]
    # equal up to the rounding of log|s| (both signs of one |s| give the same double, or
    # neighbours of it)
    new = np.concatenate([[True], np.diff(v) > 1e-12 * np.maximum(1.0, np.abs(v[1:]))])
    starts = np.flatnonzero(new)
    merged_l10 = np.array([np.logaddexp.reduce(l10[a:b] * np.log(10)) / np.log(10)
                           for a, b in zip(starts, [*starts[1:], v.size], strict=True)])
    return v[starts], np.add.reduceat(share, starts), merged_l10


def _range(src: PlotSource, ax: _Axis, opts: PlotOptions) -> tuple[float, float]:
    """Base-variable range: the atoms' span cut to the bulk (centre +- 5 sd), or the law's bulk."""
    if opts.xlim is not None:
        lo, hi = ax.unshow(opts.xlim) if ax.scale != 1.0 else opts.xlim
        return float(min(lo, hi)), float(max(lo, hi))
    c = _centre(src, ax.base)
    atoms = _atom_values(src, ax.base)
    if atoms is not None and atoms[0].size:
        lo, hi = float(atoms[0].min()), float(atoms[0].max())
        if c is not None and c[1] > 0 and atoms[0].size > STEM_MAX:
            lo, hi = max(lo, c[0] - 5.5 * c[1]), min(hi, c[0] + 5.5 * c[1])
    elif c is not None and c[1] > 0 and math.isfinite(c[1]):
        lo, hi = c[0] - 4.2 * c[1], c[0] + 4.2 * c[1]
    elif src.dist is not None and ax.base == "x":
        q = src.dist.ppf([0.001, 0.999])
        lo, hi = float(q[0]), float(q[1])
    else:
        raise InputError(f"cannot place the {ax.base} axis for {src.expression}: give --xlim")
    if not (math.isfinite(lo) and math.isfinite(hi)):
        raise InputError("the eigenvalues lie beyond the double range on this axis; use the log "
                         "view (--view log) or give --xlim")
    pad = 0.04 * (hi - lo) if hi > lo else max(1.0, abs(lo)) * 0.1
    return lo - pad, hi + pad


def lattice_edges(lo: float, hi: float, bins: int, lattice) -> tuple[np.ndarray, bool]:
    """Bin edges over [lo, hi]: about ``bins`` equal bins, each holding the same whole number
    of lattice points when a lattice (origin, span) is given.

    >>> lattice_edges(-3.2, 3.2, 60, (-4.0, 2.0))[0].tolist()
    [-5.0, -3.0, -1.0, 1.0, 3.0, 5.0]
    """
    if lattice is None or not lattice[1] or not math.isfinite(lattice[1]):
        return np.linspace(lo, hi, bins + 1), False
    origin, span = lattice
    per = max(1, math.ceil((hi - lo) / span / bins))
    width = per * span
    first = origin + (math.floor((lo - origin) / span) - 0.5) * span
    n = max(1, math.ceil((hi - first) / width))
    return first + width * np.arange(n + 1), True


# ------------------------------------------------------------------ panels
def _stems(axes, src, ax: _Axis, vals, share, l10, opts, law) -> str:
    log_y = opts.yscale == "log" or (opts.yscale == "auto" and l10.size > 1 and
                                     float(l10.max() - l10.min()) > LOG_DECADES)
    heights = np.maximum(share, 1e-300) if not log_y else np.power(10.0, np.maximum(l10, -300))
    z = ax.show(vals)
    bottom = 10.0 ** (math.floor(float(l10.min())) - 1) if log_y else 0.0
    axes.vlines(z, bottom, heights, color="tab:blue", lw=1.6, label="exact atoms (share of vertices)")
    axes.plot(z, heights, "o", color="tab:blue", ms=2.5)
    axes.set_ylabel("share of eigenvalues (exact)")
    if log_y:
        axes.set_yscale("log")
        axes.set_ylim(bottom=bottom)
    if law is not None:
        pdf, _, legend = law
        grid = np.linspace(*axes.get_xlim(), 600)
        lat = src.lattice
        if lat is not None and lat[1]:
            per_point = pdf(grid) * lat[1] / ax.scale
            if log_y:
                per_point = np.where(per_point > bottom, per_point, np.nan)
            axes.plot(grid, per_point, color="black", lw=1.1,
                      label=f"{legend}, × span {_fmt(lat[1])} (mass per lattice point)")
        else:
            twin = axes.twinx()
            twin.plot(grid, pdf(grid), color="black", lw=1.1, label=legend)
            twin.set_ylabel("density of the law")
            twin.set_ylim(bottom=0)
    what = "1 exact atom as a stem" if vals.size == 1 else f"{vals.size} exact atoms as stems"
    return what + (" (log scale)" if log_y else "")


def _histogram(axes, src, ax: _Axis, lo, hi, opts, law) -> str:
    edges, on_lattice = lattice_edges(lo, hi, opts.bins, _shown_lattice(src.lattice, ax))
    est, mlo, mhi = src.masses(ax.unshow(edges), log=ax.base == "u")
    width = np.diff(edges)
    z = edges
    dens, dlo, dhi = est / width, mlo / width, mhi / width
    exact = src.tier == "exact"
    if exact:
        axes.stairs(dens, z, fill=True, color="tab:blue", alpha=0.45,
                    label="exact spectrum, histogram")
    else:
        # the certain part (up to each bin's rigorous lower bound) filled, the uncertain part
        # (lower to upper bound) shaded apart, and the tier's estimate as a line through it
        axes.stairs(dlo, z, fill=True, color="tab:blue", alpha=0.35,
                    label=f"{src.tier} tier: certified lower bound of each bin's mass")
        axes.bar(z[:-1], dhi - dlo, bottom=dlo, width=width, align="edge", color="tab:orange",
                 alpha=0.4, lw=0, label="between the rigorous lower and upper bounds")
        axes.stairs(dens, z, color="tab:blue", lw=1.2, label=f"{src.tier} tier estimate")
    axes.set_ylabel("density")
    positive = dens[dens > 0]
    log_y = opts.yscale == "log" or (opts.yscale == "auto" and exact and positive.size > 1 and
                                     math.log10(positive.max() / positive.min()) > LOG_DECADES)
    if log_y:
        axes.set_yscale("log")
        if positive.size:
            axes.set_ylim(bottom=float(positive.min()) / 3)
    if law is not None:
        pdf, _, legend = law
        grid = np.linspace(z[0], z[-1], 600)
        curve = pdf(grid)
        if log_y and positive.size:
            curve = np.where(curve > positive.min() / 3, curve, np.nan)
        axes.plot(grid, curve, color="black", lw=1.1, label=legend)
    what = "lattice-aware " if on_lattice else ""
    return (f"density histogram ({len(width)} {what}bins, {src.tier} data)"
            + (" (log scale)" if log_y else ""))


def _shown_lattice(lattice, ax: _Axis):
    if lattice is None:
        return None
    return (float(ax.show(lattice[0])), lattice[1] / ax.scale)


def _density(axes, src: PlotSource, ax: _Axis, opts: PlotOptions) -> str:
    lo, hi = _range(src, ax, opts)
    law = _law(src, ax)
    atoms = _atom_values(src, ax.base)
    if atoms is not None:
        keep = (atoms[0] >= lo) & (atoms[0] <= hi)
        if 0 < int(keep.sum()) <= STEM_MAX:
            axes.set_xlim(*ax.show([lo, hi]))
            return _stems(axes, src, ax, atoms[0][keep], atoms[1][keep], atoms[2][keep], opts, law)
    return _histogram(axes, src, ax, *ax.show([lo, hi]), opts, law)


def _cdf(axes, src: PlotSource, ax: _Axis, opts: PlotOptions, resid=None) -> str:
    """The CDF band; with ``resid`` (a second axes) the band minus the law's CDF below it."""
    lo, hi = _range(src, ax, opts)
    grid = np.linspace(lo, hi, 801)
    est, blo, bhi = src.cdf(grid, log=ax.base == "u")
    z = ax.show(grid)
    width = float(np.max(bhi - blo)) if bhi.size else 0.0
    law = _law(src, ax)
    ref = law[1](z) if law is not None else None
    exact = src.tier == "exact"
    for target, base in ((axes, 0.0), (resid, ref)):
        if target is None or (target is resid and ref is None):
            continue
        if exact:
            target.plot(z, est - base, drawstyle="steps-post", color="tab:blue", lw=1.4,
                        label="exact CDF (step function of the atoms)" if target is axes else None)
        else:
            target.fill_between(z, blo - base, bhi - base, color="tab:orange", alpha=0.45, lw=0,
                                label=f"certified band, {src.tier} tier (width ≤ {width:.2g})"
                                if target is axes else None)
            target.plot(z, est - base, color="tab:blue", lw=1.0,
                        label=f"{src.tier} tier estimate" if target is axes else None)
    if law is not None:
        axes.plot(z, ref, color="black", lw=1.0, ls="--", label=law[2])
    if resid is not None and ref is not None:
        resid.axhline(0.0, color="black", lw=0.8, ls="--")
        resid.set_ylabel("minus the law", fontsize=8)
        resid.grid(alpha=0.25)
    axes.set_ylabel("fraction of eigenvalues ≤ x" if ax.base == "x" else
                    f"fraction with log|{src.s_text}| ≤ x")
    axes.set_ylim(-0.02, 1.02)
    return f"CDF band ({src.tier} tier, largest width {width:.2g})"


# -------------------------------------------------------------------- draw
def _offset(src: PlotSource, base: str, label: str) -> _Axis:
    """The axis, drawn relative to a round centre when the centre dwarfs the spread."""
    c = _centre(src, base)
    if c is None or not c[1] > 0 or abs(c[0]) < OFFSET_AT * c[1]:
        return _Axis(base, label=label)
    step = 10.0 ** math.floor(math.log10(c[1]))
    shift = round(c[0] / step) * step
    return _Axis(base, shift=shift, label=f"{label} − {shift:.12g}")


def _axis_for(src: PlotSource, view: str) -> _Axis:
    s = src.s_text
    if view == "log":
        if src.mode != "mul":
            raise InputError("the log-magnitude view is for direct, strong and mix(a, b) products "
                             "(a in {0, 1}); Cartesian spectra are drawn with --view density")
        return _offset(src, "u", f"log|{s}|  (natural logarithm)")
    if view == "standard":
        base = "u" if src.mode == "mul" else "x"
        c = _centre(src, base)
        if c is None or not c[1] > 0:
            raise InputError("the standardised view needs a spread: this spectrum has no "
                             "reference law with positive variance")
        label = f"(log|{s}| − μ) / σ" if base == "u" else "(λ − μ) / σ"
        return _Axis(base, c[0], c[1], f"standardised {label}")
    return _offset(src, "x", f"eigenvalue λ of the {src.matrix} matrix")


def _zero_note(src: PlotSource) -> str | None:
    p, s = src.params, src.s_text
    a = src.atoms
    if a is not None and a.zero is not None:
        return (f"{s} = 0 exactly: nullity {count_text(a.zero)}, share "
                f"{share_text(a.zero, src.order)}")
    if "zero_mass" in p:
        return (f"exact mass at {s} = 0: {_fmt(p['zero_mass'])};  {s} > 0: "
                f"{_fmt(p['positive_share'])},  {s} < 0: {_fmt(p['negative_share'])}")
    return None


def _legend(fig, axes, extra: str | None) -> None:
    """One legend for every artist (twin axes included), under the plot; ``extra`` as a line."""
    handles, labels = [], []
    for a in fig.axes:
        h, lab = a.get_legend_handles_labels()
        handles += h
        labels += lab
    if extra:
        handles.append(Line2D([], [], ls="none"))
        labels.append(extra)
    labels = [textwrap.fill(lab, 90, subsequent_indent="  ") for lab in labels]
    fig.legend(handles, labels, fontsize=7, loc="outside lower center", frameon=False)


def _figure(view: str, opts: PlotOptions, with_residual: bool):
    fig = Figure(figsize=opts.size, dpi=opts.dpi, layout="constrained")
    if view == "cdf" and with_residual:
        axes, resid = fig.subplots(2, 1, sharex=True, gridspec_kw={"height_ratios": [3, 1]})
        return fig, axes, resid
    return fig, fig.subplots(), None


def draw(src: PlotSource, opts: PlotOptions):
    """(figure, one-line summary) of the chosen view."""
    view = opts.view
    if view not in VIEWS:
        raise InputError(f"unknown view {view!r}; choose one of {', '.join(VIEWS)}")
    notes = list(src.notes)
    if view == "auto":
        view = "log" if src.mode == "mul" else "density"
        if view == "log" and src.atoms is not None and not src.params.get("log_sigma2", 0) > 0:
            # |s| takes one value (e.g. direct powers of P(3)): the λ axis says more
            view = "density"
    if view == "density" and src.mode == "mul" and src.atoms is None:
        view = "log"
        notes.append("λ spans beyond a linear axis at this size: drawn on the log-magnitude axis")
    ax = _axis_for(src, "log" if view == "cdf" and src.mode == "mul" else view)
    law = _law(src, ax)
    if law is None:
        notes.append("no reference law: this matrix kind does not follow a product rule here"
                     if src.mode is None else "no reference law with positive variance")
    fig, axes, resid = _figure(view, opts, law is not None)
    what = _cdf(axes, src, ax, opts, resid) if view == "cdf" else _density(axes, src, ax, opts)
    (resid if resid is not None else axes).set_xlabel(ax.label)
    if opts.ylim is not None:
        axes.set_ylim(*opts.ylim)
    if opts.xlim is not None:
        axes.set_xlim(*ax.show(_range(src, ax, opts)))
    title = opts.title if opts.title is not None else (
        f"{src.expression}: {src.matrix} spectrum, {order_text(src.order)} vertices")
    axes.set_title(title, fontsize=10)
    axes.grid(alpha=0.25)
    _legend(fig, resid if resid is not None else axes,
            _zero_note(src) if src.mode == "mul" else None)
    summary = f"{view} view: {what}"
    if law is not None:
        summary += "; reference: " + law[2]
    if notes:
        summary += "; " + "; ".join(notes)
    return fig, summary


def order_text(n) -> str:
    """A vertex count for a title: exact up to 15 digits, else its size.

    >>> order_text(6561), order_text(9**200)
    ('6561', '≈ 7.06e+190')
    """
    text = count_text(n)
    if "e+" not in text:
        return text
    lead, _, rest = text.partition("e+")
    return f"≈ {float(lead):.3g}e+{rest.split()[0]}"


__all__ = ["PlotOptions", "STEM_MAX", "VIEWS", "draw", "lattice_edges", "order_text"]
