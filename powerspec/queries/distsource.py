"""The distribution queries' one reader of engine and spectrum objects.

Every tier of :mod:`powerspec.queries.disttiers` works on plain arrays
(:class:`~powerspec.queries.disttiers.Atoms`); this module builds them: the
full exact spectrum (:func:`engine_spectrum`), the operands of a flat product
in the linearised variable s (:func:`flatten`), and the atoms at either end
of a spectrum too large to list (:func:`ends_tiers`).

>>> from powerspec.algebra.grammar import parse
>>> t = next(ends_tiers(Engine(), parse("cart(C(5)^1000)"), "laplacian", 1.0))
>>> t.counts(2.0, False)    # 0 once, (5 - sqrt 5)/2 two ways on each of 1000 coordinates
(2001, 2001, 2001)
"""

from __future__ import annotations

import math
from fractions import Fraction

import numpy as np

from powerspec.algebra.engine import Engine, Leaf, Node, Product
from powerspec.algebra.kinds import CARTESIAN, MATRIX_RULES
from powerspec.errors import NotExactError, SizeLimitError
from powerspec.numbers.counts import bit_length
from powerspec.queries.distends import EndsTier, WindowTier
from powerspec.queries.disttiers import Atoms, ball_end
from powerspec.tiers.exact import exact_feasible, exact_spectrum

WINDOW_SECONDS = (5e-3, 2.6e-7, 2.5e-8, 3.5e-5)
"""Measured cost of a window count: fixed, per composition, per composition and operand value
(building the compositions), and per candidate certified at 160 bits (cart(C(5)^1000): 501,501
compositions, 402 of them certified, in 0.13 s; cart(C(4)^1000) on [-300, 300]: 139,401
candidates in 5.0 s), on this project's 2-core machine."""

ENDS_FIRST = 16
"""Atoms listed by the first round of the ends tier (each round lists ENDS_GROWTH times more)."""

ENDS_GROWTH = 8

ENDS_ATOM_SECONDS = {"add": 6e-5, "mul": 1.5e-3}
"""Measured search cost per listed atom (cart(C(5)^1000): 2048 atoms in 0.11 s; strong(P(3)^1000):
32 in 0.042 s), on this project's 2-core machine ..."""

ENDS_BIT_SECONDS = 1.3e-9
"""... plus this per atom and bit of the order (the exact multinomials: cart(C(5)^100000), 232,000
bits, 8192 atoms in 2.9 s)."""

ENDS_MUL_ATOMS = 32
"""Most atoms one multiplicative search lists here: its cost grows faster than the count
(strong(P(3)^1000): 256 atoms took 3.1 s)."""

ENDS_STATES = 2_000
"""Compositions a round may visit besides 50 per listed atom."""


def atoms_of(sp) -> Atoms:
    """The one reader of spectrum objects: real values, exact multiplicities, rigorous radii.

    Returns :class:`~powerspec.queries.disttiers.Atoms`: float64 real parts of
    the certified midpoints (+-inf beyond the double range), exact Python-int
    multiplicities, and per atom a float64 radius that bounds the distance of
    the true eigenvalue from that float (the ball radius plus the rounding of
    the conversion, so exact integers keep radius 0), a relative radius (for
    values beyond the double range) and a function giving atom i's midpoint
    as a float or an mpmath number.
    """
    b = sp.as_balls()
    with np.errstate(over="ignore", under="ignore", invalid="ignore", divide="ignore"):
        mid = b.to_floats()
        values = np.asarray(mid.real if mid.dtype.kind == "c" else mid, dtype=float)
        radius = np.asarray(b.radii(), dtype=float)
        # the scaled midpoint is exact in a double unless a non-zero one lands in the subnormal range
        tiny = (np.abs(values) < 2.3e-308) & (np.asarray(b.mid) != 0)
        radius = np.where(tiny, radius + 1e-323 * 2, radius)
        # beyond the double range the value is +-inf and its error lives in the relative radius
        radius = np.where(np.isfinite(values), radius, 0.0)
        rel = np.where(b.mid != 0, b.rad / np.abs(b.mid), np.inf) * (1 + 1e-12)
    mult = [int(m) for m in sp.mult.tolist()]
    return Atoms(values, mult, radius, int(sp.order), bool(sp.is_real), sp.value,
                 np.asarray(np.real(rel), dtype=float))


