"""Extreme eigenvalues of products too large to enumerate: certified best-first search.

For an associative product the eigenvalues are indexed by compositions (how
many copies take each operand eigenvalue); see :mod:`powerspec.algebra.powers`.
The largest ones are found by a best-first search over compositions, and
every value is computed at high precision (Arb balls at 160 bits, exact
rationals where the operands are), so the top of ``cart(C(9)^(10^9))`` keeps
its digits *and* its distances to the next eigenvalues:

* **additive rules** (Cartesian): moving one copy from an eigenvalue to the
  next smaller one never increases the real part, so the search pops
  compositions in non-increasing real part;
* **multiplicative rules** (direct, strong, ``mix(1, b)``, ``mix(0, b)``): the
  search runs over *magnitude classes* (operand eigenvalues of identical
  |s| in the linearisation s) in non-increasing log|s|; each class
  composition carries its exact sign counts ((P + D)/2 positive, (P - D)/2
  negative with P = prod (p + q)^c and D = prod (p - q)^c, no enumeration of
  sign patterns) or, for complex spectra, its exact phase distribution.

Stopping is rigorous: every unexplored composition is bounded by the key of
the heap top plus a bound on the float error of the keys, and the search
stops once m distinct certified atoms lie strictly beyond that bound.
Multiplicities are exact integers, kept factored (e.g. ``2^999999999``) when
astronomically large.
"""

from __future__ import annotations

import math

import numpy as np
from flint import arb, fmpq

from powerspec.algebra.compositions import (
    MAX_STATES,
    Frontier,
    U,
    as_hp,
    start,
    state_mult,
)
from powerspec.algebra.engine import Engine, affine
from powerspec.algebra.extremes_mul import best_first_mul, classes
from powerspec.algebra.kinds import MATRIX_RULES, Combination
from powerspec.algebra.tree import Leaf, Node, Product
from powerspec.errors import InputError, NotExactError, SizeLimitError
from powerspec.factors.factor import ENDS_MIN
from powerspec.numbers.hp import HP, as_acb, real_part, working
from powerspec.spectra.spectrum import HPValues, Spectrum, exact_sort_key, mult_array

SMALL_SEARCH_STATES = 2_000
"""States the search may visit (plus 50 per wanted atom) for a product small enough to enumerate."""



def extremes(engine: Engine, node: Node, kind: str, m: int, bottom: bool = False,
             max_states: int = MAX_STATES):
    """The m largest (smallest with ``bottom``) distinct eigenvalues, exact multiplicities.

    Returns ``(spectrum, method)``: a :class:`Spectrum` holding just those
    atoms (its ``order`` is the sum of their multiplicities), ordered ascending,
    and a one-line description of how they were obtained.

    >>> from powerspec.algebra.grammar import parse
    >>> sp, how = extremes(Engine(), parse("cart(K(2)^1000000000)"), "adjacency", 2)
    >>> sp.atoms()
    [(999999998.0, 1000000000), (1000000000.0, 1)]
    """
    if not isinstance(m, int) or m < 1:
        raise InputError(f"ask for at least one eigenvalue (m >= 1), got {m!r}")
    if isinstance(node, Leaf):
        return select(engine.spectrum(node, kind), m, bottom), "exact enumeration of the full spectrum"
    enumerate_ = "exact enumeration of the full spectrum"
    if engine.fits(node, kind):
        # Even where the full spectrum is small, its values went through double-ball
        # arithmetic: the gap between the top two atoms of cart(K(1, 3)^1000) keeps only 13
        # digits.  The search computes the few wanted values at 160 bits; a short, bounded
        # try, then the enumeration.
        try:
            return _search(engine, node, kind, m, bottom,
                           min(max_states, SMALL_SEARCH_STATES + 50 * m))
        except (NotExactError, SizeLimitError):
            return select(engine.spectrum(node, kind), m, bottom), enumerate_
    try:
        return _search(engine, node, kind, m, bottom, max_states)
    except NotExactError:
        # e.g. the Laplacian of a product with one irregular factor: enumerate if the engine can
        return select(engine.spectrum(node, kind), m, bottom), enumerate_
    except _NotAssociative:
        try:
            sp = engine.spectrum(node, kind)
        except SizeLimitError as exc:
            raise SizeLimitError(
                f"{node.label()}: the extremes of a non-associative mix need the full spectrum, which "
                f"is too large ({exc}); ask for a smaller power") from exc
        return select(sp, m, bottom), enumerate_


