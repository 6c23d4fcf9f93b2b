"""Helpers shared by the queries: resolving an expression and labelling the matrix kind."""

from __future__ import annotations

from pathlib import Path

from powerspec.algebra.build import as_node
from powerspec.algebra.grammar import parse
from powerspec.algebra.tree import Node


def resolve(expr, base_dir: str | Path | None = None) -> Node:
    """An expression node from text, a node, a Factor or any matrix-like object.

    >>> resolve("cart(C(4)^2)").order
    16
    """
    if isinstance(expr, str) and base_dir is not None:
        return parse(expr, base_dir)
    return as_node(expr)


def matrix_label(matrix: str, node: Node, degrees: str) -> str:
    """The matrix kind as shown in answers (with the degree direction for directed products)."""
    if matrix in ("laplacian", "signless", "transition") and node.directed:
        return f"{matrix} ({degrees}-degree)"
    return matrix
