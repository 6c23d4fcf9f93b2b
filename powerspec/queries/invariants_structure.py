"""Exact structural facts of a product from its factors: components, degree ranges, zero counts.

Components (undirected graphs with non-negative weights).  A graph is
summarised by (n, c, z, q): vertices, components, isolated vertices (no edge,
no loop) and bipartite components (isolated ones included; a loop makes a
component non-bipartite).  For products of summaries:

* Cartesian: components pair up, a pair is bipartite iff both are:
  (n n', c c', z z', q q');
* strong (and every mix(a, b) with a, b > 0, whose edge set is the strong
  product's): components pair up, a pair is bipartite only when one side is
  an isolated vertex and the other bipartite;
* direct: a pair of non-trivial components gives 2 components when both are
  bipartite and 1 otherwise, bipartite iff either is (P. M. Weichsel, "The
  Kronecker product of graphs", Proc. AMS 13, 1962); pairs with an isolated
  vertex are isolated.  With u = non-trivial bipartite and w = non-bipartite
  components, W = 2u + w and w are multiplicative, so the k-th power has
  (W^k + w^k) / 2 non-trivial components -- exact at any k.

All counts are exact (ints, or BigCount when astronomically large).

>>> from powerspec.algebra.grammar import parse
>>> components(parse("direct(P(3)^1000000000)"))   # 2^(k-1): Weichsel, factor by factor
2^999999999
>>> components(parse("direct(K(2), K(2), K(1))"))   # K(1) is an isolated vertex
4
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from fractions import Fraction

import numpy as np
import scipy.sparse as sp
import scipy.sparse.csgraph as csgraph
from flint import arb

from powerspec.algebra.tree import Leaf, Node
from powerspec.algebra.words import MAX_FOLD
from powerspec.numbers.counts import BigCount
from powerspec.numbers.hp import working


def nonnegative(node: Node) -> bool:
    """True when every weight and every product coefficient is >= 0."""
    if isinstance(node, Leaf):
        a = node.factor.adjacency
        return bool(a.nnz == 0 or a.data.min() >= 0)
    return node.comb.a >= 0 and node.comb.b >= 0 and all(nonnegative(c) for c, _ in node.operands)


def has_loops(node: Node) -> bool:
    """True when some factor has a self-loop."""
    return any(f.has_loops for f in node.leaves())


def integer_weights(node: Node) -> bool:
    """True when every factor weight and every product coefficient is an integer."""
    if isinstance(node, Leaf):
        d = node.factor.adjacency.data
        return bool(np.all(d == np.round(d)) and np.all(np.abs(d) < 2**40))
    return (node.comb.a.denominator == 1 and node.comb.b.denominator == 1
            and all(integer_weights(c) for c, _ in node.operands))


@dataclass(frozen=True)
class Shape:
    """Vertices, components, isolated vertices, bipartite components (exact counts)."""

    n: object
    c: object
    z: object
    q: object


def _leaf_shape(node: Leaf) -> Shape:
    adj = sp.csr_array(node.factor.adjacency)
    n = adj.shape[0]
    pattern = sp.csr_array((np.ones(adj.nnz), adj.indices, adj.indptr), shape=adj.shape)
    pattern = ((pattern + pattern.T) > 0).astype(np.int8)
    c, labels = csgraph.connected_components(pattern, directed=False)
    # bipartite double cover: (u, 0) ~ (v, 1) for every edge; a component of G is bipartite
    # iff it lifts to two components of the cover (a loop joins the two copies of its vertex)
    cover = sp.bmat([[None, pattern], [pattern, None]], format="csr")
    _, cover_labels = csgraph.connected_components(cover, directed=False)
    lifts = np.zeros(c, dtype=np.int64)
    pairs = {(int(labels[i % n]), int(lab)) for i, lab in enumerate(cover_labels)}
    for comp, _ in pairs:
        lifts[comp] += 1
    deg = np.asarray(pattern.sum(axis=1)).ravel()
    isolated = int(np.sum(deg == 0))
    return Shape(n, int(c), isolated, int(np.sum(lifts == 2)))


class Count:
    """An exact integer as a sum of c * prod p^e terms (Fraction c), combined without expanding.

    The counts of enormous products (3^(10^9) - 2^(10^9), (W^k + w^k)/2, ...)
    are built here term by term; :meth:`value` returns a plain int when every
    term is small and an exact factored :class:`~powerspec.numbers.counts.BigCount`
    otherwise.  (Unlike mixing BigCount with million-bit ints, nothing here
    converts a huge integer to a float.)

    >>> str((Count.power(3, 10**6) - Count.power(2, 10**6)).value())
    '3^1000000 - 2^1000000'
    >>> ((Count.power(7, 2) + Count.power(7, 2)) * Count.of(3)).value()
    294
    """

    __slots__ = ("terms",)

    def __init__(self, terms: dict):
        self.terms = {k: v for k, v in terms.items() if v}

    @classmethod
    def of(cls, x) -> Count:
        """An int or BigCount as a Count."""
        if isinstance(x, BigCount):
            return cls(dict(x.terms))
        x = int(x)
        if x.bit_length() > 1000:  # keep a huge coefficient out of float conversions
            return cls({((x, 1),): Fraction(1)})
        return cls({(): Fraction(x)})

    @classmethod
    def power(cls, base, k: int) -> Count:
        """base^k for an int (factored) or a Count."""
        if isinstance(base, Count) and isinstance(base.value(), int):
            base = base.value()
        if isinstance(base, Count):
            out = cls.of(1)
            for _ in range(k) if k <= 64 else ():
                out = out * base
            if k > 64:
                if len(base.terms) != 1:
                    raise ValueError("powers of multi-term counts are limited to k <= 64")
                (key, c), = base.terms.items()
                return cls({tuple((p, e * k) for p, e in key): c**k})._canon()
            return out
        base = int(base)
        if base == 0:
            return cls.of(0 if k else 1)
        return cls({tuple(sorted((p, e * k) for p, e in _factor(base).items())): Fraction(1)})

    def _canon(self) -> Count:
        out: dict = {}
        for key, c in self.terms.items():
            d = dict(key)
            for p in list(d):
                while c.numerator % p == 0 and c.numerator:
                    c /= p
                    d[p] += 1
                while c.denominator % p == 0 and d[p] > 0:
                    c *= p
                    d[p] -= 1
            k2 = tuple(sorted((p, e) for p, e in d.items() if e))
            out[k2] = out.get(k2, 0) + c
        return Count(out)

    def __add__(self, other) -> Count:
        o = other if isinstance(other, Count) else Count.of(other)
        terms = dict(self.terms)
        for k, v in o.terms.items():
            terms[k] = terms.get(k, 0) + v
        return Count(terms)

    __radd__ = __add__

    def __neg__(self) -> Count:
        return Count({k: -v for k, v in self.terms.items()})

    def __sub__(self, other) -> Count:
        return self + (-(other if isinstance(other, Count) else Count.of(other)))

    def __rsub__(self, other) -> Count:
        return Count.of(other) - self

    def __mul__(self, other) -> Count:
        o = other if isinstance(other, Count) else Count.of(other)
        terms: dict = {}
        for k1, v1 in self.terms.items():
            for k2, v2 in o.terms.items():
                d = dict(k1)
                for p, e in k2:
                    d[p] = d.get(p, 0) + e
                key = tuple(sorted(d.items()))
                terms[key] = terms.get(key, 0) + v1 * v2
        return Count(terms)._canon()

    __rmul__ = __mul__

    def half(self) -> Count:
        """self / 2 (exact; the caller knows it is an integer)."""
        return Count({k: v / 2 for k, v in self.terms.items()})._canon()

    def value(self):
        """A plain int when every term has at most SMALL_BITS bits, else a BigCount."""
        logs = [sum(e * math.log2(p) for p, e in k) + abs(v.numerator).bit_length()
                for k, v in self.terms.items()]
        if not logs:
            return 0
        if max(logs) <= SMALL_BITS:
            total = sum(v * math.prod(p**e for p, e in k) for k, v in self.terms.items())
            return int(total)
        return BigCount(dict(self.terms))


def order_count(node: Node) -> Count:
    """The node's vertex count as a factored Count (prod n_i^k_i)."""
    if isinstance(node, Leaf):
        return Count.of(node.order)
    out = Count.of(1)
    for child, k in node.operands:
        out = out * Count.power(order_count(child), k)
    return out


