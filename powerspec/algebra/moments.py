"""Exact spectral moments tr(M^p) of products and powers, never building the product.

tr(A^p) counts the closed walks of length p (weighted by the product of the
arc weights); tr(M^p) / order is the p-th moment of the eigenvalue
distribution.  Everything here is exact rational arithmetic: factor entries
are taken as the exact rationals of their float64 values (so a weight typed
as 0.1 counts as the double nearest 0.1), degrees are summed exactly from
those, and results are Python ints (integer weights) or
:class:`fractions.Fraction`.

How each case is computed (tau = tr / order, the normalised trace, is
multiplicative over Kronecker products, which keeps numbers small):

* **Rule products** (every kind whose eigenvalues obey a combination rule,
  :data:`~powerspec.products.MATRIX_RULES`): the matrix is
  a(X(x)I + I(x)Y) + b X(x)Y with the three terms commuting, so
  tau_p = sum over i+j+l = p of p!/(i!j!l!) a^(i+j) b^l tau_X(i+l) tau_Y(j+l).
  Cartesian powers use the exponential generating function
  tr(e^{zM}) (multiplicative: e^{X(+)Y} = e^X (x) e^Y), so G^k costs k-free
  binomials C(k, j), j <= P; multiplicative rules (direct, strong,
  mix(1, b), mix(0, b)) use their linearisation s = c + f x, whose moments
  multiply, so G^k is a k-th power of numbers.
* **Non-factoring kinds** (laplacian/signless of direct, strong, mix with
  b != 0): D and A of the product are themselves Kronecker combinations of
  the factors' D and A, so the normalised trace of every *word* in {D, A}
  factorises: tau(w) = tau_G(w) tau_H(w) in the linearised letters.  The
  words of length p (2^p of them, reduced to rotation classes) are summed
  with their signs.  Cartesian or non-associative nodes *inside* such a
  product need subword expansions (2^p or 3^p terms per word) and are
  bounded by :data:`WORK_LIMIT`.
* A node whose every factor is exactly regular of degree d uses
  M = shift + factor A (d - A, d + A, 1 - A/d, A/d) and the binomial theorem.
* The normalized Laplacian I - D^-1/2 A D^-1/2 is similar to I - D^-1 A, so
  its traces are rational too.

>>> from powerspec.algebra.grammar import parse
>>> trace_moments(parse("cart(K(2)^3)"), order=4)
[(1, 0), (2, 24), (3, 0), (4, 168)]
"""

from __future__ import annotations

import math
from fractions import Fraction
from functools import reduce

import mpmath
import numpy as np

from powerspec.algebra.engine import Leaf, Node, Product
from powerspec.algebra.kinds import MATRIX_KINDS, MATRIX_RULES, Combination
from powerspec.errors import InputError, NotExactError, SizeLimitError
from powerspec.factors import Factor
from powerspec.numbers.counts import BigCount
from powerspec.numbers.counts import log2 as count_log2

MAX_DIGITS = 1_000_000
"""Largest number of decimal digits of any exact result or intermediate."""

MAX_BITS = int(MAX_DIGITS * math.log2(10)) + 1

MAX_ORDER = 40
"""Largest moment order p accepted (word expansions grow like 2^p)."""

WORK_LIMIT = 4_000_000
"""Most elementary terms one word expansion may add up before SizeLimitError."""

MAX_FOLD = 10_000
"""Most copies of a non-associative mix (evaluated as a left fold)."""

Exact = int | Fraction


# ----------------------------------------------------------------------- exact numbers


def _q(x) -> Fraction:
    """Exact rational of an int, Fraction or float (the float's exact binary value)."""
    if isinstance(x, Fraction):
        return x
    if isinstance(x, (int, np.integer)):
        return Fraction(int(x))
    f = float(x)
    if not math.isfinite(f):
        raise InputError(f"cannot take the exact moments of a non-finite number {x!r}")
    return Fraction(f)


def _bits(x: Fraction) -> int:
    return max(x.numerator.bit_length(), x.denominator.bit_length())


