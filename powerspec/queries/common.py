"""Helpers shared by the queries: resolving an expression and labelling the matrix kind."""

from __future__ import annotations

from pathlib import Path

from powerspec.algebra.engine import Leaf, Node
from powerspec.algebra.grammar import parse
from powerspec.factors import Factor, from_matrix


def resolve(expr, base_dir: str | Path | None = None) -> Node:
    """An expression node from text, a node, a Factor or any matrix-like object.

    >>> resolve("cart(C(4)^2)").order
    16
    """
    if isinstance(expr, str):
        return parse(expr, base_dir)
    if isinstance(expr, Node.__args__):
        return expr
    if isinstance(expr, Factor):
        return Leaf(expr)
    return Leaf(from_matrix(expr))


def matrix_label(matrix: str, node: Node, degrees: str) -> str:
    if matrix in ("laplacian", "signless", "transition") and node.directed:
        return f"{matrix} ({degrees}-degree)"
    return matrix
