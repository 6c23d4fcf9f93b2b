"""``powerspec plot`` and ``powerspec.plot``: a spectrum drawn for a paper.

Translation only: :mod:`~powerspec.interfaces.plot_source` gathers the
numbers from the queries (exact atoms, the certified CDF band of the frozen
distribution, the reference law and its parameters, the lattice) and
:mod:`~powerspec.interfaces.plot_views` draws one view (density, log
magnitude, CDF, standardised).  matplotlib (the optional ``plot`` extra) is
imported only here, when a plot is asked for.  The file is written
atomically; its format follows the extension (png, pdf, svg).

>>> import tempfile, os
>>> path = os.path.join(tempfile.mkdtemp(), "q.svg")
>>> plot("cart(K(2)^6)", path).startswith("wrote ")
True
"""

from __future__ import annotations

import io
from pathlib import Path

from powerspec.errors import InputError
from powerspec.interfaces.files import check_output_path, write_atomic

FORMATS = ("png", "pdf", "svg")
MAX_INCHES = 40.0
DPI_RANGE = (20, 1200)


def check_options(output, *, bins: int, size, dpi: int, xlim, ylim) -> str:
    """The file format; InputError for a bad extension or option (before any work)."""
    fmt = Path(output).suffix.lower().lstrip(".")
    if fmt not in FORMATS:
        raise InputError(f"plot output must end in .png, .pdf or .svg, got {str(output)!r}")
    if not isinstance(bins, int) or isinstance(bins, bool) or bins < 1:
        raise InputError(f"bins must be a positive integer, got {bins!r}")
    w, h = size
    if not (0.5 <= w <= MAX_INCHES and 0.5 <= h <= MAX_INCHES):
        raise InputError(f"figure size must be between 0.5 and {MAX_INCHES:g} inches, got {w}x{h}")
    if not (DPI_RANGE[0] <= dpi <= DPI_RANGE[1]):
        raise InputError(f"dpi must be between {DPI_RANGE[0]} and {DPI_RANGE[1]}, got {dpi}")
    for name, lim in (("xlim", xlim), ("ylim", ylim)):
        if lim is not None and not lim[0] < lim[1]:
            raise InputError(f"{name} needs A < B, got {lim[0]:g} {lim[1]:g}")
    return fmt


def check_plot_path(output) -> str:
    """The format of a plot file name (png, pdf, svg); InputError for another extension or a
    target that cannot be written (checked before any work)."""
    fmt = Path(output).suffix.lower().lstrip(".")
    if fmt not in FORMATS:
        raise InputError(f"plot output must end in .png, .pdf or .svg, got {str(output)!r}")
    check_output_path(output)
    return fmt


def _pyplot_views():
    try:
        from powerspec.interfaces import plot_views
    except ImportError as exc:
        raise InputError("plotting needs matplotlib: pip install 'powerspec[plot]'") from exc
    return plot_views


def plot_sweep(sw, output: str | Path, *, size: tuple[float, float] = (6.4, 4.0), dpi: int = 150,
               title: str | None = None) -> str:
    """Draw a :class:`~powerspec.interfaces.sweep.Sweep`'s curve with its rigorous bounds into
    ``output`` (.png, .pdf, .svg); returns a one-line summary.

    >>> import tempfile, os
    >>> from powerspec.interfaces.sweep import sweep
    >>> path = os.path.join(tempfile.mkdtemp(), "s.svg")
    >>> plot_sweep(sweep("cart(K(2)^k)", "largest", "k=1..4"), path).endswith("against k")
    True
    """
    fmt = check_options(output, bins=1, size=size, dpi=dpi, xlim=None, ylim=None)
    try:
        from powerspec.interfaces.plot_sweep import draw_sweep
    except ImportError as exc:
        raise InputError("plotting needs matplotlib: pip install 'powerspec[plot]'") from exc
    fig, summary = draw_sweep(sw, size=size, dpi=dpi, title=title)
    write_atomic(output, render(fig, fmt))
    return f"wrote {output}: {summary}"


def render(fig, fmt: str) -> bytes:
    """The figure's bytes in a format."""
    buf = io.BytesIO()
    fig.savefig(buf, format=fmt, bbox_inches="tight", metadata=_metadata(fmt))
    return buf.getvalue()


def _metadata(fmt: str) -> dict:
    # reproducible files: no creation date in PDF and SVG
    if fmt == "pdf":
        return {"CreationDate": None, "Creator": "powerspec"}
    if fmt == "svg":
        return {"Date": None, "Creator": "powerspec"}
    return {"Software": "powerspec"}


def plot(expr, output: str | Path, matrix: str = "adjacency", *, view: str = "auto",
         bins: int = 60, size: tuple[float, float] = (7.0, 4.2), dpi: int = 150,
         title: str | None = None, xlim: tuple[float, float] | None = None,
         ylim: tuple[float, float] | None = None, yscale: str = "auto", limit: int | None = None,
         degrees: str = "out", workers: int = 1, scheduler: str | None = None,
         progress=None) -> str:
    """Draw the spectrum of ``expr`` into ``output`` (.png, .pdf, .svg); returns a one-line summary.

    ``view`` is auto | density | log | cdf | standard (see
    :mod:`~powerspec.interfaces.plot_views`); ``size`` in inches, ``dpi`` for
    PNG; ``xlim`` in the drawn variable (λ, log|s| or the standardised value);
    ``yscale`` auto | linear | log.
    """
    fmt = check_options(output, bins=bins, size=size, dpi=dpi, xlim=xlim, ylim=ylim)
    if yscale not in ("auto", "linear", "log"):
        raise InputError(f"yscale must be auto, linear or log, got {yscale!r}")
    views = _pyplot_views()
    if view not in views.VIEWS:
        raise InputError(f"unknown view {view!r}; choose one of {', '.join(views.VIEWS)}")
    from powerspec.interfaces.plot_source import gather

    src = gather(expr, matrix, limit=limit, degrees=degrees, workers=workers,
                 scheduler=scheduler, progress=progress)
    opts = views.PlotOptions(view=view, bins=bins, size=tuple(size), dpi=dpi, title=title,
                             xlim=xlim, ylim=ylim, yscale=yscale)
    fig, summary = views.draw(src, opts)
    write_atomic(output, render(fig, fmt))
    return f"wrote {output}: {summary}"


__all__ = ["FORMATS", "check_options", "check_plot_path", "plot", "plot_sweep", "render"]
