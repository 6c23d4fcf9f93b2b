"""Exact vertex counts that may be far too large to expand into decimal digits.

The order of ``cart(K(3)^1000000000)`` is 3^(10^9), an integer of
477 million digits: exact, but not something to compute digit by digit.
:func:`power_product` returns a Python ``int`` when the count has at most
:data:`EXPAND_BITS` bits and a :class:`BigCount` -- the exact product of
powers, kept factored -- otherwise.  Both give ``bit_length()`` and
:func:`log2`; a BigCount prints as its exact factored form, e.g. ``3^1000000000``.
"""

from __future__ import annotations

import math
from collections.abc import Iterable

from powerspec.errors import SizeLimitError

EXPAND_BITS = 1 << 20
"""Counts with at most this many bits (about 315,000 digits) are expanded to ints."""


class BigCount:
    """An exact positive integer held as prod base_i ** exp_i (not expanded).

    >>> c = BigCount({3: 10**9})
    >>> str(c), c.bit_length()
    ('3^1000000000', 1584962501)
    """

    __slots__ = ("factors",)

    def __init__(self, factors: dict[int, int]):
        self.factors = {int(b): int(e) for b, e in factors.items() if b != 1 and e}

    def log2(self) -> float:
        """Base-2 logarithm (float)."""
        return sum(e * math.log2(b) for b, e in self.factors.items())

    def bit_length(self) -> int:
        """Number of bits (exact up to float rounding of the logarithm)."""
        return int(math.floor(self.log2())) + 1

    def __int__(self) -> int:
        raise SizeLimitError(
            f"the count {self} has about {int(self.log2() * math.log10(2)) + 1} digits; "
            "it is kept in factored form"
        )

    def __str__(self) -> str:
        return " * ".join(f"{b}^{e}" if e != 1 else str(b) for b, e in sorted(self.factors.items()))

    __repr__ = __str__

    def __eq__(self, other) -> bool:
        if isinstance(other, BigCount):
            return self.factors == other.factors
        return False

    def __hash__(self) -> int:
        return hash(tuple(sorted(self.factors.items())))


def power_product(pairs: Iterable[tuple[int | BigCount, int]]) -> int | BigCount:
    """Exact prod n_j ** k_j: an int when small enough, else a BigCount.

    >>> power_product([(2, 10), (3, 2)])
    9216
    >>> str(power_product([(2, 10**9)]))
    '2^1000000000'
    """
    factors: dict[int, int] = {}
    for n, k in pairs:
        items = n.factors.items() if isinstance(n, BigCount) else [(int(n), 1)]
        for b, e in items:
            factors[b] = factors.get(b, 0) + e * k
    bits = sum(e * math.log2(b) for b, e in factors.items() if b > 1)
    if bits <= EXPAND_BITS:
        return math.prod(b**e for b, e in factors.items())
    return BigCount(factors)


def log2(n: int | BigCount) -> float:
    """Base-2 logarithm of a count (int or BigCount), -inf for 0."""
    if isinstance(n, BigCount):
        return n.log2()
    if n <= 0:
        return -math.inf
    return math.log2(n) if n.bit_length() < 1000 else n.bit_length() - 1 + math.log2(
        n >> (n.bit_length() - 53)) - 52
