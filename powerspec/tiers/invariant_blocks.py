"""Laplacian invariants of non-factoring products from the symmetry tier's certified blocks.

For direct, strong and mix(0|1, b) products of powers of irregular factors the
Laplacian D - A does not factor, but the Schur--Weyl blocks of
:mod:`powerspec.tiers.symmetry` give its spectrum exactly, each eigenvalue
with a rigorous radius and an exact multiplicity.  This module checks the
block plan against a work budget *before* any numerical work (refusing with
:class:`~powerspec.tiers.symmetry.SymmetryError` and the plan's sizes), runs
the blocks and reduces them to a :class:`BlockSpectrum`: every true
eigenvalue lies in [v - r, v + r] for its (v, r), so order statistics and
sums are bracketed by those of the interval ends.

Degrees: the tier takes float64 degrees as exact inputs.  When a factor's
exact degree (a sum of float weights) is not a double, every radius is
widened by a bound on the resulting perturbation of the product's degree
diagonal (Weyl's theorem).

>>> from powerspec.algebra.grammar import parse
>>> bs = laplacian_blocks(parse("direct(P(3)^2)"))
>>> bs.order, [round(x, 9) for x in bs.kth_smallest(2)]      # numpy on the 9-vertex build: 0.0
(9, [-0.0, 0.0])
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from fractions import Fraction
from itertools import product as cartesian

import numpy as np
from flint import arb

from powerspec.algebra.tree import Leaf, Node
from powerspec.numbers.hp import working
from powerspec.tiers.symmetry import PowerOperand, SymmetryError, blocks, plan
from powerspec.tiers.symmetry.block import prepare
from powerspec.tiers.symmetry.extremes import LARGE_FROM, WeylRanges, block_ends
from powerspec.tiers.symmetry.patterns import U
from powerspec.tiers.symmetry.reduction import find_involution

MAX_WORK = 3 * 10**8
"""Largest plan work (sum of d^3 over blocks) the invariants query runs (a few seconds)."""

MAX_BLOCKS = 4_000
"""Largest number of blocks (the plan costs about a millisecond per block)."""

MAX_COPIES = 2000
"""Powers beyond this many copies are refused before the plan enumerates partitions."""

MAX_ORDER = 64
"""Largest factor order the invariants query hands to the symmetry tier."""


def _partition_counts(k: int, n: int, cap: int) -> list[int]:
    """[p_n(0), ..., p_n(k)]: partitions of j into at most n parts, each capped at cap + 1."""
    ways = [1] + [0] * k
    for part in range(1, min(n, k) + 1):
        for j in range(part, k + 1):
            ways[j] = min(ways[j] + ways[j - part], cap + 1)
    return ways


def block_count(adj: np.ndarray, deg: np.ndarray, k: int, cap: int = MAX_BLOCKS) -> int:
    """The number of blocks the tier makes for G^k (capped at cap + 1), before any plan.

    Without an involutive automorphism: partitions of k into at most n parts; with one
    (n_+ and n_- vertices in its halves): sum_m p_(n+)(k - m) p_(n-)(m).

    >>> p3 = np.array([[0., 1, 0], [1, 0, 1], [0, 1, 0]])
    >>> block_count(p3, p3.sum(axis=1), 4)                    # the plan's 9 blocks for P(3)^4
    9
    """
    n = adj.shape[0]
    perm = find_involution(adj, deg)
    if perm is None:
        return _partition_counts(k, n, cap)[k]
    pairs = sum(1 for i, p in enumerate(perm) if p > i)
    plus, minus = _partition_counts(k, n - pairs, cap), _partition_counts(k, pairs, cap)
    return min(sum(plus[k - m] * minus[m] for m in range(k + 1)), cap + 1)


@dataclass
class BlockSpectrum:
    """Block eigenvalues (midpoints), certified radii and exact multiplicities, sorted ascending."""

    values: np.ndarray
    radii: np.ndarray
    mult: list[int]
    blocks: int
    largest: int
    order: int

    def _kth(self, ends: np.ndarray, k: int) -> float:
        idx = np.argsort(ends, kind="stable")
        seen = 0
        for i in idx.tolist():
            seen += self.mult[i]
            if seen >= k:
                return float(ends[i])
        raise ValueError("k exceeds the number of eigenvalues")

    def kth_smallest(self, k: int) -> tuple[float, float]:
        """(lower, upper) bounds on the k-th smallest eigenvalue (with multiplicity)."""
        return self._kth(self.values - self.radii, k), self._kth(self.values + self.radii, k)

    def largest_bounds(self) -> tuple[float, float]:
        """(lower, upper) bounds on the largest eigenvalue."""
        return float(np.max(self.values - self.radii)), float(np.max(self.values + self.radii))

    def zero_counts(self) -> tuple[int, int]:
        """(eigenvalues certainly non-zero, eigenvalues whose interval contains 0)."""
        amb = np.abs(self.values) <= self.radii
        return (sum(m for m, a in zip(self.mult, amb.tolist(), strict=True) if not a),
                sum(m for m, a in zip(self.mult, amb.tolist(), strict=True) if a))

    def balls(self, nonzero: bool = True) -> list[tuple[arb, int]]:
        """[(certified ball, multiplicity)] of the eigenvalues (only the certainly non-zero ones)."""
        out = []
        with working():
            for v, r, m in zip(self.values.tolist(), self.radii.tolist(), self.mult, strict=True):
                if nonzero and abs(v) <= r:
                    continue
                out.append((arb(v) + arb(0, r), m))
        return out


def operands(node: Node, direction: str = "out", max_blocks: int = MAX_BLOCKS):
    """(PowerOperands, a, b, degree perturbation bound) for the symmetry tier, or a reason string.

    Refuses (with the reason) products that split into more than ``max_blocks`` blocks,
    counted from the partitions before any plan.
    """
    if isinstance(node, Leaf) or node.directed:
        return "the symmetry tier needs an undirected product"
    a, b = node.comb.a, node.comb.b
    if a not in (0, 1) or (a == 0 and b == 0):
        return "the symmetry tier needs a = 0 or 1 (an associative product)"
    if node.comb.rounded_coefficients:  # a is 0 or 1 here
        return f"the symmetry tier needs a binary-fraction coefficient b (such as 0.375), not {b}"
    ops, deltas = [], []
    total_blocks = 1
    for child, k in node.operands:
        if not isinstance(child, Leaf):
            return "the symmetry tier takes factors (not nested products) as operands"
        f = child.factor
        if k > MAX_COPIES:
            return f"{k} copies are beyond the symmetry tier's reach (at most {MAX_COPIES})"
        if f.n > MAX_ORDER:
            return f"{f.name} has {f.n} vertices; the symmetry tier takes factors up to {MAX_ORDER}"
        adj = f.adjacency.toarray()
        deg = f.degrees(direction)
        count = block_count(adj, deg, k, max_blocks)
        if count > max_blocks:
            return (f"{f.name}^{k} splits into more than {max_blocks} blocks (counted from the "
                    "partitions before any work)")
        total_blocks = total_blocks * count
        if total_blocks > max_blocks:
            return f"the product splits into more than {max_blocks} blocks (counted before any work)"
        exact = f.exact_degrees(direction)
        delta = max((abs(Fraction(float(x)) - e) for x, e in zip(deg.tolist(), exact, strict=True)),
                    default=Fraction(0))
        ops.append(PowerOperand(adj, deg, k))
        deltas.append((delta, max(abs(e) for e in exact), k))
    return ops, float(a), float(b), _degree_perturbation(deltas, Fraction(a), Fraction(b))


def _degree_perturbation(deltas, a: Fraction, b: Fraction) -> float:
    """Upper bound on |D(exact degrees) - D(float degrees)| over the product's vertices."""
    if all(d == 0 for d, _, _ in deltas):
        return 0.0
    with working():
        if b == 0:
            total = sum((arb(d.numerator) / d.denominator * k for d, _, k in deltas), arb(0))
        else:
            c, f = (Fraction(1), b) if a == 1 else (Fraction(0), b)
            exact, wide = arb(1), arb(1)
            fa = abs(arb(f.numerator) / f.denominator)
            for d, top, k in deltas:
                s = abs(arb(c.numerator) / c.denominator) + fa * (arb(top.numerator) / top.denominator)
                dd = fa * arb(d.numerator) / d.denominator
                exact *= s**k
                wide *= (s + dd) ** k
            total = (wide - exact) / fa
        return float(total.upper()) * (1 + 2**-40)


