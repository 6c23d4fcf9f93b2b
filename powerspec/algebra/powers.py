"""Exact combination of spectra: pairwise products, k-th powers and left folds.

Spectra combine by a :class:`~powerspec.algebra.kinds.Combination` rule
applied to their atoms (in the exact or the certified-ball domain, see
:mod:`powerspec.algebra.rules`); multiplicities are exact integers throughout.

Two strategies compute the k-th power of an associative rule:

* **compositions** -- every atom of the power is indexed by a composition
  c of k into r parts (r = distinct atoms of S); its value is
  x_1^(o c_1) o ... o x_r^(o c_r) and its multiplicity the multinomial
  (k; c) * prod m_i^c_i.  Cost: the number of compositions, C(k + r - 1, r - 1);
  exact binomials come from cached Pascal rows.
* **squaring** -- binary exponentiation with merging after every step.  Its
  cost follows the number of *distinct* values of the intermediate powers,
  far below the composition count when eigenvalues are commensurable.

Every step checks its pair count against a budget *before* allocating and
raises :class:`~powerspec.errors.SizeLimitError` instead of starting work
that would not fit.
"""

from __future__ import annotations

import math

import numpy as np
from flint import acb, arb, fmpq

from powerspec.algebra.kinds import Combination
from powerspec.algebra.rules import apply, pairs, scale_shift, self_power, tighter, unify
from powerspec.errors import SizeLimitError
from powerspec.numbers.balls import Balls
from powerspec.numbers.convert import hp_of, rationals_to_balls, to_balls
from powerspec.numbers.counts import EXPAND_BITS, bit_length, power_product
from powerspec.numbers.hp import HP, PREC, working
from powerspec.numbers.rationals import Rationals
from powerspec.spectra.spectrum import Spectrum, mult_array

_INT64_SAFE = 2**62
HP_POWERS = 200_000
"""Most atom powers computed at high precision in one composition enumeration."""

HP_CANDIDATES = 20_000
"""Most candidates of an a = 1 power (strong, mix(1, b)) combined wholly at high precision."""


def composition_count(k: int, r: int) -> int:
    """Number of compositions of k into r non-negative parts, C(k + r - 1, r - 1).

    >>> composition_count(3, 2)
    4
    """
    if r == 0:
        return 0 if k else 1
    return math.comb(k + r - 1, r - 1)


def check_pairs(a: Spectrum, b: Spectrum, budget: int) -> None:
    """Raise SizeLimitError before combining when len(a) * len(b) exceeds the pair budget."""
    n = len(a) * len(b)
    if n > budget:
        raise SizeLimitError(
            f"combining {len(a)} by {len(b)} distinct eigenvalues needs {n} pairs, "
            f"more than the budget of {budget}")


def _vec(sp: Spectrum):
    v = sp.values
    if isinstance(v, (Rationals, Balls)):
        return v
    return sp.as_balls()


def outer_mult(a: np.ndarray, b: np.ndarray, total: int) -> np.ndarray:
    """Flattened products a_i * b_j, exact (int64 while the total fits, else Python ints)."""
    if a.dtype != object and b.dtype != object and total < _INT64_SAFE:
        return np.multiply.outer(a, b).ravel()
    return np.multiply.outer(_obj(a), _obj(b)).ravel()


def _obj(m: np.ndarray) -> np.ndarray:
    if m.dtype == object:
        return m
    out = np.empty(m.shape, dtype=object)
    out[:] = [int(x) for x in m.tolist()]
    return out


def combine(comb: Combination, a: Spectrum, b: Spectrum, budget: int) -> Spectrum:
    """The spectrum {x_i o y_j} with multiplicities m_i n_j, merged.

    >>> from powerspec.algebra.kinds import CARTESIAN
    >>> x = Spectrum.from_values([1, -1])
    >>> combine(CARTESIAN, x, x, 100).atoms()
    [(-2.0, 1), (0.0, 2), (2.0, 1)]
    """
    check_pairs(a, b, budget)
    order = a.order * b.order
    x, y = pairs(*unify(_vec(a), _vec(b)))
    return Spectrum(apply(comb, x, y), outer_mult(a.mult, b.mult, order), order=order)


