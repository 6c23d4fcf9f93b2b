"""Building expression trees from Python objects: the product functions of the API.

``cart``, ``direct``, ``strong`` and ``mix(a, b, ...)`` take one or more
operands; an operand is a factor (a :class:`~powerspec.factors.Factor`, a
numpy array, a scipy sparse array or matrix, a sympy Matrix, anything with
``toarray()``), an expression node, expression text, or a pair
``(operand, copies)``: ``cart((C(10), 6))`` is the 6-dimensional torus.
Equal operands are merged into powers (for associative rules anywhere, for a
non-associative ``mix`` only when adjacent), exactly as the expression
language does.

>>> from powerspec.factors import C, K
>>> cart((C(10), 6)).label()
'cart(C(10)^6)'
>>> direct(K(2), K(2), C(5)).label()
'direct(K(2)^2, C(5))'
>>> mix(1, 0.5, (K(1, 4), 30)).label()
'mix(1, 0.5, K(1, 4)^30)'
"""

from __future__ import annotations

import operator
from fractions import Fraction
from typing import Any

import numpy as np

from powerspec.algebra.grammar import parse
from powerspec.algebra.kinds import PRODUCT_KINDS, Combination
from powerspec.algebra.tree import Leaf, Node, Product
from powerspec.errors import InputError
from powerspec.factors import Factor, from_matrix

MAX_COPIES = 10**18
"""Largest number of copies of one operand (the expression language's range)."""


def factor(obj: Any, name: str | None = None) -> Factor:
    """A factor from any matrix-like object (numpy, scipy sparse, sympy, ``toarray()``).

    Returns the validated :class:`~powerspec.factors.Factor` (a Factor is returned as is).

    >>> factor([[0, 1], [1, 0]], name="edge").n
    2
    """
    if isinstance(obj, Factor):
        return obj
    if not hasattr(obj, "shape") and hasattr(obj, "toarray") and callable(obj.toarray):
        obj = obj.toarray()
    return from_matrix(obj, name)


def as_node(obj: Any) -> Node:
    """An expression node from a node, a factor, expression text or any matrix-like object."""
    if isinstance(obj, (Leaf, Product)):
        return obj
    if isinstance(obj, str):
        return parse(obj)
    return Leaf(factor(obj))


def _copies(k: Any) -> int:
    if isinstance(k, bool) or not isinstance(k, int):
        try:
            k = operator.index(k)
        except TypeError:
            raise InputError(f"copies must be a whole number, got {k!r}") from None
    if not 1 <= k <= MAX_COPIES:
        raise InputError(f"copies must lie in 1..10^18, got {k}")
    return int(k)


def _operands(args: tuple) -> list[tuple[Node, int]]:
    out = []
    for a in args:
        if isinstance(a, tuple) and len(a) == 2 and not isinstance(a[0], (int, float)):
            out.append((as_node(a[0]), _copies(a[1])))
        else:
            out.append((as_node(a), 1))
    if not out:
        raise InputError("a product needs at least one operand")
    return out


def same(x: Node, y: Node) -> bool:
    """True when two operands are provably the same graph: one object, or two factors with the
    same name and exactly the same adjacency matrix (names alone prove nothing: every
    anonymous matrix is called matrix(nxn))."""
    if x is y:
        return True
    if isinstance(x, Leaf) and isinstance(y, Leaf) and x.factor.name == y.factor.name:
        a, b = x.factor.adjacency, y.factor.adjacency
        return a.shape == b.shape and (a != b).nnz == 0
    return False


def _merge(ops: list[tuple[Node, int]], associative: bool) -> list[tuple[Node, int]]:
    """Equal operands become one operand with the summed copies (adjacent only in a left fold)."""
    merged: list[tuple[Node, int]] = []
    for node, k in ops:
        if associative:
            hit = next((i for i, (n, _) in enumerate(merged) if same(n, node)), None)
        else:
            hit = len(merged) - 1 if merged and same(merged[-1][0], node) else None
        if hit is None:
            merged.append((node, k))
        else:
            merged[hit] = (merged[hit][0], merged[hit][1] + k)
    return merged


def product(comb: Combination, args: tuple, name: str = "") -> Node:
    """The product node of the operands under a combination rule (a single operand is itself)."""
    ops = _merge(_operands(args), comb.associative)
    if len(ops) == 1 and ops[0][1] == 1:
        return ops[0][0]
    return Product(comb, tuple(ops), name)


def cart(*operands: Any) -> Node:
    """The Cartesian product of the operands (Kronecker sum of adjacencies)."""
    return product(PRODUCT_KINDS["cart"], operands, "cart")


def direct(*operands: Any) -> Node:
    """The direct (tensor, Kronecker) product of the operands."""
    return product(PRODUCT_KINDS["direct"], operands, "direct")


def strong(*operands: Any) -> Node:
    """The strong product of the operands (Cartesian plus direct)."""
    return product(PRODUCT_KINDS["strong"], operands, "strong")


def mix(a: Any, b: Any, *operands: Any) -> Node:
    """a * Cartesian + b * direct; for a outside {0, 1} a documented left fold (not associative)."""
    return product(Combination(_coefficient(a), _coefficient(b)), operands)


def _coefficient(x: Any) -> Fraction:
    """A mix coefficient as the exact rational written: a float by its shortest decimal
    representation (0.1 is 1/10, as in an expression string), so the API and the command line
    compute the same product.

    >>> _coefficient(0.1), _coefficient(Fraction(1, 3)), _coefficient(2)
    (Fraction(1, 10), Fraction(1, 3), Fraction(2, 1))
    """
    if isinstance(x, bool):
        raise InputError(f"a mix coefficient must be a number, got {x!r}")
    try:
        q = Fraction(repr(float(x))) if isinstance(x, (float, np.floating)) else Fraction(x)
    except (TypeError, ValueError):
        raise InputError(f"a mix coefficient must be a finite number, got {x!r}") from None
    if abs(q) > Fraction(10) ** 300:
        raise InputError("a mix coefficient must lie within 1e300 in magnitude")
    return q


__all__ = ["MAX_COPIES", "as_node", "cart", "direct", "factor", "mix", "product", "same", "strong"]
