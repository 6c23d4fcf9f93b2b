"""Exact spectral moments tr(M^p) of products and powers, never building the product.

tr(A^p) counts the closed walks of length p (weighted by the products of the
arc weights); tau_p = tr(M^p) / order is the p-th moment of the eigenvalue
distribution.  Factor weights are taken at the exact rational value of their
float64 (a weight typed 0.1 counts as the double nearest 0.1); no step uses a
fixed-width integer that a product of weights or counts could overflow.

How each node is computed (tau is multiplicative over Kronecker products,
which keeps the numbers small):

* **factors** -- exact traces of the factor matrix by modular arithmetic
  (:mod:`~powerspec.algebra.moment_traces`; dense residue stacks or sparse
  columns of twin-class representatives, so ``K(1, 3000)`` costs two columns);
* **rule products** (the kind's eigenvalues obey a combination rule,
  :data:`~powerspec.algebra.kinds.MATRIX_RULES`): Cartesian powers by the
  exponential generating function tr(e^{zM}) (e^{X(+)Y} = e^X (x) e^Y), so
  G^k costs binomials C(k, j), j <= p, whatever k; multiplicative rules
  (direct, strong, mix(1, b), mix(0, b)) by their linearisation s = c + f x,
  whose moments multiply; non-associative mixes as a left fold (<= 10^4
  copies, checked first);
* **regular products** -- M = shift + factor A and the binomial theorem;
* **non-factoring kinds** (laplacian / signless of direct, strong, mix with
  b != 0) -- signed sums over words in D and A (:mod:`~powerspec.algebra.words`).

The engine runs in a domain (:mod:`~powerspec.algebra.moment_domains`):
exact Fractions (checked against a digit limit before every power) or
certified 160-bit balls (any k).  :func:`trace_moments` returns tr(M^p)
exactly; when the order is astronomically large the value is kept in exact
factored form (order x tau, or sums of powers for multiplicative products,
:mod:`~powerspec.algebra.moment_factored`).

>>> from powerspec.algebra.grammar import parse
>>> trace_moments(parse("cart(K(2)^3)"), order=4)
[(1, 0), (2, 24), (3, 0), (4, 168)]
"""

from __future__ import annotations

import math
from fractions import Fraction
from functools import reduce

from powerspec.algebra.kinds import MATRIX_KINDS, MATRIX_RULES, Combination
from powerspec.algebra.moment_domains import BALL, EXACT, MAX_DIGITS, affine_moments, guard
from powerspec.algebra.moment_factored import factorable, factored
from powerspec.algebra.moment_traces import factor_matrix, matrix_traces
from powerspec.algebra.tree import Leaf, Node
from powerspec.algebra.words import MAX_FOLD, WordTraces
from powerspec.errors import InputError, NotExactError, SizeLimitError
from powerspec.numbers.hp import working

MAX_ORDER = 40
"""Largest moment order p accepted (word expansions grow like 2^p)."""


def check_order(order) -> int:
    """The order itself when it is an integer in 1..MAX_ORDER, else InputError."""
    if not isinstance(order, int) or isinstance(order, bool) or order < 1:
        raise InputError(f"the moment order must be a positive integer, got {order!r}")
    if order > MAX_ORDER:
        raise InputError(f"the moment order {order} is over the maximum of {MAX_ORDER}")
    return order


def fold_copies(node: Node) -> int:
    """The largest number of copies in any non-associative node of the tree (0 if none)."""
    if isinstance(node, Leaf):
        return 0
    own = sum(k for _, k in node.operands) if node.comb.mode is None else 0
    return max([own] + [fold_copies(c) for c, _ in node.operands])


def _egf_mul(d, x: list, y: list) -> list:
    out = []
    for p in range(len(x)):
        s = d.of(0)
        for i in range(p + 1):
            s = s + x[i] * y[p - i]
        out.append(s)
    return out


def _egf_power(d, e: list, k: int) -> list:
    """(e)^k truncated, e[0] = 1: sum_j C(k, j) u^j with u = e - 1 (no k-fold work)."""
    n = len(e)
    u = [d.of(0)] + e[1:]
    out = [d.of(1)] + [d.of(0)] * (n - 1)
    upow = list(out)
    for j in range(1, n):
        upow = _egf_mul(d, upow, u)
        c = math.comb(k, j)
        if c == 0:
            break
        out = [o + c * v for o, v in zip(out, upow, strict=True)]
    return out