def laplacian_blocks(node: Node, direction: str = "out", max_work: int = MAX_WORK) -> BlockSpectrum:
    """The certified Laplacian spectrum of a product of powers by Schur--Weyl blocks.

    Raises SymmetryError (before any numerical work) when the product is not
    covered or the plan exceeds ``max_work`` / :data:`MAX_BLOCKS`.
    """
    got = operands(node, direction)
    if isinstance(got, str):
        raise SymmetryError(got)
    ops, a, b, widen = got
    the_plan = plan(ops, a, b, "laplacian")
    if the_plan.blocks > MAX_BLOCKS or the_plan.work > max_work:
        raise SymmetryError(f"symmetry plan too large: {the_plan.blocks} blocks, largest "
                            f"{the_plan.largest}, work {the_plan.work:.2g} (limit {max_work:.1g})")
    vals, rads, mults = [], [], []
    count = largest = 0
    for blk in blocks(ops, a, b, "laplacian"):
        count += 1
        largest = max(largest, blk.values.size)
        vals.append(blk.values)
        rads.append(blk.radius + widen)
        mults += [int(blk.multiplicity)] * blk.values.size
    values = np.concatenate(vals)
    radii = np.concatenate(rads)
    order = np.argsort(values, kind="stable")
    return BlockSpectrum(values[order], radii[order], [mults[i] for i in order.tolist()], count,
                         largest, the_plan.order)


