"""Symbolic powers on the one expression tree: ``cart(K(2)^k)`` as tree nodes.

There is one expression tree (:mod:`powerspec.algebra.tree`).  A symbolic power
is a :class:`~powerspec.algebra.tree.Product` operand whose copies are a sympy
Symbol (integer, positive); its leaves hold
:class:`~powerspec.factors.symbolic.SymbolicFactor` s.  ``tree.Product`` lets a
Symbol through as copies; :class:`SymbolicCopies` is that same ``Product`` with
the two things only the symbolic domain needs: the check that the Symbol is a
positive integer, and the order as a sympy expression.

:func:`symbolic_expression` is the adapter from text: it parses with the
grammar's own :func:`~powerspec.algebra.grammar.parse_syntax`, builds every
factor call with the grammar's builder (same families, ``load``, ``scale``,
``loops``, same errors and limits) and builds the products itself so that a bare
name after ``^`` becomes a Symbol and ``mix`` coefficients stay the exact numbers
written (``0.1`` is 1/10).

:func:`check_numeric_powers` refuses, before any work, numeric powers whose exact
numbers sympy would have to write out in full (``cart(P(3)^1000000000)`` has
3^(10^9) vertices).

>>> node = symbolic_expression("strong(K(3)^k, P(2))")
>>> node.label(), powers(node), node.order
('strong(K(3)^k, P(2))', {k}, 2*3**k)
"""

from __future__ import annotations

import math
import re
from fractions import Fraction
from pathlib import Path
from typing import Any

import sympy

from powerspec.algebra import grammar
from powerspec.algebra.grammar_syntax import Call, Name, Pow
from powerspec.algebra.kinds import PRODUCT_KINDS, Combination
from powerspec.algebra.limits import echo
from powerspec.algebra.tree import Leaf, Node, Product
from powerspec.errors import ExpressionError, InputError, SizeLimitError
from powerspec.factors.symbolic import SymbolicFactor, symbolic_factor
from powerspec.numbers.symbolic import number

MAX_NUMERIC_BITS = 1 << 16
"""Most bits (about 20,000 digits) of the exact numbers numeric powers may produce."""

_RESERVED = re.compile(r"^(j\d*(_\d+)?|t)$")
_PRODUCT_FUNCS = (*PRODUCT_KINDS, "mix")


def is_symbol(k: Any) -> bool:
    """True for a symbolic number of copies (a sympy Symbol)."""
    return isinstance(k, sympy.Symbol)


class SymbolicCopies(Product):
    """A :class:`~powerspec.algebra.tree.Product` whose copies may be positive integer Symbols.

    >>> k = sympy.Symbol("k", integer=True, positive=True)
    >>> from powerspec.algebra.kinds import CARTESIAN
    >>> from powerspec.factors.families import K
    >>> SymbolicCopies(CARTESIAN, ((Leaf(symbolic_factor(K(2))), k),), "cart").order
    2**k
    """

    def __post_init__(self):
        if not self.operands:
            raise InputError("a product needs at least one operand")
        for _, k in self.operands:
            if is_symbol(k):
                if k.is_integer is False or k.is_positive is False:  # plain symbols are read so
                    raise InputError(f"a symbolic power must be a positive integer symbol, got {k}")
            elif not isinstance(k, int) or isinstance(k, bool) or k < 1:
                raise InputError(f"copies must be an integer >= 1 or a sympy Symbol, got {k!r}")

    @property
    def order(self) -> sympy.Expr:
        """Number of vertices prod n_j^k_j as a sympy expression in the powers."""
        return sympy.Mul(*[order_of(node) ** k for node, k in self.operands])


def order_of(node: Node) -> sympy.Expr:
    """The vertex count of any node as a sympy expression (check sizes first for numeric powers).

    >>> order_of(symbolic_expression("cart(P(3)^k, C(4))"))
    4*3**k
    """
    if isinstance(node, Leaf):
        return sympy.Integer(node.factor.n)
    return sympy.Mul(*[order_of(c) ** k for c, k in node.operands])


