"""Normalised traces of words in D and A of any product node (the non-factoring Laplacians).

For L = D - A (or D + A) of a direct, strong or ``mix`` product the matrices
D and A of the product are Kronecker combinations of the factors' D and A,
so tr((D - A)^p) is a signed sum over the 2^p words in the letters D and A,
and the normalised trace tau(w) = tr(w) / order of every word factorises
(DESIGN §2):

* a multiplicative node (a in {0, 1}, b != 0) in its own linearised letters
  c I + f D, c I + f A is a Kronecker product: tau(w) = prod tau_child(w)^k;
* other letter bases are reached by expanding c I + f X over subsets of
  positions (2^p subwords);
* a Cartesian node turns each letter into a sum over copies, so a word's
  trace is a sum over splits of the positions between two halves (binary
  splitting over the copies: log2(k) levels);
* a non-associative ``mix`` is a left fold, each step a 3-way split.

Words are (length, mask) with bit i the i-th letter (0: D, 1: A), reduced to
their smallest rotation (traces are invariant under rotation).  Numbers live
in a :mod:`~powerspec.algebra.moment_domains` domain (exact or ball); the
number of elementary terms is estimated by :func:`word_work` before any work
and capped by :data:`WORK_LIMIT`.

>>> from powerspec.algebra.grammar import parse
>>> from powerspec.algebra.moment_domains import EXACT
>>> w = WordTraces(EXACT, 2)
>>> [str(x) for x in w.kind_moments(parse("direct(K(1, 2), P(2))"), "laplacian")]
['1', '4/3', '10/3']
"""

from __future__ import annotations

import math
from fractions import Fraction

from powerspec.algebra.moment_traces import word_table
from powerspec.algebra.tree import Leaf, Node, Product
from powerspec.errors import SizeLimitError

WORK_LIMIT = 4_000_000
"""Most elementary terms one word expansion may add up (estimated before work)."""

MAX_FOLD = 10_000
"""Most copies of a non-associative mix (evaluated as a left fold)."""

ONE = (Fraction(0), Fraction(1))
"""The plain letter basis: D and A themselves."""


def own_basis(node: Product) -> tuple[Fraction, Fraction]:
    """The linearised letter basis (c, f) of a multiplicative node (c I + f X), else (0, 1)."""
    if node.comb.mode == "mul":
        c, f = node.comb.to_s()
        return Fraction(c), Fraction(f)
    return ONE


def _canon(p: int, mask: int) -> int:
    """The smallest rotation of a p-letter word."""
    if p <= 1:
        return mask
    full = (1 << p) - 1
    best = m = mask
    for _ in range(p - 1):
        m = ((m >> 1) | ((m & 1) << (p - 1))) & full
        best = min(best, m)
    return best


def _sub(mask: int, sel: int) -> tuple[int, int]:
    """(length, mask) of the subword of ``mask`` at the positions set in ``sel``."""
    out = n = pos = 0
    while sel:
        if sel & 1:
            out |= ((mask >> pos) & 1) << n
            n += 1
        sel >>= 1
        pos += 1
    return n, out


def _necklace_work(order: int, base: int) -> float:
    """sum over lengths p of (about 2^p / p rotation classes) x base^p terms each."""
    return sum(math.ceil(2**p / p) * float(base) ** p for p in range(1, order + 1))


