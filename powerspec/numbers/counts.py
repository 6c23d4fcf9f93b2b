"""Exact counts that may be far too large to expand into decimal digits.

The order of ``cart(K(3)^1000000000)`` is 3^(10^9), an integer of 477
million digits; the multiplicity of the eigenvalue -1 of ``strong(K(3)^10^9)``
is 3^(10^9) - 1; that of +2^(k/2) in ``direct(P(3)^k)`` is 2^(k-1).  Such
counts are exact but not worth expanding.  A count is a Python ``int`` while
it has at most :data:`EXPAND_BITS` bits and a :class:`BigCount` -- an exact
sum of terms ``c * p1^e1 * p2^e2 ...`` with rational coefficients c and prime
bases, kept in canonical form -- beyond.  Both support +, -, *, comparison,
:func:`log2` and :func:`to_arb` (a certified ball); a BigCount prints as its
exact factored form, e.g. ``3^1000000000 - 1`` or ``(5^1000 + 3^1000)/2``.

>>> c = BigCount.power(3, 10**9)
>>> str(c - 1), (c - 1).bit_length()
('3^1000000000 - 1', 1584962501)
>>> str(power_product([(2, 10**9)]))
'2^1000000000'
"""

from __future__ import annotations

import math
from collections.abc import Iterable
from fractions import Fraction

from flint import arb, fmpz

from powerspec.errors import SizeLimitError
from powerspec.numbers.hp import working

EXPAND_BITS = 1 << 20
"""Counts with at most this many bits (about 315,000 digits) are plain Python ints."""


def _factor_small(n: int) -> dict[int, int]:
    """Prime factorisation by trial division (bases of counts are small); big cofactors kept."""
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


class BigCount:
    """An exact non-negative integer as a canonical sum of c * prod p^e terms (not expanded).

    ``terms`` maps a sorted tuple of (prime, exponent) pairs to a non-zero Fraction.
    Build one with :meth:`power` or :func:`power_product` and combine with + - *.
    """

    __slots__ = ("terms",)

    def __init__(self, terms: dict[tuple, Fraction]):
        self.terms = {k: v for k, v in terms.items() if v}

    # ------------------------------------------------------------- builders
    @classmethod
    def power(cls, base: int, exponent: int) -> BigCount:
        """base ** exponent, kept factored."""
        fac = _factor_small(int(base))
        return cls({tuple(sorted((p, e * int(exponent)) for p, e in fac.items())): Fraction(1)})

    @staticmethod
    def _of(x: int | Fraction | BigCount) -> BigCount:
        if isinstance(x, BigCount):
            return x
        return BigCount({(): Fraction(x)})

    # ------------------------------------------------------------- arithmetic
    def __add__(self, other):
        o = self._of(other)
        terms = dict(self.terms)
        for k, v in o.terms.items():
            terms[k] = terms.get(k, 0) + v
        return _settle(terms)

    __radd__ = __add__

    def __neg__(self):
        return BigCount({k: -v for k, v in self.terms.items()})

    def __sub__(self, other):
        return self + (-self._of(other))

    def __rsub__(self, other):
        return self._of(other) - self

    def __mul__(self, other):
        o = self._of(other)
        terms: dict[tuple, Fraction] = {}
        for k1, v1 in self.terms.items():
            for k2, v2 in o.terms.items():
                d = dict(k1)
                for p, e in k2:
                    d[p] = d.get(p, 0) + e
                key, c = _canonical(d, v1 * v2)
                terms[key] = terms.get(key, 0) + c
        return _settle(terms)

    __rmul__ = __mul__

    def __floordiv__(self, d: int):
        if not isinstance(d, int) or d <= 0:
            return NotImplemented
        return _settle({k: v / d for k, v in self.terms.items()})

    # ------------------------------------------------------------- queries
    def log2(self) -> float:
        """Base-2 logarithm (float, accurate to about 1e-15 relative)."""
        return _log2_arb(self)

    def bit_length(self) -> int:
        """Number of bits (from the logarithm; exact except within 1e-9 of a power of two)."""
        return int(math.floor(self.log2() + 1e-12)) + 1

    def __int__(self) -> int:
        raise SizeLimitError(f"the count {self} has about {int(self.log2() * 0.30103) + 1} digits; "
                             "it is kept in factored form")

    def __str__(self) -> str:
        items = sorted(self.terms.items(), key=lambda kv: -_term_log2(kv[0], kv[1]))
        den = math.lcm(*(v.denominator for _, v in items)) if items else 1
        parts = []
        for key, v in items:
            c = v * den
            sign = "-" if c < 0 else "+"
            body = " * ".join(f"{p}^{e}" if e != 1 else str(p) for p, e in key)
            c = _int_digits_text(abs(c))
            text = (c if not body else body if c == "1" else f"{c} * {body}")
            parts.append((sign, text))
        out = ("-" if parts and parts[0][0] == "-" else "") + parts[0][1] if parts else "0"
        for sign, text in parts[1:]:
            out += f" {sign} {text}"
        return f"({out})/{_int_digits_text(den)}" if den != 1 else out

    __repr__ = __str__

    def __eq__(self, other) -> bool:
        if isinstance(other, BigCount):
            return self.terms == other.terms
        return False

    def __hash__(self) -> int:
        return hash(tuple(sorted(self.terms.items())))

    def __lt__(self, other) -> bool:
        return _sign(self - other) < 0

    def __gt__(self, other) -> bool:
        return _sign(self - other) > 0

    def __le__(self, other) -> bool:
        return not self > other

    def __ge__(self, other) -> bool:
        return not self < other

    def sign(self) -> int:
        """-1, 0 or +1, decided rigorously from a certified ball (terms are never all cancelling)."""
        b = to_arb(self)
        if b > 0:
            return 1
        if b < 0:
            return -1
        return 0


