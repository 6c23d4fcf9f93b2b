"""Invariants from the ends of the spectrum: radius, gaps, connectivity, Laplacian radius, nullity.

Values come from the certified extremes (160-bit balls; any k), the exact
spectrum when it is small, the symmetry tier's blocks for Laplacians that do
not factor (the whole block spectrum, or past its budget only the blocks' ends),
or Weyl brackets with the exact degree range -- in that order -- and each
entry's method says which.

Gaps are computed where they live: for additive (Cartesian) rules the
eigenvalues near the top are the top minus a few operand gaps, so
:func:`offset_levels` takes the differences of the *operand* eigenvalues
(radii of the factors' balls, independent of k) instead of subtracting two
values of size k: the gap of ``cart(C(9)^(10^9))`` keeps its digits.

>>> from powerspec.algebra.grammar import parse
>>> from powerspec.queries.invariants_context import Context
>>> cx = Context(parse("cart(C(9)^1000000000)"), 1000, "out", 1.0)
>>> top, levels = offset_levels(cx, "adjacency", 3, bottom=False)
>>> [round(float(g), 12) for g in levels]             # 2 - 2cos(2 pi/9), 4 - 4cos(2 pi/9)
[0.0, 0.467911113762, 0.935822227524]
"""

from __future__ import annotations

import math
from itertools import combinations_with_replacement

from flint import arb, fmpq

from powerspec.algebra.kinds import MATRIX_RULES
from powerspec.algebra.tree import Leaf, Node
from powerspec.answers.answer import count_text
from powerspec.numbers.counts import power_product
from powerspec.numbers.hp import as_ball, real_part, working
from powerspec.queries.invariants_context import Context
from powerspec.queries.invariants_entries import bracket, certified, entry, unavailable
from powerspec.queries.invariants_structure import Count, order_count
from powerspec.tiers.invariant_blocks import plan_text

UNDIRECTED_ONLY = "not defined here: needs an undirected graph (a real spectrum)"


def _ball(x) -> arb:
    with working():
        return as_ball(real_part(x))


def _atoms(sp) -> list[tuple[object, object]]:
    """(ball, multiplicity) pairs, from the 160-bit atoms when the spectrum keeps them."""
    balls = list(sp.hp) if getattr(sp, "hp", None) is not None else sp.balls()
    return list(zip(balls, sp.mult.tolist(), strict=True))


# ------------------------------------------------------------------ additive offsets
def _flat(cx: Context, node: Node, kind: str, rule) -> list[tuple[object, int]] | None:
    out = []
    for child, k in node.operands:
        if not isinstance(child, Leaf) and MATRIX_RULES[kind](child.comb) == rule:
            sub = _flat(cx, child, kind, rule)
            if sub is None:
                return None
            out += [(sp, k * kk) for sp, kk in sub]
        else:
            sp = cx.spectrum_of(child, kind)
            if not sp.is_real:
                return None
            out.append((sp, k))
    return out


def offset_levels(cx: Context, kind: str, m: int, bottom: bool):
    """(end value, [0, g_1, ..., g_(m-1)]) for an additive node: the m distinct values nearest the end.

    ``g_i`` are distances from the top (or bottom) as certified balls,
    computed from operand differences.  Returns None when the node is not
    additive for the kind or an operand's spectrum is not available.
    """
    node = cx.node
    if isinstance(node, Leaf):
        return None
    rule = MATRIX_RULES[kind](node.comb)
    if rule is None or rule.mode != "add":
        return None
    parts = _flat(cx, node, kind, rule)
    if parts is None:
        return None
    sign = -1 if bottom else 1
    moves = []  # (operand index, offset ball)
    end = arb(0)
    end_mult = 1
    with working():
        for j, (sp, k) in enumerate(parts):
            atoms = sorted(_atoms(sp), key=lambda t: -sign * float(_ball(t[0]).mid()))
            first = _ball(atoms[0][0])
            end += first * k
            end_mult = end_mult * power_product([(int(atoms[0][1]), k)])
            for v, _ in atoms[1:m]:
                moves.append((j, sign * (first - _ball(v)), k))
        cands = [arb(0)]
        for size in range(1, m):
            for combo in combinations_with_replacement(range(len(moves)), size):
                used: dict[int, int] = {}
                for i in combo:
                    used[moves[i][0]] = used.get(moves[i][0], 0) + 1
                if any(c > parts[j][1] for j, c in used.items()):
                    continue
                cands.append(sum((moves[i][1] for i in combo), arb(0)))
        levels = _distinct(cands)[:m]
    return (end, end_mult), levels


