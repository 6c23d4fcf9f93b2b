"""The sympy number domain: exact expressions, symbolic weights and a symbolic power k.

The third scalar domain beside certified balls (:mod:`~powerspec.numbers.balls`,
:mod:`~powerspec.numbers.hp`) and exact rationals
(:mod:`~powerspec.numbers.rationals`).  The product algebra reaches it only
through :data:`SYMPY`, a :class:`SympyDomain` context (as mpmath's algorithms
reach their number type through ``ctx``):

* what the product algebra needs -- :meth:`~SympyDomain.add`,
  :meth:`~SympyDomain.mul`, :meth:`~SympyDomain.pow` (integer or symbolic
  exponents), :meth:`~SympyDomain.affine` (the regular forms),
  :meth:`~SympyDomain.key` / :meth:`~SympyDomain.merge` (exact equality: expanded
  forms, then a 40-digit numeric check confirmed by sympy) and
  :meth:`~SympyDomain.sort_pairs`;
* what the factor families' closed forms need, under the names and signatures
  of :mod:`powerspec.numbers.hp` -- :meth:`~SympyDomain.rational`,
  :meth:`~SympyDomain.cos2pi`, :meth:`~SympyDomain.sin2pi`,
  :meth:`~SympyDomain.root_of_unity`, :meth:`~SympyDomain.sqrt_int`,
  :meth:`~SympyDomain.nth_root`, :meth:`~SympyDomain.working` -- so a closed form
  written against a context runs unchanged in both.

:func:`guarded` is the time guard: a computation runs in a forked worker that
is terminated after :data:`TIME_GUARD` seconds.

Importing this module imports sympy; nothing imported by ``import powerspec`` or
by a non-symbolic command imports it.

>>> k = sympy.Symbol("k", integer=True, positive=True)
>>> SYMPY.pow(SYMPY.add(Fraction(1), Fraction(2)), k) - 1   # (1 + 2)^k - 1: exact
3**k - 1
>>> SYMPY.cos2pi(Fraction(1, 5)), SYMPY.sqrt_int(8)
(-1/4 + sqrt(5)/4, 2*sqrt(2))
"""

from __future__ import annotations

import contextlib
import math
import multiprocessing
from collections.abc import Callable, Iterable, Iterator
from fractions import Fraction
from typing import Any

import numpy as np
import sympy

from powerspec.errors import InputError, PowerspecError, SymbolicError

TIME_GUARD = 30.0
"""Seconds a guarded sympy computation may run before its worker is terminated."""

MERGE_DIGITS = 40
"""Working digits of the numeric check that precedes an exact equality test."""

Value = Fraction | sympy.Expr
"""A value of the domain: a Fraction (fast exact path for rationals) or a sympy expression."""

_IN_WORKER: list[bool] = [False]


# ------------------------------------------------------------------ conversions


def number(x: Any) -> sympy.Expr:
    """An exact sympy number: ints and Fractions exactly, floats via their shortest decimal.

    A float64 becomes the rational of its shortest round-trip decimal (0.1 -> 1/10,
    what was typed; it differs from the stored double by under one ulp).

    >>> number(0.1), number(Fraction(3, 4)), number(7)
    (1/10, 3/4, 7)
    """
    if isinstance(x, sympy.Basic):
        return x
    if isinstance(x, (bool, np.bool_)):
        raise InputError(f"expected a number, got a bool ({x!r})")
    if isinstance(x, (int, np.integer)):
        return sympy.Integer(int(x))
    if isinstance(x, Fraction):
        return sympy.Rational(x.numerator, x.denominator)
    if hasattr(x, "p") and hasattr(x, "q"):  # flint fmpq
        return sympy.Rational(int(x.p), int(x.q))
    f = float(x)
    if not math.isfinite(f):
        raise InputError(f"entries must be finite, got {x!r}")
    if f.is_integer():
        return sympy.Integer(int(f))
    return sympy.Rational(repr(f))


def to_sympy(v: Value) -> sympy.Expr:
    """A domain value as a sympy expression (Fractions become Rationals).

    >>> to_sympy(Fraction(1, 3))
    1/3
    """
    if isinstance(v, Fraction):
        return sympy.Rational(v.numerator, v.denominator)
    return sympy.sympify(v)


def numeric(e: sympy.Expr) -> complex | None:
    """The complex value of an expression without free symbols (30 digits), else None.

    >>> numeric(sympy.sqrt(4)), numeric(sympy.Symbol("x"))
    ((2+0j), None)
    """
    e = to_sympy(e)
    if e.free_symbols:
        return None
    return complex(sympy.N(e, 30))


# ---------------------------------------------------------------------- domain


