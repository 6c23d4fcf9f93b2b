"""Operands, validation and the cheap size plan of the symmetry tier.

The operands are plain numpy data (:class:`PowerOperand`); a product of
operands G_1^k_1, ..., G_m^k_m under the rule x∘y = a(x + y) + b x y has
symmetry group S_k_1 x ... x S_k_m and one block per tuple of partitions
(λ_1, ..., λ_m), λ_i ⊢ k_i with at most n_i parts, of size prod d_λ_i and
multiplicity prod f^λ_i (after an optional exact split of each factor by an
involutive automorphism, :mod:`~powerspec.tiers.symmetry.reduction`, which turns
G^k into the weighted sum of products G_+^(k-m) ∘ G_-^m).  :func:`plan` computes
the block count, the largest
block, the work sum d^3 and a memory estimate from the dimension formulas
alone, before any numerical work.

>>> import numpy as np
>>> path = PowerOperand(np.array([[0., 1, 0], [1, 0, 1], [0, 1, 0]]), np.array([1., 2, 1]), 4)
>>> p = plan([path], 0, 1, "laplacian", automorphisms=False)
>>> p.order, p.blocks, p.largest, p.total_check
(81, 4, 15, 81)
>>> p = plan([path], 0, 1, "laplacian")     # split by the reflection of the path first
>>> p.order, p.blocks, p.largest, p.total_check
(81, 9, 5, 81)
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from itertools import product as cartesian

import numpy as np

from powerspec.tiers.symmetry.combinatorics import Partition, partitions, schur_weyl_dims
from powerspec.tiers.symmetry.errors import SymmetryError
from powerspec.tiers.symmetry.reduction import Factor, Term, reduce_operands

KINDS = ("laplacian", "signless", "normalized", "transition", "adjacency")
"""Matrix kinds the tier answers (adjacency is for cross-checks)."""

MAX_SHAPES = 200_000
"""Largest number of blocks the plan enumerates before refusing."""

BYTES_PER_ENTRY = 8 * 14
"""Peak bytes per entry of a d x d block: the block, its eigenvectors, split parts and products."""


@dataclass(frozen=True)
class PowerOperand:
    """One operand G^k of a product: symmetric adjacency (n x n), degrees (length n), copies k >= 1.

    ``degrees`` are the degrees the caller uses (out-degrees / strengths); they need not
    be the row sums of ``adjacency``.
    """

    adjacency: np.ndarray
    degrees: np.ndarray
    copies: int


@dataclass(frozen=True)
class BlockSpec:
    """One block of the plan: its term, the partition of each part, its size and its multiplicity."""

    term: int
    shapes: tuple[Partition, ...]
    dim: int
    multiplicity: int


@dataclass(frozen=True)
class SymmetryPlan:
    """Sizes of the symmetry-tier computation, from the dimension formulas only.

    ``order`` is the product's vertex count prod n_i^k_i and ``total_check`` the exact
    sum of multiplicity x size over blocks (equal to ``order`` by Schur--Weyl duality);
    ``work`` is sum d^3 (proportional to the flops), ``memory`` the peak bytes of the
    largest block on one worker.
    """

    order: int
    blocks: int
    largest: int
    work: int
    memory: int
    total_check: int
    specs: tuple[BlockSpec, ...] = field(repr=False)
    factors: tuple[Factor, ...] = field(default=(), repr=False)
    terms: tuple[Term, ...] = field(default=(), repr=False)

    def check(self, max_block: int | None = None, max_work: int | None = None,
              max_memory: int | None = None) -> None:
        """Raise :class:`SymmetryError` if the plan exceeds a limit the caller passes.

        >>> SymmetryPlan(9, 1, 9, 729, 9072, 9, ()).check(max_block=5)
        Traceback (most recent call last):
        ...
        powerspec.tiers.symmetry.errors.SymmetryError: symmetry tier: largest block 9 exceeds ...
        """
        if max_block is not None and self.largest > max_block:
            raise SymmetryError(f"symmetry tier: largest block {self.largest} exceeds the limit "
                                f"{max_block}; ask for fewer copies, bounds or moments instead")
        if max_work is not None and self.work > max_work:
            raise SymmetryError(f"symmetry tier: work {self.work:.3g} (sum of d^3) exceeds the limit "
                                f"{max_work:.3g}; ask for fewer copies, bounds or moments instead")
        if max_memory is not None and self.memory > max_memory:
            raise SymmetryError(f"symmetry tier: about {self.memory / 2**20:.0f} MiB per block "
                                f"exceeds the limit {max_memory / 2**20:.0f} MiB; "
                                "ask for fewer copies or bounds instead")


def rule_name(a: float, b: float) -> str:
    """'cartesian', 'multiplicative' (a = 0) or 'shifted' (a = 1, b != 0); refuses other rules.

    >>> rule_name(1, 1), rule_name(0, 2.5), rule_name(1, 0)
    ('shifted', 'multiplicative', 'cartesian')
    """
    a, b = float(a), float(b)
    if not (math.isfinite(a) and math.isfinite(b)):
        raise SymmetryError("symmetry tier: product coefficients must be finite numbers")
    if a not in (0.0, 1.0):
        raise SymmetryError(f"symmetry tier: mix(a, b) with a = {a:g} is a non-associative left fold; "
                            "only a = 0 or a = 1 have the permutation symmetry this tier uses")
    if a == 1.0:
        return "cartesian" if b == 0.0 else "shifted"
    if b == 0.0:
        raise SymmetryError("symmetry tier: mix(0, 0) is the zero product; use a nonzero coefficient")
    return "multiplicative"


def validate(operands: list[PowerOperand], a: float, b: float, kind: str) -> list[PowerOperand]:
    """Check the operands and the rule; return them with float64 arrays.  Raises SymmetryError.

    >>> validate([PowerOperand(np.array([[0., 1], [2, 0]]), np.ones(2), 2)], 0, 1, "laplacian")
    Traceback (most recent call last):
    ...
    powerspec.tiers.symmetry.errors.SymmetryError: symmetry tier: operand 1 is not symmetric; ...
    """
    if kind not in KINDS:
        raise SymmetryError(f"symmetry tier: unknown matrix kind {kind!r}; "
                            f"use one of {', '.join(KINDS)}")
    rule = rule_name(a, b)
    if not operands:
        raise SymmetryError("symmetry tier: no operands; give at least one factor")
    out = []
    for i, op in enumerate(operands, 1):
        adj = np.asarray(op.adjacency, dtype=float)
        deg = np.asarray(op.degrees, dtype=float).ravel()
        if adj.ndim != 2 or adj.shape[0] != adj.shape[1] or adj.shape[0] == 0:
            raise SymmetryError(f"symmetry tier: operand {i} adjacency must be a non-empty "
                                "square matrix")
        if not np.all(np.isfinite(adj)) or not np.all(np.isfinite(deg)):
            raise SymmetryError(f"symmetry tier: operand {i} has non-finite entries")
        if not np.array_equal(adj, adj.T):
            raise SymmetryError(f"symmetry tier: operand {i} is not symmetric; "
                                "this tier needs undirected (symmetric) factors")
        if deg.shape[0] != adj.shape[0]:
            raise SymmetryError(f"symmetry tier: operand {i} has {deg.shape[0]} degrees for "
                                f"{adj.shape[0]} vertices")
        if not isinstance(op.copies, (int, np.integer)) or op.copies < 1:
            raise SymmetryError(f"symmetry tier: operand {i} copies must be an integer >= 1")
        if kind in ("normalized", "transition") and np.any(deg <= 0):
            raise SymmetryError(f"symmetry tier: operand {i} has a zero or negative degree; the {kind} "
                                "matrix needs positive degrees (remove isolated vertices)")
        out.append(PowerOperand(adj, deg, int(op.copies)))
    if kind in ("normalized", "transition"):
        total = sum(op.copies for op in out)
        if rule == "multiplicative" and b ** (total - 1) <= 0:
            raise SymmetryError(f"symmetry tier: with b = {b:g} the product degrees are negative; the "
                                f"{kind} matrix needs positive degrees")
        if rule == "shifted" and b < 0:
            raise SymmetryError(f"symmetry tier: the {kind} matrix of mix(1, b) with b < 0 is not "
                                "supported; use b > 0")
    return out


def plan(operands: list[PowerOperand], a: float, b: float, kind: str, *,
         automorphisms: bool = True) -> SymmetryPlan:
    """The block plan (sizes only, exact integers); raises SymmetryError on invalid input.

    With ``automorphisms`` (the default) each factor with an involutive automorphism is
    first split into its ±1 parts (:mod:`~powerspec.tiers.symmetry.reduction`), which
    makes the blocks much smaller; the spectrum is the same.

    >>> star = PowerOperand(np.array([[0., 1, 1, 1], [1, 0, 0, 0], [1, 0, 0, 0], [1, 0, 0, 0]]),
    ...                     np.array([3., 1, 1, 1]), 13)
    >>> p = plan([star], 0, 1, "laplacian")
    >>> p.order == 4**13 == p.total_check, p.blocks, p.largest
    (True, 123, 195)
    >>> plan([star], 0, 1, "laplacian", automorphisms=False).largest
    2100
    """
    operands = validate(operands, a, b, kind)
    named = [(Factor(op.adjacency, op.degrees, None, f"G{i}"), op.copies)
             for i, op in enumerate(operands, 1)]
    factors, terms = reduce_operands(named, automorphisms)
    shapes_of: dict[tuple[int, int], list[tuple[Partition, int, int]]] = {}
    specs: list[BlockSpec] = []
    for t, term in enumerate(terms):
        per_part = []
        for fi, copies in term.parts:
            key = (factors[fi].adjacency.shape[0], copies)
            if key not in shapes_of:
                shapes_of[key] = [(lam,) + schur_weyl_dims(lam, key[0])
                                  for lam in partitions(copies, key[0])]
            per_part.append(shapes_of[key])
        if len(specs) + math.prod(len(s) for s in per_part) > MAX_SHAPES:
            raise SymmetryError(f"symmetry tier: more than {MAX_SHAPES} blocks; "
                                "ask for bounds or moments instead")
        for combo in cartesian(*per_part):
            specs.append(BlockSpec(t, tuple(c[0] for c in combo), math.prod(c[2] for c in combo),
                                   term.weight * math.prod(c[1] for c in combo)))
    largest = max(s.dim for s in specs)
    order = math.prod(op.adjacency.shape[0] ** op.copies for op in operands)
    return SymmetryPlan(order=order, blocks=len(specs), largest=largest,
                        work=sum(s.dim**3 for s in specs), memory=BYTES_PER_ENTRY * largest * largest,
                        total_check=sum(s.dim * s.multiplicity for s in specs), specs=tuple(specs),
                        factors=tuple(factors), terms=tuple(terms))