def factored_power(base, k: int):
    """base^k exactly: an int while small, else a factored BigCount.

    >>> str(factored_power(12, 10**6)), factored_power(5, 3)
    ('2^2000000 * 3^1000000', 125)
    """
    return Count.power(base, k).value()


SMALL_BITS = 1 << 14
"""Counts up to about this many bits are returned as plain ints."""


def _factor(n: int) -> dict[int, int]:
    out: dict[int, int] = {}
    p = 2
    while p * p <= n and p < 10**6:
        while n % p == 0:
            out[p] = out.get(p, 0) + 1
            n //= p
        p += 1 if p == 2 else 2
    if n > 1:
        out[n] = out.get(n, 0) + 1
    return out


def _power_shape(s: Shape, k: int, kind: str) -> Shape:
    """The shape of k copies: closed forms in Counts (s holds Counts)."""
    def pw(x: Count) -> Count:
        return Count.power(_small(x), k)

    if kind == "cart":
        return Shape(pw(s.n), pw(s.c), pw(s.z), pw(s.q))
    if kind == "strong":
        u = s.q - s.z
        q = pw(s.z) + Count.of(k) * u * Count.power(s.z, k - 1)
        return Shape(pw(s.n), pw(s.c), pw(s.z), q)
    u, w = s.q - s.z, s.c - s.q
    z = pw(s.n) - pw(s.n - s.z)
    big_w, small_w = pw(u * 2 + w), pw(w)
    return Shape(pw(s.n), z + (big_w + small_w).half(), z, z + (big_w - small_w).half())


