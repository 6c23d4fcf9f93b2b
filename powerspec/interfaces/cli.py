"""The ``powerspec`` command: parses options, calls the planner, prints the answer.

No mathematics lives here.  Every user error (bad expression, bad input, a
request over the size limit, a spectrum that is not exact) is one line on
stderr and exit status 2.
"""

from __future__ import annotations

import argparse
import sys
from collections.abc import Sequence

from powerspec import __version__
from powerspec.algebra.kinds import MATRIX_KINDS
from powerspec.answers.answer import write_atomic
from powerspec.errors import PowerspecError
from powerspec.queries import planner

EXIT_USER_ERROR = 2


class _Parser(argparse.ArgumentParser):
    """argparse with one-line errors."""

    def error(self, message: str):  # noqa: D102 - argparse hook
        raise _UsageError(f"{message} (see '{self.prog} --help')")


class _UsageError(Exception):
    pass


def _common(p: argparse.ArgumentParser, matrix: bool = True) -> None:
    if matrix:
        p.add_argument("--matrix", default="adjacency", choices=MATRIX_KINDS,
                       help="which matrix of the product (default: adjacency)")
        p.add_argument("--degrees", default="out", choices=("out", "in"),
                       help="degree used by laplacian/signless/transition for directed factors")
    p.add_argument("--json", action="store_true", help="print the stable JSON layout")
    p.add_argument("--limit", type=_positive_int, default=None,
                   help="largest number of distinct eigenvalues to enumerate")
    p.add_argument("--output", metavar="FILE", default=None,
                   help="write the answer to FILE (atomically) instead of stdout")


def _symbolic(p: argparse.ArgumentParser) -> None:
    p.add_argument("--symbolic", action="store_true",
                   help="closed forms as sympy expressions (a bare name as power, e.g. G^k)")
    p.add_argument("--latex", action="store_true", help="with --symbolic: print LaTeX")


def _real(text: str) -> float:
    try:
        v = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a number, got {text!r}") from None
    if v != v or v in (float("inf"), float("-inf")):
        raise argparse.ArgumentTypeError(f"expected a finite number, got {text!r}")
    return v


def _positive_int(text: str) -> int:
    try:
        v = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a positive whole number, got {text!r}") from None
    if v < 1:
        raise argparse.ArgumentTypeError(f"expected a positive whole number, got {text!r}")
    return v


def build_parser() -> argparse.ArgumentParser:
    """The argument parser of the ``powerspec`` command."""
    p = _Parser(prog="powerspec",
                description="Spectra of graph products and graph powers, from the factors.")
    p.add_argument("--version", action="version", version=f"powerspec {__version__}")
    sub = p.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)

    s = sub.add_parser("spectrum", help="the full exact multiset of eigenvalues")
    s.add_argument("expression")
    _common(s)
    _symbolic(s)

    t = sub.add_parser("top", help="the M largest (or smallest) distinct eigenvalues")
    t.add_argument("expression")
    t.add_argument("-m", type=_positive_int, default=5, help="how many distinct values (5)")
    t.add_argument("--bottom", action="store_true", help="the smallest instead of the largest")
    _common(t)
    _symbolic(t)

    for name, helptext in (("cdf", "fraction of eigenvalues <= X, with bounds"),
                           ("count", "number of eigenvalues in [A, B], with bounds"),
                           ("quantile", "the Q-quantile of the spectrum, with bounds")):
        q = sub.add_parser(name, help=helptext)
        q.add_argument("expression")
        for arg in {"cdf": ("x",), "count": ("a", "b"), "quantile": ("q",)}[name]:
            q.add_argument(arg, type=_real, metavar=arg.upper())
        q.add_argument("--method", default="auto", choices=("auto", "exact", "bracket", "law"),
                       help="which tier answers (auto: the cheapest that meets --tol)")
        q.add_argument("--tol", type=_real, default=None, help="wanted width of the bound")
        _common(q)

    mo = sub.add_parser("moments", help="exact spectral moments tr(M^p)")
    mo.add_argument("expression")
    mo.add_argument("--order", type=_positive_int, default=4, help="highest power p (4)")
    mo.add_argument("--per-vertex", action="store_true", help="tr(M^p) divided by the order")
    _common(mo)
    _symbolic(mo)

    iv = sub.add_parser("invariants", help="spectral radius, connectivity, spanning trees, ...")
    iv.add_argument("expression")
    _common(iv, matrix=False)
    iv.add_argument("--degrees", default="out", choices=("out", "in"),
                    help="degree used for directed factors' Laplacians")
    iv.add_argument("--time", type=_real, default=1.0, help="heat-kernel time t (1)")
    _symbolic(iv)

    pl = sub.add_parser("plot", help="draw the spectrum against a reference law")
    pl.add_argument("expression")
    pl.add_argument("-o", "--output", required=True, metavar="FILE", help="a .png, .pdf or .svg file")
    pl.add_argument("--bins", type=_positive_int, default=60)
    pl.add_argument("--matrix", default="adjacency", choices=MATRIX_KINDS)
    pl.add_argument("--degrees", default="out", choices=("out", "in"))
    pl.add_argument("--limit", type=_positive_int, default=None)

    d = sub.add_parser("demo", help="the built-in worked scenario")
    d.add_argument("--output", metavar="FILE", default=None)
    return p


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
        names = {"cdf": ("x",), "count": ("a", "b"), "quantile": ("q",)}[args.command]
        point = tuple(getattr(args, n) for n in names)
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


def main(argv: Sequence[str] | None = None) -> int:
    """Entry point; returns the exit status (0 ok, 2 user error)."""
    parser = build_parser()
    try:
        args = parser.parse_args(argv)
        if not args.command:
            parser.print_help()
            return EXIT_USER_ERROR
        text = _run(args)
        if getattr(args, "output", None) and args.command != "plot":
            write_atomic(args.output, text)
        else:
            sys.stdout.write(text)
        return 0
    except (PowerspecError, _UsageError) as exc:
        print(f"powerspec: error: {_one_line(str(exc))}", file=sys.stderr)
        return EXIT_USER_ERROR
    except MemoryError:
        print("powerspec: error: out of memory; lower --limit or ask a smaller question",
              file=sys.stderr)
        return EXIT_USER_ERROR
    except KeyboardInterrupt:
        print("powerspec: interrupted", file=sys.stderr)
        return 130


def _one_line(msg: str) -> str:
    return " ".join(msg.split())


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