def _sign(x: int | BigCount) -> int:
    """-1, 0 or +1 of a difference of counts (small differences settle to plain ints)."""
    return x.sign() if isinstance(x, BigCount) else (x > 0) - (x < 0)


def _canonical(d: dict[int, int], c: Fraction) -> tuple[tuple, Fraction]:
    """Move powers of the term's primes between coefficient and exponents (canonical form)."""
    for p in list(d):
        while c.denominator % p == 0 and d[p] > 0:
            c *= p
            d[p] -= 1
        while c.numerator % p == 0 and c.numerator:
            c /= p
            d[p] += 1
    return tuple(sorted((p, e) for p, e in d.items() if e)), c


def _int_digits_text(c: int | Fraction) -> str:
    """Decimal digits of a whole number of any length (FLINT's conversion: no digit cap)."""
    c = int(c)
    return str(c) if c.bit_length() < 3000 else str(fmpz(c))


def _term_log2(key: tuple, c: Fraction) -> float:
    # log2 of numerator and denominator apart: math.log2 takes ints of any size, but a
    # Fraction goes through float and overflows past 2^1024
    c = Fraction(c)
    return (sum(e * math.log2(p) for p, e in key) + math.log2(abs(c.numerator))
            - math.log2(c.denominator))


def _settle(terms: dict[tuple, Fraction]) -> int | BigCount:
    terms = {k: v for k, v in terms.items() if v}
    if not terms:
        return 0
    if max(_term_log2(k, v) for k, v in terms.items()) <= EXPAND_BITS:
        total = sum(v * math.prod(p**e for p, e in k) for k, v in terms.items())
        if isinstance(total, Fraction):
            if total.denominator != 1:
                raise ValueError(f"a count came out non-integral: {total}")
            total = total.numerator
        return int(total)
    # factor out the prime powers common to every term, then fold small remainders
    primes = set().union(*(dict(k) for k in terms))
    common = {p: min(dict(k).get(p, 0) for k in terms) for p in primes}
    common = {p: e for p, e in common.items() if e}
    inner: dict[tuple, Fraction] = {}
    for k, v in terms.items():
        d = {p: e - common.get(p, 0) for p, e in dict(k).items()}
        key = tuple(sorted((p, e) for p, e in d.items() if e))
        inner[key] = inner.get(key, 0) + v
    if common and max(_term_log2(k, v) for k, v in inner.items()) <= EXPAND_BITS:
        coeff = sum(v * math.prod(p**e for p, e in k) for k, v in inner.items())
        key, c = _canonical(dict(common), Fraction(coeff))
        return BigCount({key: c})
    canon: dict[tuple, Fraction] = {}
    for k, v in terms.items():
        key, c = _canonical(dict(k), v)
        canon[key] = canon.get(key, 0) + c
    return BigCount(canon)


def to_arb(n: int | BigCount) -> arb:
    """A certified ball containing the count (exact for ints that fit the working precision)."""
    with working():
        if not isinstance(n, BigCount):
            return arb(int(n)) if int(n).bit_length() < 4000 else _int_arb(int(n))
        total = arb(0)
        for key, c in n.terms.items():
            t = arb(c.numerator) / c.denominator
            for p, e in key:
                t *= arb(p) ** e
            total += t
        return total


def _int_arb(n: int) -> arb:
    b = n.bit_length() - 200
    return (arb(n >> b) + arb(0, 1)) * arb(2) ** b


def _log2_arb(n: int | BigCount) -> float:
    with working():
        b = to_arb(n)
        return float((b.log() / arb(2).log()).mid())


def log2(n: int | BigCount) -> float:
    """Base-2 logarithm of a count (int or BigCount); -inf for 0."""
    if isinstance(n, BigCount):
        return n.log2()
    n = int(n)
    if n <= 0:
        return -math.inf
    if n.bit_length() < 1000:
        return math.log2(n)
    return n.bit_length() - 1 + math.log2(n >> (n.bit_length() - 53)) - 52


def bit_length(n: int | BigCount) -> int:
    """Number of bits of a count."""
    return n.bit_length() if isinstance(n, BigCount) else int(n).bit_length()


def power_product(pairs: Iterable[tuple[int | BigCount, int]]) -> int | BigCount:
    """Exact prod n_j ** k_j: an int when small enough, else a BigCount.

    >>> power_product([(2, 10), (3, 2)])
    9216
    >>> str(power_product([(6, 10**7)]))
    '2^10000000 * 3^10000000'
    """
    out: int | BigCount = 1
    for n, k in pairs:
        term: int | BigCount
        if isinstance(n, BigCount):
            if len(n.terms) == 1:
                (key, c), = n.terms.items()
                term = BigCount({tuple((p, e * k) for p, e in key): c**k})
            else:
                term = _pow(n, k)
        elif int(n).bit_length() * k <= EXPAND_BITS:
            term = int(n) ** k
        else:
            term = BigCount.power(int(n), k)
        out = out * term
    return out if isinstance(out, BigCount) else int(out)


def _pow(x: BigCount, k: int) -> int | BigCount:
    """x ** k for a multi-term count, by repeated squaring (term count grows; small k only)."""
    if k > 64:
        raise ValueError("powers of multi-term counts are limited to k <= 64")
    result: int | BigCount = 1
    base: int | BigCount = x
    while k:
        if k & 1:
            result = result * base
        k >>= 1
        if k:
            base = base * base
    return result


def fraction_of(part: int | BigCount, whole: int | BigCount) -> arb:
    """A certified ball containing part / whole."""
    with working():
        return to_arb(part) / to_arb(whole)


__all__ = ["BigCount", "EXPAND_BITS", "bit_length", "fraction_of", "log2", "power_product", "to_arb"]