def engine_spectrum(eng: Engine, node: Node, kind: str) -> Atoms:
    # the exact tier's routes: product rules, symmetry blocks, explicit build
    return atoms_of(exact_spectrum(eng, node, kind)[0])


def engine_fits(eng: Engine, node: Node, kind: str) -> bool:
    return exact_feasible(eng, node, kind)


def engine_bound(eng: Engine, node: Node, kind: str) -> int:
    return eng.bound(node, kind)


def engine_top_degree(eng: Engine, node: Node) -> float | None:
    """The largest vertex degree (rounded up), or None when some weight is negative or too many."""
    if any((f.adjacency.data < 0).any() for f in node.leaves()) or not eng.fits_degrees(node):
        return None
    at = atoms_of(eng.degrees(node))
    return float(np.max(at.values + at.radius))


def engine_linear_form(eng: Engine, node: Node, kind: str):
    """(combination, operand kind, (shift, factor) as floats) of the engine's linear form."""
    comb, use, post = eng.linear_form(node, kind)
    return comb, use, tuple(to_float(v) for v in post)


def to_float(v) -> float:
    """A float from an exact Fraction, a flint fmpq or the midpoint of a flint ball."""
    if isinstance(v, (int, float, Fraction)):
        return float(v)
    if hasattr(v, "p") and hasattr(v, "q"):
        return float(Fraction(int(v.p), int(v.q)))
    return float(v.mid()) if hasattr(v, "mid") else float(v)


def flatten(eng: Engine, node: Node, kind: str):
    """(comb, [(Atoms in s-space, copies)], alpha, beta): X = alpha + beta * s, or None.

    Nested products with the same exact rule are merged (cart(cart(G^a)^b) is
    cart(G^(ab))); other operands must have exact spectra.
    """
    if isinstance(node, Leaf):
        # a single factor: one copy under the additive rule (its spectrum is exact anyway)
        return CARTESIAN, [(engine_spectrum(eng, node, kind), 1)], 0.0, 1.0
    comb, use, post = engine_linear_form(eng, node, kind)
    if comb.mode not in ("add", "mul"):
        return None  # a left fold (a outside {0, 1}) or the zero rule (a = b = 0)
    parts = []  # operand spectra mapped to s-space
    to_shift, to_factor = (float(v) for v in comb.to_s())

    def collect(n, mult):
        for child, k in n.operands:
            if isinstance(child, Product) and MATRIX_RULES[use](child.comb) == comb:
                collect(child, mult * k)
            else:
                try:
                    at = engine_spectrum(eng, child, use)
                except SizeLimitError as exc:
                    raise SizeLimitError(
                        f"the distribution tiers need an exact spectrum of each operand of the "
                        f"outer product; {child.label()} is too large ({exc})") from exc
                if not np.all(np.isfinite(at.values)):
                    raise SizeLimitError(
                        f"{child.label()}: operand eigenvalues beyond the double range; ask for a "
                        "smaller operand")
                parts.append((at if (to_shift, to_factor) == (0.0, 1.0)
                              else at.mapped(to_shift, to_factor), mult * k))

    collect(node, 1)
    back_shift, back_factor = comb.from_s()
    alpha = post[0] + post[1] * back_shift
    beta = post[1] * back_factor
    return comb, parts, alpha, beta


def window_cost(eng: Engine, node: Node, kind: str) -> float | None:
    """Predicted seconds of :func:`window_tier`, or None where a window count does not apply."""
    # imported here: the command line's start-up does without the search machinery
    from powerspec.algebra.window import count_cells, count_compositions, enumerable, window_parts

    try:
        parts, _ = window_parts(eng, node, kind)
    except (NotExactError, SizeLimitError):
        return None
    if not enumerable(parts):
        return None
    return (WINDOW_SECONDS[0] + WINDOW_SECONDS[1] * count_compositions(parts)
            + WINDOW_SECONDS[2] * sum(count_cells(parts)))


