"""The families' closed-form spectra written once against a number context.

``unit_spectrum(family, args, kind, ctx)`` is the textbook spectrum of a unit-weight
family member (Brouwer & Haemers, *Spectra of Graphs*, 2012, ch. 1 -- from
memory; the same formulas as :mod:`powerspec.factors.families`) computed in the
context ``ctx``: any object with ``working``, ``rational``, ``cos2pi``,
``root_of_unity``, ``sqrt_int`` and ``nth_root``.  The module
:mod:`powerspec.numbers.hp` (exact flint rationals and certified balls; it lacks
also ``nth_root``) and
:data:`powerspec.numbers.symbolic.SYMPY` (exact sympy expressions) both qualify,
and give the same values as the families' own closed forms -- so the families
can adopt these functions unchanged.  This module imports neither sympy nor the
families.

>>> from powerspec.numbers.symbolic import SYMPY
>>> unit_spectrum("C", (5,), "adjacency", SYMPY)
[(2, 1), (-1/2 + sqrt(5)/2, 2), (-sqrt(5)/2 - 1/2, 2)]
>>> from powerspec.numbers import hp
>>> unit_spectrum("K", (1, 4), "laplacian", hp)
[(0, 1), (1, 3), (5, 1)]
"""

from __future__ import annotations

from fractions import Fraction
from typing import Any


def _grouped(pairs: list[tuple[Any, int]]) -> list[tuple[Any, int]]:
    """Merge values that are equal as exact numbers (rationals, exact symbolic forms) in linear
    time; balls are left apart (overlapping balls are merged later, by the spectrum); drop
    zero multiplicities."""
    out: list[list] = []
    seen: dict = {}
    for v, m in pairs:
        if m == 0:
            continue
        exact = type(v).__name__ not in ("arb", "acb")
        slot = seen.get(v) if exact else None
        if slot is None:
            slot = [v, 0]
            out.append(slot)
            if exact:
                seen[v] = slot
        slot[1] += m
    return [(v, m) for v, m in out]


def unit_spectrum(family: str, args: tuple[int, ...], kind: str, ctx: Any) -> list | None:
    """[(value, multiplicity)] of the unit-weight member of a family, or None if not known.

    ``family`` is ``"P"``, ``"C"``, ``"K"`` (one argument: K_n; two: K_{m,n}), ``"J"``;
    ``args`` its integer arguments; values in the context ``ctx`` (exact in both
    contexts where the value is rational).

    >>> from powerspec.numbers.symbolic import SYMPY
    >>> unit_spectrum("K", (1, 4), "adjacency", SYMPY)
    [(2, 1), (-2, 1), (0, 3)]
    """
    with ctx.working():
        return _unit(family, args, kind, ctx)


def _unit(family: str, args: tuple[int, ...], kind: str, ctx: Any) -> list | None:
    q, cos2pi = ctx.rational, ctx.cos2pi
    if family == "P":
        (n,) = args
        if kind == "adjacency":
            return _grouped([(2 * cos2pi(Fraction(j, 2 * (n + 1))), 1) for j in range(1, n + 1)])
        if kind in ("laplacian", "signless"):
            return _grouped([(2 - 2 * cos2pi(Fraction(j, 2 * n)), 1) for j in range(n)])
        if n < 2:
            return None
        c = [cos2pi(Fraction(j, 2 * (n - 1))) for j in range(n)]
        return _grouped([((x if kind == "transition" else 1 - x), 1) for x in c])
    if family == "C":
        (n,) = args
        return [(2 * cos2pi(Fraction(j, n)), 1 if 2 * j in (0, n) else 2) for j in range(n // 2 + 1)]
    if family in ("K", "J") and len(args) == 1:
        (n,) = args
        return [(q(n - 1), 1)] + ([(q(-1), n - 1)] if n > 1 else [])
    if family == "K":
        m, n = args
        if kind == "adjacency":
            r = ctx.sqrt_int(m * n)
            return _grouped([(r, 1), (-r, 1), (q(0), m + n - 2)])
        if kind in ("laplacian", "signless"):
            return _grouped([(q(0), 1), (q(m), n - 1), (q(n), m - 1), (q(m + n), 1)])
        if kind == "transition":
            return _grouped([(q(1), 1), (q(-1), 1), (q(0), m + n - 2)])
        return _grouped([(q(0), 1), (q(2), 1), (q(1), m + n - 2)])
    return None


def dicycle_spectrum(weights: list[Any], loop: Any, ctx: Any) -> list:
    """Adjacency spectrum of a directed n-cycle with arc weights w_i and loops l, exact.

    The adjacency is a weighted cyclic shift (plus l I) whose n-th power is
    (prod w_i) I: the eigenvalues are l + the n-th roots of prod w_i, each simple
    (all equal to l when a weight is 0).

    >>> from powerspec.numbers.symbolic import SYMPY
    >>> dicycle_spectrum([4, 1], 0, SYMPY)
    [(2, 1), (-2, 1)]
    """
    with ctx.working():
        return _dicycle(weights, loop, ctx)


def _dicycle(weights: list[Any], loop: Any, ctx: Any) -> list:
    n = len(weights)
    prod = ctx.rational(1)
    for w in weights:
        prod = prod * ctx.rational(w)
    if prod == 0:
        return [(ctx.rational(loop), n)]
    g = ctx.nth_root(abs(prod), n)
    half = Fraction(0) if prod > 0 else Fraction(1, 2 * n)
    return [(g * ctx.root_of_unity(Fraction(j, n) + half) + ctx.rational(loop), 1) for j in range(n)]


__all__ = ["dicycle_spectrum", "unit_spectrum"]