def _distinct(balls: list[arb]) -> list[arb]:
    """Sorted, with overlapping balls merged (their hull): the distinct values, rigorously."""
    out: list[arb] = []
    for b in sorted(balls, key=lambda x: float(x.mid())):
        if out and out[-1].overlaps(b):
            out[-1] = out[-1].union(b)
        else:
            out.append(b)
    return out


# ------------------------------------------------------------------ radius and gaps
def spectral_radius(cx: Context):
    """(entry, log entry, radius ball or None) of the adjacency spectral radius (certified).

    >>> from powerspec.algebra.grammar import parse
    >>> spectral_radius(Context(parse("direct(K(3)^2)"), 1000, "out", 1.0))[0]["value"]
    4
    """
    how = ""
    rho = None
    if not cx.fold_ok:
        why = cx.fold_reason()
        return unavailable(why), unavailable(why), None
    direct = cx._get(("direct_radius",), lambda: _direct_radius(cx, cx.node))
    if direct is not None:
        rho = direct
        how = "certified: rho(A (x) B) = rho(A) rho(B) over the direct product (factor balls)"
    elif cx.undirected:
        top, bot = cx.ext("adjacency", 1, False), cx.ext("adjacency", 1, True)
        if top is not None and bot is not None:
            with working():
                a, b = abs(_ball(top.ball(len(top) - 1))), abs(_ball(bot.ball(0)))
                rho = a if a > b else b if b > a else a.union(b)
            how = "certified: max(|largest|, |smallest|) adjacency eigenvalue (extremes, 160-bit balls)"
    elif cx.nonneg:
        top = cx.ext("adjacency", 1, False)
        if top is not None:
            rho = _ball(top.ball(len(top) - 1))
            how = "certified: Perron root = largest real eigenvalue (non-negative weights)"
    else:
        sp = cx.full("adjacency")
        if sp is not None:
            with working():
                vals = [abs(as_ball(b)) if not isinstance(b, fmpq) else abs(arb(b)) for b in sp.balls()]
                rho = vals[0]
                for v in vals[1:]:
                    rho = v if v > rho else rho if rho > v else rho.union(v)
            how = "certified: largest |eigenvalue| of the exact spectrum"
    if rho is None:
        why = "not available: " + (cx.why(("ext", "adjacency", 1, False)) or "the extremes are out of "
                                   "reach for a directed graph with negative weights")
        return unavailable(why), unavailable(why), None
    with working():
        log_e = certified(rho.log(), how + "; natural log") if rho > 0 else \
            unavailable("not defined: the spectral radius is 0")
    return certified(rho, how), log_e, rho


def _direct_radius(cx: Context, node: Node):
    """|b|^(K-1) prod rho_i^k_i for direct-type trees (mix(0, b) nodes), or None."""
    if isinstance(node, Leaf):
        with working():
            vals = [abs(as_ball(b)) for b, _ in _atoms(cx.eng.spectrum(node, "adjacency"))]
            out = vals[0]
            for v in vals[1:]:
                out = out.max(v)
            return out
    if node.comb.a != 0 or node.comb.b == 0:
        return None
    out, copies = arb(1), 0
    for child, k in node.operands:
        r = _direct_radius(cx, child)
        if r is None:
            return None
        with working():
            out *= r**k
        copies += k
    b = node.comb.b
    with working():
        return out * abs(arb(b.numerator) / b.denominator) ** (copies - 1)