def window_tier(eng: Engine, node: Node, kind: str, a: float, b: float,
                seconds: float = math.inf) -> WindowTier:
    """The exact counts of [a, b] by :func:`~powerspec.algebra.window.window_counts`
    (NotExactError / SizeLimitError where it does not apply, or where certifying its candidates
    would take more than about ``seconds``)."""
    from powerspec.algebra.window import MAX_CANDIDATES, window_counts

    most = MAX_CANDIDATES if math.isinf(seconds) else int(seconds / WINDOW_SECONDS[3])
    est, lo, hi, cand, total = window_counts(eng, node, kind, a, b,
                                             max(64, min(most, MAX_CANDIDATES)))
    return WindowTier((est, lo, hi), node.order, (a, b), cand, total)


def _outer(at: Atoms, bottom: bool) -> float:
    """The outer ball end of the smallest (``bottom``) or largest atom, as a float bound: for the
    atoms at an end of the spectrum, a bound on every eigenvalue's real part."""
    i = int(np.argmin(at.values) if bottom else np.argmax(at.values))
    return float(ball_end(at.values[i], at.radius[i], -1 if bottom else 1))


def ends_tiers(eng: Engine, node: Node, kind: str, budget: float):
    """Yield :class:`~powerspec.queries.distends.EndsTier` s listing ever more atoms, bottom and
    top in turn, while the predicted search cost (visited compositions times a measured cost
    per visit) stays within ``budget`` seconds.

    Nothing is yielded where the search does not apply (a single factor, an order kept
    factored, a non-associative mix, a kind that does not follow from the factors) or the
    values leave the double range.  Each tier is exact on its side of its last listed atom.
    """
    from powerspec.algebra.extremes import search

    if isinstance(node, Leaf):
        return
    try:
        comb, _, _ = eng.linear_form(node, kind)
    except (NotExactError, SizeLimitError):
        return
    if comb.mode not in ("add", "mul"):
        return
    # every visited composition costs about one atom's work (values with many compositions,
    # such as the integers of cart(C(4)^1000), visit many per atom): the visits are capped
    # so that the whole search stays within the budget
    per = ENDS_ATOM_SECONDS[comb.mode] + ENDS_BIT_SECONDS * bit_length(node.order)
    cap = ENDS_MUL_ATOMS if comb.mode == "mul" else None
    far: dict[bool, float] = {}
    sides = [True, False]
    spent, m = 0.0, ENDS_FIRST
    while sides and (cap is None or m <= cap):
        for bottom in list(sides):
            # at most half of what is left per round: later, larger rounds still get some
            states = min(ENDS_STATES + 50 * m, int((budget - spent) / per / 2))
            if states < m:
                return
            spent += per * states
            try:
                sp, _ = search(eng, node, kind, m, bottom, states)
                other = not bottom
                if other not in far:  # the other end of the spectrum: one atom from there
                    far[other] = _outer(atoms_of(search(eng, node, kind, 1, other,
                                                        ENDS_STATES)[0]), other)
            except (NotExactError, SizeLimitError):
                sides.remove(bottom)
                continue
            listed = atoms_of(sp)
            far[bottom] = _outer(listed, bottom)  # this end: the most extreme listed atom
            if not (np.all(np.isfinite(listed.values + listed.radius))
                    and all(np.isfinite(list(far.values())))):
                return
            yield EndsTier(listed, node.order, bottom=bottom, far=(far[True], far[False]))
            if sp.order == node.order:  # every eigenvalue listed: nothing more to learn
                return
        m *= ENDS_GROWTH


__all__ = ["atoms_of", "ends_tiers", "engine_bound", "engine_fits", "engine_linear_form",
           "engine_spectrum", "engine_top_degree", "flatten", "to_float", "window_cost",
           "window_tier"]
