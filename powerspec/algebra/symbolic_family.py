"""Spectra with a symbolic power k: the composition family of G^k from the engine's rules.

The numeric engine (:mod:`powerspec.algebra.powers`) indexes the atoms of
G^(o k) by compositions c of k over the r distinct eigenvalues x_i of G: value
x_1^(o c_1) o ... o x_r^(o c_r), multiplicity the multinomial (k; c) times
prod m_i^c_i.  Here the same statement is kept with k a Symbol: a
:class:`SpectrumFamily` is that value and multiplicity as sympy expressions in
the powers and the composition indices.  Everything comes from the one rule
table of :mod:`powerspec.algebra.kinds`:

* which rule a matrix kind obeys under a product -- :data:`~powerspec.algebra.kinds.MATRIX_RULES`;
* the composition value -- :func:`composition`, from the rule's linearisation
  (``Combination.to_s`` / ``from_s``), written against a number context;
* kinds exact only on regular products -- the affine map
  :data:`~powerspec.algebra.kinds.REGULAR_FORM` of the adjacency family, with the
  common degree combined by the same rule (:func:`regular_degree`);
* non-associative ``mix`` -- the documented left fold (integer powers only).

>>> fam = symbolic_family("cart(K(2)^k)")
>>> fam.eigenvalue, fam.multiplicity
(-2*j + k, binomial(k, j))
>>> fam.expand(k=3)
[(3, 1), (1, 3), (-1, 3), (-3, 1)]
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import sympy

from powerspec.algebra.kinds import MATRIX_RULES, NON_EXACT_REASON, REGULAR_FORM, Combination
from powerspec.algebra.symbolic_tree import (
    check_numeric_powers,
    is_symbol,
    order_of,
    powers,
    symbolic_expression,
)
from powerspec.algebra.tree import Leaf, Node, Product
from powerspec.errors import InputError, NotExactError, SizeLimitError, SymbolicError
from powerspec.factors.symbolic import check_kind, descending
from powerspec.numbers.symbolic import SYMPY, SympyDomain, to_sympy

MAX_EXPAND = 200_000
"""Most compositions :meth:`SpectrumFamily.expand` enumerates (exact sympy arithmetic is slow)."""


def composition(comb: Combination, values: Sequence[Any], counts: Sequence[Any],
                ctx: SympyDomain = SYMPY) -> Any:
    """x_1^(o c_1) o ... o x_r^(o c_r) for an associative rule; counts ints or expressions.

    In the linearisation s = shift + factor x (``comb.to_s()``) copies add
    (Cartesian) or multiply (every other associative rule), and ``comb.from_s()``
    maps back: c x for Cartesian, b^(c-1) x^c for a = 0, ((1 + b x)^c - 1)/b for
    a = 1 -- the powers the numeric engine takes.  Exact in the context ``ctx``.

    >>> from powerspec.algebra.kinds import CARTESIAN, DIRECT
    >>> k = sympy.Symbol("k", integer=True, positive=True)
    >>> composition(CARTESIAN, [1, -1], [k - 2, 2]), composition(DIRECT, [2, 3], [k, 1])
    (k - 4, 3*2**k)
    """
    mode = comb.mode
    if mode is None:
        raise SymbolicError(f"{comb.label()} with a outside {{0, 1}} is a left fold; its powers "
                            "have no composition form: give an integer power")
    if mode == "zero":
        return ctx.rational(0)
    shift, factor = (ctx.rational(q) for q in comb.to_s())
    back_shift, back_factor = (ctx.rational(q) for q in comb.from_s())
    s = ctx.rational(0) if mode == "add" else ctx.rational(1)
    for x, c in zip(values, counts, strict=True):
        sx = ctx.add(shift, ctx.mul(factor, x))
        s = ctx.add(s, ctx.mul(c, sx)) if mode == "add" else ctx.mul(s, ctx.pow(sx, c))
    out = ctx.add(back_shift, ctx.mul(back_factor, s))
    return sympy.expand(out) if mode == "add" else out


# ------------------------------------------------------------------ degrees


def regular_degree(node: Node) -> sympy.Expr | None:
    """The exact common degree of a node, or None when it is not regular.

    Leaves: identical row sums.  Products: the degrees combine by the product's own
    rule (:func:`composition`); for a multiplicative rule an operand whose
    linearised degree is 0 makes the product regular on its own (as in the engine).

    >>> regular_degree(symbolic_expression("strong(K(3)^k)"))
    3**k - 1
    """
    if isinstance(node, Leaf):
        return node.factor.regular_degree()
    comb = node.comb
    kids = [(regular_degree(c), k) for c, k in node.operands]
    if comb.mode == "zero":
        return sympy.Integer(0)
    if comb.mode == "mul":
        shift, factor = (to_sympy(q) for q in comb.to_s())
        if any(d is not None and sympy.expand(shift + factor * d) == 0 for d, _ in kids):
            return to_sympy(comb.from_s()[0])
    if any(d is None for d, _ in kids):
        return None
    if comb.mode is None:
        acc = None
        for d, k in kids:
            if is_symbol(k):
                raise SymbolicError(f"{comb.label()} is a left fold; give its powers as integers")
            for _ in range(k):
                acc = d if acc is None else sympy.expand(comb(acc, d))
        return acc
    return composition(comb, [d for d, _ in kids], [k for _, k in kids])


# ------------------------------------------------------------------ families


@dataclass(frozen=True)
class Block:
    """One operand of a product: distinct eigenvalues, multiplicities, and its power."""

    values: tuple
    mults: tuple
    power: Any

    @property
    def n(self) -> Any:
        """Vertex count of the operand."""
        return sum(self.mults)


class SpectrumFamily:
    """The spectrum of a product whose powers may be symbols, as sympy expressions.

    For blocks b (operands with distinct eigenvalues lambda_{b,0..r_b-1},
    multiplicities m_{b,i} and power k_b), a composition c_b of k_b counts how many
    of the k_b copies take each eigenvalue.  The indices ``j`` are the counts
    c_{b,1..r_b-1}; the base count is c_{b,0} = k_b - sum_i j_{b,i}.  Then

    * ``eigenvalue`` = post(x) with x the :func:`composition` of all blocks' values;
    * ``multiplicity`` = prod_b multinomial(k_b; c_b) prod_i m_{b,i}^c_{b,i} (binomials);
    * ``constraints``: j >= 0 and sum_i j_{b,i} <= k_b.

    Distinct compositions may give equal eigenvalues; :meth:`expand` merges them.
    ``post`` = (p0, p1) maps x to p0 + p1 x (the regular form of the matrix kind).
    """

    def __init__(self, comb: Combination, blocks: Sequence[Block], kind: str = "adjacency",
                 post: tuple = (0, 1), label: str = ""):
        if comb.mode is None:
            raise SymbolicError("internal: a non-associative family must be folded first")
        self.comb = comb
        self.mode = comb.mode
        self.shift, self.factor = (to_sympy(q) for q in comb.to_s())
        self.blocks = tuple(blocks)
        self.kind = kind
        self.post = (to_sympy(post[0]), to_sympy(post[1]))
        self.label = label
        many = len(self.blocks) > 1
        self.indices: list[sympy.Symbol] = []
        self.counts: list[tuple] = []
        self._ranges: list[tuple] = []
        for bi, blk in enumerate(self.blocks):
            r = len(blk.values)
            if many:
                names = [f"j{bi + 1}_{i}" for i in range(1, r)]
            else:
                names = ["j"] if r == 2 else [f"j{i}" for i in range(1, r)]
            js = [sympy.Symbol(nm, integer=True, nonnegative=True) for nm in names]
            self.indices += js
            self.counts.append((blk.power - sympy.Add(*js), *js))
            self._ranges.append((blk.power, js))

    @property
    def symbols(self) -> list[sympy.Symbol]:
        """The symbolic powers, sorted by name."""
        return sorted({b.power for b in self.blocks if is_symbol(b.power)}, key=lambda s: s.name)

    @property
    def eigenvalue(self) -> sympy.Expr:
        """The eigenvalue as an expression in the powers and the indices."""
        values = [v for b in self.blocks for v in b.values]
        counts = [c for cs in self.counts for c in cs]
        x = composition(self.comb, values, counts)
        p0, p1 = self.post
        return sympy.expand(p0 + p1 * x) if self.mode == "add" else p0 + p1 * x

    @property
    def multiplicity(self) -> sympy.Expr:
        """The multiplicity of one composition, an expression in the powers and indices."""
        out = sympy.Integer(1)
        for blk, cs, (k, js) in zip(self.blocks, self.counts, self._ranges, strict=True):
            rest = k
            for jj in js:
                out *= sympy.binomial(rest, jj)
                rest = rest - jj
            for c, m in zip(cs, blk.mults, strict=True):
                out *= sympy.sympify(m) ** c
        return out

    @property
    def constraints(self) -> sympy.Expr:
        """And(...) of the index ranges: j >= 0, sum of a block's indices <= its power."""
        rel = []
        for k, js in self._ranges:
            rel += [sympy.Ge(jj, 0, evaluate=False) for jj in js]
            if js:
                rel.append(sympy.Le(sympy.Add(*js), k, evaluate=False))
        return sympy.And(*rel, evaluate=False) if rel else sympy.true

    @property
    def order(self) -> sympy.Expr:
        """Vertex count prod n_b^k_b."""
        return sympy.Mul(*[sympy.sympify(b.n) ** b.power for b in self.blocks])

    @property
    def count(self) -> sympy.Expr:
        """Number of compositions (an upper bound on the distinct eigenvalues)."""
        return sympy.Mul(*[sympy.binomial(b.power + len(b.values) - 1, len(b.values) - 1)
                           for b in self.blocks])

    def products(self) -> list[tuple]:
        """The nested (index, 0, upper) limits for sympy Sum/Product over all compositions."""
        limits = []
        for k, js in self._ranges:
            for i, jj in enumerate(js):
                limits.append((jj, 0, k - sympy.Add(*js[:i])))
        return limits[::-1]  # sympy evaluates the first limit innermost

    # -- expansion ------------------------------------------------------------------
    def _power_values(self, values: dict[str, int]) -> list[int]:
        names = {s.name: s for s in self.symbols}
        unknown = set(values) - set(names)
        if unknown:
            raise InputError(f"unknown power name(s) {sorted(unknown)}; this family has {sorted(names)}")
        out = []
        for blk in self.blocks:
            k = blk.power
            if is_symbol(k):
                if k.name not in values:
                    raise InputError(f"expand() needs a value for the power {k.name}")
                k = values[k.name]
            if not isinstance(k, int) or isinstance(k, bool) or k < 1:
                raise InputError(f"a power must be an integer >= 1, got {k!r}")
            out.append(k)
        return out

    def expand(self, **powers: int) -> list[tuple[sympy.Expr, int]]:
        """The concrete spectrum for integer powers: merged (value, multiplicity) pairs, exact.

        Each block's power is taken by squaring with the product's rule and exact
        merging (as the engine's squaring strategy), then the blocks are combined and
        equal values merged (:meth:`~powerspec.numbers.symbolic.SympyDomain.merge`).
        """
        ks = self._power_values(powers)
        size = math.prod(math.comb(k + len(b.values) - 1, len(b.values) - 1)
                         for b, k in zip(self.blocks, ks, strict=True))
        if size > MAX_EXPAND:
            raise SizeLimitError(
                f"expanding {self.label or 'this family'} means {size} compositions, over the "
                f"symbolic limit of {MAX_EXPAND}; use the numeric engine (drop --symbolic)")
        acc: dict | None = None
        for blk, k in zip(self.blocks, ks, strict=True):
            base = {}
            for v, m in zip(blk.values, blk.mults, strict=True):
                key = SYMPY.key(v)
                base[key] = base.get(key, 0) + int(m)
            p = _power(self.comb, base, k)
            acc = p if acc is None else _combine(self.comb, acc, p)
        subs = {blk.power: k for blk, k in zip(self.blocks, ks, strict=True) if is_symbol(blk.power)}
        p0, p1 = (v.subs(subs) for v in self.post)
        out = [(sympy.expand(p0 + p1 * to_sympy(x)), m) for x, m in acc.items()]
        return SYMPY.sort_pairs(SYMPY.merge(out), descending(self.kind))