def _guard(bits: float, what: str) -> None:
    if bits > MAX_BITS:
        digits = int(bits * math.log10(2)) + 1
        raise SizeLimitError(
            f"{what} would have about {digits} digits, over the limit of {MAX_DIGITS}; "
            "ask for a lower --order, fewer copies, or per-vertex moments (per_vertex=True) "
            "where those stay small (Cartesian powers)"
        )


def _pow(x: Fraction, k: int, what: str) -> Fraction:
    if x == 0 or abs(x) == 1:
        return x**k
    _guard(k * _bits(x), what)
    return x**k


def _plain(x: Fraction) -> Exact:
    return x.numerator if x.denominator == 1 else x


# ----------------------------------------------------------------------- exact matrices


def _int_matmul(x: np.ndarray, y: np.ndarray) -> np.ndarray:
    """Exact product of integer matrices: float64 BLAS when every partial sum stays below 2^53."""
    bx = max(int(np.max(np.sum(np.abs(x), axis=1), initial=0)), 1)
    by = max(int(np.max(np.sum(np.abs(y), axis=1), initial=0)), 1)
    if bx * by < 2**53 and x.dtype != object and y.dtype != object:
        return np.rint(x.astype(float) @ y.astype(float)).astype(np.int64)
    return np.dot(x.astype(object), y.astype(object))


def _as_int_array(rows: list[list[int]]) -> np.ndarray:
    big = max((abs(v) for r in rows for v in r), default=0)
    if big < 2**62:
        return np.array(rows, dtype=np.int64).reshape(len(rows), len(rows))
    out = np.empty((len(rows), len(rows)), dtype=object)
    for i, r in enumerate(rows):
        out[i, :] = r
    return out


def _fraction_matrix(mat: list[list[Fraction]]) -> tuple[np.ndarray, int]:
    """(integer numerator matrix, common denominator) of a rational matrix."""
    den = reduce(math.lcm, (v.denominator for r in mat for v in r), 1)
    return _as_int_array([[int(v * den) for v in r] for r in mat]), den


def exact_adjacency(factor: Factor) -> list[list[Fraction]]:
    """The factor's adjacency as exact rationals (the float64 entries' exact values)."""
    a = factor.adjacency.toarray()
    return [[Fraction(float(v)) for v in row] for row in a]


def exact_degrees(factor: Factor, direction: str = "out") -> list[Fraction]:
    """Exact weighted degrees: row sums ('out') or column sums ('in') of the exact entries.

    >>> from powerspec.factors import K
    >>> [int(d) for d in exact_degrees(K(1, 2))]
    [2, 1, 1]
    """
    a = exact_adjacency(factor)
    n = len(a)
    if direction == "out" or not factor.directed:
        return [sum(r, Fraction(0)) for r in a]
    return [sum((a[i][j] for i in range(n)), Fraction(0)) for j in range(n)]


def exact_matrix(factor: Factor, kind: str, direction: str = "out") -> list[list[Fraction]]:
    """The factor's matrix of the given kind as exact rationals.

    For ``normalized`` this is I - D^-1 A, which is similar to
    I - D^-1/2 A D^-1/2 (same traces, rational entries).
    """
    a = exact_adjacency(factor)
    n = len(a)
    if kind == "adjacency":
        return a
    d = exact_degrees(factor, direction)
    if kind in ("laplacian", "signless"):
        sgn = -1 if kind == "laplacian" else 1
        return [[(d[i] if i == j else 0) + sgn * a[i][j] for j in range(n)] for i in range(n)]
    if kind == "normalized":
        if factor.directed:
            raise InputError(
                f"the normalized Laplacian needs an undirected factor, but {factor.name} is "
                "directed: use 'laplacian' or 'transition'"
            )
        if any(x <= 0 for x in d):
            raise InputError(
                f"the normalized Laplacian needs every degree > 0 in {factor.name}: use 'laplacian'"
            )
        return [[(1 if i == j else 0) - a[i][j] / d[i] for j in range(n)] for i in range(n)]
    if any(x == 0 for x in d):
        raise InputError(
            f"the transition matrix needs every degree non-zero in {factor.name}: use 'laplacian'"
        )
    return [[a[i][j] / d[i] for j in range(n)] for i in range(n)]