def power(s: Spectrum, k: int, comb: Combination, budget: int, limit: int) -> Spectrum:
    """The k-fold combination S o S o ... o S (k >= 1), exact multiplicities.

    Associative rules use compositions when their number is within ``budget``,
    squaring with merging otherwise; other rules are left folds (k - 1 steps).
    Raises SizeLimitError when a step would exceed ``budget`` pairs or a merged
    intermediate ``limit`` atoms.

    >>> from powerspec.algebra.kinds import CARTESIAN
    >>> power(Spectrum.from_values([1, -1]), 4, CARTESIAN, 10**6, 10**6).atoms()
    [(-4.0, 1), (-2.0, 4), (0.0, 6), (2.0, 4), (4.0, 1)]
    """
    if k == 1:
        return s
    if comb.mode == "zero":
        return Spectrum.from_values([0.0], [power_product([(s.order, k)])])
    if comb.mode is None:
        return fold([s] * k, comb, budget, limit)
    if len(s) == 1:
        v = self_power(comb, _vec(s), np.array([k]))
        m = power_product([(s.mult[0], k)])  # exact, kept factored when astronomically large
        return Spectrum(v, mult_array([m]), order=m)
    if bit_length(s.order) * k > EXPAND_BITS:
        raise SizeLimitError(
            f"the exact multiplicities of this power would have about {bit_length(s.order) * k} "
            "bits each; the full spectrum is answered only through the extremes search")
    if composition_count(k, len(s)) <= budget:
        return _compositions(s, k, comb)
    return _squaring(s, k, comb, budget, limit)


def hp_self_power(comb: Combination, x: HP, c: int) -> HP:
    """x o x o ... o x (c copies; c = 0 gives the identity) at high precision.

    Cartesian c x; a = 0: b^(c-1) x^c; a = 1: ((1 + b x)^c - 1)/b, where the
    subtraction of 1 is done at the precision that keeps b x (:func:`linear_prec`).

    >>> from flint import fmpq
    >>> from powerspec.algebra.kinds import STRONG
    >>> hp_self_power(STRONG, fmpq(2), 3)
    26
    """
    a, b = comb.a, comb.b
    bq = fmpq(b.numerator, b.denominator)
    with working(linear_prec(bq, [x]) if a == 1 and b != 0 else PREC):
        if comb.mode == "add":
            return x * c
        if a == 0:
            return (bq * x) ** c / bq if c else 1 / bq
        return ((1 + bq * x) ** c - 1) / bq


MAX_EXTRA_BITS = 8192
"""Most bits added to the working precision to keep b x beside 1 in (1 + b x)^c - 1."""


def linear_prec(bq: fmpq, xs) -> int:
    """The working precision at which 1 + b x keeps :data:`PREC` bits of every b x.

    At 160 bits, 1 + 10^-100 is 1 and ((1 + b x)^c - 1)/b loses every digit (a ball of radius
    2^-160/b); the bits below 1 that b x needs are added, up to :data:`MAX_EXTRA_BITS`.

    >>> linear_prec(fmpq(1), [fmpq(1, 2**300)]) - PREC
    332
    """
    extra = 0
    with working():
        for x in xs:
            y = bq * x
            if isinstance(y, fmpq):
                if y == 0:
                    continue
                bits = int(y.p).bit_length() - int(y.q).bit_length()
            else:
                m = (y.real if isinstance(y, acb) else y).mid()
                if m == 0:
                    continue
                man, exp = m.man_exp()
                bits = int(exp) + int(man).bit_length()
            extra = max(extra, -bits)
    return PREC + min(extra, MAX_EXTRA_BITS) + 32


def fold(parts: list[Spectrum], comb: Combination, budget: int, limit: int) -> Spectrum:
    """Left fold ((S1 o S2) o S3) o ... with merging after every step."""
    acc = parts[0]
    for nxt in parts[1:]:
        acc = check_atoms(combine(comb, acc, nxt, budget), limit)
    return acc


def check_atoms(s: Spectrum, limit: int) -> Spectrum:
    """Raise SizeLimitError when a merged intermediate has more than ``limit`` atoms."""
    if len(s) > limit:
        raise SizeLimitError(
            f"an intermediate result already has {len(s)} distinct eigenvalues, over the "
            f"limit of {limit}")
    return s


