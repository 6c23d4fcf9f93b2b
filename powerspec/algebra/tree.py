"""The one expression tree: factors at the leaves, products of (operand, copies) pairs above.

``cart(C(10)^6)`` is one :class:`Product` node with the single operand
(C(10), 6).  The tree carries no numbers of its own: every tier and every
number domain reads the same nodes.

>>> from powerspec.algebra.kinds import CARTESIAN
>>> from powerspec.factors import C
>>> node = Product(CARTESIAN, ((Leaf(C(10)), 6),), "cart")
>>> node.label(), node.order
('cart(C(10)^6)', 1000000)
"""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import cached_property

from powerspec.algebra.kinds import Combination
from powerspec.errors import InputError
from powerspec.factors import Factor
from powerspec.numbers.counts import BigCount, power_product


@dataclass(frozen=True, eq=False)
class Leaf:
    """A factor graph at the leaves of an expression."""

    factor: Factor

    @property
    def order(self) -> int:
        """Number of vertices (exact int)."""
        return self.factor.n

    @property
    def directed(self) -> bool:
        """True when the factor's adjacency matrix is not symmetric."""
        return self.factor.directed

    def label(self) -> str:
        """The expression text of this node."""
        return self.factor.name

    def leaves(self) -> list[Factor]:
        """The factors of this subtree."""
        return [self.factor]


@dataclass(frozen=True, eq=False)
class Product:
    """A product of operands; ``operands`` are (node, copies) pairs with copies >= 1."""

    comb: Combination
    operands: tuple[tuple[Leaf | Product, int], ...]
    name: str = field(default="")

    def __post_init__(self):
        if not self.operands:
            raise InputError("a product needs at least one operand")
        for _, k in self.operands:
            if getattr(k, "is_Symbol", False):
                continue  # a symbolic power k (the symbolic domain's closed forms in k)
            if not isinstance(k, int) or isinstance(k, bool) or k < 1:
                raise InputError(f"copies must be an integer >= 1, got {k!r}")

    @cached_property
    def order(self) -> int | BigCount:
        """Number of vertices, prod n_j^k_j: an exact int, or a BigCount when enormous.

        Computed once per node (a node and its operands never change).
        """
        return power_product((node.order, k) for node, k in self.operands)

    @property
    def copies(self) -> int:
        """Total number of operand copies (the k of a power)."""
        return sum(k for _, k in self.operands)

    @property
    def directed(self) -> bool:
        """True when any factor below is directed."""
        return any(node.directed for node, _ in self.operands)

    def label(self) -> str:
        """The expression text of this node."""
        head = self.name or self.comb.label()
        prefix = head[:-1] + ", " if head.startswith("mix(") else head + "("
        parts = [node.label() + (f"^{k}" if k != 1 else "") for node, k in self.operands]
        return prefix + ", ".join(parts) + ")"

    def leaves(self) -> list[Factor]:
        """The factors of this subtree."""
        return [f for node, _ in self.operands for f in node.leaves()]


Node = Leaf | Product

__all__ = ["Leaf", "Node", "Product"]
