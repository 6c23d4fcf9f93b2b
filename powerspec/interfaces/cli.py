"""The ``powerspec`` command: parses options, calls the planner, prints the answer.

No mathematics lives here.  The contract with the user:

* every user error (a bad expression, an option out of range, a bad file, a
  request over a size limit, a spectrum that is not exact) is **one line** on
  stderr and exit status 2;
* anything else is a bug: one line that says so and how to report it, exit
  status 1; the traceback only with ``POWERSPEC_DEBUG=1`` in the environment;
* no warning (numpy's RuntimeWarnings included) reaches the terminal;
* every number option is checked for range and finiteness before any work
  (the ranges are the table of :mod:`powerspec.algebra.limits`), and so is
  the ``--output`` path (:mod:`powerspec.interfaces.files`);
* Ctrl-C exits with status 130 and SIGTERM with 143, both after removing any
  temporary output file.
"""

from __future__ import annotations

import argparse
import contextlib
import os
import re
import signal
import sys
import threading
import warnings
from collections.abc import Callable, Iterator, Sequence
from fractions import Fraction

import numpy as np

from powerspec import __version__
from powerspec.algebra import limits
from powerspec.algebra.kinds import MATRIX_KINDS
from powerspec.algebra.moments import MAX_ORDER
from powerspec.errors import ExpressionError, PowerspecError
from powerspec.factors.matrix import clip
from powerspec.interfaces.files import check_output_path, write_atomic
from powerspec.queries import planner

EXIT_USER_ERROR = 2
EXIT_BUG = 1
EXIT_INTERRUPTED = 130
EXIT_TERMINATED = 143

DEBUG_VARIABLE = "POWERSPEC_DEBUG"
"""Set to 1 to see the traceback of an internal error."""

MAX_MESSAGE_CHARS = 400
"""Longest error line printed (the middle of a longer one is cut)."""

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
                 "powerspec spectrum 'cart(K(2)^k)' --symbolic"],
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
    "plot": ["powerspec plot 'cart(C(5)^3)' -o spectrum.png"],
    "demo": ["powerspec demo"],
}


def _epilog(command: str | None) -> str:
    lines = EXAMPLES[command] if command else [ex[0] for ex in EXAMPLES.values()]
    text = "examples:\n" + "".join(f"  {line}\n" for line in lines)
    return text if command == "demo" else GRAMMAR + "\n" + text


_NEGATIVE_NUMBER = re.compile(r"^-(?:[0-9]+\.?[0-9]*|\.[0-9]+)(?:[eE][+-]?[0-9]+)?(?:/[0-9.eE+-]+)?$")


class _Parser(argparse.ArgumentParser):
    """argparse with one-line errors, reading -1e3 and -3/4 as numbers rather than options."""

    def __init__(self, *args, **kwargs):
        super().__init__(*args, **kwargs)
        # argparse's own pattern only knows -12 and -1.5; A, B and X may be -1e3 or -1/2.
        self._negative_number_matcher = _NEGATIVE_NUMBER

    def error(self, message: str):  # noqa: D102 - argparse hook
        raise _UsageError(f"{message} (see '{self.prog} --help')")


class _UsageError(Exception):
    pass


class _Terminated(BaseException):
    """Raised by the SIGTERM handler so that every ``finally`` runs (temporary files go)."""


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


def _command(sub, name: str, helptext: str) -> argparse.ArgumentParser:
    p = sub.add_parser(name, help=helptext, description=helptext, epilog=_epilog(name),
                       formatter_class=argparse.RawDescriptionHelpFormatter)
    if name != "demo":
        p.add_argument("expression", metavar="EXPR", help=_EXPRESSION_HELP)
    return p


def _common(p: argparse.ArgumentParser, matrix: bool = True) -> None:
    if matrix:
        p.add_argument("--matrix", default="adjacency", choices=MATRIX_KINDS,
                       help="which matrix of the product (default: adjacency)")
        p.add_argument("--degrees", default="out", choices=("out", "in"),
                       help="degree used by laplacian/signless/transition for directed factors")
    p.add_argument("--json", action="store_true", help="print the stable JSON layout")
    p.add_argument("--limit", type=_limit, default=None, metavar="N",
                   help=f"largest number of distinct eigenvalues to enumerate (1 to "
                        f"{limits.MAX_LIMIT:,}; default 2,000,000)")
    p.add_argument("--output", metavar="FILE", default=None,
                   help="write the answer to FILE (atomically; a new or regular file) "
                        "instead of stdout")