def _squaring(s: Spectrum, k: int, comb: Combination, budget: int, limit: int) -> Spectrum:
    result: Spectrum | None = None
    base = s
    while True:
        if k & 1:
            result = base if result is None else check_atoms(combine(comb, result, base, budget), limit)
        k >>= 1
        if not k:
            return result
        base = check_atoms(combine(comb, base, base, budget), limit)


class _Pascal:
    """Cached rows C(n, 0..n) as int64 or object arrays (exact)."""

    def __init__(self, big: bool):
        self.big = big
        self.rows: dict[int, np.ndarray] = {}

    def row(self, n: int) -> np.ndarray:
        r = self.rows.get(n)
        if r is None:
            vals = [1] * (n + 1)
            c = 1
            for j in range(1, n // 2 + 1):
                c = c * (n - j + 1) // j
                vals[j] = vals[n - j] = c
            r = np.empty(n + 1, dtype=object) if self.big else np.empty(n + 1, dtype=np.int64)
            r[:] = vals
            self.rows[n] = r
        return r


class _Linear:
    """The linearised values s = 1 + b x of a = 1 rules, carried beside x through a composition.

    x o y = ((1 + bx)(1 + by) - 1)/b: the product of the s-balls has a small *relative*
    radius, while x + y + bxy, once a partial value has rounded to -1/b, multiplies that
    absolute rounding by every later factor (strong powers of values below 1 + b x = 1
    reached radii of 1e21 around -1 and merged thousands of distinct atoms).  After each
    part both coordinates keep the tighter of their own ball and the one mapped from the
    other (both rigorous).  With few candidates and the atoms known at 160 bits, the
    products run at 160 bits instead (:meth:`hp_values`), where -1/b + 10^-40 is not -1/b.
    Inactive for exact values and for rules other than a = 1.
    """

    def __init__(self, s: Spectrum, k: int, comb: Combination, powers,
                 spow: tuple[list[list[HP]], int] | None):
        self.on = comb.mode == "mul" and comb.a == 1 and isinstance(powers, Balls)
        self.hp: list[list[HP]] | None = None
        self.acc = None
        if not self.on:
            return
        self.b, self.k = comb.b, k
        r = len(s)
        if spow is not None and composition_count(k, r) <= HP_CANDIDATES:
            self.hp, self.prec = spow
            self.bq = fmpq(comb.b.numerator, comb.b.denominator)
        elif spow is not None:
            self.powers = to_balls([v for row in spow[0] for v in row])
        else:
            base = scale_shift(unify(_vec(s), powers)[0], 1, comb.b)
            counts = np.arange(r * (k + 1), dtype=np.int64) % (k + 1)
            self.powers = base.take(np.repeat(np.arange(r), k + 1)).pow_int(counts)

    def step(self, acc, i: int, c: np.ndarray, src: np.ndarray | None):
        """The tighter x after part i (counts ``c``; ``src`` spreads the previous partial values)."""
        if not self.on:
            return acc
        if self.hp is not None:
            pw = self.hp[i]
            with working(self.prec):
                if self.acc is None:
                    self.acc = [pw[j] for j in c.tolist()]
                else:
                    prev = self.acc if src is None else [self.acc[j] for j in src.tolist()]
                    self.acc = [p * pw[j] for p, j in zip(prev, c.tolist(), strict=True)]
            return acc
        term = self.powers.take(i * (self.k + 1) + c)
        prev = self.acc if src is None or self.acc is None else self.acc.take(src)
        lin = term if prev is None else prev.mul(term)
        x = tighter(acc, scale_shift(lin, -1 / self.b, 1 / self.b))
        self.acc = tighter(lin, scale_shift(x, 1, self.b))
        return x

    def hp_values(self, acc) -> list[HP] | None:
        """The candidates (s - 1)/b at high precision, when the chain ran there; where the double
        ball chain ``acc`` (x + y + bxy) is tighter -- b x beyond the precision added -- that ball."""
        if self.hp is None:
            return None
        with working(self.prec):
            out = [(v - 1) / self.bq for v in self.acc]
            if isinstance(acc, Balls) and not acc.is_complex:
                for i, v in enumerate(out):
                    d = hp_of(acc, i)
                    if isinstance(v, arb) and isinstance(d, arb) and d.rad() < v.rad():
                        out[i] = d
        return out


def _linear_powers(s: Spectrum, k: int, comb: Combination) -> tuple[list[list[HP]], int] | None:
    """((1 + b x_i)^c for every atom i and c = 0..k, their precision) for a = 1 rules whose atoms
    are known at high precision; None otherwise.  One table serves the atoms' powers under the
    rule and the linearised chain of :class:`_Linear`."""
    if comb.mode != "mul" or comb.a != 1 or s.hp is None or len(s) * (k + 1) > HP_POWERS:
        return None
    bq = fmpq(comb.b.numerator, comb.b.denominator)
    prec = linear_prec(bq, s.hp)  # 1 + b x must keep b x when it is tiny
    with working(prec):
        return [[(1 + bq * x) ** c for c in range(k + 1)] for x in s.hp], prec


def _compositions(s: Spectrum, k: int, comb: Combination) -> Spectrum:
    r = len(s)
    order = s.order**k
    big = order >= _INT64_SAFE
    pascal = _Pascal(big)
    vec = _vec(s)
    # x_i^(o c) for every atom i and count c = 0..k: at high precision when the atoms
    # are known there (one rounding per power instead of one per multiplication)
    spow = _linear_powers(s, k, comb)
    if spow is not None:  # a = 1: x^(o c) = ((1 + b x)^c - 1)/b from the one table
        bq = fmpq(comb.b.numerator, comb.b.denominator)
        with working(spow[1]):
            xs = [(v - 1) / bq for row in spow[0] for v in row]
        powers = to_balls(xs)
    elif s.hp is not None and r * (k + 1) <= HP_POWERS:
        powers = to_balls([hp_self_power(comb, x, c) for x in s.hp for c in range(k + 1)])
    else:
        counts = np.arange(r * (k + 1), dtype=np.int64) % (k + 1)  # 0..k for each atom
        powers = self_power(comb, vec.take(np.repeat(np.arange(r), k + 1)), counts)
    lin = _Linear(s, k, comb, powers, spow)
    rem = np.array([k], dtype=np.int64)
    w = None  # the multiplicities: the first part sets them (r >= 2, see power())
    acc = None
    for i in range(r):
        if i == r - 1:
            # the last part takes what remains: one term per partial composition, in place
            c = rem.copy()
            n_before = rem
        else:
            # partial composition j (rem_j copies left) branches into c = 0..rem_j
            cnt = rem + 1
            src = np.repeat(np.arange(rem.size), cnt)
            offsets = np.cumsum(cnt) - cnt
            c = np.arange(src.size, dtype=np.int64) - np.repeat(offsets, cnt)
            n_before = rem[src]
            # the binomials C(rem_j, c) of branch j are the whole Pascal row rem_j, in order
            if i == 0:
                # the first factor multiplies a vector of ones: take the binomials as they are
                # (big-int products by 1 still copy every digit, k + 1 times)
                w = pascal.row(k)
            else:
                binom = np.concatenate([pascal.row(n) for n in rem.tolist()])
                w = w[src] * binom
        m_i = int(s.mult[i])
        if m_i != 1 and w.dtype == object and m_i & (m_i - 1) == 0:
            # m_i = 2^e: a shift by e c bits (the same integers, several times faster)
            w = np.left_shift(w, c * (m_i.bit_length() - 1))
        elif m_i != 1:
            cmax = int(c.max()) if c.size else 0
            pw = mult_array([m_i**j for j in range(cmax + 1)], order)
            w = w * pw[c]
        rem = n_before - c
        term = powers.take(i * (k + 1) + c)
        if acc is not None:
            acc = apply(comb, acc if i == r - 1 else acc.take(src), term)
        else:
            acc = term
        acc = lin.step(acc, i, c, None if i == r - 1 or i == 0 else src)
    if isinstance(acc, Rationals) and acc.wider_than(4096):
        acc = rationals_to_balls(acc)
    hp = lin.hp_values(acc)
    if hp is not None:
        return Spectrum.from_hp(hp, w, keep=HP_CANDIDATES)
    return Spectrum(acc, w, order=order)


__all__ = ["check_atoms", "check_pairs", "combine", "composition_count", "fold", "outer_mult",
           "power"]