def epidemic_threshold(cx: Context, rho) -> dict:
    """The entry of 1 / lambda_max of a non-negative adjacency matrix (certified ball).

    >>> from powerspec.algebra.grammar import parse
    >>> cx = Context(parse("K(5)"), 1000, "out", 1.0)
    >>> epidemic_threshold(cx, spectral_radius(cx)[2])["value"]
    1/4
    """
    if rho is None:
        return unavailable("not available: the spectral radius is not available")
    if not cx.nonneg:
        return unavailable("not defined: the threshold 1/lambda_max needs non-negative weights")
    if not rho > 0:
        return unavailable("not defined: lambda_max = 0 (no edges); the threshold is infinite")
    with working():
        return certified(1 / rho, "certified: 1/lambda_max of the adjacency matrix (Perron root)")


def spectral_gaps(cx: Context) -> tuple[dict, dict]:
    """Entries of lambda_1 - lambda_2 (with multiplicity) and lambda_1 - the next distinct eigenvalue.

    Exact 0 when the top eigenvalue is repeated; certified balls otherwise.

    >>> from powerspec.algebra.grammar import parse
    >>> g = [e["value"] for e in spectral_gaps(Context(parse("direct(P(3)^3)"), 1000, "out", 1.0))]
    >>> g[0], g[1].overlaps(arb(8).sqrt())       # 2 sqrt 2 - 0: the next distinct value is 0
    (0, True)
    """
    if not cx.undirected:
        return unavailable(UNDIRECTED_ONLY), unavailable(UNDIRECTED_ONLY)
    if not cx.fold_ok:
        return unavailable(cx.fold_reason()), unavailable(cx.fold_reason())
    off = cx._get(("offsets", "adjacency", False), lambda: offset_levels(cx, "adjacency", 2, False))
    if off is not None:
        (_, mult), levels = off
        how = "certified: from differences of the operands' eigenvalues (additive rule), 160-bit balls"
        distinct = certified(levels[1], how) if len(levels) > 1 else \
            unavailable("not defined: the spectrum has one distinct eigenvalue")
        if mult != 1:
            return entry(0, 0, 0, "exact: the largest eigenvalue is repeated"), distinct
        return (certified(levels[1], how) if len(levels) > 1 else distinct), distinct
    top = cx.ext("adjacency", 2, False)
    if top is None:
        why = "not available: " + cx.why(("ext", "adjacency", 2, False))
        return unavailable(why), unavailable(why)
    atoms = _atoms(top)
    how = "certified: difference of the two largest distinct eigenvalues (extremes, 160-bit balls)"
    if len(atoms) < 2:
        one = unavailable("not defined: the spectrum has one distinct eigenvalue")
        return (entry(0, 0, 0, "exact: the largest eigenvalue is repeated") if atoms[-1][1] != 1
                else one), one
    with working():
        g = _ball(atoms[-1][0]) - _ball(atoms[-2][0])
    distinct = certified(g, how)
    if atoms[-1][1] != 1:
        return entry(0, 0, 0, "exact: the largest eigenvalue is repeated"), distinct
    return certified(g, how), distinct