class SympyDomain:
    """The sympy context: exact arithmetic for the product algebra and the closed forms.

    Every method returns exact values (sympy expressions, or Fractions from
    :meth:`key`); nothing is rounded.  See the module docstring.

    >>> SYMPY.affine(sympy.sqrt(2), 3, -1)          # the Laplacian of a 3-regular graph
    3 - sqrt(2)
    """

    # ---- the closed-form context (same names and signatures as powerspec.numbers.hp)
    @staticmethod
    def rational(x: Any) -> sympy.Expr:
        """The exact rational of an int, Fraction or float (floats by their shortest decimal)."""
        return number(x)

    @staticmethod
    def cos2pi(t: Fraction) -> sympy.Expr:
        """cos(2 pi t) for a rational t, exact (sympy evaluates the constructible cases)."""
        t = Fraction(t) % 1
        return sympy.cos(2 * sympy.pi * sympy.Rational(t.numerator, t.denominator))

    @staticmethod
    def sin2pi(t: Fraction) -> sympy.Expr:
        """sin(2 pi t) for a rational t, exact."""
        t = Fraction(t) % 1
        return sympy.sin(2 * sympy.pi * sympy.Rational(t.numerator, t.denominator))

    @staticmethod
    def root_of_unity(t: Fraction) -> sympy.Expr:
        """exp(2 pi i t) for a rational t, exact (real when it is real)."""
        c, s = SympyDomain.cos2pi(t), SympyDomain.sin2pi(t)
        return c if s == 0 else c + sympy.I * s

    @staticmethod
    def sqrt_int(m: int) -> sympy.Expr:
        """sqrt(m) for an integer m >= 0, exact (an integer for perfect squares)."""
        return sympy.sqrt(sympy.Integer(m))

    @staticmethod
    def nth_root(q: Any, n: int) -> sympy.Expr:
        """The positive real n-th root of a positive rational q, exact."""
        return sympy.root(number(q), n)

    @staticmethod
    @contextlib.contextmanager
    def working(prec: int = 0) -> Iterator[None]:
        """A no-op: sympy arithmetic is exact (hp's ``working`` sets a precision)."""
        yield

    # ---- the product algebra
    @staticmethod
    def key(v: Value) -> Value:
        """Exact canonical form: a Fraction for rationals, else the expanded expression.

        >>> SYMPY.key(sympy.Rational(1, 2)), SYMPY.key((1 + sympy.sqrt(2))**2)
        (Fraction(1, 2), 2*sqrt(2) + 3)
        """
        if isinstance(v, Fraction):
            return v
        e = sympy.sympify(v)
        if e.is_Rational:
            return Fraction(int(e.p), int(e.q))
        return sympy.expand(e)

    @staticmethod
    def add(x: Value, y: Value) -> Value:
        """x + y, exact (Fractions stay Fractions)."""
        if isinstance(x, Fraction) and isinstance(y, Fraction):
            return x + y
        return to_sympy(x) + to_sympy(y)

    @staticmethod
    def mul(x: Value, y: Value) -> Value:
        """x * y, exact (Fractions stay Fractions)."""
        if isinstance(x, Fraction) and isinstance(y, Fraction):
            return x * y
        return to_sympy(x) * to_sympy(y)

    @staticmethod
    def pow(x: Value, c: Any) -> sympy.Expr:
        """x ** c for an integer or a symbolic exponent c (unevaluated for symbols).

        >>> k = sympy.Symbol("k", integer=True, positive=True)
        >>> SYMPY.pow(Fraction(3), k), SYMPY.pow(sympy.sqrt(2), 4)
        (3**k, 4)
        """
        return to_sympy(x) ** to_sympy(c)

    @staticmethod
    def affine(x: Value, shift: Any, factor: Any) -> sympy.Expr:
        """shift + factor * x (a regular form of :data:`~powerspec.algebra.kinds.REGULAR_FORM`)."""
        return sympy.expand(to_sympy(shift) + to_sympy(factor) * to_sympy(x))

    @staticmethod
    def equal(x: Value, y: Value) -> bool:
        """Exact equality: equal expanded forms, or a 40-digit match that sympy does not refute.

        >>> SYMPY.equal(sympy.sqrt(2) * sympy.sqrt(3), sympy.sqrt(6))
        True
        """
        ex, ey = sympy.expand(to_sympy(x)), sympy.expand(to_sympy(y))
        if ex == ey:
            return True
        d = ex - ey
        if d.free_symbols:
            return sympy.simplify(d) == 0
        z = complex(sympy.N(d, MERGE_DIGITS))
        if abs(z) > 10.0 ** (-(MERGE_DIGITS - 5)):
            return False
        return d.equals(0) is not False

    def merge(self, pairs: Iterable[tuple[Value, int]]) -> list[tuple[sympy.Expr, int]]:
        """Equal values merged, multiplicities added (exact ints); values as sympy expressions.

        Expanded forms first; symbol-free irrational values then by a numeric sort and
        :meth:`equal` on neighbours (values within 1e-12 of each other).

        >>> SYMPY.merge([(sympy.sqrt(8), 1), (2 * sympy.sqrt(2), 2), (1, 1)])
        [(1, 1), (2*sqrt(2), 3)]
        """
        exact: dict = {}
        for v, m in pairs:
            key = self.key(v)
            exact[key] = exact.get(key, 0) + int(m)
        out: list[list] = []
        pending = []
        for v, m in exact.items():
            e = to_sympy(v)
            if e.free_symbols or e.is_Rational:
                out.append([e, m, None])
            else:
                pending.append([e, m, complex(sympy.N(e, MERGE_DIGITS))])
        pending.sort(key=lambda t: (t[2].real, t[2].imag))
        merged: list[list] = []
        for e, m, z in pending:
            if merged:
                w = merged[-1][2]
                if abs(z - w) <= 1e-12 * max(1.0, abs(z)) and self.equal(merged[-1][0], e):
                    merged[-1][1] += m
                    continue
            merged.append([e, m, z])
        return [(e, m) for e, m, _ in out + merged]

    @staticmethod
    def sort_pairs(pairs: Iterable[tuple[Any, int]], descending: bool) -> list[tuple[sympy.Expr, int]]:
        """(value, multiplicity) pairs ordered by real part, then imaginary part.

        Symbols are set to 1 to place symbolic values plausibly (presentation only).

        >>> SYMPY.sort_pairs([(1, 1), (sympy.sqrt(2), 1)], descending=True)
        [(sqrt(2), 1), (1, 1)]
        """
        sign = -1 if descending else 1

        def order(p):
            e = p[0]
            v = numeric(e.subs({s: 1 for s in e.free_symbols})) or 0j
            return (sign * round(v.real, 12), sign * round(v.imag, 12), sympy.default_sort_key(e))

        return sorted(((to_sympy(v), int(m)) for v, m in pairs), key=order)


