"""The ``powerspec`` command's arguments: the parser, option ranges, help text and examples.

Every number option is read exactly and checked for range and finiteness
before any work (the ranges are the table of :mod:`powerspec.algebra.limits`);
``--help`` of each command documents every positional argument, the
expression grammar and runnable examples (each is run by the tests).

>>> build_parser().parse_args(["top", "cart(C(5)^3)", "-m", "2"]).m
2
"""

from __future__ import annotations

import argparse
import re
from collections.abc import Callable
from fractions import Fraction

from powerspec import __version__
from powerspec.algebra import limits
from powerspec.algebra.kinds import MATRIX_KINDS
from powerspec.algebra.moments import MAX_ORDER
from powerspec.errors import ExpressionError
from powerspec.factors.matrix import clip

GRAMMAR = """\
expression (quote it in the shell):
  products  cart(G, ...)   direct(G, ...)   strong(G, ...)   mix(a, b, G, ...)
            G^k inside a product means k copies of G, 1 <= k <= 10^18; equal
            operands are merged into powers.  mix(a, b) is a*Cartesian +
            b*direct; for a other than 0 or 1 it is a left fold (at most 10^4
            copies).  A bare G^k outside a product is an error.
  factors   P(n) path          C(n) cycle         K(n) complete graph
            K(m, n) complete bipartite (the star is K(1, n))   J(n) all-ones
            dicycle(n) or dicycle(n, w=[w0, ..., w(n-1)]) directed cycle, arc weights
            motif() the shipped demo motif
            load("file") Matrix Market (.mtx) or edge list of 'u v [weight]' lines;
            load("file", "directed") for a directed edge list
            scale(c, G) weights times c     loops(c, G) adds c at every vertex
  numbers   12  -0.5  1e-3  and fractions 1/50  -3/4; weights and coefficients
            are 0 or between 1e-100 and 1e100 in magnitude
"""

EXAMPLES = {
    "spectrum": ["powerspec spectrum 'cart(K(2)^10)'",
                 "powerspec spectrum 'direct(P(3)^4, C(5))' --json",
                 "powerspec spectrum 'cart(C(4)^3)' --matrix laplacian",
                 "powerspec spectrum 'cart(K(2)^k)' --symbolic",
                 "powerspec spectrum 'cart(C(7)^3)' --head 5",
                 "powerspec spectrum 'direct(P(3)^4)' --matrix laplacian --method estimate"],
    "top": ["powerspec top 'cart(K(2)^1000000000)' -m 3",
            "powerspec top 'direct(P(3)^41)' -m 2 --bottom",
            "powerspec top 'direct(K(4), dicycle(12, w=[1, 1, 1/5, 1, 1, 1, 1, 1, 1, 1, 1, 1]))'"],
    "cdf": ["powerspec cdf 'cart(C(5)^1000000)' 10",
            "powerspec cdf 'cart(C(5)^100)' 0 --tol 0.01",
            "powerspec cdf 'direct(K(3)^20)' 0 --method law"],
    "count": ["powerspec count 'cart(K(2)^20)' -0.5 0.5",
              "powerspec count 'cart(C(5)^6)' -1/2 10"],
    "quantile": ["powerspec quantile 'cart(C(5)^1000000)' 0.9",
                 "powerspec quantile 'strong(K(3)^30)' 1/2"],
    "moments": ["powerspec moments 'direct(K(1, 3)^20)' --order 6",
                "powerspec moments 'cart(K(2)^k)' --symbolic --order 2"],
    "invariants": ["powerspec invariants 'cart(C(45)^4)'",
                   "powerspec invariants 'direct(K(1, 3)^5)' --json"],
    "plot": ["powerspec plot 'cart(C(5)^3)' -o spectrum.png",
             "powerspec plot 'direct(motif()^1000000)' -o direct.pdf --view cdf",
             "powerspec plot 'strong(P(3)^1000000000)' -o strong.svg --size 5 3 --title 'P3 strong'"],
    "sweep": ["powerspec sweep 'direct(motif()^k)' algebraic_connectivity k=1..3",
              "powerspec sweep 'direct(K(4), dicycle(12, w=[1, 1, t, 1, 1, 1, 1, 1, 1, 1, 1, 1]))' "
              "spectral_radius t=0..2:1/4 --plot radius.png",
              "powerspec sweep 'cart(C(5)^k)' quantile=0.9 k=10..1000000*10 --json"],
    "demo": ["powerspec demo"],
}


def _epilog(command: str | None) -> str:
    lines = EXAMPLES[command] if command else [ex[0] for ex in EXAMPLES.values()]
    text = "examples:\n" + "".join(f"  {line}\n" for line in lines)
    return text if command == "demo" else GRAMMAR + "\n" + text