def plan_text(bs: BlockSpectrum) -> str:
    """'exact: symmetry reduction, N blocks, largest d' for methods."""
    return (f"symmetry reduction (Schur-Weyl blocks, certified radii): {bs.blocks} blocks, largest "
            f"{bs.largest}")


# ---------------------------------------------------------------------- the two ends only
def diagonal_bounds(ops: list[PowerOperand], a: float, b: float, widen: float) -> tuple[float, float]:
    """(floor, ceiling): λ_max(L) >= floor and λ_2(L) <= ceiling, from diagonal entries of L.

    L_vv is taken at the vertices v = (j, ..., j) (each operand's copies all on one factor
    vertex j; every combination when there are at most 4096, else each operand's vertex of
    largest and of smallest degree), in ball arithmetic, with the degree perturbation bound.
    The floor is max L_vv (the Rayleigh quotient of e_v).  The ceiling is N/(N-1) min L_vv
    (Fiedler 1973): degrees are row sums, so L 1 = 0 and on span{1, e_v} the Rayleigh
    quotient peaks at N/(N-1) L_vv (for L_vv >= 0; Courant--Fischer for λ_2).

    >>> p3 = np.array([[0., 1, 0], [1, 0, 1], [0, 1, 0]])
    >>> lo, hi = diagonal_bounds([PowerOperand(p3, p3.sum(axis=1), 3)], 0, 1, 0.0)
    >>> 7.99 < lo <= 8.0, 1.0 <= hi < 1.04      # degrees 2^3 and 1; N/(N-1) = 27/26
    (True, True)
    """
    choices = [list(range(op.adjacency.shape[0])) for op in ops]
    if math.prod(len(c) for c in choices) > 4096:
        choices = [sorted({int(np.argmax(op.degrees)), int(np.argmin(op.degrees))}) for op in ops]
    best, least = -math.inf, math.inf
    with working():
        bb = arb(float(b))
        total = sum(op.copies for op in ops)
        for combo in cartesian(*choices):
            dd, aa = (arb(0), arb(0)) if (a, b) == (1, 0) else (arb(1), arb(1))
            for op, j in zip(ops, combo, strict=True):
                d, loop, k = arb(float(op.degrees[j])), arb(float(op.adjacency[j, j])), op.copies
                if (a, b) == (1, 0):
                    dd, aa = dd + k * d, aa + k * loop
                elif a == 1:
                    dd, aa = dd * (1 + bb * d) ** k, aa * (1 + bb * loop) ** k
                else:
                    dd, aa = dd * d**k, aa * loop**k
            val = dd - aa
            if a == 1 and b != 0:
                val = val / bb
            elif a == 0:
                val = val * bb ** (total - 1)
            if val.is_finite():
                best = max(best, float(val.lower()))
                if val.lower() >= 0:
                    least = min(least, float(val.upper()))
        order = math.prod(op.adjacency.shape[0] ** op.copies for op in ops)
        if math.isfinite(least) and order > 1:
            fiedler = (arb(least) + widen) * arb(order) / (arb(order) - 1)
            least = float(fiedler.upper())
    floor = float(np.nextafter(best - widen, -math.inf)) if math.isfinite(best) else -math.inf
    return floor, float(np.nextafter(least, math.inf)) if math.isfinite(least) else math.inf