def _rule_step(d, a: Fraction, b: Fraction, x: list, y: list) -> list:
    """tau of a(X(+)Y) + b X(x)Y from tau_X, tau_Y (the three terms commute)."""
    order = len(x) - 1
    out = [d.of(1)]
    for p in range(1, order + 1):
        s = d.of(0)
        for l_ in range(p + 1):
            if b ** l_ == 0:
                continue
            for i in range(p - l_ + 1):
                j = p - l_ - i
                coef = math.factorial(p) // (math.factorial(i) * math.factorial(j) * math.factorial(l_))
                s = s + d.of(coef * a ** (i + j) * b**l_) * x[i + l_] * y[j + l_]
        out.append(s)
    return out


class MomentEngine:
    """Normalised traces tau_p = tr(M^p) / order of expression nodes, p = 0..order.

    ``domain`` is ``"exact"`` (Fractions, the default) or ``"ball"``
    (certified arb balls, no size limit).  Results are cached per (node, kind);
    :attr:`how` collects one phrase per method used.
    """

    def __init__(self, order: int, direction: str = "out", domain: str = "exact"):
        check_order(order)
        if direction not in ("out", "in"):
            raise InputError(f"degree direction must be 'out' or 'in', got {direction!r}")
        if domain not in ("exact", "ball"):
            raise InputError(f"the moment domain must be 'exact' or 'ball', got {domain!r}")
        self.order = order
        self.direction = direction
        self.d = EXACT if domain == "exact" else BALL
        self._cache: dict = {}
        self._keep: list = []
        self.how: set[str] = set()

    def normalised(self, node: Node, kind: str) -> list:
        """[tau_0 = 1, tau_1, ..., tau_order]: Fractions (exact) or arb balls (ball domain)."""
        if kind not in MATRIX_KINDS:
            raise InputError(f"unknown matrix kind {kind!r}; choose one of {', '.join(MATRIX_KINDS)}")
        if kind == "normalized" and node.directed:
            raise InputError("the normalized Laplacian is defined for undirected graphs only; "
                             "use --matrix laplacian or transition")
        copies = fold_copies(node)
        if copies > MAX_FOLD:
            raise SizeLimitError(f"a non-associative mix is a left fold; {copies} copies is over the "
                                 f"limit of {MAX_FOLD}")
        with working():
            return self._get(node, kind)

    def _get(self, node: Node, kind: str) -> list:
        key = (id(node), kind)
        if key not in self._cache:
            self._cache[key] = self._compute(node, kind)
            self._keep.append(node)
        return self._cache[key]

    def _compute(self, node: Node, kind: str) -> list:
        d = self.d
        if isinstance(node, Leaf):
            self.how.add("exact traces of the factor matrices (modular arithmetic)")
            tr = matrix_traces(factor_matrix(node.factor, kind, self.direction), self.order)
            return [d.of(t / node.factor.n) for t in tr]
        rule = MATRIX_RULES[kind](node.comb)
        if rule is not None:
            return self._combine(rule, [(self._get(c, kind), k) for c, k in node.operands])
        deg = self.regular_degree(node)
        if deg is not None:
            self.how.add("regular product: M = shift + factor * A, binomial expansion")
            adj = self._get(node, "adjacency")
            if kind in ("normalized", "transition") and deg == 0:
                raise InputError(f"the {kind} matrix needs non-zero degrees; {node.label()} has "
                                 "degree 0")
            shift, factor = {"laplacian": (deg, d.of(-1)), "signless": (deg, d.of(1)),
                             "normalized": (d.of(1), None), "transition": (d.of(0), None)}[kind]
            if factor is None:
                factor = (-1 / deg) if kind == "normalized" else 1 / deg
            return affine_moments(d, adj, shift, factor)
        if kind in ("laplacian", "signless"):
            self.how.add("sums over words in D and A, each factorising over the Kronecker product")
            return WordTraces(d, self.order, self.direction).kind_moments(node, kind)
        raise NotExactError(
            f"the {kind} moments of {node.label()} do not follow from the factors: D^-1 does not "
            "split over a sum of Kronecker terms unless every factor is regular; use "
            "--matrix laplacian, or a direct product")

    def _combine(self, rule: Combination, parts: list[tuple[list, int]]) -> list:
        d = self.d
        if rule.mode == "add":
            self.how.add("Cartesian rule via tr(exp(zM)) = product of the factors' (binomials in k)")
            fact = [d.of(Fraction(1, math.factorial(p))) for p in range(self.order + 1)]
            egfs = [_egf_power(d, [t * f for t, f in zip(seq, fact, strict=True)], k)
                    for seq, k in parts]
            e = reduce(lambda x, y: _egf_mul(d, x, y), egfs)
            return [v * math.factorial(p) for p, v in enumerate(e)]
        if rule.mode == "mul":
            self.how.add("multiplicative rule: moments of the linearisation c + f*M multiply")
            c, f = (Fraction(x) for x in rule.to_s())
            prod = [d.of(1)] * (self.order + 1)
            for seq, k in parts:
                s = affine_moments(d, seq, c, f)
                prod = [x * d.power(y, k) for x, y in zip(prod, s, strict=True)]
            return affine_moments(d, prod, -c / f, 1 / f)
        if rule.mode == "zero":
            self.how.add("mix(0, 0): the zero matrix")
            return [d.of(1)] + [d.of(0)] * self.order
        self.how.add("non-associative mix: left fold of the multinomial expansion")
        seq = [s for s, k in parts for _ in range(k)]
        a, b = Fraction(rule.a), Fraction(rule.b)
        return reduce(lambda x, y: _rule_step(d, a, b, x, y), seq)

    def regular_degree(self, node: Node):
        """The common degree (Fraction or ball) when every factor below is exactly regular, else None."""
        key = (id(node), "#regular")
        if key in self._cache:
            return self._cache[key]
        d = self.d
        if isinstance(node, Leaf):
            deg = node.factor.regular_degree(self.direction)
            deg = None if deg is None else d.of(deg)
        else:
            kids = [(self.regular_degree(c), k) for c, k in node.operands]
            comb = node.comb
            if any(x is None for x, _ in kids):
                deg = None
            elif comb.mode == "add":
                deg = reduce(lambda s, t: s + t, (x * k for x, k in kids), d.of(0))
            elif comb.mode == "mul":
                c, f = (d.of(Fraction(x)) for x in comb.to_s())
                s = d.of(1)
                for x, k in kids:
                    s = s * d.power(c + f * x, k, "the degree of a power")
                deg = (s - c) / f
            elif comb.mode == "zero":
                deg = d.of(0)
            else:
                a, b = d.of(Fraction(comb.a)), d.of(Fraction(comb.b))
                seq = [x for x, k in kids for _ in range(k)]
                deg = reduce(lambda x, y: a * (x + y) + b * x * y, seq)
        self._cache[key] = deg
        self._keep.append(node)
        return deg