def _combine(comb: Combination, x: dict, y: dict) -> dict:
    out: dict = {}
    for u, mu in x.items():
        for v, mv in y.items():
            w = SYMPY.key(comb(u, v))  # the rule itself, on Fractions or sympy values
            out[w] = out.get(w, 0) + mu * mv
    return out


def _power(comb: Combination, base: dict, k: int) -> dict:
    result = None
    while True:
        if k & 1:
            result = base if result is None else _combine(comb, result, base)
        k >>= 1
        if not k:
            return result
        base = _combine(comb, base, base)


# --------------------------------------------------------------- evaluation


def leaf_spectrum(leaf: Leaf, kind: str) -> list[tuple[sympy.Expr, int]]:
    """Exact eigenvalues of a leaf: closed form, else the regular form of the adjacency
    closed form (:data:`~powerspec.algebra.kinds.REGULAR_FORM`), else the guarded charpoly.

    >>> from powerspec.factors.symbolic import symbolic_factor
    >>> from powerspec.factors.families import C
    >>> leaf_spectrum(Leaf(symbolic_factor(C(4))), "laplacian")
    [(0, 1), (2, 2), (4, 1)]
    """
    f = leaf.factor
    form = f.closed_form(kind)
    if form is not None:
        return form
    adj = f.closed_form("adjacency")
    if adj is not None and kind != "adjacency":
        if kind == "normalized" and f.directed:
            raise InputError("the normalized Laplacian is defined for undirected graphs only; "
                             "use --matrix laplacian or transition")
        d = f.regular_degree()
        if d is not None and (kind in ("laplacian", "signless") or d != 0):
            shift, factor = REGULAR_FORM[kind](d)
            pairs = [(SYMPY.affine(v, shift, factor), m) for v, m in adj]
            return SYMPY.sort_pairs(SYMPY.merge(pairs), descending(kind))
    return f.eigenvalues(kind)