def _matrix_moments(mat: list[list[Fraction]], order: int) -> list[Fraction]:
    """Normalised traces tr(M^p)/n, p = 0..order, exactly."""
    num, den = _fraction_matrix(mat)
    n = num.shape[0]
    out = [Fraction(1)]
    cur = num
    for p in range(1, order + 1):
        if p > 1:
            cur = _int_matmul(cur, num)
        out.append(Fraction(int(np.trace(cur)) if cur.dtype != object else sum(np.diagonal(cur)),
                            den**p * n))
    return out


# ------------------------------------------------------------------------ sequences


def _rule_step(comb_a: Fraction, comb_b: Fraction, x: list[Fraction], y: list[Fraction]):
    """tau of a(X(+)Y) + b X(x)Y from tau_X, tau_Y (the three terms commute)."""
    order = len(x) - 1
    out = [Fraction(1)]
    for p in range(1, order + 1):
        s = Fraction(0)
        for l_ in range(p + 1):
            bl = comb_b**l_
            if bl == 0:
                continue
            for i in range(p - l_ + 1):
                j = p - l_ - i
                coef = math.factorial(p) // (math.factorial(i) * math.factorial(j) * math.factorial(l_))
                s += coef * comb_a ** (i + j) * bl * x[i + l_] * y[j + l_]
        out.append(s)
    return out


def _egf_mul(x: list[Fraction], y: list[Fraction]) -> list[Fraction]:
    n = len(x)
    return [sum((x[i] * y[p - i] for i in range(p + 1)), Fraction(0)) for p in range(n)]


def _egf_power(e: list[Fraction], k: int) -> list[Fraction]:
    """(e)^k truncated, for e[0] = 1: sum_j C(k, j) u^j with u = e - 1 (no k-fold work)."""
    n = len(e)
    u = [Fraction(0)] + e[1:]
    out = [Fraction(1)] + [Fraction(0)] * (n - 1)
    upow = [Fraction(1)] + [Fraction(0)] * (n - 1)
    for j in range(1, n):
        upow = _egf_mul(upow, u)
        c = math.comb(k, j)
        if c == 0:
            break
        out = [o + c * v for o, v in zip(out, upow, strict=True)]
    return out


def _to_s(comb: Combination) -> tuple[Fraction, Fraction]:
    c, f = comb.to_s()
    return _q(c), _q(f)


def _affine_moments(t: list[Fraction], c: Fraction, f: Fraction) -> list[Fraction]:
    """tau of (c I + f M)^p from tau of M^p (binomial theorem)."""
    return [sum((math.comb(p, j) * c ** (p - j) * f**j * t[j] for j in range(p + 1)), Fraction(0))
            for p in range(len(t))]