# --------------------------------------------------------------------------- public API
def trace_moments(node: Node, kind: str = "adjacency", order: int = 8, *, direction: str = "out",
                  per_vertex: bool = False) -> list[tuple[int, object]]:
    """Exact tr(M^p) for p = 1..order: [(p, value), ...].

    Values are Python ints when every weight is an integer, else Fractions
    (exact; float weights at their exact binary value); with ``per_vertex``
    they are tr(M^p)/order (Fractions or ints).  For products whose order is
    astronomically large the unnormalised values may be
    :class:`~powerspec.numbers.counts.BigCount` (exact factored form).
    Raises SizeLimitError (before the work) when a value cannot be held,
    NotExactError for the normalized/transition kinds of non-regular,
    non-direct products.

    >>> from powerspec.algebra.grammar import parse
    >>> trace_moments(parse("direct(K(1, 2), P(2))"), "laplacian", order=2)
    [(1, 8), (2, 20)]
    >>> trace_moments(parse("cart(K(2)^1000000000)"), order=2, per_vertex=True)
    [(1, 0), (2, 1000000000)]
    >>> [str(v) for _, v in trace_moments(parse("cart(K(2)^2000000)"), order=2)]
    ['0', '15625 * 2^2000007']
    """
    check_order(order)
    eng = MomentEngine(order, direction)
    try:
        tau = eng.normalised(node, kind)
    except SizeLimitError:
        if per_vertex or not factorable(node, kind):
            raise
        big = factored(node, kind, order, lambda child, k: eng.normalised(child, k),
                       WordTraces(EXACT, order, direction))
        return [(p, plain(v)) for p, v in enumerate(big) if p]
    if per_vertex:
        return [(p, plain(v)) for p, v in enumerate(tau) if p]
    return [(p, plain(scale_by_order(node.order, v))) for p, v in enumerate(tau) if p]


def scale_by_order(order, tau: Fraction):
    """order x tau exactly: an int / Fraction, or a BigCount when the order is one.

    >>> scale_by_order(12, Fraction(5, 4))
    Fraction(15, 1)
    """
    if tau == 0:
        return Fraction(0)
    if isinstance(order, int):
        guard(order.bit_length() + tau.numerator.bit_length(), "tr(M^p)")
        return order * tau
    return order * tau


def plain(v):
    """An int for integral Fractions; other values unchanged."""
    if isinstance(v, Fraction) and v.denominator == 1:
        return v.numerator
    return v


def moments_method(eng: MomentEngine) -> str:
    """One line saying how the moments were obtained."""
    return "exact: " + "; ".join(sorted(eng.how))


__all__ = ["MAX_DIGITS", "MAX_ORDER", "MomentEngine", "affine_moments", "check_order", "fold_copies",
           "moments_method", "plain", "scale_by_order", "trace_moments"]