@dataclass
class LaplacianEnds:
    """Rigorous bounds on λ_max(L) and on the second smallest eigenvalue of L (with multiplicity).

    ``largest`` and ``second`` are (lower, upper) pairs (None when not asked); the counts say
    how the answer was obtained: blocks in the plan, blocks computed, of which by the
    Cholesky route (``large``), and the largest block computed.
    """

    largest: tuple[float, float] | None
    second: tuple[float, float] | None
    blocks: int
    computed: int
    large: int
    largest_dim: int
    order: int

    def text(self) -> str:
        """The method text of an entry computed from these ends."""
        how = (f"symmetry reduction (Schur-Weyl blocks): {self.blocks} blocks; ends of {self.computed} "
               f"(largest {self.largest_dim})")
        if self.large:
            how += f", {self.large} of them by LAPACK candidates + Cholesky inertia certificates"
        skipped = self.blocks - self.computed
        if skipped:
            how += f"; {skipped} blocks bounded by Weyl's inequalities from their diagonals"
        return how


EXTREMES_MAX_WORK = 3 * 10**10
"""Largest plan work for the ends only: sum over the blocks that can hold an end of d^3
(dense blocks at full weight, the Cholesky route's at :data:`LARGE_COST`) plus
:data:`BLOCK_OVERHEAD` each; about 30 s with one BLAS thread on the (shared) project machine."""

BLOCK_OVERHEAD = 10**7
"""Fixed cost of one block in units of d^3 (about 10 ms: its module, rotations and solve setup)."""

EXTREMES_MAX_BLOCKS = 40_000
"""Largest number of blocks an ends-only plan enumerates (a few seconds of planning)."""

EXTREMES_MAX_BLOCK = 4_000
"""Largest block built for the ends (about BYTES_PER_ENTRY d^2 = 1.8 GB at the cap)."""

LARGE_COST = 0.5
"""Cost of a block on the Cholesky route relative to the dense certified solve (measured)."""


def _two_smallest(entries) -> float:
    """The second smallest of (value, count) entries (counts capped at 2); +inf if fewer than 2."""
    lo1 = lo2 = math.inf
    for v, c in entries:
        for _ in range(min(c, 2)):
            if v < lo1:
                lo1, lo2 = v, lo1
            elif v < lo2:
                lo2 = v
    return lo2


