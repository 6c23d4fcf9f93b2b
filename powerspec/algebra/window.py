"""Exact counts of the eigenvalues in a window, without the rest of the spectrum.

For an additive (Cartesian-type) product the eigenvalues are indexed by
compositions: how many of the k copies of each operand take each of its
eigenvalues (see :mod:`powerspec.algebra.powers`).  A count over [a, b]
needs only the compositions whose value lies in the window, so:

1. every composition's value is computed in double precision, vectorised,
   with a rigorous bound on its error (operand radii, conversion and the
   rounding of the sums);
2. the few whose value may lie in the window are recomputed as 160-bit balls
   and decided against a and b (a ball that straddles an end counts in the
   upper bound only);
3. only those get their exact multiplicity (multinomial times the operand
   multiplicities).

The full exact spectrum would build every multiplicity (cart(C(5)^1000):
501,501 integers of up to 2,300 bits); this builds a few thousand.

>>> from powerspec.algebra.engine import Engine
>>> from powerspec.algebra.grammar import parse
>>> window_counts(Engine(), parse("cart(K(2)^10)"), "adjacency", -2.0, 2.0)[:3]
(672, 672, 672)
"""

from __future__ import annotations

import math
from fractions import Fraction

import numpy as np
from flint import arb

from powerspec.algebra.compositions import as_hp, state_mult
from powerspec.algebra.engine import Engine
from powerspec.algebra.extremes import flat_parts
from powerspec.algebra.tree import Leaf, Node
from powerspec.errors import NotExactError, SizeLimitError
from powerspec.numbers.hp import as_acb, radius, working

MAX_COMPOSITIONS = 4_000_000
"""Most compositions whose values are computed in floats (about 8 bytes each per operand)."""

MAX_CELLS = 16_000_000
"""Most compositions times values per operand held at once (int64: 128 MB)."""

MAX_CANDIDATES = 200_000
"""Most compositions recomputed as balls (those that may lie in the window)."""

U = 2.0**-53


def _float_and_error(x) -> tuple[float, float]:
    """(a float near x, a bound on its distance from x) for an int, float, Fraction, flint
    rational or ball."""
    if isinstance(x, (int, float)):
        return float(x), 0.0
    if isinstance(x, arb):
        f = float(x.mid())
        return f, radius(x) + abs(f) * U
    q = Fraction(int(x.p), int(x.q)) if hasattr(x, "p") else Fraction(x)
    f = float(q)
    return f, float(abs(Fraction(f) - q)) * (1 + 4 * U) + 1e-300


def compositions(k: int, r: int) -> np.ndarray:
    """Every way of putting k copies on r values, as an (N, r) int64 array, N = C(k+r-1, r-1).

    >>> compositions(2, 3).tolist()
    [[0, 0, 2], [0, 1, 1], [0, 2, 0], [1, 0, 1], [1, 1, 0], [2, 0, 0]]
    """
    left = np.array([k], dtype=np.int64)
    cols, links = [], []  # per value: its counts, and each row's parent row one value earlier
    for _ in range(r - 1):
        reps = left + 1  # each row takes 0..left copies on this value
        idx = np.repeat(np.arange(len(left)), reps)
        start = np.cumsum(reps) - reps
        c = np.arange(int(reps.sum()), dtype=np.int64) - np.repeat(start, reps)
        cols.append(c)
        links.append(idx)
        left = left[idx] - c
    out = np.empty((len(left), r), dtype=np.int64)
    out[:, r - 1] = left
    rows = np.arange(len(left))  # each final row's row at the current value, walking back
    for j in range(r - 2, -1, -1):
        out[:, j] = cols[j][rows]
        rows = links[j][rows]
    return out


def count_compositions(parts) -> int:
    """Number of compositions of the flat parts (product over operands of C(k+r-1, r-1))."""
    total = 1
    for vals, _, k in parts:
        total *= math.comb(k + len(vals) - 1, len(vals) - 1)
    return total


def count_cells(parts) -> list[int]:
    """Compositions times values of each operand (the size of its composition array)."""
    return [math.comb(k + len(v) - 1, len(v) - 1) * len(v) for v, _, k in parts]


def enumerable(parts) -> bool:
    """True when a window count may enumerate the parts' compositions (MAX_COMPOSITIONS in all,
    MAX_CELLS per operand)."""
    return count_compositions(parts) <= MAX_COMPOSITIONS and max(count_cells(parts)) <= MAX_CELLS


def window_parts(engine: Engine, node: Node, kind: str):
    """(parts, (shift, factor)) of an additive product: eigenvalue = shift + factor * sum, or
    NotExactError where the rule is not additive."""
    if isinstance(node, Leaf):
        raise NotExactError(f"{node.label()} is a single factor: list its spectrum instead")
    comb, use, post = engine.linear_form(node, kind)
    if comb.mode != "add":
        raise NotExactError(f"{node.label()}: window counts need an additive (Cartesian-type) rule")
    return flat_parts(engine, node, use, comb), post