# ------------------------------------------------------------------ Laplacian ends
def algebraic_connectivity(cx: Context):
    """(entry, certified lower bound ball or None) of the second smallest Laplacian eigenvalue.

    >>> from powerspec.algebra.grammar import parse
    >>> algebraic_connectivity(Context(parse("cart(K(4)^100)"), 1000, "out", 1.0))[0]["value"]
    4
    """
    if not cx.undirected:
        return unavailable(UNDIRECTED_ONLY), None
    comps = cx.shape.c if cx.shape is not None else None
    if comps is not None and comps != 1 and not (isinstance(comps, int) and comps < 1):
        how = f"exact: the graph has {count_text(comps)} components (graph structure)"
        return entry(0, 0, 0, how), None
    if not cx.fold_ok:
        return unavailable(cx.fold_reason()), None
    if cx.exact_kind("laplacian"):
        off = cx._get(("offsets", "laplacian", True), lambda: offset_levels(cx, "laplacian", 2, True))
        if off is not None:
            (end, mult), levels = off
            how = "certified: smallest Laplacian eigenvalue plus the smallest operand gap (additive)"
            with working():
                val = end if (mult != 1 or len(levels) < 2) else end + levels[1]
            return certified(val, how), val
        bot = cx.ext("laplacian", 2, True)
        if bot is not None:
            atoms = _atoms(bot)
            val = _ball(atoms[0][0]) if (atoms[0][1] != 1 or len(atoms) < 2) else _ball(atoms[1][0])
            return certified(val, "certified: 2nd smallest Laplacian eigenvalue (extremes, 160-bit "
                                  "balls)"), val
    bs = cx.blocks()
    if bs is not None:
        lo, hi = bs.kth_smallest(2)
        with working():
            lo_b, hi_b = arb(max(lo, 0.0)), arb(hi)
        return bracket(lo_b, hi_b, "certified: 2nd smallest eigenvalue of the " + plan_text(bs)), lo_b
    if cx.undirected and not cx.exact_kind("laplacian"):
        ends = cx.block_ends(False, True)
        if ends is not None and math.isfinite(ends.second[0]) and math.isfinite(ends.second[1]):
            lo, hi = ends.second
            with working():
                lo_b = arb(max(lo, 0.0) if cx.nonneg else lo)  # L >= 0 for non-negative weights
                return bracket(lo_b, arb(hi), "certified: 2nd smallest eigenvalue, " + ends.text()), \
                    (lo_b if lo_b > 0 else None)
    return _weyl_connectivity(cx)


def _declined(cx: Context, key) -> str:
    """Why the symmetry tier gave neither the spectrum nor the ends (its last reason)."""
    return cx.why(key) or cx.why(("blocks",)) or "not applicable"


def _weyl_connectivity(cx: Context):
    rng = cx.degrees
    top = cx.ext("adjacency", 2, False)
    why = _declined(cx, ("block_ends", False, True))
    if rng is None or top is None or not cx.nonneg:
        return unavailable("not available: the Laplacian does not factor, the symmetry tier "
                           f"declined ({why}) and no Weyl bracket applies"), None
    d_min, d_max = rng
    atoms = _atoms(top)
    lam2 = _ball(atoms[-1][0]) if (atoms[-1][1] != 1 or len(atoms) < 2) else _ball(atoms[-2][0])
    with working():
        lower = d_min - lam2
        lower = lower if lower > 0 else arb(0)
        upper = d_max - lam2
        how = ("bracket (Weyl): lambda_2(D - A) in [d_min - lambda_2(A), d_max - lambda_2(A)], exact "
               "degree range and certified adjacency extremes; the symmetry tier declined: " + why)
        if not cx.loops and cx.n_arb > 1:
            fiedler = cx.n_arb / (cx.n_arb - 1) * d_min  # Fiedler 1973: alpha_2 <= N/(N-1) d_min
            if fiedler < upper:
                upper = fiedler
                how += "; Fiedler's N/(N-1) d_min (upper)"
    return bracket(lower, upper, how), (lower if lower > 0 else None)


