"""The ``powerspec`` command: parses options, calls the planner, prints the answer.

No mathematics lives here; the arguments, their ranges and the help text are in
:mod:`~powerspec.interfaces.cli_args`, the text layouts in
:mod:`~powerspec.interfaces.report`.  The contract with the user:

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
import signal
import sys
import threading
import warnings
from collections.abc import Iterator, Sequence

import numpy as np

from powerspec import __version__
from powerspec.answers.answer import dump_json
from powerspec.errors import PowerspecError
from powerspec.interfaces.cli_args import EXAMPLES, GRAMMAR, POINTS, UsageError, build_parser
from powerspec.interfaces.files import check_output_path, write_atomic
from powerspec.queries import planner

EXIT_USER_ERROR = 2
EXIT_BUG = 1
EXIT_INTERRUPTED = 130
EXIT_TERMINATED = 143

class _Terminated(BaseException):
    """Raised by the SIGTERM handler so that every ``finally`` runs (temporary files go)."""


DEBUG_VARIABLE = "POWERSPEC_DEBUG"
"""Set to 1 to see the traceback of an internal error."""

MAX_MESSAGE_CHARS = 400
"""Longest error line printed (the middle of a longer one is cut)."""

# ------------------------------------------------------------------------ run


def _symbolic_run(args: argparse.Namespace) -> str:
    from powerspec.answers.answer import dump_json
    from powerspec.interfaces.symbolic_contract import contract
    from powerspec.interfaces.symbolic_printing import symbolic_report, symbolic_text

    if getattr(args, "method", "exact") == "estimate":
        raise UsageError("--method estimate has no symbolic form; drop --symbolic")
    extra = {"max_power": args.order} if args.command == "moments" else {}
    rep = symbolic_report(args.command, args.expression,
                          matrix=getattr(args, "matrix", "adjacency"), latex=args.latex, **extra)
    rep = contract(rep, bottom=getattr(args, "bottom", False))
    return dump_json(rep) + "\n" if args.json else symbolic_text(rep, latex=args.latex)


def _estimate_run(args: argparse.Namespace) -> str:
    from powerspec.interfaces.estimate import estimate

    top = args.command == "top"
    est = estimate(args.expression, args.matrix, degrees=args.degrees,
                   m=args.m if top else None, bottom=top and args.bottom)
    if args.json:
        return est.to_json()
    return est.to_text(head=None if top else args.head)


def _law_of(args: argparse.Namespace, tier: str | None) -> tuple[dict, str | None]:
    """The limit law's parameters and the linearised variable's name, when a law answered."""
    if tier != "law":
        return {}, None
    from powerspec.interfaces.plot_source import linear_form
    from powerspec.queries.frozen import distribution

    d = distribution(args.expression, args.matrix, method="law", limit=args.limit,
                     degrees=args.degrees)
    return dict(d.params), linear_form(d)[3]


def _distribution_run(args: argparse.Namespace) -> str:
    from powerspec.interfaces.report import answer_text, truncated_json

    fn = getattr(planner, args.command)
    point = tuple(getattr(args, n) for n, _, _ in POINTS[args.command])
    ans = fn(args.expression, *point, args.matrix, method=args.method, tol=args.tol,
             limit=args.limit, degrees=args.degrees)
    law, s_text = _law_of(args, ans.inputs.get("tier"))
    if args.json:
        return dump_json(truncated_json(ans, None, law)) + "\n"
    return answer_text(ans, law=law, s_text=s_text)


def _sweep_run(args: argparse.Namespace, progress) -> str:
    from powerspec.interfaces.sweep import sweep

    if args.plot is not None:
        from powerspec.interfaces.plots import check_plot_path

        check_plot_path(args.plot)  # before any work
    sw = sweep(args.expression, args.quantity, args.over, args.matrix, limit=args.limit,
               degrees=args.degrees, t=args.time, workers=args.workers,
               scheduler=args.scheduler, progress=progress)
    wrote = None
    if args.plot is not None:
        from powerspec.interfaces.plots import plot_sweep

        wrote = plot_sweep(sw, args.plot)
    if args.json:
        data = sw.to_dict()
        if args.plot is not None:
            data["plot"] = str(args.plot)
        return dump_json(data) + "\n"
    return sw.to_text() + (f"\n  {wrote}\n" if wrote else "")


def _run(args: argparse.Namespace) -> str:
    from powerspec.interfaces.progress import progress_bar
    from powerspec.interfaces.report import answer_text, truncated_json

    if getattr(args, "latex", False) and not args.symbolic:
        raise UsageError("--latex goes with --symbolic")
    if getattr(args, "symbolic", False):
        return _symbolic_run(args)
    if getattr(args, "method", None) == "estimate":
        return _estimate_run(args)
    command = args.command
    if command in ("cdf", "count", "quantile"):
        return _distribution_run(args)
    if command == "demo":
        from powerspec.interfaces.demo import run_demo

        return run_demo()
    if command == "moments":
        from powerspec.queries.moments import moment_answer

        ans = moment_answer(args.expression, order=args.order, matrix=args.matrix,
                            degrees=args.degrees, per_vertex=args.per_vertex)
        return ans.to_json() if args.json else answer_text(ans)
    if command == "invariants":
        from powerspec.queries.invariants import invariants

        ans = invariants(args.expression, limit=args.limit, degrees=args.degrees, t=args.time)
        return ans.to_json() if args.json else answer_text(ans)
    label, unit = ("sweep", "point") if command == "sweep" else ("symmetry blocks", "block")
    with progress_bar(label, unit=unit, quiet=args.quiet) as progress:
        parallel = {"workers": args.workers, "scheduler": args.scheduler, "progress": progress}
        if command == "sweep":
            return _sweep_run(args, progress)
        if command == "plot":
            from powerspec.interfaces.plots import plot

            return plot(args.expression, args.output, args.matrix, view=args.view,
                        bins=args.bins, size=tuple(args.size), dpi=args.dpi, title=args.title,
                        xlim=_pair(args.xlim), ylim=_pair(args.ylim), yscale=args.yscale,
                        limit=args.limit, degrees=args.degrees, **parallel) + "\n"
        if command == "spectrum":
            ans = planner.spectrum(args.expression, args.matrix, limit=args.limit,
                                   degrees=args.degrees, **parallel)
            if args.json:
                return dump_json(truncated_json(ans, args.head), end="\n")
            return answer_text(ans, head=args.head, full=args.all)
        if command == "top":
            ans = planner.top(args.expression, args.m, args.matrix, bottom=args.bottom,
                              limit=args.limit, degrees=args.degrees, **parallel)
            return ans.to_json() if args.json else answer_text(ans)
    raise UsageError(f"unknown command {command!r}")  # pragma: no cover - argparse restricts


def _pair(v) -> tuple[float, float] | None:
    return None if v is None else (float(v[0]), float(v[1]))


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
        # in pieces: one write of several GiB can come back short, and a str that size is
        # better not copied whole into the stream's encoder
        for i in range(0, len(text), 1 << 24):
            sys.stdout.write(text[i:i + (1 << 24)])
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
    except (PowerspecError, UsageError) as exc:
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


__all__ = ["EXAMPLES", "EXIT_USER_ERROR", "GRAMMAR", "build_parser", "main"]


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
