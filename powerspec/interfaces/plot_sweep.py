"""The curve of a sweep, drawn with matplotlib: value against the swept parameter, with bounds.

Every drawn number comes from the :class:`~powerspec.interfaces.sweep.Sweep`
(its points' values and rigorous lower/upper bounds); refused points are
left out and named in the legend.  The parameter axis is logarithmic for a
geometric progression (``10..10^9*10``), the value axis when the values are
positive and span many decades.

>>> from powerspec.interfaces.sweep import sweep
>>> fig, summary = draw_sweep(sweep("cart(C(4)^k)", "largest", "k=1..3"))
>>> summary
'3 points of largest against k'
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np
from flint import acb, arb, fmpq
from matplotlib.figure import Figure
from matplotlib.ticker import MaxNLocator

from powerspec.interfaces.sweep import Sweep
from powerspec.numbers.counts import BigCount

LOG_DECADES = 3.0
"""Positive values (or parameters) spanning more decades than this get a log axis."""


def as_float(v: Any) -> float:
    """A drawn number: the midpoint of a ball, a rational or count as a double (nan for none).

    >>> as_float(fmpq(1, 4)), as_float(None), as_float(2**2000)
    (0.25, nan, inf)
    """
    if v is None or isinstance(v, (str, bool)):
        return math.nan
    if isinstance(v, acb):
        v = v.real
    if isinstance(v, arb):
        return float(v.mid())
    if isinstance(v, fmpq):
        return int(v.p) / int(v.q)
    if isinstance(v, BigCount):
        return math.inf
    try:
        return float(v)
    except OverflowError:
        return math.inf if v > 0 else -math.inf
    except (TypeError, ValueError):
        return math.nan


def _spans(v: np.ndarray) -> bool:
    v = v[np.isfinite(v)]
    return v.size > 1 and bool((v > 0).all()) and math.log10(v.max() / v.min()) > LOG_DECADES


def _geometric(x: np.ndarray) -> bool:
    if x.size < 3 or not (x > 0).all():
        return False
    r = x[1:] / x[:-1]
    return bool(np.allclose(r, r[0]) and r[0] > 1.5)


def draw_sweep(sw: Sweep, *, size: tuple[float, float] = (6.4, 4.0), dpi: int = 150,
               title: str | None = None):
    """(figure, one-line summary) of the sweep's curve with its rigorous band."""
    ok = [p for p in sw.points if p.error is None]
    x = np.array([float(p.at) for p in ok])
    y = np.array([as_float(p.value) for p in ok])
    lo = np.array([as_float(p.lower) for p in ok])
    hi = np.array([as_float(p.upper) for p in ok])
    fig = Figure(figsize=size, dpi=dpi, layout="constrained")
    ax = fig.subplots()
    band = np.isfinite(lo) & np.isfinite(hi)
    if band.any():
        ax.fill_between(x, np.where(band, lo, np.nan), np.where(band, hi, np.nan),
                        color="tab:orange", alpha=0.35, lw=0, step=None,
                        label="rigorous lower/upper bound")
        ax.vlines(x[band], lo[band], hi[band], color="tab:orange", lw=1.0)
    shown = np.isfinite(y)
    ax.plot(x[shown], y[shown], "o-", color="tab:blue", ms=3.5, lw=1.2,
            label=f"{sw.quantity} (certified value)")
    if _geometric(x):
        ax.set_xscale("log")
    elif all(isinstance(p.at, int) for p in sw.points):
        ax.xaxis.set_major_locator(MaxNLocator(integer=True))  # a power k has no k = 2.5
    if _spans(np.concatenate([y[shown], lo[band], hi[band]])):
        ax.set_yscale("log")
    what = "an invariant" if sw.matrix == "" else f"{sw.matrix} matrix"
    ax.set_xlabel(sw.parameter)
    ax.set_ylabel(f"{sw.quantity} ({what})")
    ax.set_title(title if title is not None else sw.template, fontsize=10)
    ax.grid(alpha=0.25)
    refused = [p.text for p in sw.points if p.error is not None]
    if refused:
        ax.plot([], [], ls="none", label=f"refused at {sw.parameter} = {', '.join(refused[:6])}"
                + (" ..." if len(refused) > 6 else ""))
    if len(ok) != int(shown.sum()):
        ax.plot([], [], ls="none", label="points with only bounds (no value) drawn as bounds")
    ax.legend(fontsize=7, frameon=False)
    summary = f"{len(ok)} points of {sw.quantity} against {sw.parameter}"
    return fig, summary


__all__ = ["as_float", "draw_sweep"]