def search(engine: Engine, node: Node, kind: str, m: int, bottom: bool = False,
           max_states: int = MAX_STATES):
    """The best-first search of :func:`extremes` alone, never the full enumeration.

    Returns ``(spectrum, method)`` as :func:`extremes` does: the m largest
    (smallest) distinct atoms with exact multiplicities, every other
    eigenvalue certified to lie beyond the m-th.  Raises NotExactError where
    the search does not apply (a single factor, a non-associative mix, a
    spectrum that does not follow from the factors') and SizeLimitError past
    ``max_states`` visited compositions.

    >>> from powerspec.algebra.grammar import parse
    >>> search(Engine(), parse("cart(C(5)^1000000)"), "laplacian", 2, bottom=True)[0].atoms()
    [(0.0, 1), (1.381966011250105, 2000000)]
    """
    if not isinstance(m, int) or m < 1:
        raise InputError(f"ask for at least one eigenvalue (m >= 1), got {m!r}")
    if isinstance(node, Leaf):
        raise NotExactError(f"{node.label()} is a single factor: list its spectrum instead")
    return _search(engine, node, kind, m, bottom, max_states)


class _NotAssociative(NotExactError):
    """The node's rule is a non-associative mix: no composition search (enumerate instead)."""


def _search(engine: Engine, node: Node, kind: str, m: int, bottom: bool, max_states: int):
    """(atoms, method) from the best-first search, or NotExactError where it does not apply."""
    comb, use, post = engine.linear_form(node, kind)
    if comb.mode not in ("add", "mul"):
        raise _NotAssociative(node.label())
    parts = flat_parts(engine, node, use, comb, m)
    shift, factor = post
    up = (factor > 0) != bottom if not isinstance(factor, arb) else (factor > 0) != bottom
    if comb.mode == "add":
        found = _best_first_add(parts, m, up, max_states)
        how = "best-first search over compositions (additive rule), values at 160-bit precision"
    else:
        found = best_first_mul(comb, parts, m, up, node.order, max_states)
        how = ("best-first search over magnitude classes with exact sign or phase counts, values "
               "at 160-bit precision")
    if not (shift == 0 and factor == 1):
        found = _affine_hp(found, shift, factor)
    return select(found, m, bottom), how


def search_size(engine: Engine, node: Node, kind: str) -> int | None:
    """Number of compositions the extremes search could visit in all (over operand atoms for
    additive rules, over magnitude classes for multiplicative ones), or None when it does not
    apply.  Cheap: operand spectra only."""
    if isinstance(node, Leaf):
        return None
    try:
        comb, use, _ = engine.linear_form(node, kind)
        if comb.mode not in ("add", "mul"):
            return None
        parts = flat_parts(engine, node, use, comb)
        shift, factor = comb.to_s()
        total = 1
        for vals, ms, k in parts:
            r = len(vals) if comb.mode == "add" else len(classes(vals, ms, shift, factor)[0])
            total *= math.comb(k + r - 1, r - 1) if r > 1 else 1
            if total > 10**18:
                return total
        return total
    except (NotExactError, SizeLimitError):
        return None


def flat_parts(engine: Engine, node: Product, use: str, comb: Combination,
                ends_m: int | None = None):
    """[(atoms at high precision, multiplicities, copies)]; nested same-rule products flattened."""
    out = []

    def collect(n: Product, mult: int) -> None:
        for child, k in n.operands:
            if isinstance(child, Product) and MATRIX_RULES[use](child.comb) == comb:
                collect(child, mult * k)
            elif (comb.mode == "add" and ends_m is not None and isinstance(child, Leaf)
                  and child.factor.n > ENDS_MIN
                  and (vals := child.factor.ends(use, ends_m, engine.direction)) is not None):
                # Cartesian-type rule: a composition with a copy on an operand's (m+1)-th
                # largest value is beaten by m distinct ones, so the ends suffice
                sp = Spectrum.from_hp([v for v, _ in vals], [mm for _, mm in vals])
                out.append((list(sp.hp) if sp.hp is not None else sp.balls(),
                            [int(x) for x in sp.mult.tolist()], mult * k))
            else:
                try:
                    sp = engine.spectrum(child, use)
                except SizeLimitError as exc:
                    raise SizeLimitError(
                        f"the extremes search needs the spectrum of each operand; {child.label()} is "
                        f"too large ({exc})") from exc
                vals = list(sp.hp) if sp.hp is not None else sp.balls()
                out.append((vals, [int(x) for x in sp.mult.tolist()], mult * k))

    collect(node, 1)
    return out


