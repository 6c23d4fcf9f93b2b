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

from dataclasses import dataclass
from fractions import Fraction

import numpy as np
from flint import arb

from powerspec.algebra.tree import Leaf, Node
from powerspec.numbers.hp import working
from powerspec.tiers.symmetry import PowerOperand, SymmetryError, blocks, plan
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


def operands(node: Node, direction: str = "out"):
    """(PowerOperands, a, b, degree perturbation bound) for the symmetry tier, or a reason string."""
    if isinstance(node, Leaf) or node.directed:
        return "the symmetry tier needs an undirected product"
    a, b = node.comb.a, node.comb.b
    if a not in (0, 1) or (a == 0 and b == 0):
        return "the symmetry tier needs a = 0 or 1 (an associative product)"
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
        count = block_count(adj, deg, k)
        if count > MAX_BLOCKS:
            return (f"{f.name}^{k} splits into more than {MAX_BLOCKS} blocks (counted from the "
                    "partitions before any work)")
        total_blocks = total_blocks * count
        if total_blocks > MAX_BLOCKS:
            return f"the product splits into more than {MAX_BLOCKS} blocks (counted before any work)"
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


__all__ = ["BlockSpectrum", "MAX_WORK", "block_count", "laplacian_blocks", "operands", "plan_text"]