def powers(node: Node) -> set[sympy.Symbol]:
    """The symbolic powers used anywhere in the subtree.

    >>> sorted(powers(symbolic_expression("cart(K(2)^k, P(3)^n)")), key=str)
    [k, n]
    """
    if isinstance(node, Leaf):
        return set()
    out = {k for _, k in node.operands if is_symbol(k)}
    for child, _ in node.operands:
        out |= powers(child)
    return out


def factor_symbols(node: Node) -> set[sympy.Symbol]:
    """The symbols in the factors' entries (symbolic weights)."""
    return {s for f in node.leaves() for s in getattr(f, "symbols", ())}


def power_symbol(name: str, col: int | None = None) -> sympy.Symbol:
    """The Symbol (integer, positive) for a power written as a bare name.

    Index names (j, j1, j2_3), the heat-trace time t and names sympy reads as
    something else (pi, E, I, beta, ...) are refused: they would not read back.

    >>> power_symbol("k").assumptions0["integer"]
    True
    """
    try:
        plain = isinstance(sympy.sympify(name), sympy.Symbol)
    except (sympy.SympifyError, SyntaxError, TypeError, AttributeError):
        plain = False
    if _RESERVED.match(name) or not plain:
        raise ExpressionError(
            f"{name!r} cannot be a symbolic power (reserved for indices, the heat-trace time, "
            "or a sympy constant or function); use e.g. k or n", col)
    return sympy.Symbol(name, integer=True, positive=True)


def _coefficient(x: Any) -> Fraction:
    if isinstance(x, Fraction | int):
        return Fraction(x)
    e = number(x)
    if not e.is_Rational:
        raise InputError(f"a product coefficient must be a rational number, got {e}")
    return Fraction(int(e.p), int(e.q))


def _as_leaf_or_node(x: Any) -> Node:
    if isinstance(x, Product):
        return x
    if isinstance(x, Leaf):
        return Leaf(symbolic_factor(x.factor))
    return Leaf(symbolic_factor(x))


def make_product(comb: Combination, operands: list[tuple[Node, Any]], name: str = "") -> Product:
    """A tree Product, or a :class:`SymbolicCopies` when some copies are symbols."""
    cls = SymbolicCopies if any(is_symbol(k) for _, k in operands) else Product
    return cls(comb, tuple(operands), name)


def symbolic_product(product: str | tuple, *operands: Any) -> Product:
    """A product node from Python: ``product`` is 'cart', 'direct', 'strong' or a pair (a, b).

    Each operand is a factor-like object (Factor, SymbolicFactor, sympy Matrix,
    array, tree node) or a pair (operand, copies), copies an int or a sympy Symbol.

    >>> k = sympy.Symbol("k", integer=True, positive=True)
    >>> from powerspec.factors.families import K
    >>> symbolic_product("cart", (K(2), k)).label()
    'cart(K(2)^k)'
    """
    if isinstance(product, str):
        if product not in PRODUCT_KINDS:
            raise InputError(f"unknown product {product!r}; use cart, direct, strong or a pair (a, b)")
        comb, name = PRODUCT_KINDS[product], product
    else:
        a, b = product
        comb, name = Combination(_coefficient(a), _coefficient(b)), ""
    if not operands:
        raise InputError("a product needs at least one operand")
    ops = []
    for op in operands:
        node, k = op if isinstance(op, tuple) and len(op) == 2 else (op, 1)
        if isinstance(k, sympy.Integer):
            k = int(k)
        ops.append((_as_leaf_or_node(node), k))
    return make_product(comb, ops, name)


# ------------------------------------------------------------------ from text


def symbolic_expression(text: str, base_dir: str | Path | None = None) -> Node:
    """Parse expression text whose powers may be bare names into tree nodes.

    Errors are the grammar's (ExpressionError with the column).

    >>> symbolic_expression("mix(1, 0.1, K(2)^k)").comb.b
    Fraction(1, 10)
    """
    base = Path(base_dir) if base_dir else None
    return _Walker(base).walk(grammar.parse_syntax(text))