_NEGATIVE_NUMBER = re.compile(r"^-(?:[0-9]+\.?[0-9]*|\.[0-9]+)(?:[eE][+-]?[0-9]+)?(?:/[0-9.eE+-]+)?$")


class Parser(argparse.ArgumentParser):
    """argparse with one-line errors, reading -1e3 and -3/4 as numbers rather than options."""

    def __init__(self, *args, **kwargs):
        super().__init__(*args, **kwargs)
        # argparse's own pattern only knows -12 and -1.5; A, B and X may be -1e3 or -1/2.
        self._negative_number_matcher = _NEGATIVE_NUMBER

    def error(self, message: str):  # noqa: D102 - argparse hook
        raise UsageError(f"{message} (see '{self.prog} --help')")


class UsageError(Exception):
    """A bad command line (reported in one line, exit status 2)."""


# ------------------------------------------------------------- option values


def _exact(text: str, what: str) -> int | Fraction:
    try:
        return limits.read_number(text)
    except ExpressionError as exc:
        raise argparse.ArgumentTypeError(f"{what}: {exc}") from None


def _point(text: str) -> float:
    """A point on the spectrum's axis: 0 or a normal double (finite)."""
    v = _exact(text, "expected a number")
    if v != 0 and not (limits.DOUBLE_MIN <= abs(v) <= limits.DOUBLE_MAX):
        raise argparse.ArgumentTypeError(
            f"{clip(text)} is out of range: give 0 or a finite magnitude between 2.2e-308 "
            "and 1.8e308")
    return float(v)


def _ranged(lo: Fraction, hi: Fraction, what: str, *, lo_open: bool = False,
            hi_open: bool = False) -> Callable[[str], float]:
    def convert(text: str) -> float:
        v = _exact(text, f"expected {what}")
        f = float(v) if abs(v) <= limits.DOUBLE_MAX else float("inf")
        low_ok = lo < v if lo_open else lo <= v
        high_ok = f < hi if hi_open else f <= hi  # compared as the double actually used
        if not (low_ok and high_ok) or (v != 0 and abs(v) < limits.DOUBLE_MIN):
            raise argparse.ArgumentTypeError(f"{clip(text)} is out of range: {what}")
        return f
    return convert


def _whole(lo: int, hi: int, what: str) -> Callable[[str], int]:
    def convert(text: str) -> int:
        try:
            v = limits.read_number(text)
        except ExpressionError:
            v = None
        if not isinstance(v, int) or not lo <= v <= hi:
            raise argparse.ArgumentTypeError(
                f"expected a positive whole number from {lo} to {hi:,} ({what}), got {clip(text)}")
        return v
    return convert


_level = _ranged(Fraction(0), Fraction(1), "a level q with 0 < q < 1", lo_open=True, hi_open=True)
_tol = _ranged(limits.TOL_MIN, Fraction(1), "a width tol with 1e-12 <= tol < 1", hi_open=True)
_time = _ranged(Fraction(0), Fraction(limits.TIME_MAX), "a time t with 0 <= t <= 1e6")
_m = _whole(1, limits.MAX_M, "how many values are printed")
_limit = _whole(1, limits.MAX_LIMIT, "distinct eigenvalues held in memory")
_order = _whole(1, MAX_ORDER, "the highest moment order")
_bins = _whole(1, limits.MAX_BINS, "histogram bins")


# --------------------------------------------------------------------- parser

_EXPRESSION_HELP = "the product, e.g. 'cart(C(10)^6)' (grammar below)"
_SWEEP_EXPRESSION_HELP = ("the product with the swept parameter written as a bare name where a "
                          "number goes, e.g. 'direct(motif()^k)' or 'mix(1, b, K(3)^20)'")
_workers = _whole(1, 256, "worker processes")
_dpi = _whole(20, 1200, "dots per inch")
_head = _whole(1, limits.MAX_LIMIT, "rows printed")
_inches = _ranged(Fraction(1, 2), Fraction(40), "a size in inches, 0.5 to 40")
_SCHEDULER = re.compile(r"^[a-z][a-z0-9+.-]*://\S+$")


def _scheduler(text: str) -> str:
    if not _SCHEDULER.match(text) or len(text) > 300:
        raise argparse.ArgumentTypeError(
            f"expected a scheduler address such as tcp://127.0.0.1:8786, got {clip(text)}")
    return text


def _title(text: str) -> str:
    if len(text) > 300 or "\n" in text:
        raise argparse.ArgumentTypeError("a title is one line of at most 300 characters")
    return text