def spectrum_family(node: Node, kind: str = "adjacency") -> SpectrumFamily:
    """The :class:`SpectrumFamily` of a node for a matrix kind.

    Symbolic powers may appear only at this node's own operands; operands are
    evaluated to finite exact spectra.  Raises NotExactError for a kind that is not
    exact (as the numeric engine does), SymbolicError for a left fold with a
    symbolic power, SizeLimitError for numeric powers too large to write out.
    """
    check_kind(kind)
    check_numeric_powers(node)
    if isinstance(node, Leaf):
        vals = leaf_spectrum(node, kind)
        return SpectrumFamily(Combination(1, 0), [_block(vals, 1)], kind, label=node.label())
    if kind == "normalized" and node.directed:
        raise InputError("the normalized Laplacian is defined for undirected graphs only; "
                         "use --matrix laplacian or transition")
    rule = MATRIX_RULES[kind](node.comb)
    if rule is None:
        d = regular_degree(node)
        if d is None:
            raise NotExactError(
                f"the {kind} spectrum of {node.label()} is not exact: {NON_EXACT_REASON[kind]} "
                "unless every factor is regular; use --matrix adjacency, or a Cartesian product "
                "for laplacian/signless")
        if kind in ("normalized", "transition") and d == 0:
            raise InputError(f"the {kind} matrix needs non-zero degrees; {node.label()} has degree 0")
        fam = spectrum_family(node, "adjacency")
        return SpectrumFamily(fam.comb, fam.blocks, kind, REGULAR_FORM[kind](d), node.label())
    if rule.mode == "zero":
        return SpectrumFamily(Combination(1, 0), [Block((sympy.Integer(0),), (order_of(node),), 1)],
                              kind, label=node.label())
    if rule.mode is None:
        return SpectrumFamily(Combination(1, 0), [_block(_fold_values(node, rule, kind), 1)], kind,
                              label=node.label())
    blocks = []
    for child, k in node.operands:
        if powers(child):
            raise SymbolicError(
                f"symbolic powers are supported in the outermost product only; {child.label()} "
                "has one inside; give its power as an integer")
        blocks.append(_block(finite_spectrum(child, kind), k))
    return SpectrumFamily(rule, blocks, kind, label=node.label())


