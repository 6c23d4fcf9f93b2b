"""The families' closed-form spectra written once against a number context.

``unit_spectrum(family, args, kind, ctx)`` is the textbook spectrum of a unit-weight
family member (Brouwer & Haemers, *Spectra of Graphs*, 2012, ch. 1 -- from
memory; the same formulas as :mod:`powerspec.factors.families`) computed with
the context ``ctx``: any object with ``rational``, ``cos2pi``, ``root_of_unity``,
``sqrt_int`` and ``nth_root`` -- the module :mod:`powerspec.numbers.hp` (exact
flint rationals and certified balls) and :data:`powerspec.numbers.symbolic.SYMPY`
(exact sympy expressions) both qualify, so the families can adopt these
functions unchanged.

:func:`family_form` recognises a family member in a numeric
:class:`~powerspec.factors.factor.Factor` (from the canonical name the families
give, e.g. ``scale(0.5, C(11))``, *verified* against the family's adjacency
pattern) and returns its closed form ``kind -> [(value, multiplicity)]`` with
the weights read off the matrix: off-diagonal weights all equal to w and loops
all equal to l give the eigenvalues of w G + l I (dicycle: the n-th roots of the
product of its arc weights, plus l).  This needs no characteristic polynomial, so
C(n) for any n has exact eigenvalues.

>>> from powerspec.numbers.symbolic import SYMPY
>>> unit_spectrum("C", (5,), "adjacency", SYMPY)
[(2, 1), (-1/2 + sqrt(5)/2, 2), (-sqrt(5)/2 - 1/2, 2)]
>>> from powerspec.factors.families import C, scale
>>> family_form(scale(3, C(4)), SYMPY)("adjacency")
[(6, 1), (0, 2), (-6, 1)]
"""

from __future__ import annotations

import re
from collections.abc import Callable
from fractions import Fraction
from typing import Any

import numpy as np

from powerspec.factors import families
from powerspec.factors.factor import Factor

MAX_CLOSED_FORM_ORDER = 200
"""Largest family member (vertices) whose closed form the symbolic domain writes out."""

_NAME = re.compile(r"^(?:(?:scale|loops)\([^,()]+, )*(P|C|K|J|dicycle)\((\d+)(?:, (\d+))?[,)]")
_ALL_KINDS = ("adjacency", "laplacian", "signless", "transition", "normalized")
_KINDS = {"P": _ALL_KINDS, "C": ("adjacency",), "K": ("adjacency",), "Kmn": _ALL_KINDS,
          "J": ("adjacency",), "dicycle": ("adjacency",)}


def _grouped(pairs: list[tuple[Any, int]]) -> list[tuple[Any, int]]:
    """Merge values that compare equal (exact values; balls compare equal only when exact)."""
    out: list[list] = []
    for v, m in pairs:
        for slot in out:
            if slot[0] == v:
                slot[1] += m
                break
        else:
            out.append([v, m])
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
    n = len(weights)
    prod = ctx.rational(1)
    for w in weights:
        prod = prod * ctx.rational(w)
    if prod == 0:
        return [(ctx.rational(loop), n)]
    g = ctx.nth_root(abs(prod), n)
    half = Fraction(0) if prod > 0 else Fraction(1, 2 * n)
    return [(g * ctx.root_of_unity(Fraction(j, n) + half) + ctx.rational(loop), 1) for j in range(n)]


def _structure(factor: Factor) -> tuple[str, tuple[int, ...]] | None:
    """(family, args) of a family member named as the families name it, else None."""
    m = _NAME.match(factor.name)
    if m is None:
        return None
    args = tuple(int(x) for x in m.groups()[1:] if x is not None)
    fam = m.group(1)
    if fam == "K" and len(args) == 2:
        fam = "Kmn"
    order = args[0] + args[1] if fam == "Kmn" else args[0]
    if order != factor.n or order > MAX_CLOSED_FORM_ORDER:
        return None
    return fam, args


def _reference(fam: str, args: tuple[int, ...]) -> Factor:
    build = {"P": families.P, "C": families.C, "K": families.K, "Kmn": families.K, "J": families.J,
             "dicycle": families.dicycle}[fam]
    return build(*args)


def _off_pattern(adj) -> set[tuple[int, int]]:
    coo = adj.tocoo()
    return {(int(i), int(j)) for i, j in zip(coo.row, coo.col, strict=True) if i != j}


def family_form(factor: Factor, ctx: Any) -> Callable[[str], list | None] | None:
    """The closed form ``kind -> [(value, multiplicity)] or None`` of a family member, or None.

    None when the factor is not (verifiably) a weighted family member of at most
    :data:`MAX_CLOSED_FORM_ORDER` vertices.
    """
    st = _structure(factor)
    if st is None:
        return None
    fam, args = st
    adj = factor.adjacency
    diag = np.unique(adj.diagonal())
    if diag.size > 1:
        return None
    loop = float(diag[0])
    coo = adj.tocoo()
    off = coo.row != coo.col
    if fam == "dicycle":
        n = args[0]
        if np.any((coo.col[off] - coo.row[off]) % n != 1):
            return None
        dense = adj.toarray() if n <= MAX_CLOSED_FORM_ORDER else None
        weights = [float(dense[i, (i + 1) % n]) for i in range(n)]
        return lambda kind: dicycle_spectrum(weights, loop, ctx) if kind == "adjacency" else None
    if _off_pattern(adj) != _off_pattern(_reference(fam, args).adjacency):
        return None
    w_vals = np.unique(coo.data[off])
    if w_vals.size != 1:
        return None
    w, l_ = ctx.rational(float(w_vals[0])), ctx.rational(loop)
    base = "K" if fam == "Kmn" else fam
    if fam == "J":  # J(n) is K(n) with unit loops: its pattern off the diagonal is K(n)'s
        base = "K"

    def form(kind: str) -> list | None:
        if kind not in _KINDS[fam]:
            return None
        unit = unit_spectrum(base, args, kind, ctx)
        if unit is None:
            return None
        if kind == "adjacency":
            return [(w * v + l_, m) for v, m in unit]
        if kind == "laplacian":
            return [(w * v, m) for v, m in unit]
        if kind == "signless":
            return [(w * v + 2 * l_, m) for v, m in unit]
        if l_ != 0 or (kind == "normalized" and w < 0):
            return None
        return unit  # transition and normalized do not see a common weight

    return form


__all__ = ["MAX_CLOSED_FORM_ORDER", "dicycle_spectrum", "family_form", "unit_spectrum"]