class _Walker:
    def __init__(self, base: Path | None):
        self.base = base
        self.leaves: dict[str, Leaf] = {}

    def walk(self, t) -> Node:
        if isinstance(t, Call) and t.name in _PRODUCT_FUNCS:
            return self._product(t)
        key = getattr(t, "key", None)
        if key in self.leaves:
            return self.leaves[key]
        node = grammar._build(t, self.base)  # the grammar's factor builders, errors and limits
        leaf = _as_leaf_or_node(node) if isinstance(node, Leaf) else node
        if key is not None and isinstance(leaf, Leaf):
            self.leaves[key] = leaf
        return leaf

    def _product(self, t: Call) -> Node:
        args = list(t.args)
        if t.name == "mix":
            if len(args) < 3:
                raise ExpressionError("mix(a, b, G, ...) needs two coefficients and a graph", t.col)
            grammar._real(args[0], "mix() coefficient a")  # range checks, exact value below
            grammar._real(args[1], "mix() coefficient b")
            comb, label = Combination(Fraction(args[0].value), Fraction(args[1].value)), ""
            args = args[2:]
        else:
            if not args:
                raise ExpressionError(f"{t.name}() needs at least one graph", t.col)
            comb, label = PRODUCT_KINDS[t.name], t.name
        operands = []
        for i, a in enumerate(args):
            if isinstance(a, Pow):
                e = a.exponent
                k = power_symbol(e.name, e.col) if isinstance(e, Name) else grammar._power(e)
                base = a.base
            else:
                base, k = a, 1
            if isinstance(base, Pow):
                raise ExpressionError(grammar._POWER_OUTSIDE, base.col)
            node = self.walk(base)
            key = f"#symbolic {i}" if is_symbol(k) else node.label()
            operands.append([key, node, k, a.col])
        merged = grammar.merge_operands(operands, everywhere=comb.associative)
        # The grammar's caps (operands, copies, left folds), with a symbolic power counted once.
        grammar._check_operands(t, comb, [[key, node, 1 if is_symbol(k) else k, col]
                                          for key, node, k, col in merged])
        if len(merged) == 1 and merged[0][2] == 1:
            return merged[0][1]
        return make_product(comb, [(node, k) for _, node, k, _ in merged], label)


# ------------------------------------------------------------------- sizes


def _bits(node: Node) -> float:
    """log2 of a bound on the vertex count times the largest |value| a node's numbers reach."""
    if isinstance(node, Leaf):
        f = node.factor
        bound = f.entry_bound() if isinstance(f, SymbolicFactor) else 1.0
        return math.log2(max(2, f.n)) + math.log2(2.0 + 2.0 * f.n * bound)
    coef = math.log2(2.0 + abs(float(node.comb.a)) + abs(float(node.comb.b)))
    return sum((1 if is_symbol(k) else k) * (_bits(c) + coef) for c, k in node.operands)


def check_numeric_powers(node: Node) -> None:
    """Refuse numeric powers whose exact numbers would exceed :data:`MAX_NUMERIC_BITS` bits.

    >>> try:
    ...     check_numeric_powers(symbolic_expression("cart(P(3)^1000000000)"))
    ... except SizeLimitError as exc:
    ...     print(str(exc)[:68])
    'cart(P(3)^1000000000)' needs exact numbers of about 1,857,332,497 d
    """
    bits = _bits(node)
    if bits > MAX_NUMERIC_BITS:
        digits = int(bits * math.log10(2)) + 1
        shown = f"{float(digits):.3g}" if digits > 10**15 else f"{digits:,}"
        raise SizeLimitError(
            f"{echo(node.label())} needs exact numbers of about {shown} digits (n^k for a "
            "numeric power k); the symbolic bridge writes at most "
            f"{int(MAX_NUMERIC_BITS * math.log10(2)):,}: write the power as a name "
            "(e.g. G^k) for a closed form in k, or drop --symbolic for the numeric engine")


__all__ = ["MAX_NUMERIC_BITS", "SymbolicCopies", "check_numeric_powers", "factor_symbols",
           "is_symbol", "make_product", "order_of", "power_symbol", "powers", "symbolic_expression",
           "symbolic_product"]