class MomentEngine:
    """Exact normalised traces tau_p = tr(M^p) / order of expression nodes.

    ``order`` is the largest p; ``direction`` picks out- or in-degrees for D.
    Results are cached per (node, kind).
    """

    def __init__(self, order: int, direction: str = "out"):
        if not isinstance(order, int) or isinstance(order, bool) or order < 1:
            raise InputError(f"the moment order must be a positive integer, got {order!r}")
        if order > MAX_ORDER:
            raise InputError(f"the moment order {order} is over the maximum of {MAX_ORDER}")
        if direction not in ("out", "in"):
            raise InputError(f"degree direction must be 'out' or 'in', got {direction!r}")
        self.order = order
        self.direction = direction
        self._cache: dict = {}
        self._keep: list = []
        self.how: set[str] = set()

    # ------------------------------------------------------------ public
    def normalised(self, node: Node, kind: str) -> list[Fraction]:
        """[tau_0 = 1, tau_1, ..., tau_P] exactly."""
        if kind not in MATRIX_KINDS:
            raise InputError(f"unknown matrix kind {kind!r}; choose one of {', '.join(MATRIX_KINDS)}")
        if kind == "normalized" and node.directed:
            raise InputError(
                "the normalized Laplacian is defined for undirected graphs only; "
                "use --matrix laplacian or transition"
            )
        key = (id(node), kind)
        if key not in self._cache:
            self._cache[key] = self._compute(node, kind)
            self._keep.append(node)
        return self._cache[key]

    # ----------------------------------------------------------- compute
    def _compute(self, node: Node, kind: str) -> list[Fraction]:
        if isinstance(node, Leaf):
            self.how.add("exact matrix powers of the factors")
            return _matrix_moments(exact_matrix(node.factor, kind, self.direction), self.order)
        rule = MATRIX_RULES[kind](node.comb)
        if rule is not None:
            return self._combine(rule, [(self.normalised(c, kind), k) for c, k in node.operands])
        d = self.regular_degree(node)
        if d is not None:
            self.how.add("regular product: M = shift + factor * A, binomial expansion")
            adj = self.normalised(node, "adjacency")
            shift, factor = {
                "laplacian": (d, Fraction(-1)),
                "signless": (d, Fraction(1)),
                "normalized": (Fraction(1), -1 / d if d else None),
                "transition": (Fraction(0), 1 / d if d else None),
            }[kind]
            if factor is None:
                raise InputError(
                    f"the {kind} matrix needs non-zero degrees; {node.label()} has degree 0")
            return _affine_moments(adj, shift, factor)
        if kind in ("laplacian", "signless"):
            self.how.add("sums over words in D and A, each factorising over the Kronecker product")
            return WordTraces(self).kind_moments(node, kind)
        raise NotExactError(
            f"the {kind} moments of {node.label()} do not follow from the factors: D^-1 does not "
            "split over a sum of Kronecker terms unless every factor is regular; use "
            "--matrix laplacian, or a direct product"
        )

    def _combine(self, rule: Combination, parts: list[tuple[list[Fraction], int]]) -> list[Fraction]:
        mode = rule.mode
        order = self.order
        if mode == "add":
            self.how.add("Cartesian rule via tr(exp(zM)) = product of the factors' (binomials in k)")
            fact = [Fraction(1, math.factorial(p)) for p in range(order + 1)]
            egfs = [_egf_power([t * f for t, f in zip(seq, fact, strict=True)], k) for seq, k in parts]
            e = reduce(_egf_mul, egfs)
            return [v * math.factorial(p) for p, v in enumerate(e)]
        if mode == "mul":
            self.how.add("multiplicative rule: moments of the linearisation c + f*M multiply")
            c, f = _to_s(rule)
            prod = [Fraction(1)] * (order + 1)
            for seq, k in parts:
                s = _affine_moments(seq, c, f)
                prod = [x * _pow(y, k, "a moment of a power") for x, y in zip(prod, s, strict=True)]
            return _affine_moments(prod, -c / f, 1 / f)
        self.how.add("non-associative mix: left fold of the multinomial expansion")
        _fold_copies(parts)
        seq = [s for s, k in parts for _ in range(k)]
        a, b = _q(rule.a), _q(rule.b)
        return reduce(lambda x, y: _rule_step(a, b, x, y), seq)

    # ----------------------------------------------------------- degrees
    def regular_degree(self, node: Node) -> Fraction | None:
        """The exact common degree when every factor below is exactly regular, else None."""
        key = (id(node), "#regular")
        if key in self._cache:
            return self._cache[key]
        if isinstance(node, Leaf):
            ds = set(exact_degrees(node.factor, self.direction))
            d = ds.pop() if len(ds) == 1 else None
        else:
            kids = [(self.regular_degree(c), k) for c, k in node.operands]
            if any(x is None for x, _ in kids):
                d = None
            else:
                comb = node.comb
                if comb.mode == "add":
                    d = sum((x * k for x, k in kids), Fraction(0))
                elif comb.mode == "mul":
                    c, f = _to_s(comb)
                    s = Fraction(1)
                    for x, k in kids:
                        s *= _pow(c + f * x, k, "the degree of a power")
                    d = (s - c) / f
                else:
                    a, b = _q(comb.a), _q(comb.b)
                    _fold_copies(kids)
                    seq = [x for x, k in kids for _ in range(k)]
                    d = reduce(lambda x, y: a * (x + y) + b * x * y, seq)
        self._cache[key] = d
        self._keep.append(node)
        return d