def _command(sub, name: str, helptext: str, expression_help: str = _EXPRESSION_HELP
             ) -> argparse.ArgumentParser:
    p = sub.add_parser(name, help=helptext, description=helptext, epilog=_epilog(name),
                       formatter_class=argparse.RawDescriptionHelpFormatter)
    if name != "demo":
        p.add_argument("expression", metavar="EXPR", help=expression_help)
    return p


def _matrix(p: argparse.ArgumentParser) -> None:
    p.add_argument("--matrix", default="adjacency", choices=MATRIX_KINDS,
                   help="which matrix of the product (default: adjacency)")
    p.add_argument("--degrees", default="out", choices=("out", "in"),
                   help="degree used by laplacian/signless/transition for directed factors")


def _limit_option(p: argparse.ArgumentParser) -> None:
    p.add_argument("--limit", type=_limit, default=None, metavar="N",
                   help=f"largest number of distinct eigenvalues to enumerate (1 to "
                        f"{limits.MAX_LIMIT:,}; default 2,000,000)")


def _common(p: argparse.ArgumentParser, matrix: bool = True) -> None:
    if matrix:
        _matrix(p)
    p.add_argument("--json", action="store_true", help="print the stable JSON layout")
    _limit_option(p)
    p.add_argument("--output", metavar="FILE", default=None,
                   help="write the answer to FILE (atomically; a new or regular file) "
                        "instead of stdout")
    _quiet(p)


def _quiet(p: argparse.ArgumentParser) -> None:
    p.add_argument("-q", "--quiet", action="store_true",
                   help="no progress bar on stderr (there is none when stderr is not a terminal)")


def _parallel(p: argparse.ArgumentParser) -> None:
    p.add_argument("--workers", type=_workers, default=1, metavar="N",
                   help="processes for the symmetry tier's blocks, 1 to 256 (default 1)")
    p.add_argument("--scheduler", type=_scheduler, default=None, metavar="ADDRESS",
                   help="run the symmetry tier's blocks on a Dask scheduler, e.g. "
                        "tcp://127.0.0.1:8786 (needs pip install 'powerspec[cluster]')")


def _symbolic(p: argparse.ArgumentParser) -> None:
    p.add_argument("--symbolic", action="store_true",
                   help="closed forms as sympy expressions (a bare name as power, e.g. G^k)")
    p.add_argument("--latex", action="store_true", help="with --symbolic: print LaTeX")


def _estimate(p: argparse.ArgumentParser) -> None:
    p.add_argument("--method", default="exact", choices=("exact", "estimate"),
                   help="exact (default), or estimate: the sorted-degree estimate of a direct or "
                        "strong product's Laplacian with rigorous Weyl brackets (labelled as an "
                        "estimate; needs --matrix laplacian)")


POINTS = {"cdf": (("x", _point, "the point: the fraction of eigenvalues <= X is reported"),),
           "count": (("a", _point, "left end of the interval [A, B]"),
                     ("b", _point, "right end of the interval [A, B]")),
           "quantile": (("q", _level, "the level, 0 < Q < 1 (e.g. 0.5 or 1/2 for the median)"),)}

_SWEEP_QUANTITY_HELP = (
    "what is tabulated: largest or smallest (the extreme eigenvalue of --matrix), quantile=Q, "
    "cdf=X, or an invariant of 'powerspec invariants' (spectral_radius, algebraic_connectivity, "
    "spectral_gap, log_spanning_trees, ...)")
_SWEEP_OVER_HELP = ("NAME=VALUES: the swept parameter and its values: 1..30 (whole numbers), "
                    "0..1:1/20 (exact steps), 10..1000000000*10 (a geometric progression) or "
                    "0,1/5,0.5,1 (a list); at most 1000 values")


def _plot_options(pl: argparse.ArgumentParser) -> None:
    pl.add_argument("--view", default="auto", choices=("auto", "density", "log", "cdf", "standard"),
                    help="density (eigenvalue axis), log (log-magnitude axis log|s| of direct, "
                         "strong and mix(1, b) products), cdf (the certified CDF band), standard "
                         "(standardised axis against N(0, 1)); auto: log for direct, strong and "
                         "mix(1, b), density otherwise")
    pl.add_argument("--bins", type=_bins, default=60,
                    help=f"histogram bins, 1 to {limits.MAX_BINS:,} (default 60; bins hold whole "
                         "lattice points when the eigenvalues lie on a lattice)")
    pl.add_argument("--size", type=_inches, nargs=2, default=(7.0, 4.2), metavar=("W", "H"),
                    help="figure width and height in inches, 0.5 to 40 (default 7 4.2)")
    pl.add_argument("--dpi", type=_dpi, default=150, help="resolution of PNG files, 20 to 1200 "
                    "(default 150)")
    pl.add_argument("--title", type=_title, default=None, help="the figure's title (default: the "
                    "expression, matrix and order)")
    pl.add_argument("--xlim", type=_point, nargs=2, default=None, metavar=("A", "B"),
                    help="horizontal range, in the drawn variable (λ, log|s| or the standardised "
                         "value)")
    pl.add_argument("--ylim", type=_point, nargs=2, default=None, metavar=("A", "B"),
                    help="vertical range")
    pl.add_argument("--yscale", default="auto", choices=("auto", "linear", "log"),
                    help="vertical scale (auto: log when exact shares span many decades)")