def _symbolic(p: argparse.ArgumentParser) -> None:
    p.add_argument("--symbolic", action="store_true",
                   help="closed forms as sympy expressions (a bare name as power, e.g. G^k)")
    p.add_argument("--latex", action="store_true", help="with --symbolic: print LaTeX")


_POINTS = {"cdf": (("x", _point, "the point: the fraction of eigenvalues <= X is reported"),),
           "count": (("a", _point, "left end of the interval [A, B]"),
                     ("b", _point, "right end of the interval [A, B]")),
           "quantile": (("q", _level, "the level, 0 < Q < 1 (e.g. 0.5 or 1/2 for the median)"),)}


def build_parser() -> argparse.ArgumentParser:
    """The argument parser of the ``powerspec`` command.

    >>> build_parser().parse_args(["top", "cart(C(5)^3)", "-m", "2"]).m
    2
    """
    p = _Parser(prog="powerspec",
                description="Spectra of graph products and graph powers, from the factors.",
                epilog=_epilog(None), formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("--version", action="version", version=f"powerspec {__version__}")
    sub = p.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)

    s = _command(sub, "spectrum", "the full exact multiset of eigenvalues")
    _common(s)
    _symbolic(s)

    t = _command(sub, "top", "the M largest (or smallest) distinct eigenvalues")
    t.add_argument("-m", type=_m, default=5, metavar="M",
                   help=f"how many distinct values, 1 to {limits.MAX_M:,} (default 5)")
    t.add_argument("--bottom", action="store_true", help="the smallest instead of the largest")
    _common(t)
    _symbolic(t)

    for name, helptext in (("cdf", "fraction of eigenvalues <= X, with bounds"),
                           ("count", "number of eigenvalues in [A, B], with bounds"),
                           ("quantile", "the Q-quantile of the spectrum, with bounds")):
        q = _command(sub, name, helptext)
        for arg, kind, arghelp in _POINTS[name]:
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

    pl = _command(sub, "plot", "draw the spectrum against a reference law")
    pl.add_argument("-o", "--output", required=True, metavar="FILE",
                    help="a .png, .pdf or .svg file (written atomically)")
    pl.add_argument("--bins", type=_bins, default=60,
                    help=f"histogram bins, 1 to {limits.MAX_BINS:,} (default 60)")
    pl.add_argument("--matrix", default="adjacency", choices=MATRIX_KINDS,
                    help="which matrix of the product (default: adjacency)")
    pl.add_argument("--degrees", default="out", choices=("out", "in"),
                    help="degree used by laplacian/signless/transition for directed factors")
    pl.add_argument("--limit", type=_limit, default=None, metavar="N",
                    help="largest number of distinct eigenvalues to enumerate")

    d = _command(sub, "demo", "the built-in worked scenario")
    d.add_argument("--output", metavar="FILE", default=None, help="write the report to FILE")
    return p


# ------------------------------------------------------------------------ run


def _run(args: argparse.Namespace) -> str:
    if getattr(args, "latex", False) and not args.symbolic:
        raise _UsageError("--latex goes with --symbolic")
    if getattr(args, "symbolic", False):
        from powerspec.algebra.symbolic import symbolic_report, symbolic_text
        from powerspec.answers.answer import dump_json

        extra = {"max_power": args.order} if args.command == "moments" else {}
        rep = symbolic_report(args.command, args.expression,
                              matrix=getattr(args, "matrix", "adjacency"), latex=args.latex, **extra)
        return dump_json(rep) + "\n" if args.json else symbolic_text(rep, latex=args.latex)
    if args.command in ("cdf", "count", "quantile"):
        fn = getattr(planner, args.command)
        point = tuple(getattr(args, n) for n, _, _ in _POINTS[args.command])
        ans = fn(args.expression, *point, args.matrix, method=args.method, tol=args.tol,
                 limit=args.limit, degrees=args.degrees)
    elif args.command == "moments":
        from powerspec.queries.moments import moment_answer

        ans = moment_answer(args.expression, order=args.order, matrix=args.matrix,
                            degrees=args.degrees, per_vertex=args.per_vertex)
    elif args.command == "invariants":
        from powerspec.queries.invariants import invariants

        ans = invariants(args.expression, limit=args.limit, degrees=args.degrees, t=args.time)
    elif args.command == "spectrum":
        ans = planner.spectrum(args.expression, args.matrix, limit=args.limit,
                               degrees=args.degrees)
    elif args.command == "top":
        ans = planner.top(args.expression, args.m, args.matrix, bottom=args.bottom,
                          limit=args.limit, degrees=args.degrees)
    elif args.command == "plot":
        from powerspec.interfaces.plots import plot

        return plot(args.expression, args.output, args.matrix, bins=args.bins, limit=args.limit,
                    degrees=args.degrees) + "\n"
    elif args.command == "demo":
        from powerspec.interfaces.demo import run_demo

        return run_demo()
    else:  # pragma: no cover - argparse restricts the choices
        raise _UsageError(f"unknown command {args.command!r}")
    return ans.to_json() if args.json else ans.to_text()