def _fold_copies(parts) -> int:
    total = sum(k for _, k in parts)
    if total > MAX_FOLD:
        raise SizeLimitError(
            f"a non-associative mix is a left fold; {total} copies is over the limit of {MAX_FOLD}"
        )
    return total


# ------------------------------------------------------------------------------ words
# A word of length p over the letters {0: D, 1: A} is (p, mask): bit i is letter i.


def _canon(p: int, mask: int) -> int:
    """The smallest rotation of a p-letter word (traces are invariant under rotation)."""
    if p <= 1:
        return mask
    full = (1 << p) - 1
    best = mask
    m = mask
    for _ in range(p - 1):
        m = ((m >> 1) | ((m & 1) << (p - 1))) & full
        if m < best:
            best = m
    return best


def _sub(mask: int, sel: int) -> tuple[int, int]:
    """(length, mask) of the subword of ``mask`` at the positions set in ``sel``."""
    out = 0
    n = 0
    pos = 0
    while sel:
        if sel & 1:
            out |= ((mask >> pos) & 1) << n
            n += 1
        sel >>= 1
        pos += 1
    return n, out


class WordTraces:
    """Normalised traces of words in (c I + f D, c I + f A) for any node, exactly.

    ``basis`` (c, f) names the letters; (0, 1) is plain D and A.  Products in
    a multiplicative rule factorise in their own linearised basis; other
    bases are reached by expanding c I + f X over subsets of positions.
    """

    def __init__(self, moments: MomentEngine):
        self.m = moments
        self.order = moments.order
        self._memo: dict = {}
        self._keep: list = []
        self.work = 0

    def _spend(self, n: int) -> None:
        self.work += n
        if self.work > WORK_LIMIT:
            raise SizeLimitError(
                f"the word expansion for these moments needs more than {WORK_LIMIT} terms "
                "(Cartesian or non-associative nodes inside a non-factoring product); "
                "ask for a lower --order"
            )

    # ----------------------------------------------------------- kinds
    def kind_moments(self, node: Product, kind: str) -> list[Fraction]:
        """tau_p of D - A (laplacian) or D + A (signless), p = 0..order."""
        comb = node.comb
        c, f = _to_s(comb) if comb.mode == "mul" else (Fraction(0), Fraction(1))
        sign = -1 if kind == "laplacian" else 1
        basis = (c, f)
        # sum over all words of length j of tau(word) with the sign (-1)^#A for laplacian
        sums = [Fraction(1)]
        for j in range(1, self.order + 1):
            s = Fraction(0)
            for mask in range(1 << j):
                v = self.trace(node, basis, j, mask)
                s += -v if (sign < 0 and bin(mask).count("1") % 2) else v
            sums.append(s)
        out = [Fraction(1)]
        for p in range(1, self.order + 1):
            if kind == "laplacian":
                # D - A = (S_D - S_A) / f: the shift c cancels.
                out.append(sums[p] / f**p)
            else:
                # D + A = (S_D + S_A - 2c I) / f.
                tot = sum((math.comb(p, j) * (-2 * c) ** (p - j) * sums[j] for j in range(p + 1)),
                          Fraction(0))
                out.append(tot / f**p)
        return out

    # ----------------------------------------------------------- traces
    def trace(self, node: Node, basis: tuple[Fraction, Fraction], p: int, mask: int) -> Fraction:
        """tau(word) of the node in the given letter basis."""
        if p == 0:
            return Fraction(1)
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
            own = _to_s(comb)
            if basis == own:
                v = Fraction(1)
                for child, k in node.operands:
                    v *= _pow(self.trace(child, own, p, mask), k, "a word trace of a power")
            else:
                v = self._rebase(node, own, basis, p, mask)
        elif basis != (0, 1):
            v = self._rebase(node, (Fraction(0), Fraction(1)), basis, p, mask)
        elif comb.mode == "add":
            v = self._shuffle_all(node.operands, p, mask)
        else:
            v = self._fold(node, p, mask)
        memo[key] = v
        self._keep.append(node)
        return v

    def _rebase(self, node, own, basis, p, mask) -> Fraction:
        # c I + f X = alpha I + beta (c0 I + f0 X)
        c0, f0 = own
        c, f = basis
        beta = f / f0
        alpha = c - beta * c0
        if alpha == 0:
            return beta**p * self.trace(node, own, p, mask)
        self._spend(1 << p)
        total = Fraction(0)
        for sel in range(1 << p):
            n, sub = _sub(mask, sel)
            total += alpha ** (p - n) * beta**n * self.trace(node, own, n, sub)
        return total

    # Cartesian: each letter of the product is a sum over copies, so a word's trace
    # is a sum over assignments of positions to copies (shuffles of subwords).
    def _shuffle_all(self, operands, p, mask) -> Fraction:
        items = [(child, k) for child, k in operands]
        return self._shuffle_items(tuple((id(c), k) for c, k in items), items, p, mask)

    def _shuffle_items(self, sig, items, p, mask) -> Fraction:
        if len(items) == 1:
            child, k = items[0]
            return self._copies(child, k, p, mask)
        key = ("shuf", sig, p, _canon(p, mask))
        if key in self._memo:
            return self._memo[key]
        head, rest = items[:1], items[1:]
        v = self._split(lambda n, s: self._shuffle_items(sig[:1], head, n, s),
                        lambda n, s: self._shuffle_items(sig[1:], rest, n, s), p, mask)
        self._memo[key] = v
        return v

    def _copies(self, child, k, p, mask) -> Fraction:
        """tau(word) of the Kronecker sum of k copies of child (binary splitting)."""
        if k == 1:
            return self.trace(child, (Fraction(0), Fraction(1)), p, mask)
        key = ("copies", id(child), k, p, _canon(p, mask))
        if key in self._memo:
            return self._memo[key]
        h = k // 2
        v = self._split(lambda n, s: self._copies(child, h, n, s),
                        lambda n, s: self._copies(child, k - h, n, s), p, mask)
        self._memo[key] = v
        self._keep.append(child)
        return v

    def _split(self, left, right, p, mask) -> Fraction:
        self._spend(1 << p)
        full = (1 << p) - 1
        total = Fraction(0)
        for sel in range(1 << p):
            total += left(*_sub(mask, sel)) * right(*_sub(mask, full ^ sel))
        return total

    def _fold(self, node: Product, p, mask) -> Fraction:
        """Non-associative mix: ((x1 o x2) o x3) ..., each step a 3-way position split."""
        a, b = _q(node.comb.a), _q(node.comb.b)
        seq = [c for c, k in node.operands for _ in range(k)]
        if len(seq) > MAX_FOLD:
            raise SizeLimitError(f"a left fold over {len(seq)} copies is over the limit of {MAX_FOLD}")
        one = (Fraction(0), Fraction(1))

        def prefix(i, n, s):
            if i == 0:
                return self.trace(seq[0], one, n, s)
            key = ("fold", id(node), i, n, _canon(n, s))
            if key in self._memo:
                return self._memo[key]
            self._spend(3**n)
            total = Fraction(0)
            for sel_g in range(1 << n):
                rest = ((1 << n) - 1) ^ sel_g
                sub = rest
                # positions in sel_g go to the prefix only; the others to "next only" or "both"
                while True:
                    both = sub
                    only_h = rest ^ both
                    n_a = bin(sel_g).count("1") + bin(only_h).count("1")
                    coef = a**n_a * b ** bin(both).count("1")
                    if coef:
                        total += coef * prefix(i - 1, *_sub(s, sel_g | both)) * self.trace(
                            seq[i], one, *_sub(s, only_h | both))
                    if sub == 0:
                        break
                    sub = (sub - 1) & rest
            self._memo[key] = total
            return total

        return prefix(len(seq) - 1, p, mask)

    def _leaf_table(self, node: Leaf, basis) -> None:
        """Fill the memo with tau of every word up to the order for a factor (DFS of prefixes)."""
        c, f = basis
        fac = node.factor
        a = exact_adjacency(fac)
        d = exact_degrees(fac, self.m.direction)
        n = len(a)
        lett_d = [[(c + f * d[i]) if i == j else Fraction(0) for j in range(n)] for i in range(n)]
        lett_a = [[(c if i == j else 0) + f * a[i][j] for j in range(n)] for i in range(n)]
        den = reduce(math.lcm, (v.denominator for r in lett_a + lett_d for v in r), 1)
        num_d = np.array([int(lett_d[i][i] * den) for i in range(n)], dtype=object)
        if max((abs(int(v)) for v in num_d), default=0) < 2**62:
            num_d = num_d.astype(np.int64)
        num_a = _as_int_array([[int(v * den) for v in r] for r in lett_a])
        memo = self._memo
        nid = id(node)
        self._keep.append(node)
        order = self.order
        self._spend(1 << order)

        def visit(prefix: np.ndarray, p: int, mask: int) -> None:
            # prefix is the integer product of letters 0..p-1; record tau, extend
            memo[(nid, basis, p, mask)] = Fraction(int(sum(np.diagonal(prefix).tolist())), den**p * n)
            if p == order:
                return
            visit(prefix * num_d[None, :], p + 1, mask)
            visit(_int_matmul(prefix, num_a), p + 1, mask | (1 << p))

        visit(np.diag(num_d), 1, 0)
        visit(num_a, 1, 1)