def build_parser() -> argparse.ArgumentParser:
    """The argument parser of the ``powerspec`` command.

    >>> build_parser().parse_args(["top", "cart(C(5)^3)", "-m", "2"]).m
    2
    """
    p = Parser(prog="powerspec",
               description="Spectra of graph products and graph powers, from the factors.",
               epilog=_epilog(None), formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("--version", action="version", version=f"powerspec {__version__}")
    sub = p.add_subparsers(dest="command", metavar="COMMAND", parser_class=Parser)

    s = _command(sub, "spectrum", "the full exact multiset of eigenvalues")
    _common(s)
    s.add_argument("--head", type=_head, default=None, metavar="N",
                   help="print only the first N rows (the JSON says how many there are)")
    s.add_argument("--all", action="store_true",
                   help="print every row (by default spectra of more than 60 distinct "
                        "eigenvalues print the 10 smallest and largest); --json lists all")
    _estimate(s)
    _parallel(s)
    _symbolic(s)

    t = _command(sub, "top", "the M largest (or smallest) distinct eigenvalues")
    t.add_argument("-m", type=_m, default=5, metavar="M",
                   help=f"how many distinct values, 1 to {limits.MAX_M:,} (default 5)")
    t.add_argument("--bottom", action="store_true",
                   help="the smallest instead of the largest (listed smallest first)")
    _common(t)
    _estimate(t)
    _parallel(t)
    _symbolic(t)

    for name, helptext in (("cdf", "fraction of eigenvalues <= X, with bounds"),
                           ("count", "number of eigenvalues in [A, B], with bounds"),
                           ("quantile", "the Q-quantile of the spectrum, with bounds")):
        q = _command(sub, name, helptext)
        for arg, kind, arghelp in POINTS[name]:
            q.add_argument(arg, type=kind, metavar=arg.upper(), help=arghelp)
        q.add_argument("--method", default="auto", choices=("auto", "exact", "bracket", "law"),
                       help="which tier answers (auto: the cheapest that meets --tol)")
        q.add_argument("--tol", type=_tol, default=None,
                       help="wanted width of the bound, 1e-12 <= TOL < 1")
        _common(q)

    mo = _command(sub, "moments", "exact spectral moments tr(M^p)")
    mo.add_argument("--order", type=_order, default=4, metavar="P",
                    help=f"highest power p, 1 to {MAX_ORDER} (default 4)")
    mo.add_argument("--per-vertex", action="store_true", help="tr(M^p) divided by the order")
    _common(mo)
    _symbolic(mo)

    iv = _command(sub, "invariants", "spectral radius, connectivity, spanning trees, ...")
    _common(iv, matrix=False)
    iv.add_argument("--degrees", default="out", choices=("out", "in"),
                    help="degree used for directed factors' Laplacians")
    iv.add_argument("--time", type=_time, default=1.0, metavar="T",
                    help="heat-kernel time t, 0 <= T <= 1e6 (default 1)")
    _symbolic(iv)

    pl = _command(sub, "plot", "draw the spectrum against its reference limit law")
    pl.add_argument("-o", "--output", required=True, metavar="FILE",
                    help="a .png, .pdf or .svg file (written atomically)")
    _plot_options(pl)
    _matrix(pl)
    _limit_option(pl)
    _parallel(pl)
    _quiet(pl)

    sw = _command(sub, "sweep", "one number tabulated against the power k or one parameter",
                  _SWEEP_EXPRESSION_HELP)
    sw.add_argument("quantity", metavar="QUANTITY", help=_SWEEP_QUANTITY_HELP)
    sw.add_argument("over", metavar="OVER", help=_SWEEP_OVER_HELP)
    sw.add_argument("--plot", metavar="FILE", default=None,
                    help="also draw the curve with its rigorous bounds into a .png, .pdf or .svg")
    sw.add_argument("--time", type=_time, default=1.0, metavar="T",
                    help="heat-kernel time t of the heat_trace invariant (default 1)")
    _common(sw)
    _parallel(sw)

    d = _command(sub, "demo", "the built-in worked scenario")
    d.add_argument("--output", metavar="FILE", default=None, help="write the report to FILE")
    return p
