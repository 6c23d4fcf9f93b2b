"""Plots of a product's spectrum: exact atoms or histogram against a reference law.

Translation only: every number drawn comes from the planner (exact spectrum,
extremes) or from exact moments; matplotlib (the optional ``plot`` extra) only
draws.  The file is written atomically; its format follows the extension
(png, pdf, svg).
"""

from __future__ import annotations

import io
import math
from pathlib import Path

import numpy as np

from powerspec.errors import InputError, PowerspecError
from powerspec.interfaces.files import write_atomic
from powerspec.queries import planner

FORMATS = ("png", "pdf", "svg")


def plot(expr, output: str | Path, matrix: str = "adjacency", *, bins: int = 60,
         limit: int | None = None, degrees: str = "out") -> str:
    """Draw the spectrum of ``expr`` into ``output``; returns a one-line summary.

    Where the exact spectrum fits, its atoms (few) or a multiplicity-weighted
    histogram (many) are drawn against the normal law with the same exact mean
    and variance; otherwise the extreme eigenvalues are marked on that normal law,
    whose mean and variance come from the exact moments tr(M), tr(M^2).
    """
    fmt = Path(output).suffix.lower().lstrip(".")
    if fmt not in FORMATS:
        raise InputError(f"plot output must end in .png, .pdf or .svg, got {str(output)!r}")
    if not isinstance(bins, int) or bins < 1:
        raise InputError(f"bins must be a positive integer, got {bins!r}")
    try:
        import matplotlib

        matplotlib.use("Agg")
        import matplotlib.pyplot as plt
    except ImportError as exc:
        raise InputError("plotting needs matplotlib: pip install 'powerspec[plot]'") from exc
    node = planner.resolve(expr)
    fig, ax = plt.subplots(figsize=(7, 4.2))
    try:
        try:
            ans = planner.spectrum(node, matrix, limit=limit, degrees=degrees)
            sp = ans.atoms
            exact = True
        except PowerspecError:
            exact = False
        if exact:
            if not sp.is_real:
                raise InputError("plots show real spectra; this one is complex")
            vals = sp.values
            w = np.array([float(m) for m in sp.mult.tolist()]) / float(sp.order)
            mean = float(np.dot(w, vals))
            var = float(np.dot(w, (vals - mean) ** 2))
            if len(sp) <= 60:
                ax.vlines(vals, 0, w, color="tab:blue", lw=2, label="exact atoms (share of vertices)")
                ax.set_ylabel("share of eigenvalues")
                scale = _atom_spacing(vals)
            else:
                ax.hist(vals, bins=bins, weights=w, density=True, color="tab:blue", alpha=0.6,
                        label="exact spectrum (histogram)")
                ax.set_ylabel("density")
                scale = 1.0
            summary = f"exact spectrum, {len(sp)} distinct eigenvalues"
        else:
            from powerspec.algebra.moments import trace_moments

            # Per-vertex moments tr(M^p)/order are exact rationals of moderate size at any k.
            mom = dict(trace_moments(node, matrix, 2, direction=degrees, per_vertex=True))
            mean = float(mom[1])
            var = float(mom[2] - mom[1] ** 2)
            top = planner.top(node, 3, matrix, limit=limit, degrees=degrees).atoms
            bot = planner.top(node, 3, matrix, bottom=True, limit=limit, degrees=degrees).atoms
            for i, sp_ in enumerate((top, bot)):
                ax.vlines([float(v) for v, _ in sp_.atoms()], 0, 1, transform=ax.get_xaxis_transform(),
                          color="tab:red", lw=1, label="exact extreme eigenvalues" if i == 0 else None)
            ax.set_ylabel("density")
            scale = 1.0
            summary = "exact moments and extremes (spectrum too large to enumerate)"
        if var > 0:
            sd = math.sqrt(var)
            xs = np.linspace(mean - 4.5 * sd, mean + 4.5 * sd, 400)
            pdf = np.exp(-0.5 * ((xs - mean) / sd) ** 2) / (sd * math.sqrt(2 * math.pi))
            ax.plot(xs, pdf * scale, color="black", lw=1.2,
                    label="normal law, same exact mean and variance")
        ax.set_xlabel(f"eigenvalue of the {matrix} matrix")
        ax.set_title(node.label(), fontsize=10)
        ax.legend(fontsize=8)
        buf = io.BytesIO()
        fig.savefig(buf, format=fmt, bbox_inches="tight")
    finally:
        plt.close(fig)
    write_atomic(output, buf.getvalue())
    return f"wrote {output}: {summary}"


def _atom_spacing(vals: np.ndarray) -> float:
    # Scale a density to the height of atoms spaced this far apart.
    if vals.size < 2:
        return 1.0
    return float(np.min(np.diff(np.sort(vals))))