def _block(vals: list[tuple[Any, int]], k: Any) -> Block:
    return Block(tuple(v for v, _ in vals), tuple(m for _, m in vals), k)


def _fold_values(node: Product, rule: Combination, kind: str) -> list[tuple[sympy.Expr, int]]:
    seq = []
    for child, k in node.operands:
        if is_symbol(k):
            raise SymbolicError(
                f"{rule.label()} is not associative (a left fold), so its power {k} has no "
                "composition form; give an integer power")
        seq += [finite_spectrum(child, kind)] * k
    acc = seq[0]
    for nxt in seq[1:]:
        acc = SYMPY.merge([(sympy.expand(rule(x, y)), mx * my) for x, mx in acc for y, my in nxt])
    return SYMPY.sort_pairs(acc, descending(kind))


def finite_spectrum(node: Node, kind: str = "adjacency") -> list[tuple[sympy.Expr, int]]:
    """Exact merged spectrum of a node without symbolic powers: [(value, multiplicity)].

    >>> finite_spectrum(symbolic_expression("cart(P(2)^2)"))
    [(2, 1), (0, 2), (-2, 1)]
    """
    if isinstance(node, Leaf):
        return leaf_spectrum(node, kind)
    if powers(node):
        raise SymbolicError(f"{node.label()} has symbolic powers; use spectrum_family(...).expand(...)")
    return spectrum_family(node, kind).expand()


def symbolic_family(text: str, kind: str = "adjacency") -> SpectrumFamily:
    """Shortcut: :func:`spectrum_family` of the parsed text (symbolic powers allowed)."""
    return spectrum_family(symbolic_expression(text), kind)


__all__ = ["MAX_EXPAND", "Block", "SpectrumFamily", "composition", "finite_spectrum", "leaf_spectrum",
           "regular_degree", "spectrum_family", "symbolic_family"]