# --------------------------------------------------------------------------- public API


def _check_order(order) -> int:
    if not isinstance(order, int) or isinstance(order, bool) or order < 1:
        raise InputError(f"the moment order must be a positive integer, got {order!r}")
    return order


def trace_moments(node: Node, kind: str = "adjacency", order: int = 8, *, direction: str = "out",
                  per_vertex: bool = False) -> list[tuple[int, Exact]]:
    """Exact tr(M^p) for p = 1..order: [(p, value), ...].

    Values are Python ints when every weight is an integer, else
    :class:`~fractions.Fraction` (exact; float weights are taken at their
    exact binary value).  With ``per_vertex`` the values are tr(M^p)/order,
    the moments of the eigenvalue distribution (small even when the order is
    astronomically large for Cartesian powers).  Raises SizeLimitError when a
    value would exceed :data:`MAX_DIGITS` digits, NotExactError for the
    normalized/transition kinds of non-regular non-direct products.

    >>> from powerspec.algebra.grammar import parse
    >>> trace_moments(parse("direct(K(1, 2), P(2))"), "laplacian", order=2)
    [(1, 8), (2, 20)]
    >>> trace_moments(parse("cart(K(2)^1000000000)"), order=2, per_vertex=True)
    [(1, 0), (2, 1000000000)]
    """
    _check_order(order)
    eng = MomentEngine(order, direction)
    return _finish(node, eng.normalised(node, kind), per_vertex)


def _finish(node: Node, tau: list[Fraction], per_vertex: bool) -> list[tuple[int, Exact]]:
    if per_vertex:
        return [(p, _plain(v)) for p, v in enumerate(tau) if p]
    n = node.order
    if isinstance(n, BigCount) or count_log2(n) > MAX_BITS:
        _guard(count_log2(n), f"tr(M^p) of {node.label()} (order {n})")
    return [(p, _plain(v * n)) for p, v in enumerate(tau) if p]


def moments_method(eng: MomentEngine) -> str:
    """One line saying how the moments were obtained."""
    return "exact: " + "; ".join(sorted(eng.how))


def _answer_value(v: Exact):
    if isinstance(v, int):
        return v
    if abs(v) < Fraction(10) ** 300 and (v == 0 or abs(v) > Fraction(1, 10**300)):
        return v
    mpmath.mp.dps = max(mpmath.mp.dps, 20)
    return mpmath.mpf(v.numerator) / v.denominator


__all__ = ["trace_moments", "_finish", "_answer_value", "MomentEngine", "WordTraces", "exact_matrix",
           "exact_degrees", "exact_adjacency", "MAX_DIGITS"]
