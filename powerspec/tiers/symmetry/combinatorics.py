"""Partitions and the two dimension formulas of Schur--Weyl duality (exact integers).

``V^{(x)k} = (+)_lambda S_lambda(V) (x) Specht_lambda`` over partitions lambda of
k with at most n = dim V parts.  The Specht module has dimension f^lambda
(hook length formula, Frame--Robinson--Thrall 1954) and the polynomial
GL_n-module S_lambda(V) has dimension d_lambda (hook-content formula, equal to
Weyl's dimension formula and to the number of semistandard tableaux of shape
lambda with entries <= n).  Everything here is exact Python integer
arithmetic.

>>> [schur_weyl_dims(lam, 3) for lam in partitions(3, 3)]
[(1, 10), (2, 8), (1, 1)]
>>> sum(f * d for f, d in (schur_weyl_dims(lam, 3) for lam in partitions(3, 3)))
27
"""

from __future__ import annotations

from collections.abc import Iterator
from math import factorial, prod

Partition = tuple[int, ...]
"""A partition as a non-increasing tuple of positive parts (the empty tuple is the partition of 0)."""


def partitions(k: int, max_parts: int, max_part: int | None = None) -> Iterator[Partition]:
    """Yield the partitions of k with at most ``max_parts`` parts, largest first (lexicographically).

    >>> list(partitions(4, 2))
    [(4,), (3, 1), (2, 2)]
    """
    if k < 0 or max_parts < 0:
        return
    if max_part is None:
        max_part = k
    if k == 0:
        yield ()
        return
    if max_parts == 0:
        return
    for first in range(min(k, max_part), 0, -1):
        # the remaining k - first must fit in max_parts - 1 parts of size <= first
        if first * max_parts < k:
            break
        for rest in partitions(k - first, max_parts - 1, first):
            yield (first,) + rest


def conjugate(lam: Partition) -> Partition:
    """The conjugate (transposed) partition.

    >>> conjugate((3, 1))
    (2, 1, 1)
    """
    return tuple(sum(1 for part in lam if part > j) for j in range(lam[0])) if lam else ()


def specht_dimension(lam: Partition) -> int:
    """f^lambda, the number of standard tableaux of shape lambda (hook length formula; exact int).

    >>> specht_dimension((2, 1)), specht_dimension((3, 2, 1))
    (2, 16)
    """
    conj = conjugate(lam)
    hooks = prod(lam[i] - j + conj[j] - i - 1 for i in range(len(lam)) for j in range(lam[i]))
    return factorial(sum(lam)) // hooks


def weyl_dimension(lam: Partition, n: int) -> int:
    """d_lambda, the dimension of the GL_n-module with highest weight lambda (exact int).

    Hook-content formula: prod over boxes (i, j) of (n + j - i) / hook(i, j);
    0 when lambda has more than n parts.

    >>> weyl_dimension((1,), 5), weyl_dimension((2,), 3), weyl_dimension((1, 1, 1, 1), 3)
    (5, 6, 0)
    """
    if len(lam) > n:
        return 0
    conj = conjugate(lam)
    num = prod(n + j - i for i in range(len(lam)) for j in range(lam[i]))
    hooks = prod(lam[i] - j + conj[j] - i - 1 for i in range(len(lam)) for j in range(lam[i]))
    return num // hooks


def schur_weyl_dims(lam: Partition, n: int) -> tuple[int, int]:
    """(f^lambda, d_lambda): multiplicity and size of the block of lambda (exact ints).

    >>> schur_weyl_dims((2, 2), 3)
    (2, 6)
    """
    return specht_dimension(lam), weyl_dimension(lam, n)


def padded(lam: Partition, n: int) -> tuple[int, ...]:
    """lambda padded with zeros to exactly n entries (the top row of its patterns).

    >>> padded((2, 1), 4)
    (2, 1, 0, 0)
    """
    if len(lam) > n:
        raise ValueError(f"partition {lam} has more than {n} parts")
    return tuple(lam) + (0,) * (n - len(lam))
