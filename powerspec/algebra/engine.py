"""The exact engine: certified spectra of expression nodes, for every matrix kind.

:class:`Engine` computes the spectrum of any node of the expression tree
(:mod:`powerspec.algebra.tree`) by the rules of
:mod:`powerspec.algebra.kinds`: associative combinations are powered by
compositions or squaring (:mod:`powerspec.algebra.powers`); ``mix`` with a
outside {0, 1} is evaluated as the documented left fold; a matrix kind that
is exact only for regular operands is an affine image of the adjacency
spectrum with the exactly known common degree, and refused with
:class:`~powerspec.errors.NotExactError` otherwise.  Values are exact
rationals where all factor eigenvalues involved are rational and certified
balls elsewhere; multiplicities are always exact.

Regularity is decided exactly and structurally (a product is regular iff
every operand is, or -- for multiplicative rules -- an operand is regular
with linearised degree 0), never from rounded degrees.
"""

from __future__ import annotations

import math
from fractions import Fraction

import numpy as np
from flint import arb, fmpq

from powerspec.algebra.kinds import (
    DIRECT,
    MATRIX_KINDS,
    MATRIX_RULES,
    NON_EXACT_REASON,
    REGULAR_FORM,
    Combination,
)
from powerspec.algebra.powers import check_atoms, combine, composition_count, fold, power
from powerspec.algebra.rules import scale_shift
from powerspec.algebra.tree import Leaf, Node, Product
from powerspec.errors import InputError, NotExactError, SizeLimitError
from powerspec.factors.certify import _residual_eigenvalues
from powerspec.numbers.convert import to_balls
from powerspec.numbers.counts import bit_length
from powerspec.numbers.counts import log2 as count_log2
from powerspec.numbers.hp import HP, as_ball, working
from powerspec.numbers.rationals import Rationals
from powerspec.spectra.spectrum import Spectrum, mult_array

DEFAULT_LIMIT = 2_000_000
"""Default largest number of distinct eigenvalues an exact answer may hold."""

PAIR_FACTOR = 4
"""A single combination step may form at most PAIR_FACTOR * limit pairs."""

BOUND_CAP = 2**63
"""Returned by Engine.bound when the bound exceeds 2^62 (it is then only 'enormous')."""

MAX_MULT_BYTES = 2 * 2**30
"""Memory allowed for the exact multiplicities of one spectrum (atoms x bits of the order)."""

FOLD_MAX = 10_000
"""Largest number of copies in a non-associative left fold."""


def _check_kind(kind: str) -> None:
    if kind not in MATRIX_KINDS:
        raise InputError(f"unknown matrix kind {kind!r}; choose one of {', '.join(MATRIX_KINDS)}")


def affine(sp: Spectrum, shift: HP | Fraction, factor: HP | Fraction) -> Spectrum:
    """The spectrum of shift + factor * M (same multiplicities), exact or certified.

    >>> affine(Spectrum.from_values([1, -1]), Fraction(2), Fraction(-1)).atoms()
    [(1.0, 1), (3.0, 1)]
    """
    shift, factor = _q(shift), _q(factor)
    if isinstance(shift, Fraction) and isinstance(factor, Fraction):
        v = sp.values if isinstance(sp.values, Rationals) else sp.as_balls()
        return Spectrum(scale_shift(v, shift, factor), sp.mult.copy(), order=sp.order)
    b = sp.as_balls()
    out = b.mul(to_balls([factor])).add(to_balls([shift]))
    return Spectrum(out, sp.mult.copy(), order=sp.order)


def _q(x) -> HP | Fraction:
    if isinstance(x, fmpq):
        return Fraction(int(x.p), int(x.q))
    if isinstance(x, (int, Fraction)):
        return Fraction(x)
    if isinstance(x, float):
        return Fraction(x)
    return x