def window_counts(engine: Engine, node: Node, kind: str, a: float, b: float,
                  max_candidates: int = MAX_CANDIDATES):
    """(estimate, certain, possible, candidates, compositions): exact numbers of eigenvalues
    with real part in [a, b].

    ``certain`` counts the compositions whose 160-bit value is certainly in the
    window, ``possible`` adds those whose ball straddles an end, ``estimate``
    those whose midpoint is inside.  Raises NotExactError for rules that are
    not additive and SizeLimitError past MAX_COMPOSITIONS, MAX_CELLS or ``max_candidates``,
    or where a value leaves the double range (the float filter could not bound it).
    """
    parts, (shift, factor) = window_parts(engine, node, kind)
    total = count_compositions(parts)
    if not enumerable(parts):
        raise SizeLimitError(f"{node.label()} has {total} compositions, more than a window count "
                             f"enumerates ({MAX_COMPOSITIONS}, or {MAX_CELLS} per operand and value)")
    # 1. float values and a rigorous bound on their error
    sums, grids, values, err, top = np.zeros(1), [], [], 0.0, 0.0
    for vals, _, k in parts:
        with working():
            re = [as_acb(v).real for v in vals]
        values.append(re)
        mid = np.array([float(x.mid()) for x in re])
        if not np.all(np.isfinite(mid)) or k * float(np.abs(mid).max()) > 1e300:
            raise SizeLimitError(f"{node.label()}: values beyond the double range; the window "
                                 "count cannot bound them in floats")
        rad = np.array([radius(x) for x in re]) + np.abs(mid) * U  # ball + conversion
        comps = compositions(k, len(vals))
        grids.append(comps)
        part = comps @ mid
        # sum_i c_i |v_i - mid_i| + the dot product's rounding, gamma_r sum_i c_i |mid_i|
        err += k * float(rad.max()) + (len(vals) + 1) * U * k * float(np.abs(mid).max()) * 1.01
        top += k * float(np.abs(mid).max())
        sums = np.add.outer(sums, part).ravel()
    err += len(parts) * U * top * 1.01 + 1e-300  # the sums over operands
    (sh, e_sh), (fa, e_fa) = _float_and_error(shift), _float_and_error(factor)
    # X = shift + factor * S: the float map's own error, and the conversion of shift, factor
    x = sh + fa * sums
    err_x = ((abs(fa) + e_fa) * (1 + 4 * U) * err + 4 * U * (abs(sh) + abs(fa) * np.abs(sums))
             + e_sh + e_fa * np.abs(sums) + 1e-300)
    if not (np.all(np.isfinite(x)) and np.all(np.isfinite(err_x))):
        # an overflow (inf, or inf - inf = nan) would drop compositions from the filter unseen
        raise SizeLimitError(f"{node.label()}: values beyond the double range; the window count "
                             "cannot bound them in floats")
    cand = np.flatnonzero((x >= a - 2 * err_x) & (x <= b + 2 * err_x))
    if cand.size > max_candidates:
        raise SizeLimitError(f"{cand.size} compositions of {node.label()} may lie in [{a}, {b}], "
                             f"more than the {max_candidates} a window count certifies here")
    # 2. the candidates as 160-bit balls, decided against the window's ends
    shape = [len(g) for g in grids]
    offsets = np.cumsum([0] + [len(v) for v, _, _ in parts])
    est = lo = hi = 0
    with working():
        sh_hp, fa_hp = as_hp(shift), as_hp(factor)
        lo_end, hi_end = arb(a), arb(b)
        for flat in cand.tolist():
            state = []
            total_v = arb(0)
            for j, i in enumerate(np.unravel_index(flat, shape)):
                row = grids[j][int(i)].tolist()
                state.extend(row)
                for c, v in zip(row, values[j], strict=True):
                    if c:
                        total_v += v * c
            xv = sh_hp + fa_hp * total_v
            inside_lo, inside_hi = xv >= lo_end, xv <= hi_end
            maybe = not (xv < lo_end) and not (xv > hi_end)
            if not maybe:
                continue
            # 3. exact multiplicity of the composition
            m = state_mult(tuple(state), parts, offsets)
            hi += m
            if inside_lo and inside_hi:
                lo += m
            if a <= float(xv.mid()) <= b:  # xv is a ball: the sum of balls times a rational
                est += m
    return est, lo, hi, int(cand.size), total


__all__ = ["MAX_CANDIDATES", "MAX_CELLS", "MAX_COMPOSITIONS", "compositions", "count_cells",
           "count_compositions", "enumerable", "window_counts", "window_parts"]