def _small(x: Count):
    """An int when the Count is small (bases of powers are then factored), else the Count."""
    v = x.value()
    return v if isinstance(v, int) else x


def _pair(a: Shape, b: Shape, kind: str) -> Shape:
    if kind == "cart":
        return Shape(a.n * b.n, a.c * b.c, a.z * b.z, a.q * b.q)
    if kind == "strong":
        return Shape(a.n * b.n, a.c * b.c, a.z * b.z, a.z * b.q + a.q * b.z - a.z * b.z)
    ua, wa, ub, wb = a.q - a.z, a.c - a.q, b.q - b.z, b.c - b.q
    z = a.n * b.n - (a.n - a.z) * (b.n - b.z)
    bip = ua * ub * 2 + ua * wb + wa * ub
    return Shape(a.n * b.n, z + bip + wa * wb, z, z + bip)


def shape(node: Node) -> Shape | None:
    """The exact component summary (ints or BigCounts), or None (negative weights, directed graphs)."""
    s = _shape(node)
    return None if s is None else Shape(*(x.value() for x in (s.n, s.c, s.z, s.q)))


def _shape(node: Node) -> Shape | None:
    if node.directed or not nonnegative(node):
        return None
    if isinstance(node, Leaf):
        s = _leaf_shape(node)
        return Shape(*(Count.of(x) for x in (s.n, s.c, s.z, s.q)))
    a, b = node.comb.a, node.comb.b
    if a == 0 and b == 0:
        n = order_count(node)
        return Shape(n, n, n, n)
    kind = "cart" if b == 0 else "direct" if a == 0 else "strong"  # the edge sets (any a, b > 0)
    acc = None
    for child, k in node.operands:
        s = _shape(child)
        if s is None:
            return None
        p = _power_shape(s, k, kind)
        acc = p if acc is None else _pair(acc, p, kind)
    return acc


def components(node: Node):
    """The exact number of connected components (int or BigCount), or None when not defined here."""
    s = shape(node)
    return None if s is None else s.c


# ------------------------------------------------------------------ degree ranges
def _as_arb(x: Fraction) -> arb:
    with working():
        return arb(x.numerator) / x.denominator


def degree_range(node: Node, direction: str = "out"):
    """(min, max) vertex degree as certified balls when degrees and coefficients are >= 0, else None.

    Closed forms per rule (the rule is monotone in each argument for
    non-negative inputs), so no list of vertices is ever built.

    >>> from powerspec.algebra.grammar import parse
    >>> lo, hi = degree_range(parse("direct(P(3)^1000000000)"))
    >>> float(lo), round(float(hi.log() / arb(2).log()), 6)
    (1.0, 1000000000.0)
    """
    if isinstance(node, Leaf):
        d = node.factor.exact_degrees(direction)
        lo, hi = min(d), max(d)
        if lo < 0:
            return None
        return _as_arb(lo), _as_arb(hi)
    a, b = node.comb.a, node.comb.b
    if a < 0 or b < 0:
        return None
    kids = []
    for c, k in node.operands:
        r = degree_range(c, direction)
        if r is None:
            return None
        kids.append((r, k))
    out = []
    with working():
        for j in (0, 1):
            mode = node.comb.mode
            if mode == "add":
                out.append(sum((r[j] * k for r, k in kids), arb(0)))
            elif mode == "mul":
                c, f = (_as_arb(Fraction(x)) for x in node.comb.to_s())
                s = arb(1)
                for r, k in kids:
                    s *= (c + f * r[j]) ** k
                out.append((s - c) / f)
            elif mode == "zero":
                out.append(arb(0))
            else:
                copies = sum(k for _, k in kids)
                if copies > MAX_FOLD:
                    return None
                fa, fb = _as_arb(a), _as_arb(b)
                seq = [r[j] for r, k in kids for _ in range(k)]
                acc = seq[0]
                for v in seq[1:]:
                    acc = fa * (acc + v) + fb * acc * v
                out.append(acc)
    return out[0], out[1]


__all__ = ["Count", "Shape", "components", "degree_range", "factored_power", "has_loops", "order_count",
           "integer_weights",
           "nonnegative", "shape"]