def _affine_hp(sp: Spectrum, shift, factor) -> Spectrum:
    if sp.domain != "hp":
        return affine(sp, shift, factor)
    sh, fa = as_hp(shift), as_hp(factor)
    with working():
        items = [sh + fa * v for v in sp.values.items]
    return Spectrum(HPValues(items), sp.mult.copy(), order=sp.order)


# ------------------------------------------------------------------ selection
def select(sp: Spectrum, m: int, bottom: bool) -> Spectrum:
    """The m largest (or smallest) atoms of sp by real part, then imaginary part.

    Atoms whose real part may tie with the last one selected are included too,
    so a complex-conjugate pair is never split.
    """
    n = len(sp)
    re = sp.real_midpoints()
    rad = sp.radii()
    cplx = not sp.is_real

    def tie(i: int, j: int) -> bool:
        return cplx and abs(re[i] - re[j]) <= rad[i] + rad[j]

    if not bottom:
        lo = max(0, n - m)
        while lo > 0 and tie(lo - 1, lo):
            lo -= 1
        idx = np.arange(lo, n)
    else:
        hi = min(m, n)
        while hi < n and tie(hi, hi - 1):
            hi += 1
        idx = np.arange(0, hi)
    return sp.take(idx)


# --------------------------------------------------------------- additive rule
def _best_first_add(parts, m: int, up: bool, max_states: int = MAX_STATES) -> Spectrum:
    """Atoms of the additive combination with the m largest (up) or smallest real parts.

    Keys are taken relative to the start state (all copies on each operand's top
    eigenvalue): key = sum over moved copies of (lambda_i - lambda_top), so their float
    error follows the few moved copies, not k.  Each pushed state's key error is
    bounded and the running maximum ``eps`` covers every heap state; since moving a
    copy down never raises the value, every unexplored state lies below
    (heap top key + eps) relative to the start value.
    """
    sign = 1 if up else -1
    ordered = []
    with working():
        for vals, ms, k in parts:
            keyed = sorted(zip(vals, ms, strict=True), key=lambda t: exact_sort_key(t[0]),
                           reverse=up)  # exact order: moving a copy down never raises the value
            ordered.append(([v for v, _ in keyed], [mm for _, mm in keyed], k))
    offsets = np.cumsum([0] + [len(v) for v, _, _ in ordered])
    flat = [v for vals, _, _ in ordered for v in vals]
    tops = np.repeat(offsets[:-1], np.diff(offsets))
    with working():
        delta_hp = [as_acb(flat[i]).real - as_acb(flat[t]).real for i, t in enumerate(tops)]
        delta = np.array([sign * float(d.mid()) for d in delta_hp])
        derr = np.array([float(d.rad()) + abs(float(d.mid())) * 4 * U for d in delta_hp]) * 1.01
        base = fmpq(0)
        for vals, _, k in ordered:
            base = base + as_acb(vals[0]).real * k

    def key(state) -> tuple[float, float]:
        c = np.array(state, dtype=float)
        c[offsets[:-1]] = 0.0  # the top atom's copies are in the base value
        return float(np.dot(c, delta)), float(np.dot(c, derr)) * (1 + 8 * U) + 1e-300

    frontier = Frontier(start(ordered), key, offsets, max_states, "compositions")
    found_v: list[HP] = []
    found_m: list = []
    next_check = m
    while frontier:
        state = frontier.pop()
        with working():
            val = fmpq(0)
            for c, v in zip(state, flat, strict=True):
                if c:
                    val = val + v * c
        found_v.append(val)
        found_m.append(state_mult(state, ordered, offsets))
        frontier.expand(state)
        if not frontier:
            break
        if len(found_v) >= next_check:
            if _enough(found_v, found_m, m, sign, base, frontier.top()):
                break
            next_check = len(found_v) + max(1, len(found_v) // 8)
    return Spectrum(HPValues(found_v), mult_array(found_m))


def _enough(vals: list[HP], mults: list, m: int, sign: int, base, rel_bound: float) -> bool:
    """True when m merged atoms have sign * (Re(v) - base) certainly above ``rel_bound``."""
    with working():
        b = arb(fmpq(*float(rel_bound).as_integer_ratio()))
        keep = []
        for x, mm in zip(vals, mults, strict=True):
            r = real_part(x)
            r = arb(r) if isinstance(r, fmpq) else r
            if (r - base) * sign > b:
                keep.append((x, mm))
    if len(keep) < m:
        return False
    return len(Spectrum(HPValues([x for x, _ in keep]), mult_array([mm for _, mm in keep]))) >= m


__all__ = ["MAX_STATES", "extremes", "flat_parts", "search", "search_size", "select"]