def _execute(parser: argparse.ArgumentParser, argv: Sequence[str] | None) -> int:
    args = parser.parse_args(argv)
    if not args.command:
        parser.print_help()
        return EXIT_USER_ERROR
    output = getattr(args, "output", None)
    if output is not None:
        check_output_path(output)  # refuse a bad target before any work
    text = _run(args)
    if output is not None and args.command != "plot":
        write_atomic(output, text)
    else:
        sys.stdout.write(text)
        sys.stdout.flush()
    return 0


def main(argv: Sequence[str] | None = None) -> int:
    """Entry point; returns the exit status (0 ok, 2 user error, 1 bug, 130/143 interrupted).

    >>> main(["top", "cart(K(2)^3)", "-m", "1", "--json"])  # doctest: +ELLIPSIS
    {...}
    0
    """
    parser = build_parser()
    try:
        with _quiet(), _sigterm_raises():
            return _execute(parser, argv)
    except (PowerspecError, _UsageError) as exc:
        return _fail(str(exc), EXIT_USER_ERROR)
    except MemoryError:
        return _fail("ran out of memory; ask a smaller question (a smaller power or factor, "
                     "or 'top' instead of 'spectrum')", EXIT_USER_ERROR)
    except KeyboardInterrupt:
        print("powerspec: interrupted", file=sys.stderr)
        return EXIT_INTERRUPTED
    except _Terminated:
        print("powerspec: terminated", file=sys.stderr)
        return EXIT_TERMINATED
    except BrokenPipeError:
        _silence_stdout()  # the reader (e.g. head) has gone: stop quietly
        return 141
    except SystemExit as exc:  # --help and --version
        return exc.code if isinstance(exc.code, int) else 0
    except Exception as exc:
        if os.environ.get(DEBUG_VARIABLE, "") not in ("", "0"):
            raise
        kind = type(exc).__name__
        return _fail(f"internal error ({kind}: {_one_line(str(exc))[:120]}). This is a bug in "
                     f"powerspec {__version__}: please report it with the command you ran; "
                     f"set {DEBUG_VARIABLE}=1 to see the traceback", EXIT_BUG)


def _fail(message: str, code: int) -> int:
    line = _one_line(message)
    if len(line) > MAX_MESSAGE_CHARS:
        line = line[:250] + " ... " + line[-(MAX_MESSAGE_CHARS - 255):]
    print(f"powerspec: error: {line}", file=sys.stderr)
    return code


@contextlib.contextmanager
def _quiet() -> Iterator[None]:
    """No warning reaches the user: numpy floating-point warnings and Python warnings are off."""
    with warnings.catch_warnings(), np.errstate(all="ignore"):
        warnings.simplefilter("ignore")
        yield


_HANDLER_PID: list[int] = []


def _raise_terminated(signum, frame):
    if _HANDLER_PID and os.getpid() != _HANDLER_PID[-1]:
        # A forked worker (the symbolic bridge's sympy guard) inherited this handler: die
        # at once, as it would have without it, instead of unwinding with a traceback.
        signal.signal(signal.SIGTERM, signal.SIG_DFL)
        os.kill(os.getpid(), signal.SIGTERM)
        return
    raise _Terminated()


@contextlib.contextmanager
def _sigterm_raises() -> Iterator[None]:
    """Turn SIGTERM into an exception while the command runs (main thread only)."""
    if threading.current_thread() is not threading.main_thread():
        yield
        return
    _HANDLER_PID.append(os.getpid())
    previous = signal.signal(signal.SIGTERM, _raise_terminated)
    try:
        yield
    finally:
        signal.signal(signal.SIGTERM, previous)
        _HANDLER_PID.pop()


def _silence_stdout() -> None:
    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
    except (OSError, ValueError, AttributeError):
        pass


def _one_line(msg: str) -> str:
    return " ".join(msg.split())


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
