"""Composition states of a best-first search over the eigenvalues of a power.

A state counts, per operand, how many of its k copies take each of its
eigenvalues (or magnitude classes).  This module holds what the additive and
the multiplicative searches share: the search limits, exact multinomial
multiplicities (kept factored when astronomically large) and the successor
rule (move one copy to the next eigenvalue in the search order).

>>> multinomial(4, [2, 1, 1]), list(successors((2, 0), [0, 2]))
(12, [(1, 1)])
"""

from __future__ import annotations

import heapq
import math
from fractions import Fraction

from flint import fmpq

from powerspec.errors import SizeLimitError
from powerspec.numbers.counts import power_product
from powerspec.numbers.hp import HP

MAX_STATES = 200_000
"""Most compositions one best-first search may visit."""

MAX_MULT_BITS = 1 << 23
"""Largest multiplicity (in bits) computed by expanding a multinomial with two large parts."""

U = 2.0**-53
"""The unit roundoff of doubles (search keys are doubles with error bounds)."""


def as_hp(x) -> HP:
    """An exact Fraction as a flint rational; balls and flint numbers unchanged."""
    if isinstance(x, Fraction):
        return fmpq(x.numerator, x.denominator)
    return x


def count_pow(base: int, e: int):
    """base^e as an exact count (factored when enormous); 1 for e = 0."""
    return power_product([(base, e)]) if e else 1


def multinomial(k: int, counts: list[int]):
    """k! / prod c_i! (sum c_i = k), exact: the product of C(left, c) over all but the largest part.

    Refused (SizeLimitError) when it would have more than MAX_MULT_BITS bits
    -- several parts of a huge k, which only a very deep search reaches.
    """
    big = counts.index(max(counts))
    bits = (math.lgamma(k + 1) - math.lgamma(counts[big] + 1)
            - sum(math.lgamma(c + 1) for i, c in enumerate(counts) if i != big)) / math.log(2)
    if bits > MAX_MULT_BITS:
        raise SizeLimitError("a multiplicity would be a multinomial of more than 2^23 bits "
                             "(several large parts); ask for fewer eigenvalues")
    out, left = 1, k
    for i, c in enumerate(counts):
        if i != big and c:
            out *= math.comb(left, c)
            left -= c
    return out


def state_mult(state: tuple, parts, offsets) -> object:
    """The exact multiplicity of one additive state (multinomials times operand multiplicities)."""
    total: object = 1
    for j, (_, ms, k) in enumerate(parts):
        counts = list(state[offsets[j]:offsets[j + 1]])
        total = total * multinomial(k, counts)
        for c, mm in zip(counts, ms, strict=True):
            if c and mm != 1:
                total = total * count_pow(mm, c)
    return total


def start(parts) -> tuple:
    """The state with every copy on each operand's first eigenvalue."""
    s: list[int] = []
    for vals, _, k in parts:
        s.extend([k] + [0] * (len(vals) - 1))
    return tuple(s)


def successors(state: tuple, offsets):
    """The states with one copy moved to the next eigenvalue of its operand."""
    for j in range(len(offsets) - 1):
        for p in range(offsets[j], offsets[j + 1] - 1):
            if state[p]:
                nxt = list(state)
                nxt[p] -= 1
                nxt[p + 1] += 1
                yield tuple(nxt)


class Frontier:
    """The best-first frontier of both extremes searches: states in order of decreasing key,
    each pushed once, visits counted against ``max_states`` (SizeLimitError naming ``what``),
    and the largest error of a computed key kept, so that :meth:`top` bounds every unexplored
    state's exact key.

    >>> f = Frontier((2, 0), lambda s: (float(s[1]), 0.0), [0, 2], 10, "states")
    >>> f.expand(f.pop()); f.pop(), f.visited
    ((1, 1), 2)
    """

    def __init__(self, first: tuple, key, offsets, max_states: int, what: str):
        self._heap = [(-0.0, first)]
        self._seen = {first}
        self._key, self._offsets = key, offsets
        self._max, self._what = max_states, what
        self.eps = 0.0
        self.visited = 0

    def __bool__(self) -> bool:
        return bool(self._heap)

    def pop(self) -> tuple:
        """The unexplored state of largest key (counted against the cap)."""
        state = heapq.heappop(self._heap)[1]
        self.visited += 1
        if self.visited > self._max:
            raise SizeLimitError(f"the extremes search visited more than {self._max} "
                                 f"{self._what}; ask for fewer eigenvalues")
        return state

    def expand(self, state: tuple) -> None:
        """Push the successors of ``state`` not seen before."""
        for nxt in successors(state, self._offsets):
            if nxt not in self._seen:
                self._seen.add(nxt)
                kv, ke = self._key(nxt)
                self.eps = max(self.eps, ke)
                heapq.heappush(self._heap, (-kv, nxt))

    def top(self) -> float:
        """An upper bound of the exact key of every unexplored state (frontier not empty)."""
        return -self._heap[0][0] + self.eps


__all__ = ["MAX_MULT_BITS", "MAX_STATES", "U", "Frontier", "as_hp", "count_pow", "multinomial",
           "start", "state_mult", "successors"]
