"""Exact traces tr(M^p) of products with symbolic powers, from trace identities alone.

No eigenvalue is needed: a factor's traces are exact matrix powers, so a factor
whose eigenvalues are not expressible in radicals (the 9-vertex ``motif()``)
still has closed-form moments in k.  Products use the identities of the rule
table (:data:`~powerspec.algebra.kinds.MATRIX_RULES`), as the numeric moments do
(:mod:`powerspec.algebra.moments`):

* Cartesian-type rules (s = x): the exponential formula
  sum_p tr(M^p) t^p/p! = prod_b (tr e^{t M_b})^{k_b}, so tr(M^p) is n^k times a
  polynomial of degree <= p in k with exact rational coefficients;
* multiplicative rules (s = c + f x): tr(S^q) = prod_b tr(S_b^q)^{k_b} for
  S = c I + f M, then the binomial theorem back to M;
* left folds (``mix`` with a outside {0, 1}, integer powers): the three commuting
  terms A (x) I, I (x) B, A (x) B;
* kinds exact only for regular products: M = shift + factor A (the regular form);
* Laplacian / signless of a multiplicative product of factors that is not
  regular: D and A are both rule images of Kronecker powers, D -+ A =
  (S'^(x) -+ S^(x) ...)/f, and the trace of every word in them factorises:
  tr(w) = prod_b tr(w_b)^{k_b} -- sums over the 2^p (3^p for signless) words.

>>> from powerspec.algebra.symbolic_tree import symbolic_expression
>>> traces(symbolic_expression("cart(K(2)^k)"), p=2)
[2**k, 0, 2**k*k]
"""

from __future__ import annotations

import itertools
import math
from typing import Any

import sympy
from sympy.polys.matrices import DomainMatrix

from powerspec.algebra.kinds import MATRIX_RULES, NON_EXACT_REASON, REGULAR_FORM, Combination
from powerspec.algebra.symbolic_family import regular_degree
from powerspec.algebra.symbolic_tree import check_numeric_powers, is_symbol, order_of
from powerspec.algebra.tree import Leaf, Node, Product
from powerspec.errors import InputError, NotExactError, SizeLimitError, SymbolicError
from powerspec.factors.symbolic import check_kind
from powerspec.numbers.symbolic import to_sympy

MAX_TRACE_ORDER = 12
"""Largest moment order p (word sums grow like 3^p)."""


def _tidy(e: sympy.Expr) -> sympy.Expr:
    return sympy.expand(sympy.expand_func(e))


def traces(node: Node, kind: str = "adjacency", p: int = 4) -> list[sympy.Expr]:
    """[tr(M^0), ..., tr(M^p)] of the node's matrix: exact sympy expressions in the powers.

    >>> from powerspec.algebra.symbolic_tree import symbolic_expression
    >>> traces(symbolic_expression("direct(motif()^k)"), p=2)[2]   # no eigenvalue needed
    (63/2)**k
    """
    check_kind(kind)
    if not isinstance(p, int) or isinstance(p, bool) or p < 0:
        raise InputError(f"the moment order must be a non-negative integer, got {p!r}")
    if p > MAX_TRACE_ORDER:
        raise InputError(f"the symbolic moment order {p} is over the maximum of {MAX_TRACE_ORDER}")
    check_numeric_powers(node)
    return _traces(node, kind, p)


def _traces(node: Node, kind: str, p: int) -> list[sympy.Expr]:
    if isinstance(node, Leaf):
        m = DomainMatrix.from_Matrix(node.factor.kind_matrix(kind))
        out, acc = [sympy.Integer(node.factor.n)], m
        for q in range(1, p + 1):
            if q > 1:
                acc = acc * m
            out.append(_trace(acc))
        return out
    if kind == "normalized" and node.directed:
        raise InputError("the normalized Laplacian is defined for undirected graphs only; "
                         "use --matrix laplacian or transition")
    rule = MATRIX_RULES[kind](node.comb)
    if rule is None:
        return _non_rule(node, kind, p)
    parts = [(_traces(c, kind, p), k) for c, k in node.operands]
    if rule.mode == "zero":
        return [order_of(node)] + [sympy.Integer(0)] * p
    if rule.mode == "add":
        acc = None
        for tc, k in parts:
            tb = _cartesian_power(tc, k, p)
            acc = tb if acc is None else [
                _tidy(sum((sympy.binomial(q, i) * acc[i] * tb[q - i] for i in range(q + 1)),
                          sympy.Integer(0))) for q in range(p + 1)]
        return acc
    if rule.mode == "mul":
        shift, factor = (to_sympy(q) for q in rule.to_s())
        ts = [sympy.Integer(1)] * (p + 1)
        for tc, k in parts:
            s = _affine(tc, shift, factor)
            ts = [t * sympy.expand(v) ** k for t, v in zip(ts, s, strict=True)]
        back_shift, back_factor = (to_sympy(q) for q in rule.from_s())
        return [_tidy(v) for v in _affine(ts, back_shift, back_factor)]
    return _fold(rule, parts, p)


def _affine(t: list, c: Any, f: Any) -> list:
    """Traces of (c I + f M)^q from those of M^q (binomial theorem); t[0] is the order."""
    return [sum((sympy.binomial(q, i) * c ** (q - i) * f ** i * t[i] for i in range(q + 1)),
                sympy.Integer(0)) for q in range(len(t))]