def laplacian_radius(cx: Context):
    """(entry, certified upper bound ball or None) of the largest Laplacian eigenvalue.

    >>> from powerspec.algebra.grammar import parse
    >>> laplacian_radius(Context(parse("cart(K(2)^50)"), 1000, "out", 1.0))[0]["value"]
    100
    """
    if not cx.undirected:
        return unavailable(UNDIRECTED_ONLY), None
    if not cx.fold_ok:
        return unavailable(cx.fold_reason()), None
    if cx.exact_kind("laplacian"):
        top = cx.ext("laplacian", 1, False)
        if top is not None:
            val = _ball(top.ball(len(top) - 1))
            return certified(val, "certified: largest Laplacian eigenvalue (extremes)"), val
    bs = cx.blocks()
    if bs is not None:
        lo, hi = bs.largest_bounds()
        with working():
            return bracket(arb(lo), arb(hi), "certified: largest eigenvalue of the " + plan_text(bs)), \
                arb(hi)
    if not cx.exact_kind("laplacian"):
        ends = cx.block_ends(True, False)
        if ends is not None and math.isfinite(ends.largest[0]) and math.isfinite(ends.largest[1]):
            lo, hi = ends.largest
            with working():
                return bracket(arb(lo), arb(hi), "certified: largest eigenvalue, " + ends.text()), \
                    arb(hi)
    rng = cx.degrees
    top, bot = cx.ext("adjacency", 1, False), cx.ext("adjacency", 1, True)
    if rng is None or top is None or bot is None:
        return unavailable("not available: the Laplacian does not factor and no bracket applies"), None
    d_min, d_max = rng
    lmax, lmin = _ball(top.ball(len(top) - 1)), _ball(bot.ball(0))
    with working():
        lower = d_max - lmax
        alt = d_min - lmin
        lower = alt if alt > lower else lower
        upper = d_max - lmin
    return bracket(lower, upper, "bracket (Weyl): [max(d_max - lambda_max(A), d_min - lambda_min(A)), "
                                 "d_max - lambda_min(A)]; the symmetry tier declined: "
                                 + _declined(cx, ("block_ends", True, False))), upper


# ------------------------------------------------------------------ nullity
def _zero_split(sp) -> tuple[object, object]:
    """(certainly non-zero, possibly non-zero) multiplicity totals of a spectrum."""
    certain = possible = 0
    with working():
        for b, m in _atoms(sp):
            exact_zero = (isinstance(b, fmpq) and b == 0) or (not isinstance(b, fmpq) and b.is_zero())
            if exact_zero:
                continue
            possible = possible + m
            ball = b if not isinstance(b, fmpq) else arb(b)
            if not ball.contains(0):
                certain = certain + m
    return certain, possible


def _direct_nonzero(cx: Context, node: Node):
    if isinstance(node, Leaf):
        return tuple(Count.of(x) for x in _zero_split(cx.eng.spectrum(node, "adjacency")))
    if node.comb.a != 0 or node.comb.b == 0:
        if node is cx.node:
            return None  # the whole spectrum was already judged too large
        return tuple(Count.of(x) for x in _zero_split(cx.spectrum_of(node, "adjacency")))
    lo, hi = Count.of(1), Count.of(1)
    for child, k in node.operands:
        got = _direct_nonzero(cx, child)
        if got is None:
            return None
        lo = lo * Count.power(got[0], k)
        hi = hi * Count.power(got[1], k)
    return lo, hi


def nullity(cx: Context) -> dict:
    """The entry of the multiplicity of 0 in A: exact, or a bracket when balls touch 0.

    >>> from powerspec.algebra.grammar import parse
    >>> nullity(Context(parse("cart(K(2)^4)"), 1000, "out", 1.0))["value"]   # C(4, 2)
    6
    """
    sp = cx.full("adjacency")
    how = "exact: multiplicity of 0 in the exact spectrum"
    if sp is None:
        sp = cx.covering("adjacency")
        how = "exact: multiplicity of 0 among the extreme atoms, which hold the whole spectrum"
    if sp is not None:
        certain, possible = _zero_split(sp)
    else:
        got = cx._get(("direct_nonzero",), lambda: _direct_nonzero(cx, cx.node))
        if got is None:
            return unavailable("not available: the spectrum is too large and 0 is not isolated by a "
                               "closed form for this product")
        certain, possible = got
        how = "exact: direct product, non-zero eigenvalues are products of non-zero factor eigenvalues"
    if isinstance(cx.order, int) and isinstance(certain, int) and isinstance(possible, int):
        lo, hi = cx.order - possible, cx.order - certain
    else:
        n = order_count(cx.node)
        lo, hi = (n - possible).value(), (n - certain).value()
    if lo == hi:
        return entry(lo, lo, hi, how)
    return entry(None, lo, hi, how + "; bracket: some eigenvalue balls touch 0 at 160-bit precision")


__all__ = ["algebraic_connectivity", "epidemic_threshold", "laplacian_radius", "nullity",
           "offset_levels", "spectral_gaps", "spectral_radius"]