SYMPY = SympyDomain()
"""The sympy context (module-level instance, like mpmath's ``mp``)."""


# ------------------------------------------------------------------ time guard


def _child(conn, fn, args) -> None:  # pragma: no cover - runs in the forked worker
    _IN_WORKER[0] = True
    try:
        conn.send(("ok", fn(*args)))
    except PowerspecError as exc:  # refusals and user errors keep their type
        conn.send(("err", type(exc), str(exc)))
    except Exception as exc:  # noqa: BLE001 - reported to the parent as a SymbolicError
        conn.send(("err", SymbolicError, f"sympy failed: {type(exc).__name__}: {exc}"))
    finally:
        conn.close()


def guarded(fn: Callable, args: tuple, timeout: float | None, what: str = "the closed forms"):
    """fn(*args) in a forked worker that is terminated after ``timeout`` seconds.

    Raises SymbolicError naming ``what`` on timeout; errors raised in the worker
    are re-raised with their message (PowerspecError subclasses keep their type
    where they can be rebuilt from a message).  Runs inline when ``timeout`` is
    None, inside another guarded worker, or where ``fork`` is unavailable.

    >>> guarded(pow, (2, 10), 5.0)
    1024
    """
    if timeout is None or _IN_WORKER[0] or "fork" not in multiprocessing.get_all_start_methods():
        return fn(*args)
    ctx = multiprocessing.get_context("fork")
    recv, send = ctx.Pipe(duplex=False)
    proc = ctx.Process(target=_child, args=(send, fn, args), daemon=True)
    proc.start()
    send.close()
    try:
        if not recv.poll(timeout):
            raise SymbolicError(f"sympy did not finish {what} within {timeout:g} s; use the numeric "
                                "engine (drop --symbolic) or a smaller factor")
        try:
            reply = recv.recv()
        except EOFError:
            raise SymbolicError(f"the sympy worker for {what} died without an answer") from None
    finally:
        recv.close()
        if proc.is_alive():
            proc.terminate()
        proc.join()
    if reply[0] == "err":
        _, kind, message = reply
        try:
            raise kind(message)
        except TypeError:  # a type whose constructor wants more than a message
            raise SymbolicError(message) from None
    return reply[1]


__all__ = ["MERGE_DIGITS", "SYMPY", "TIME_GUARD", "SympyDomain", "Value", "guarded", "number",
           "numeric", "to_sympy"]