def _cartesian_power(tc: list, k: Any, p: int) -> list:
    """Traces of a k-th Cartesian power: (n + F)^k = sum_j C(k, j) n^(k-j) F^j, F = sum tc t^q/q!."""
    n = tc[0]
    f = [sympy.Integer(0)] + [tc[q] / sympy.factorial(q) for q in range(1, p + 1)]
    pw = [[sympy.Integer(1)] + [sympy.Integer(0)] * p]
    for _ in range(p):
        prev = pw[-1]
        pw.append([sympy.expand(sum((prev[i] * f[q - i] for i in range(q + 1)), sympy.Integer(0)))
                   for q in range(p + 1)])
    return [_tidy(sum((sympy.binomial(k, j) * n ** (k - j) * sympy.factorial(q) * pw[j][q]
                       for j in range(q + 1)), sympy.Integer(0))) for q in range(p + 1)]


def _fold(rule: Combination, parts: list, p: int) -> list:
    """Left fold: tr of a(X (+) Y) + b X (x) Y from the three commuting Kronecker terms."""
    a, b = to_sympy(rule.a), to_sympy(rule.b)
    seq = []
    for tc, k in parts:
        if is_symbol(k):
            raise SymbolicError(f"{rule.label()} is a left fold; its moments need an integer power")
        seq += [tc] * k
    acc = seq[0]
    for tb in seq[1:]:
        acc = [_tidy(sum((sympy.Integer(math.factorial(q) // (math.factorial(i) * math.factorial(j)
                                                               * math.factorial(q - i - j)))
                          * a ** (i + j) * b ** (q - i - j) * acc[q - j] * tb[q - i]
                          for i in range(q + 1) for j in range(q + 1 - i)), sympy.Integer(0)))
               for q in range(p + 1)]
    return acc


def _non_rule(node: Product, kind: str, p: int) -> list:
    """Kinds that do not follow the product's rule: the regular form, or word traces."""
    d = regular_degree(node)
    if d is not None:
        if kind in ("normalized", "transition") and d == 0:
            raise InputError(f"the {kind} matrix needs non-zero degrees; {node.label()} has degree 0")
        p0, p1 = (to_sympy(v) for v in REGULAR_FORM[kind](d))
        return [_tidy(v) for v in _affine(_traces(node, "adjacency", p), p0, p1)]
    if kind in ("laplacian", "signless") and node.comb.mode == "mul" and not node.directed \
            and all(isinstance(c, Leaf) for c, _ in node.operands):
        return _word_traces(node, kind, p)
    raise NotExactError(
        f"the {kind} moments of {node.label()} do not follow from the factors' traces here: "
        f"{NON_EXACT_REASON[kind]} unless every factor is regular (word traces cover "
        "laplacian/signless of direct, strong and mix(1, b) products of factors)")


def _word_traces(node: Product, kind: str, p: int) -> list:
    """tr((D -+ A)^q) of a multiplicative product of leaves, by words in the Kronecker letters."""
    comb = node.comb
    c, f = (to_sympy(q) for q in comb.to_s())
    letters = 2 if kind == "laplacian" else 3
    if letters**p > 600_000:
        raise SizeLimitError(f"word sums for order {p} are too many; ask for a lower --order")
    leaf_tables = []
    for leaf, k in node.operands:
        g = leaf.factor
        a = g.kind_matrix("adjacency")
        dm = sympy.diag(*g.degrees())
        eye = sympy.eye(g.n)
        mats = [DomainMatrix.from_Matrix(c * eye + f * dm), DomainMatrix.from_Matrix(c * eye + f * a)]
        if letters == 3:
            mats.append(DomainMatrix.from_Matrix(eye))
        leaf_tables.append((_word_table(mats, p), k))
    out = [order_of(node)]
    for q in range(1, p + 1):
        total = sympy.Integer(0)
        for word in itertools.product(range(letters), repeat=q):
            # D - A = (S_D - S_A)/f; D + A = (S_D + S_A - 2c I)/f
            coef = sympy.Integer(1)
            for x in word:
                if x == 1 and kind == "laplacian":
                    coef = -coef
                elif x == 2:
                    coef *= -2 * c
            if coef == 0:
                continue
            term = coef
            for table, k in leaf_tables:
                term *= table[word] ** k
            total += term
        out.append(_tidy(total / f**q))
    return out


def _trace(m: DomainMatrix) -> sympy.Expr:
    """The exact trace of a DomainMatrix as a sympy expression."""
    dom = m.domain
    return sympy.expand(dom.to_sympy(sum(m.diagonal(), dom.zero)))


def _word_table(mats: list, p: int) -> dict:
    """tr(M_{w1} ... M_{wq}) for every word w of length 1..p over the letters, exact."""
    table: dict = {}
    stack = [((x,), mats[x]) for x in range(len(mats))]
    while stack:
        word, prod = stack.pop()
        table[word] = _trace(prod)
        if len(word) < p:
            stack += [(word + (x,), prod * mats[x]) for x in range(len(mats))]
    return table


__all__ = ["MAX_TRACE_ORDER", "traces"]