class Engine:
    """Certified spectra of expression nodes, with a size limit checked before work.

    ``limit`` bounds the distinct eigenvalues of any intermediate or final
    result, ``limit * PAIR_FACTOR`` the pairs formed in one step.  Results are
    cached per (node, kind), so a repeated sub-expression costs once.

    >>> from powerspec.factors import K
    >>> from powerspec.algebra.kinds import CARTESIAN
    >>> q3 = Product(CARTESIAN, ((Leaf(K(2)), 3),))
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
        self._cache: dict[tuple[int, str], object] = {}
        self._keep: list[Node] = []  # keep nodes alive so id() keys stay unique

    def _cached(self, node: Node, key: str, compute):
        k = (id(node), key)
        if k not in self._cache:
            self._cache[k] = compute()
            self._keep.append(node)
        return self._cache[k]

    # ------------------------------------------------------------ degrees
    def degrees(self, node: Node) -> Spectrum:
        """Exact multiset of vertex degrees (row sums; column sums when direction='in')."""
        def compute():
            if isinstance(node, Leaf):
                d = node.factor.exact_degrees(self.direction)
                return Spectrum(Rationals.from_fractions(d), np.ones(len(d), dtype=np.int64))
            return self._combine(node.comb, [(self.degrees(c), k) for c, k in node.operands])
        return self._cached(node, "#degree", compute)

    def regular_degree(self, node: Node) -> HP | None:
        """The common degree (exact fmpq, or a ball when astronomically large) or None.

        Decided exactly and structurally; see the module docstring.
        """
        return self._cached(node, "#regular", lambda: self._regular_degree(node))

    def _regular_degree(self, node: Node) -> HP | None:
        if isinstance(node, Leaf):
            d = node.factor.regular_degree(self.direction)
            return None if d is None else fmpq(d.numerator, d.denominator)
        comb = node.comb
        if comb.mode == "zero":
            return fmpq(0)
        if comb.mode is None:
            if sum(k for _, k in node.operands) > FOLD_MAX or not self.fits_degrees(node):
                return None
            deg = self.degrees(node)
            return deg.ball(0) if len(deg) == 1 else None
        kids = [(self.regular_degree(c), k) for c, k in node.operands]
        shift, factor = comb.to_s()
        if comb.mode == "mul":
            with working():
                for d, _ in kids:
                    if d is not None and isinstance(d, fmpq) and _s_value(d, shift, factor) == 0:
                        back_shift, _ = comb.from_s()
                        return fmpq(back_shift.numerator, back_shift.denominator)
        if any(d is None for d, _ in kids):
            return None
        return _combine_scalars(comb, kids)

    def is_regular(self, node: Node) -> bool:
        """True when every vertex of the node has the same degree (exact, structural)."""
        return self.regular_degree(node) is not None

    def fits_degrees(self, node: Node) -> bool:
        """True when the exact degree multiset fits the atom limit (cheap bound)."""
        return self._bound(node, "#degree") <= self.limit

    # ----------------------------------------------------------- spectrum
    def spectrum(self, node: Node, kind: str = "adjacency") -> Spectrum:
        """The spectrum (merged multiset) of the node's matrix of the given kind.

        Raises NotExactError when the kind's spectrum does not follow from the
        factors', SizeLimitError when it would exceed the limit.
        """
        _check_kind(kind)
        return self._cached(node, kind, lambda: self._spectrum(node, kind))

    def _spectrum(self, node: Node, kind: str) -> Spectrum:
        if isinstance(node, Leaf):
            return node.factor.spectrum(kind, self.direction)
        if kind == "normalized" and node.directed:
            raise InputError("the normalized Laplacian is defined for undirected graphs only; "
                             "use --matrix laplacian or transition")
        rule = MATRIX_RULES[kind](node.comb)
        if rule is not None:
            if self._via_transition(node, kind):
                return affine(self.spectrum(node, "transition"), Fraction(1), Fraction(-1))
            return self._combine(rule, [(self.spectrum(c, kind), k) for c, k in node.operands])
        if kind in ("laplacian", "signless") and not self.is_regular(node):
            blocks = self._one_irregular(node, kind)
            if blocks is not None:
                return blocks
        shift, factor = self._regular_form(node, kind)
        return affine(self.spectrum(node, "adjacency"), shift, factor)

    def _via_transition(self, node: Node, kind: str) -> bool:
        """True for the normalized Laplacian of a direct product whose own degrees are all
        positive while some factor's are not (-1 * -1 = 1).

        N = I - D^-1/2 A D^-1/2 is then similar to I - P, and the transition matrix
        P = D^-1 A of a direct product is the Kronecker product of the factors' (defined
        for any non-zero degrees), so spec(N) = 1 - spec(P) exactly.
        """
        if kind != "normalized" or not isinstance(node, Product) or node.comb != DIRECT:
            return False
        if self._degree_sign(node) != 1:
            return False
        return any(min(f.exact_degrees(self.direction)) <= 0 for f in node.leaves())

    def _degree_sign(self, node: Node) -> int:
        """+1 or -1 when every degree of a direct product of factors has that sign, else 0.

        Exact (the degrees are exact rationals); 0 also for other product kinds.
        """
        if isinstance(node, Leaf):
            signs = {(d > 0) - (d < 0) for d in node.factor.exact_degrees(self.direction)}
            return signs.pop() if len(signs) == 1 else 0
        if node.comb != DIRECT:
            return 0
        out = 1
        for child, k in node.operands:
            out *= self._degree_sign(child) ** (2 - k % 2)  # the sign to the k, 0 stays 0
        return out

    def linear_form(self, node: Product, kind: str):
        """(combination, operand kind, (shift, factor)) with M = shift + factor * (rule spectrum).

        The kind's eigenvalues of ``node`` are the ``combination`` of its operands'
        ``operand kind`` eigenvalues, mapped by the affine post-transform (exact
        Fractions, or balls for astronomically large degrees).  Raises
        NotExactError when no such form exists.
        """
        if self._via_transition(node, kind):
            return MATRIX_RULES["transition"](node.comb), "transition", (Fraction(1), Fraction(-1))
        rule = MATRIX_RULES[kind](node.comb)
        if rule is not None:
            return rule, kind, (Fraction(0), Fraction(1))
        return node.comb, "adjacency", self._regular_form(node, kind)

    def _regular_form(self, node: Product, kind: str):
        d = self.regular_degree(node)
        if d is None:
            raise NotExactError(
                f"the {kind} spectrum of {node.label()} is not exact: {NON_EXACT_REASON[kind]} "
                "unless every factor is regular; use --matrix adjacency, or a Cartesian product "
                "for laplacian/signless")
        if kind in ("normalized", "transition"):
            with working():
                zero = isinstance(d, fmpq) and d == 0
                if zero or (not isinstance(d, fmpq) and as_ball(d).contains(0)):
                    raise InputError(f"the {kind} matrix needs non-zero degrees; "
                                     f"{node.label()} has degree 0")
                if kind == "normalized" and not (d > 0):
                    raise InputError(f"the normalized Laplacian needs positive degrees; "
                                     f"{node.label()} has negative degree")
        if isinstance(d, fmpq):
            return REGULAR_FORM[kind](Fraction(int(d.p), int(d.q)))
        with working():
            table = {"adjacency": (fmpq(0), fmpq(1)), "laplacian": (d, fmpq(-1)),
                     "signless": (d, fmpq(1)), "normalized": (fmpq(1), -1 / d),
                     "transition": (fmpq(0), 1 / d)}
            return table[kind]

    def _one_irregular(self, node: Product, kind: str) -> Spectrum | None:
        """D -+ A of G o H with G one irregular undirected factor and H regular of degree e.

        With A_H diagonalised, D -+ A becomes block diagonal with one n x n
        block per eigenvalue mu of A_H: (a + b e) D_G + a e I -+ ((a + b mu) A_G
        + a mu I), taken with mu's multiplicity.  Each block is symmetric; its
        eigenvalues are certified by the residual bound of
        :mod:`powerspec.factors.certify`, widened by the uncertainty of mu.
        """
        comb = node.comb
        if comb.mode not in ("add", "mul") or node.directed:
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
        e = self.regular_degree(h)
        if not isinstance(e, fmpq):
            return None
        mu_sp = self.spectrum(h, "adjacency")
        f = g_node.factor
        if not mu_sp.is_real or len(mu_sp) * f.n > self.budget:
            return None
        ef = float(Fraction(int(e.p), int(e.q)))
        d_g = np.diag([float(x) for x in f.exact_degrees(self.direction)])
        a_g = f.adjacency.toarray()
        a_norm = float(np.linalg.norm(a_g))
        sign = -1.0 if kind == "laplacian" else 1.0
        a, b = float(comb.a), float(comb.b)
        eye = np.eye(f.n)
        vals, mults = [], []
        for mu, m, r in zip(mu_sp.real_midpoints().tolist(), mu_sp.mult.tolist(),
                            mu_sp.radii().tolist(), strict=True):
            block = (a + b * ef) * d_g + a * ef * eye + sign * ((a + b * mu) * a_g + a * mu * eye)
            # float rounding of forming the block, the degrees and mu's own radius
            extra = (r * (abs(b) * a_norm + abs(a)) + 8 * 2.0**-53 * float(np.linalg.norm(block))
                     + 4 * 2.0**-53 * (abs(a) + abs(b) * abs(ef)) * float(np.max(np.abs(d_g))))
            for v, _ in _residual_eigenvalues(block, extra):
                vals.append(v)
                mults.append(int(m))
        order = node.order
        return Spectrum(to_balls(vals), mult_array(mults, order if isinstance(order, int) else None),
                        order=order)

    # --------------------------------------------------------- combining
    def _combine(self, comb: Combination, parts: list[tuple[Spectrum, int]]) -> Spectrum:
        if comb.mode is None:
            copies = sum(k for _, k in parts)
            if copies > FOLD_MAX:
                raise SizeLimitError(
                    f"a non-associative mix is a left fold; {copies} copies exceed the cap of "
                    f"{FOLD_MAX}")
            seq = [sp for sp, k in parts for _ in range(k)]
            return fold(seq, comb, self.budget, self.limit)
        powered = [check_atoms(self._check(power(sp, k, comb, self.budget, self.limit)), self.limit)
                   for sp, k in parts]
        acc = powered[0]
        for p in powered[1:]:
            acc = self._check(check_atoms(combine(comb, acc, p, self.budget), self.limit))
        return acc

    def _check(self, sp: Spectrum) -> Spectrum:
        if len(sp) * bit_length(sp.order) > 8 * MAX_MULT_BYTES:
            raise SizeLimitError("the exact multiplicities would need more than 2 GiB")
        return sp

    def fits(self, node: Node, kind: str = "adjacency") -> bool:
        """True when the cheap bound says the exact spectrum fits the atom and memory limits."""
        b = self.bound(node, kind)
        return b <= self.limit and b * bit_length(node.order) <= 8 * MAX_MULT_BYTES

    # ------------------------------------------------------------- bounds
    def bound(self, node: Node, kind: str = "adjacency") -> int:
        """Cheap upper bound on the number of distinct eigenvalues (no merging assumed)."""
        _check_kind(kind)
        return self._cached(node, "#bound " + kind, lambda: self._bound(node, kind))

    def _bound(self, node: Node, kind: str) -> int:
        if self._via_transition(node, kind):
            return self._bound(node, "transition")
        if isinstance(node, Leaf):
            if kind == "#degree":
                return len(set(node.factor.exact_degrees(self.direction)))
            return min(node.factor.n, len(self.spectrum(node, kind))) \
                if node.factor.n <= 4000 else node.factor.n
        if kind == "#degree":
            rule, use = node.comb, "#degree"
        else:
            rule = MATRIX_RULES[kind](node.comb)
            use = kind if rule is not None else "adjacency"
            rule = rule if rule is not None else node.comb
        rs = [self._bound(child, use) for child, _ in node.operands]
        total = 0.0
        for (child, k), r in zip(node.operands, rs, strict=True):
            child_bits = k * count_log2(child.order)
            if rule.mode is None:
                total += min(k * math.log2(max(r, 1)), child_bits)
            elif r > 1:
                # log2 C(k + r - 1, r - 1) <= (r - 1) log2(k + r - 1)
                total += min((r - 1) * math.log2(k + r - 1), child_bits)
        total = min(total, count_log2(node.order))
        if total > 62:
            return BOUND_CAP
        exact = 1
        for (child, k), r in zip(node.operands, rs, strict=True):
            rb = r**k if rule.mode is None else composition_count(k, r)
            small = k * count_log2(child.order) <= 64
            exact *= min(rb, child.order**k) if small else rb
        return min(exact, node.order) if isinstance(node.order, int) else exact


def _s_value(d: fmpq, shift: Fraction, factor: Fraction) -> fmpq:
    return fmpq(shift.numerator, shift.denominator) + fmpq(factor.numerator, factor.denominator) * d


def _combine_scalars(comb: Combination, kids: list[tuple[HP, int]]) -> HP:
    """The rule applied to the copies of regular degrees: d_1^(o k_1) o d_2^(o k_2) o ..."""
    shift, factor = comb.to_s()
    with working():
        sh = fmpq(shift.numerator, shift.denominator)
        fa = fmpq(factor.numerator, factor.denominator)
        if comb.mode == "add":
            total = fmpq(0)
            for d, k in kids:
                total = total + d * k
            return total
        s = fmpq(1)
        for d, k in kids:
            base = sh + fa * d
            s = s * _pow_hp(base, k)
        return (s - sh) / fa


def _pow_hp(x: HP, k: int) -> HP:
    """x ** k: exact while the result stays below 2**16384 bits, a certified ball beyond."""
    if isinstance(x, fmpq):
        bits = max(int(x.p).bit_length(), int(x.q).bit_length()) * k
        if bits <= 1 << 14:
            return x**k
        x = arb(x)
    return x**k


__all__ = ["BOUND_CAP", "DEFAULT_LIMIT", "Engine", "Leaf", "Node", "Product", "affine"]