def laplacian_ends(node: Node, direction: str = "out", *, top: bool = True, bottom: bool = True,
                   max_work: float = EXTREMES_MAX_WORK, large_from: int = LARGE_FROM) -> LaplacianEnds:
    """Certified λ_max(L) and second smallest eigenvalue of L from the ends of the blocks.

    Before any block is built: the plan, Weyl enclosures of every block from its diagonals
    (:class:`~powerspec.tiers.symmetry.extremes.WeylRanges`), a lower bound of λ_max and
    Fiedler's upper bound of the second smallest from the diagonal of L
    (:func:`diagonal_bounds`).  Blocks that cannot hold an end are never built; the work of
    the others is checked against ``max_work`` (SymmetryError otherwise).  Then blocks are
    visited from the most promising on (largest upper end first for the top, smallest lower
    end first for the bottom), each computed only while it can still change a bound; blocks
    of size ``large_from`` and more take the Cholesky route of
    :func:`~powerspec.tiers.symmetry.extremes.block_ends`.  A block never computed
    contributes its Weyl enclosure, so both answers hold whatever is skipped.  With
    non-negative weights L >= 0, so lower bounds of the second smallest are clipped at 0 and
    blocks whose float error alone exceeds the current upper bound are not solved.

    >>> from powerspec.algebra.grammar import parse
    >>> e = laplacian_ends(parse("strong(P(3)^3)"))
    >>> [round(x, 9) for x in e.largest + e.second]   # numpy eigvalsh, 27-vertex build: 27, 5.121530264
    [27.0, 27.0, 5.121530264, 5.121530264]
    """
    got = operands(node, direction, EXTREMES_MAX_BLOCKS)
    if isinstance(got, str):
        raise SymmetryError(got)
    ops, a, b, widen = got
    # non-negative weights: L is diagonally dominant with a non-negative diagonal, hence L >= 0
    psd = a >= 0 and b >= 0 and all(bool(np.all(op.adjacency >= 0)) for op in ops)
    the_plan = plan(ops, a, b, "laplacian")
    if the_plan.blocks > EXTREMES_MAX_BLOCKS:
        raise SymmetryError(f"symmetry plan too large for the ends: {the_plan.blocks} blocks "
                            f"(limit {EXTREMES_MAX_BLOCKS})")
    prepared = prepare(list(the_plan.factors), a, b, "laplacian")
    ranges = WeylRanges(prepared, a, b, widen)
    specs = the_plan.specs
    parts = [the_plan.terms[s.term].parts for s in specs]
    enc = [ranges.block(list(p), s.shapes) for p, s in zip(parts, specs, strict=True)]
    counts = [min(s.multiplicity * s.dim, 2) for s in specs]
    floor, fiedler = diagonal_bounds(ops, a, b, widen)
    floor = floor if top else math.inf
    ceiling = min(fiedler, _two_smallest((hi, c) for (_, hi), c in zip(enc, counts, strict=True))) \
        if bottom else -math.inf
    need_top = [top and hi >= floor for _, hi in enc]
    need_bot = [bottom and lo <= ceiling for lo, _ in enc]
    needed = [i for i in range(len(specs)) if need_top[i] or need_bot[i]]
    work = sum(specs[i].dim**3 * (LARGE_COST if specs[i].dim >= large_from else 1.0) + BLOCK_OVERHEAD
               for i in needed)
    big = max((specs[i].dim for i in needed), default=0)
    if work > max_work or big > EXTREMES_MAX_BLOCK:
        raise SymmetryError(f"symmetry plan too large for the ends: {len(needed)} of {the_plan.blocks} "
                            f"blocks can hold an end, largest {big} (limit {EXTREMES_MAX_BLOCK}), work "
                            f"{work:.3g} (limit {max_work:.3g}); decided before any block was built")
    done: dict[int, object] = {}

    def compute(i: int, want_top: bool, want_bot: bool):
        s = specs[i]
        jobs = [(prepared[fi], k) for fi, k in parts[i]]
        done[i] = block_ends(jobs, s.shapes, a, b, top=want_top, bottom=want_bot,
                             second=want_bot and s.multiplicity == 1 and s.dim > 1, widen=widen,
                             large_from=large_from)
        return done[i]

    lb_top = floor
    for i in sorted((i for i in needed if need_top[i]), key=lambda i: -enc[i][1]):
        if enc[i][1] <= lb_top:
            break
        lb_top = max(lb_top, compute(i, True, need_bot[i]).high[0])
    ub_bot = ceiling
    seen: list[tuple[float, int]] = []
    for i in sorted((i for i in needed if need_bot[i]), key=lambda i: enc[i][0]):
        if enc[i][0] >= ub_bot:
            break
        if psd and U * max(abs(enc[i][0]), abs(enc[i][1])) >= ub_bot:
            continue  # a float solve errs by more than the end: its lower bound would be <= 0
        e = done.get(i)
        if e is None or not math.isfinite(e.low[1]):
            e = compute(i, False, True)
        seen += _upper_entries(e, specs[i])
        ub_bot = min(ub_bot, _two_smallest(seen))
    largest = second = None
    if top:
        hi = max(min(enc[i][1], done[i].high[1]) if i in done and math.isfinite(done[i].high[0])
                 else enc[i][1] for i in range(len(specs)))
        largest = (lb_top, hi)
    if bottom:
        lows, ups = [], []
        for i, s in enumerate(specs):
            e = done.get(i)
            if e is None or not math.isfinite(e.low[1]):
                lows.append((enc[i][0], counts[i]))
                ups.append((enc[i][1], counts[i]))
                continue
            l1 = max(enc[i][0], e.low[0])
            l2 = max(l1, e.second[0]) if s.multiplicity == 1 else l1
            lows += [(l1, 1), (l2, 1)] if s.multiplicity * s.dim >= 2 else [(l1, 1)]
            ups += _upper_entries(e, s, enc[i][1])
        low = max(_two_smallest(lows), 0.0) if psd else _two_smallest(lows)
        second = (low, min(_two_smallest(ups), ub_bot))
    large = sum(1 for e in done.values() if e.route == "cholesky")
    return LaplacianEnds(largest, second, the_plan.blocks, len(done), large,
                         max((specs[i].dim for i in done), default=0), the_plan.order)


def _upper_entries(e, s, cap: float = math.inf) -> list[tuple[float, int]]:
    """Upper bounds of a computed block's two smallest eigenvalues (counted with multiplicity)."""
    u1 = min(cap, e.low[1])
    if s.multiplicity * s.dim < 2:
        return [(u1, 1)]
    u2 = min(cap, e.second[1]) if s.multiplicity == 1 else u1
    return [(u1, 1), (u2, 1)]


__all__ = ["BlockSpectrum", "EXTREMES_MAX_WORK", "LaplacianEnds", "MAX_WORK", "block_count",
           "diagonal_bounds", "laplacian_blocks", "laplacian_ends", "operands", "plan_text"]
