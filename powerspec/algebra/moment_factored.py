"""Exact traces of multiplicative powers too large to expand, in factored form.

For a multiplicative rule (direct, strong, mix(1, b), mix(0, b)) with
linearisation s = c + f x, tr(S^j) of the product is prod_i tr_i(S_i^j)^k_i,
and tr(M^p) = f^-p sum_j C(p, j) (-c)^(p-j) tr(S^j).  When every operand
trace is an integer, each power is an exact
:class:`~powerspec.numbers.counts.BigCount` (``17^1000000``) and the sum is
one too (``17^1000000 - 4 * 5^1000000 + ...``): exact, never expanded.  The
non-factoring Laplacians of such products are signed sums over the words in
D and A, each word a product of operand word traces to the k-th powers.

Non-integral operand traces raised to enormous powers cannot be kept exactly
(BigCount holds integers over a fixed denominator); those are refused with
SizeLimitError, as are nodes of any other shape.

>>> from powerspec.algebra.grammar import parse
>>> from powerspec.algebra.moment_domains import EXACT
>>> from powerspec.algebra.words import WordTraces
>>> node = parse("direct(K(3)^3000000)")
>>> tau = lambda child, kind: [Fraction(1), Fraction(0), Fraction(2)]   # tr(A^p)/3 of K(3)
>>> [str(v) for v in factored(node, "adjacency", 2, tau, WordTraces(EXACT, 2))]
['3^3000000', '0', '2^3000000 * 3^3000000']
"""

from __future__ import annotations

import math
from collections.abc import Callable
from fractions import Fraction

from powerspec.algebra.kinds import MATRIX_RULES
from powerspec.algebra.moment_domains import EXACT, MAX_BITS, affine_moments, bits_of
from powerspec.algebra.tree import Leaf, Node
from powerspec.algebra.words import WordTraces, own_basis
from powerspec.errors import SizeLimitError
from powerspec.numbers.counts import BigCount, power_product


def big_power(x: Fraction, k: int):
    """x^k exactly: a Fraction when small, a BigCount for integers, else SizeLimitError.

    >>> big_power(Fraction(-2), 3), str(big_power(Fraction(12), 10**7))
    (Fraction(-8, 1), '2^20000000 * 3^10000000')
    """
    if x == 0 or k == 0 or abs(x) == 1:
        return x**k
    if k * bits_of(x) <= MAX_BITS:
        return x**k
    if x.denominator != 1:
        raise SizeLimitError("a non-integral trace raised to a power this large cannot be kept "
                             "exactly; ask for fewer copies or integer weights")
    mag = power_product([(abs(x.numerator), k)])
    return -mag if (x < 0 and k % 2) else mag


def _total(terms: list):
    out: object = Fraction(0)
    try:
        for t in terms:
            out = out + t
    except ValueError as exc:  # a BigCount sum that settles to a non-integral small value
        raise SizeLimitError("the exact trace cannot be kept in factored form here") from exc
    return out


def factorable(node: Node, kind: str) -> bool:
    """True when :func:`factored` has a form for this node and kind (multiplicative rules)."""
    if isinstance(node, Leaf):
        return False
    rule = MATRIX_RULES[kind](node.comb)
    if rule is not None:
        return rule.mode == "mul"
    return kind in ("laplacian", "signless") and node.comb.mode == "mul"


def factored(node: Node, kind: str, order: int, tau_of: Callable[[Node, str], list],
             words: WordTraces) -> list:
    """[order of the node, tr(M), ..., tr(M^order)] exactly, BigCount where enormous.

    ``tau_of(child, kind)`` gives a child's exact normalised traces (the
    children must be small); ``words`` computes exact word traces.
    """
    if isinstance(node, Leaf):
        raise SizeLimitError(f"the moments of {node.label()} are too large to hold")
    rule = MATRIX_RULES[kind](node.comb)
    if rule is not None and rule.mode == "mul":
        return _rule_traces(node, kind, rule, order, tau_of)
    if rule is None and kind in ("laplacian", "signless") and node.comb.mode == "mul":
        return _word_traces(node, kind, order, words)
    raise SizeLimitError(
        f"the exact moments of {node.label()} would have more than a million digits and have no "
        "factored form here; ask for a lower --order or fewer copies")


def _rule_traces(node, kind, rule, order, tau_of) -> list:
    c, f = (Fraction(x) for x in rule.to_s())
    ops = []
    for child, k in node.operands:
        s = affine_moments(EXACT, tau_of(child, kind), c, f)
        ops.append(([child.order * v for v in s], k))
    ts = []
    for j in range(order + 1):
        term: object = 1
        for u, k in ops:
            term = term * big_power(Fraction(u[j]), k)
        ts.append(term)
    out = []
    for p in range(order + 1):
        terms = [math.comb(p, j) * (-c) ** (p - j) * ts[j] for j in range(p + 1)
                 if (-c) ** (p - j) != 0]
        out.append(_scaled(_total(terms), f, p))
    return out


def _word_traces(node, kind, order, words: WordTraces) -> list:
    c, f = own_basis(node)
    words.check(node)
    w_sums = [_order_of(node)]
    for j in range(1, order + 1):
        terms = []
        for mask in range(1 << j):
            term: object = 1
            for child, k in node.operands:
                tr = Fraction(child.order) * words.trace(child, (c, f), j, mask)
                term = term * big_power(tr, k)
            negative = kind == "laplacian" and bin(mask).count("1") % 2
            terms.append(-term if negative else term)
        w_sums.append(_total(terms))
    out = [w_sums[0]]
    for p in range(1, order + 1):
        if kind == "laplacian":
            out.append(_scaled(w_sums[p], f, p))
        else:
            terms = [math.comb(p, j) * (-2 * c) ** (p - j) * w_sums[j] for j in range(p + 1)
                     if (-2 * c) ** (p - j) != 0]
            out.append(_scaled(_total(terms), f, p))
    return out


def _order_of(node):
    n = node.order
    return n if isinstance(n, BigCount) else Fraction(n)


def _scaled(v, f: Fraction, p: int):
    if f == 1:
        return v
    try:
        return v * (1 / f) ** p
    except ValueError as exc:
        raise SizeLimitError("the exact trace cannot be kept in factored form here") from exc


__all__ = ["big_power", "factorable", "factored"]