def _split_levels(k: int) -> int:
    """Distinct copy counts > 1 met by the binary splitting of k copies."""
    seen, todo = set(), [k]
    while todo:
        x = todo.pop()
        if x > 1 and x not in seen:
            seen.add(x)
            todo += [x // 2, x - x // 2]
    return len(seen)


def word_work(node: Node, order: int, basis=ONE) -> float:
    """An upper estimate of the elementary terms the word expansion of ``node`` needs.

    >>> from powerspec.algebra.grammar import parse
    >>> word_work(parse("direct(P(3)^5)"), 4, own_basis(parse("direct(P(3)^5)"))) < 1000
    True
    """
    words = 2.0 ** (order + 1)
    if isinstance(node, Leaf):
        return words
    if node.comb.mode == "mul":
        own = own_basis(node)
        total = words * len(node.operands) + sum(word_work(c, order, own) for c, _ in node.operands)
        return total + (_necklace_work(order, 2) if own != basis else 0.0)
    if node.comb.mode == "add":
        levels = sum(_split_levels(k) for _, k in node.operands) + len(node.operands) - 1
        total = _necklace_work(order, 2) * levels + sum(word_work(c, order) for c, _ in node.operands)
        return total + (_necklace_work(order, 2) if basis != ONE else 0.0)
    copies = sum(k for _, k in node.operands)
    if copies > MAX_FOLD:
        return math.inf
    return copies * _necklace_work(order, 3) + sum(word_work(c, order) for c, _ in node.operands)


class WordTraces:
    """Normalised traces tau(w) of words in (c I + f D, c I + f A) for any node, in a domain."""

    def __init__(self, domain, order: int, direction: str = "out"):
        self.d = domain
        self.order = order
        self.direction = direction
        self._memo: dict = {}
        self._keep: list = []
        self.work = 0

    def check(self, node: Node) -> None:
        """SizeLimitError before work when the expansion would exceed WORK_LIMIT terms."""
        w = word_work(node, self.order, own_basis(node) if isinstance(node, Product) else ONE)
        if w > WORK_LIMIT:
            raise SizeLimitError(
                f"the word expansion for these moments needs about {w:.2g} terms (over the limit of "
                f"{WORK_LIMIT}); ask for a lower --order, or fewer copies in a non-associative mix")

    def _spend(self, n: int) -> None:
        self.work += n
        if self.work > 4 * WORK_LIMIT:  # safety net; word_work is checked up front
            raise SizeLimitError("the word expansion for these moments exceeded its budget; "
                                 "ask for a lower --order")

    # ----------------------------------------------------------- kinds
    def kind_moments(self, node: Product, kind: str) -> list:
        """[tau_0, ..., tau_order] of D - A (laplacian) or D + A (signless) of the node."""
        self.check(node)
        d = self.d
        c, f = own_basis(node)
        basis = (c, f)
        sums = [d.of(1)]
        for j in range(1, self.order + 1):
            s = d.of(0)
            for mask in range(1 << j):
                v = self.trace(node, basis, j, mask)
                s = s - v if (kind == "laplacian" and bin(mask).count("1") % 2) else s + v
            sums.append(s)
        out = [d.of(1)]
        inv_f = d.of(1 / f)
        for p in range(1, self.order + 1):
            if kind == "laplacian":  # D - A = (S_D - S_A) / f: the shift c cancels
                out.append(sums[p] * inv_f**p)
            else:  # D + A = (S_D + S_A - 2c I) / f
                tot = d.of(0)
                for j in range(p + 1):
                    tot = tot + math.comb(p, j) * d.of((-2 * c) ** (p - j)) * sums[j]
                out.append(tot * inv_f**p)
        return out

    # ----------------------------------------------------------- traces
    def trace(self, node: Node, basis: tuple[Fraction, Fraction], p: int, mask: int):
        """tau(word) of the node in the given letter basis."""
        if p == 0:
            return self.d.of(1)
        mask = _canon(p, mask)
        key = (id(node), basis, p, mask)
        memo = self._memo
        if key in memo:
            return memo[key]
        if isinstance(node, Leaf):
            self._leaf_table(node, basis)
            return memo[key]
        comb = node.comb
        if comb.mode == "mul":
            own = own_basis(node)
            if basis == own:
                v = self.d.of(1)
                for child, k in node.operands:
                    v = v * self.d.power(self.trace(child, own, p, mask), k, "a word trace of a power")
            else:
                v = self._rebase(node, own, basis, p, mask)
        elif basis != ONE:
            v = self._rebase(node, ONE, basis, p, mask)
        elif comb.mode == "add":
            v = self._copies_all(node.operands, p, mask)
        else:
            v = self._fold(node, p, mask)
        memo[key] = v
        self._keep.append(node)
        return v

    def _rebase(self, node, own, basis, p, mask):
        # c I + f X = alpha I + beta (c0 I + f0 X)
        c0, f0 = own
        c, f = basis
        beta = f / f0
        alpha = c - beta * c0
        d = self.d
        if alpha == 0:
            return d.of(beta**p) * self.trace(node, own, p, mask)
        self._spend(1 << p)
        total = d.of(0)
        for sel in range(1 << p):
            n, sub = _sub(mask, sel)
            total = total + d.of(alpha ** (p - n) * beta**n) * self.trace(node, own, n, sub)
        return total

    # Cartesian: each letter is a sum over copies, so a word's trace is a sum over the splits
    # of its positions between the two halves of the copies.
    def _copies_all(self, operands, p, mask):
        items = list(operands)
        return self._items(tuple((id(c), k) for c, k in items), items, p, mask)

    def _items(self, sig, items, p, mask):
        if len(items) == 1:
            child, k = items[0]
            return self._copies(child, k, p, mask)
        key = ("items", sig, p, _canon(p, mask))
        if key not in self._memo:
            self._memo[key] = self._split(lambda n, s: self._items(sig[:1], items[:1], n, s),
                                          lambda n, s: self._items(sig[1:], items[1:], n, s), p, mask)
        return self._memo[key]

    def _copies(self, child, k, p, mask):
        """tau(word) of the Kronecker sum of k copies of child (binary splitting)."""
        if k == 1:
            return self.trace(child, ONE, p, mask)
        key = ("copies", id(child), k, p, _canon(p, mask))
        if key not in self._memo:
            h = k // 2
            self._memo[key] = self._split(lambda n, s: self._copies(child, h, n, s),
                                          lambda n, s: self._copies(child, k - h, n, s), p, mask)
            self._keep.append(child)
        return self._memo[key]

    def _split(self, left, right, p, mask):
        self._spend(1 << p)
        full = (1 << p) - 1
        total = self.d.of(0)
        for sel in range(1 << p):
            total = total + left(*_sub(mask, sel)) * right(*_sub(mask, full ^ sel))
        return total

    def _fold(self, node: Product, p, mask):
        """Non-associative mix: ((x1 o x2) o x3) ..., each step a 3-way position split."""
        d = self.d
        a, b = Fraction(node.comb.a), Fraction(node.comb.b)
        seq = [c for c, k in node.operands for _ in range(k)]
        if len(seq) > MAX_FOLD:
            raise SizeLimitError(f"a left fold over {len(seq)} copies is over the limit of {MAX_FOLD}")

        def prefix(i, n, s):
            if i == 0:
                return self.trace(seq[0], ONE, n, s)
            key = ("fold", id(node), i, n, _canon(n, s))
            if key in self._memo:
                return self._memo[key]
            self._spend(3**n)
            total = d.of(0)
            for sel_g in range(1 << n):
                rest = ((1 << n) - 1) ^ sel_g
                sub = rest
                while True:  # positions in sel_g: prefix only; rest: next only or both
                    both = sub
                    only_h = rest ^ both
                    n_a = bin(sel_g).count("1") + bin(only_h).count("1")
                    coef = a**n_a * b ** bin(both).count("1")
                    if coef:
                        total = total + d.of(coef) * prefix(i - 1, *_sub(s, sel_g | both)) * \
                            self.trace(seq[i], ONE, *_sub(s, only_h | both))
                    if sub == 0:
                        break
                    sub = (sub - 1) & rest
            self._memo[key] = total
            return total

        return prefix(len(seq) - 1, p, mask)

    def _leaf_table(self, node: Leaf, basis) -> None:
        """Fill the memo with tau of every word up to the order for a factor (exact traces)."""
        table = word_table(node.factor, basis, self.order, self.direction)
        n = node.factor.n
        nid = id(node)
        self._keep.append(node)
        for (p, mask), t in table.items():
            self._memo[(nid, basis, p, mask)] = self.d.of(t / n)


__all__ = ["MAX_FOLD", "ONE", "WORK_LIMIT", "WordTraces", "own_basis", "word_work"]
