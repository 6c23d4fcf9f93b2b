"""Vectorised exact rationals with a common denominator: the exact number domain.

A :class:`Rationals` array holds n rationals num_i / den with one positive
integer denominator; numerators are numpy int64 while every intermediate is
provably below 2**62 in magnitude, Python ints (object arrays) beyond.  All
operations are exact.  Integer spectra (complete graphs, hypercubes, complete
bipartite graphs with a square product, J_n, degree sequences of integer or
dyadic weights) stay in this domain from the factors to the answer.

>>> x = Rationals.from_fractions([Fraction(1, 3), Fraction(-2)])
>>> x.mul(x).to_fractions()
[Fraction(1, 9), Fraction(4, 1)]
>>> Rationals.from_ints([2]).pow_int(np.array([70])).num.dtype   # 2**70 leaves int64 exactly
dtype('O')
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from fractions import Fraction
from functools import reduce

import numpy as np

_SAFE = 2**62
MAX_BITS = 1 << 14
"""Largest numerator/denominator size (bits) kept exact; larger values move to balls."""


def _obj(a: np.ndarray) -> np.ndarray:
    if a.dtype == object:
        return a
    out = np.empty(a.shape, dtype=object)
    out[...] = [int(v) for v in a.ravel()] if a.ndim == 1 else a.astype(object)
    return out


def _maxabs(a: np.ndarray) -> int:
    if a.size == 0:
        return 0
    if a.dtype == object:
        return max(abs(int(v)) for v in a.tolist())
    return int(np.abs(a).max())


def _fit(a: np.ndarray) -> np.ndarray:
    """int64 when every entry fits with room (|v| < 2**62), else Python ints."""
    if a.dtype != object:
        return a
    if a.size == 0 or _maxabs(a) < _SAFE:
        return np.array([int(v) for v in a.tolist()], dtype=np.int64).reshape(a.shape)
    return a


class Rationals:
    """n exact rationals num_i / den (see the module docstring)."""

    __slots__ = ("num", "den")

    def __init__(self, num: np.ndarray, den: int = 1):
        if den <= 0:
            raise ValueError("the common denominator must be positive")
        self.num = _fit(num)
        self.den = int(den)

    @classmethod
    def from_ints(cls, values: Sequence[int]) -> Rationals:
        """Integers as rationals."""
        return cls(_fit(_obj(np.array(list(values), dtype=object))), 1)

    @classmethod
    def from_fractions(cls, values: Sequence) -> Rationals:
        """Fractions (or ints, or flint fmpq) over their least common denominator."""
        fr = [Fraction(int(v.p), int(v.q)) if hasattr(v, "q") else Fraction(v) for v in values]
        den = reduce(math.lcm, (f.denominator for f in fr), 1)
        num = np.empty(len(fr), dtype=object)
        num[:] = [f.numerator * (den // f.denominator) for f in fr]
        return cls(num, den)

    def __len__(self) -> int:
        return int(self.num.shape[0])

    def bits(self) -> int:
        """Size of the largest numerator or the denominator, in bits."""
        return max(_maxabs(self.num).bit_length(), self.den.bit_length())

    def wider_than(self, bits: int) -> bool:
        """True when :meth:`bits` exceeds ``bits``, exactly (int64 numerators are not scanned
        when ``bits`` >= 64: they have fewer bits).

        >>> Rationals.from_ints([5, -2**70]).wider_than(64), Rationals.from_ints([5]).wider_than(64)
        (True, False)
        """
        if self.num.dtype != object and bits >= 64:
            return self.den.bit_length() > bits
        return self.bits() > bits

    def take(self, idx) -> Rationals:
        """The entries at the given indices (or mask)."""
        return Rationals(self.num[idx], self.den)

    def repeat(self, counts) -> Rationals:
        """Each entry repeated counts[i] times."""
        return Rationals(np.repeat(self.num, counts), self.den)

    def neg(self) -> Rationals:
        """-x."""
        return Rationals(-self.num, self.den)

    def reduced(self) -> Rationals:
        """The same values with the common factor of all numerators and the denominator removed."""
        if self.den == 1:
            return self
        g = self.den
        nums = self.num.tolist() if self.num.dtype == object else np.unique(np.abs(self.num)).tolist()
        for v in nums:
            g = math.gcd(g, int(v))
            if g == 1:
                return self
        num = self.num if (self.num.dtype == object or g < _SAFE) else _obj(self.num)
        return Rationals(num // g, self.den // g)

    @staticmethod
    def concat(parts: Sequence[Rationals]) -> Rationals:
        """All entries of several arrays over a common denominator."""
        den = reduce(math.lcm, (p.den for p in parts), 1)
        nums = [_scale(p.num, den // p.den) for p in parts]
        if any(n.dtype == object for n in nums):
            nums = [_obj(n) for n in nums]
        return Rationals(np.concatenate(nums) if nums else np.zeros(0, np.int64), den)

    def add(self, other: Rationals) -> Rationals:
        """Elementwise x + y (broadcasting), exact."""
        den = math.lcm(self.den, other.den)
        a, b = _scale(self.num, den // self.den), _scale(other.num, den // other.den)
        if a.dtype != object and b.dtype != object and _maxabs(a) + _maxabs(b) < _SAFE:
            return Rationals(np.add(*np.broadcast_arrays(a, b)), den)
        return Rationals(np.add(*np.broadcast_arrays(_obj(a), _obj(b))), den)

    def mul(self, other: Rationals) -> Rationals:
        """Elementwise x * y (broadcasting), exact."""
        a, b = self.num, other.num
        if a.dtype != object and b.dtype != object and _maxabs(a) * _maxabs(b) < _SAFE:
            out = np.multiply(*np.broadcast_arrays(a, b))
        else:
            out = np.multiply(*np.broadcast_arrays(_obj(a), _obj(b)))
        return Rationals(out, self.den * other.den).reduced()

    def mul_int(self, c: np.ndarray) -> Rationals:
        """x * c for integer arrays c, exact."""
        return self.mul(Rationals(np.asarray(c), 1))

    def pow_int(self, c: np.ndarray) -> Rationals:
        """x ** c elementwise for integer arrays c >= 0 (0**0 = 1), exact (Python ints)."""
        c = np.asarray(c, dtype=np.int64)
        x = self.num if self.num.shape[0] == c.shape[0] else np.repeat(self.num, c.shape[0])
        top = int(c.max(initial=0))
        num = np.empty(c.shape[0], dtype=object)
        num[:] = [int(v) ** int(k) for v, k in zip(x.tolist(), c.tolist(), strict=True)]
        if self.den == 1:
            return Rationals(num, 1)
        # common denominator den**max(c): scale each numerator by den**(max c - c)
        num[:] = [v * self.den ** (top - int(k)) for v, k in zip(num.tolist(), c.tolist(), strict=True)]
        return Rationals(num, self.den**top).reduced()

    def to_fractions(self) -> list[Fraction]:
        """The values as Fractions."""
        return [Fraction(int(v), self.den) for v in self.num.tolist()]

    def to_floats(self) -> np.ndarray:
        """Correctly rounded floats (+-inf beyond the double range)."""
        if self.num.dtype != object and self.den == 1:
            return self.num.astype(np.float64)
        out = []
        for v in self.num.tolist():
            try:
                out.append(int(v) / self.den)
            except OverflowError:
                out.append(math.inf if int(v) > 0 else -math.inf)
        return np.array(out, dtype=np.float64)

    def sort_order(self) -> np.ndarray:
        """Indices that sort the values ascending (exact)."""
        if self.num.dtype != object:
            return np.argsort(self.num, kind="stable")
        return np.array(sorted(range(len(self)), key=lambda i: self.num[i]), dtype=np.int64)

    def compare(self, x: Fraction) -> np.ndarray:
        """sign(value_i - x) for an exact rational x: -1, 0 or +1 per entry."""
        x = Fraction(x)
        lhs = self.num if self.num.dtype == object else _obj(self.num)
        t = x.numerator * self.den
        return np.array([(int(v) * x.denominator > t) - (int(v) * x.denominator < t)
                         for v in lhs.tolist()], dtype=np.int64)


def _scale(num: np.ndarray, f: int) -> np.ndarray:
    if f == 1:
        return num
    if num.dtype != object and f < _SAFE and _maxabs(num) * f < _SAFE:
        return num * f
    return _obj(num) * f


__all__ = ["MAX_BITS", "Rationals"]
