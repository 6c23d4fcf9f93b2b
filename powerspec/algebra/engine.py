"""Product algebra: expression trees of factors and products, and the exact engine.

An expression is a tree of :class:`Leaf` (a factor graph) and
:class:`Product` nodes.  A product node holds a
:class:`~powerspec.products.Combination` and a tuple of operands, each an
(expression, copies) pair: ``cart(C(10)^6)`` is one product node with the
single operand (C(10), 6).

:class:`Engine` computes the exact spectrum of any node for any matrix kind
by the rules of :mod:`powerspec.products`: associative combinations are
linearised and powered in s-space (:mod:`powerspec.powers`); ``mix`` with a
outside {0, 1} is evaluated as the documented left fold; a matrix kind that
is exact only for regular operands is obtained from the adjacency spectrum
and the (exactly known) common degree, and refused with
:class:`~powerspec.errors.NotExactError` otherwise.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from functools import reduce

import numpy as np

from powerspec.algebra.kinds import (
    MATRIX_KINDS,
    MATRIX_RULES,
    NON_EXACT_REASON,
    REGULAR_FORM,
    Combination,
)
from powerspec.algebra.powers import check_pairs, composition_count, outer, power
from powerspec.errors import InputError, NotExactError, SizeLimitError
from powerspec.factors import Factor
from powerspec.numbers.counts import BigCount, power_product
from powerspec.numbers.counts import log2 as count_log2
from powerspec.spectra.measures import LINEAR_MAX, Spectrum, mult_array, outer_mult, polar_add, polar_mul

DEFAULT_LIMIT = 2_000_000
"""Default largest number of distinct eigenvalues an exact answer may hold."""

PAIR_FACTOR = 4
"""A single combination step may form at most PAIR_FACTOR * limit pairs."""

BOUND_CAP = 2**63
"""Returned by Engine.bound when the bound exceeds 2^62 (it is then only 'enormous')."""

MAX_MULT_BYTES = 2 * 2**30
"""Memory allowed for the exact multiplicities of one spectrum (atoms x bits of the order)."""


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
            if not isinstance(k, int) or isinstance(k, bool) or k < 1:
                raise InputError(f"copies must be an integer >= 1, got {k!r}")

    @property
    def order(self) -> int | BigCount:
        """Number of vertices, prod n_j^k_j: an exact int, or a BigCount when enormous."""
        return power_product((node.order, k) for node, k in self.operands)

    @property
    def directed(self) -> bool:
        """True when any factor below is directed."""
        return any(node.directed for node, _ in self.operands)

    def label(self) -> str:
        """The expression text of this node."""
        head = self.name or self.comb.label()
        if head.startswith("mix("):
            prefix = head[:-1] + ", "
        else:
            prefix = head + "("
        parts = [node.label() + (f"^{k}" if k != 1 else "") for node, k in self.operands]
        return prefix + ", ".join(parts) + ")"

    def leaves(self) -> list[Factor]:
        """The factors of this subtree."""
        return [f for node, _ in self.operands for f in node.leaves()]


Node = Leaf | Product


def _check_kind(kind: str) -> None:
    if kind not in MATRIX_KINDS:
        raise InputError(f"unknown matrix kind {kind!r}; choose one of {', '.join(MATRIX_KINDS)}")


class Engine:
    """Exact spectra of expression nodes, with a size limit checked before work.

    ``limit`` bounds the distinct eigenvalues of any intermediate or final
    result, ``limit * PAIR_FACTOR`` the pairs formed in one step.  Results are
    cached per (node, kind), so a repeated sub-expression costs once.

    >>> from powerspec.factors import K
    >>> q3 = Product(Combination(1.0, 0.0), ((Leaf(K(2)), 3),))
    >>> Engine().spectrum(q3).atoms()
    [(-3.0, 1), (-1.0, 3), (1.0, 3), (3.0, 1)]
    """

    def __init__(self, limit: int = DEFAULT_LIMIT, direction: str = "out"):
        if not isinstance(limit, int) or isinstance(limit, bool) or limit < 1:
            raise InputError(f"the limit must be a positive integer, got {limit!r}")
        if direction not in ("out", "in"):
            raise InputError(f"degree direction must be 'out' or 'in', got {direction!r}")
        self.limit = limit
        self.budget = limit * PAIR_FACTOR
        self.direction = direction
        self._cache: dict[tuple[int, str], Spectrum] = {}
        self._keep: list[Node] = []  # keep nodes alive so id() keys stay unique

    # ------------------------------------------------------------ degrees
    def degrees(self, node: Node) -> Spectrum:
        """Exact multiset of vertex degrees (row sums; column sums when direction='in')."""
        key = (id(node), "#degree")
        if key not in self._cache:
            if isinstance(node, Leaf):
                sp = Spectrum.from_values(node.factor.degrees(self.direction))
            else:
                sp = self._combine(node.comb, [(self.degrees(c), k) for c, k in node.operands])
            self._store(key, node, sp)
        return self._cache[key]

    def is_regular(self, node: Node) -> bool:
        """True when every vertex of the node has the same degree (exact multiset test)."""
        return len(self.degrees(node)) == 1

    # ----------------------------------------------------------- spectrum
    def spectrum(self, node: Node, kind: str = "adjacency") -> Spectrum:
        """The exact spectrum (merged multiset) of the node's matrix of the given kind.

        Raises NotExactError when the kind's spectrum does not follow from the
        factors', SizeLimitError when it would exceed the limit.
        """
        _check_kind(kind)
        key = (id(node), kind)
        if key not in self._cache:
            self._store(key, node, self._spectrum(node, kind))
        return self._cache[key]

    def _store(self, key, node, sp) -> None:
        self._cache[key] = sp
        self._keep.append(node)

    def _spectrum(self, node: Node, kind: str) -> Spectrum:
        if isinstance(node, Leaf):
            return Spectrum.from_values(node.factor.eigenvalues(kind, self.direction))
        if kind == "normalized" and node.directed:
            raise InputError(
                "the normalized Laplacian is defined for undirected graphs only; "
                "use --matrix laplacian or transition"
            )
        rule = MATRIX_RULES[kind](node.comb)
        if rule is not None:
            return self._combine(rule, [(self.spectrum(c, kind), k) for c, k in node.operands])
        if not self.is_regular(node) and kind in ("laplacian", "signless"):
            blocks = self._one_irregular(node, kind)
            if blocks is not None:
                return blocks
        shift, factor = self._regular_form(node, kind)
        return self.spectrum(node, "adjacency").affine(shift, factor)

    def linear_form(self, node: Product, kind: str):
        """(combination, operand kind, (shift, factor)) with M = shift + factor * (rule spectrum).

        The kind's eigenvalues of ``node`` are the ``combination`` of its operands'
        ``operand kind`` eigenvalues, mapped by the affine post-transform.  Raises
        NotExactError when no such form exists (a kind exact only for regular
        products, on an irregular one) -- even where the engine could still
        enumerate the spectrum block by block.
        """
        rule = MATRIX_RULES[kind](node.comb)
        if rule is not None:
            return rule, kind, (0.0, 1.0)
        return node.comb, "adjacency", self._regular_form(node, kind)

    def _regular_form(self, node: Product, kind: str) -> tuple[float, float]:
        deg = self.degrees(node)
        if len(deg) != 1:
            lo, hi = _real_range(deg)
            raise NotExactError(
                f"the {kind} spectrum of {node.label()} is not exact: "
                f"{NON_EXACT_REASON[kind]} unless every factor is regular, and degrees here "
                f"range from {lo:.6g} to {hi:.6g}; use --matrix adjacency, or a Cartesian "
                f"product for laplacian/signless"
            )
        d = deg.value(0)
        if kind in ("normalized", "transition") and d == 0:
            raise InputError(f"the {kind} matrix needs non-zero degrees; {node.label()} has degree 0")
        return REGULAR_FORM[kind](d)

    def _one_irregular(self, node: Product, kind: str) -> Spectrum | None:
        """D -+ A of G o H with G one irregular factor and H regular of degree e, or None.

        With A_H triangularised (Schur), D -+ A becomes block triangular with one
        n x n diagonal block per eigenvalue mu of A_H:
        (a + b e) D_G + a e I -+ ((a + b mu) A_G + a mu I).  Its eigenvalues, taken
        with mu's multiplicity, are the spectrum -- exact up to the eigensolver.
        """
        comb = node.comb
        if comb.mode is None:
            return None
        irregular = [i for i, (c, _) in enumerate(node.operands) if not self.is_regular(c)]
        if len(irregular) != 1:
            return None
        i = irregular[0]
        g_node, copies = node.operands[i]
        if not isinstance(g_node, Leaf) or copies != 1 or g_node.factor.n > 400:
            return None
        rest = node.operands[:i] + node.operands[i + 1:]
        if not rest:
            return None
        h = rest[0][0] if len(rest) == 1 and rest[0][1] == 1 else Product(comb, rest)
        if not self.fits(h, "adjacency"):
            return None
        mu_sp = self.spectrum(h, "adjacency")
        if mu_sp.is_polar or len(mu_sp) * g_node.factor.n > self.budget:
            return None
        e = self.degrees(h).value(0)
        f = g_node.factor
        d_g = np.diag(f.degrees(self.direction))
        a_g = f.adjacency.toarray()
        sign = -1.0 if kind == "laplacian" else 1.0
        a, b = comb.a, comb.b
        vals, mults = [], []
        for mu, m in zip(mu_sp.values.tolist(), mu_sp.mult.tolist(), strict=True):
            eye = np.eye(f.n)
            block = (a + b * e) * d_g + a * e * eye + sign * ((a + b * mu) * a_g + a * mu * eye)
            symmetric = not (f.directed or np.iscomplex(mu))
            ev = np.linalg.eigvalsh(block) if symmetric else np.linalg.eigvals(block)
            vals.append(ev)
            mults.extend([int(m)] * f.n)
        values = np.concatenate(vals)
        scale = max(1.0, float(np.max(np.abs(values), initial=0.0)))
        order = node.order
        return Spectrum(values, mult_array(mults, order), order=order,
                        atol=1e-12 * scale * max(1, f.n))

    # --------------------------------------------------------- combining
    def _combine(self, comb: Combination, parts: list[tuple[Spectrum, int]]) -> Spectrum:
        mode = comb.mode
        if mode is None:
            return self._fold(comb, parts)
        to_shift, to_factor = comb.to_s()
        powered = [
            power(sp.affine(to_shift, to_factor), k, mode, self.budget, self.limit)
            for sp, k in parts
        ]
        for p in powered:
            self._check(p)
        result = reduce(lambda x, y: self._check(outer(x, y, mode, self.budget)), powered)
        back_shift, back_factor = comb.from_s()
        return result.affine(back_shift, back_factor)

    def _fold(self, comb: Combination, parts: list[tuple[Spectrum, int]]) -> Spectrum:
        # Non-associative mix: ((x1 o x2) o x3) o ... in the written order of the copies.
        seq = [sp for sp, k in parts for _ in range(k)] if sum(k for _, k in parts) < 10**7 else None
        if seq is None:
            raise SizeLimitError("a left fold over 10^7 or more copies is beyond the exact engine")
        acc = seq[0]
        for nxt in seq[1:]:
            acc = self._check(fold_outer(comb, acc, nxt, self.budget))
        return acc

    def _check(self, sp: Spectrum) -> Spectrum:
        if len(sp) > self.limit:
            raise SizeLimitError(
                f"an intermediate result has {len(sp)} distinct eigenvalues, over the limit "
                f"of {self.limit}"
            )
        if len(sp) * sp.order.bit_length() > 8 * MAX_MULT_BYTES:
            raise SizeLimitError("the exact multiplicities would need more than 2 GiB")
        return sp

    def fits(self, node: Node, kind: str = "adjacency") -> bool:
        """True when the cheap bound says the exact spectrum fits the atom and memory limits."""
        b = self.bound(node, kind)
        return b <= self.limit and b * node.order.bit_length() <= 8 * MAX_MULT_BYTES

    # ------------------------------------------------------------- bounds
    def bound(self, node: Node, kind: str = "adjacency") -> int:
        """Cheap upper bound on the number of distinct eigenvalues (no merging assumed)."""
        _check_kind(kind)
        if isinstance(node, Leaf):
            return len(self.spectrum(node, kind))
        rule = MATRIX_RULES[kind](node.comb)
        use = kind if rule is not None else "adjacency"
        comb = rule if rule is not None else node.comb
        # Work in log2 so that astronomically large powers cost nothing.
        rs = [self.bound(child, use) for child, _ in node.operands]
        total = 0.0
        for (child, k), r in zip(node.operands, rs, strict=True):
            child_bits = k * count_log2(child.order)
            if comb.mode is None:
                total += min(k * math.log2(max(r, 1)), child_bits)
            elif r <= 1:
                total += 0.0
            else:
                # log2 C(k + r - 1, r - 1) <= (r - 1) log2(k + r - 1)
                total += min((r - 1) * math.log2(k + r - 1), child_bits)
        total = min(total, count_log2(node.order))
        if total > 62:
            return BOUND_CAP  # far beyond any limit; the exact value is not needed
        exact = 1
        for (child, k), r in zip(node.operands, rs, strict=True):
            rb = r**k if comb.mode is None else composition_count(k, r)
            small = k * count_log2(child.order) <= 64
            exact *= min(rb, child.order**k) if small else rb
        return min(exact, node.order) if isinstance(node.order, int) else exact


def fold_outer(comb: Combination, a: Spectrum, b: Spectrum, budget: int) -> Spectrum:
    """Spectrum of the generalized product a(A(+)B) + b(A(x)B): values comb(x_i, y_j).

    >>> x = Spectrum.from_values([1.0, 2.0])
    >>> fold_outer(Combination(2.0, 1.0), x, x, 10).atoms()
    [(5.0, 1), (8.0, 2), (12.0, 1)]
    """
    check_pairs(a, b, budget)
    mult = outer_mult(a.mult, b.mult, a.order, b.order)
    order = a.order * b.order
    if not (a.is_polar or b.is_polar):
        ma = float(np.max(np.abs(a.values), initial=0.0))
        mb = float(np.max(np.abs(b.values), initial=0.0))
        if abs(comb.a) * (ma + mb) + abs(comb.b) * ma * mb < LINEAR_MAX:
            vals = comb(a.values[:, None], b.values[None, :]).ravel()
            ea, eb = a.atol or 0.0, b.atol or 0.0
            atol = abs(comb.a) * (ea + eb) + abs(comb.b) * (ea * mb + eb * ma + ea * eb)
            atol += 1e-15 * float(np.max(np.abs(vals), initial=0.0))
            return Spectrum(vals, mult, order=order, atol=atol)
    la, ta = (x[:, None] for x in a.to_polar())
    lb, tb = (x[None, :] for x in b.to_polar())
    terms = []
    for coef, (l_, t_) in ((comb.a, (la, ta)), (comb.a, (lb, tb)), (comb.b, polar_mul(la, ta, lb, tb))):
        if coef != 0:
            cl, ct = math.log(abs(coef)), 0.0 if coef > 0 else 0.5
            terms.append(polar_mul(*np.broadcast_arrays(l_, t_), cl, ct))
    l_acc, t_acc = terms[0]
    for l_, t_ in terms[1:]:
        l_acc, t_acc = polar_add(l_acc, t_acc, *np.broadcast_arrays(l_, t_))
    l_acc, t_acc = np.broadcast_arrays(l_acc, t_acc)
    return Spectrum.polar(np.ravel(l_acc), np.ravel(t_acc), mult, order=order)


def _real_range(sp: Spectrum) -> tuple[float, float]:
    r = sp.real_parts()
    return float(np.min(r)), float(np.max(r))


__all__ = ["Leaf", "Product", "Node", "Engine", "fold_outer", "DEFAULT_LIMIT", "mult_array"]
