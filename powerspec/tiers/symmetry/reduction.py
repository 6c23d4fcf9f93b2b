"""Exact reduction of a power by an involutive automorphism of its factor.

If a permutation σ with σ^2 = 1 preserves the adjacency and the degrees
(A[σ][:, σ] = A, d[σ] = d, checked exactly on the float64 inputs), the orthonormal
basis u_i = (e_i + e_σi)/√2, w_i = (e_i - e_σi)/√2 (pairs i < σi) and e_j (fixed
points) splits V = V_+ (+) V_- with A = A_+ (+) A_- and D = D_+ (+) D_- (D stays
diagonal: paired vertices have equal degrees).  Every matrix of the power is built
slot by slot from block-diagonal matrices, so each of the 2^k sign patterns of the
slots is an invariant subspace, and permuting slots (a similarity) turns the pattern
with m minus signs into the product G_+^(k-m) ∘ G_-^m under the same rule.  Hence

    spec(kind of G^k) = ⊔_{m=0..k} binom(k, m) x spec(kind of G_+^(k-m) ∘ G_-^m),

each a product of two powers that the symmetry tier splits further under
S_(k-m) x S_m.  For the path P_3 (n_+ = 2, n_- = 1) the blocks shrink from
d ~ k^2/4 to d <= k + 1.  The entries of A_± involve √2; their exact values are
supplied to the certified factor spectra as ball matrices.

>>> import numpy as np
>>> p3 = np.array([[0., 1, 0], [1, 0, 1], [0, 1, 0]])
>>> find_involution(p3, p3.sum(axis=1))
(2, 1, 0)
>>> plus, minus = split(Factor(p3, p3.sum(axis=1)), (2, 1, 0))
>>> plus.adjacency.round(12).tolist(), minus.adjacency.tolist()
([[0.0, 1.414213562373], [1.414213562373, 0.0]], [[0.0]])
"""

from __future__ import annotations

import math
from collections.abc import Callable, Iterator
from dataclasses import dataclass
from itertools import product as cartesian

import flint
import numpy as np

from powerspec.tiers.symmetry.factor import PREC, exact_matrix

MAX_ENUMERATE = 10
"""Largest factor order for which all involutions are enumerated (9496 for n = 10)."""


@dataclass(frozen=True)
class Factor:
    """A symmetric factor: float64 adjacency, exact degrees, and a builder of the exact adjacency.

    ``exact`` is None when the float64 adjacency is itself exact.
    """

    adjacency: np.ndarray
    degrees: np.ndarray
    exact: Callable[[], flint.arb_mat] | None = None
    name: str = "G"

    def exact_adjacency(self) -> Callable[[], flint.arb_mat]:
        """A builder of the exact adjacency as a ball matrix."""
        return self.exact or exact_matrix(self.adjacency)


@dataclass(frozen=True)
class Term:
    """One piece of the reduced spectrum: parts (factor index, copies) and an exact weight."""

    parts: tuple[tuple[int, int], ...]
    weight: int


def _involutions(n: int) -> Iterator[tuple[int, ...]]:
    """All involutions of range(n) other than the identity, as image tuples."""

    def rec(free: list[int], perm: list[int]) -> Iterator[list[int]]:
        if not free:
            yield perm
            return
        first, rest = free[0], free[1:]
        yield from rec(rest, perm)  # first is a fixed point
        for j in rest:
            perm[first], perm[j] = j, first
            yield from rec([x for x in rest if x != j], perm)
            perm[first], perm[j] = first, j

    for perm in rec(list(range(n)), list(range(n))):
        if any(i != p for i, p in enumerate(perm)):
            yield tuple(perm)


def _is_automorphism(adj: np.ndarray, deg: np.ndarray, perm: tuple[int, ...]) -> bool:
    p = np.array(perm)
    return bool(np.array_equal(adj[np.ix_(p, p)], adj) and np.array_equal(deg[p], deg))


def find_involution(adj: np.ndarray, deg: np.ndarray) -> tuple[int, ...] | None:
    """An involutive automorphism of (adj, deg) with the most 2-cycles, or None (exact comparison).

    All involutions are tried for n <= MAX_ENUMERATE; beyond, disjoint automorphic
    transpositions are combined greedily.

    >>> find_involution(np.array([[0., 1], [1, 0]]), np.array([1., 2]))  # degrees differ
    """
    n = adj.shape[0]
    best, best_pairs = None, 0
    if n <= MAX_ENUMERATE:
        candidates: Iterator[tuple[int, ...]] = _involutions(n)
    else:
        perm = list(range(n))
        for i in range(n):
            for j in range(i + 1, n):
                if perm[i] == i and perm[j] == j:
                    trial = list(perm)
                    trial[i], trial[j] = j, i
                    if _is_automorphism(adj, deg, tuple(trial)):
                        perm = trial
        candidates = iter([tuple(perm)] if perm != list(range(n)) else [])
    for perm in candidates:
        pairs = sum(1 for i, p in enumerate(perm) if p > i)
        if pairs > best_pairs and _is_automorphism(adj, deg, perm):
            best, best_pairs = perm, pairs
    return best


def split(factor: Factor, perm: tuple[int, ...]) -> tuple[Factor, Factor]:
    """(G_+, G_-): the restrictions of the factor to the ±1 eigenspaces of the involution.

    The float adjacencies are symmetrised approximations; the exact ones are ball
    matrices Q_±^T A Q_± (with √2 in ball arithmetic).
    """
    n = factor.adjacency.shape[0]
    pairs = [(i, p) for i, p in enumerate(perm) if p > i]
    fixed = [i for i, p in enumerate(perm) if p == i]
    r = 1.0 / math.sqrt(2.0)
    q_plus = np.zeros((n, len(pairs) + len(fixed)))
    q_minus = np.zeros((n, len(pairs)))
    for c, (i, j) in enumerate(pairs):
        q_plus[i, c] = q_plus[j, c] = r
        q_minus[i, c], q_minus[j, c] = r, -r
    for c, j in enumerate(fixed):
        q_plus[j, len(pairs) + c] = 1.0
    deg = factor.degrees
    deg_plus = np.array([deg[i] for i, _ in pairs] + [deg[j] for j in fixed])
    deg_minus = np.array([deg[i] for i, _ in pairs])
    base = factor.exact_adjacency()

    def restricted(sign: int) -> Callable[[], flint.arb_mat]:
        def build() -> flint.arb_mat:
            old = flint.ctx.prec
            flint.ctx.prec = PREC
            try:
                s = 1 / flint.arb(2).sqrt()
                cols = len(pairs) + (len(fixed) if sign > 0 else 0)
                q = flint.arb_mat(n, cols)
                for c, (i, j) in enumerate(pairs):
                    q[i, c] = s
                    q[j, c] = s if sign > 0 else -s
                if sign > 0:
                    for c, j in enumerate(fixed):
                        q[j, len(pairs) + c] = 1
                return q.transpose() * base() * q
            finally:
                flint.ctx.prec = old

        return build

    def approx(q: np.ndarray) -> np.ndarray:
        x = q.T @ factor.adjacency @ q
        return 0.5 * (x + x.T)

    return (Factor(approx(q_plus), deg_plus, restricted(1), factor.name + "+"),
            Factor(approx(q_minus), deg_minus, restricted(-1), factor.name + "-"))


def reduce_operands(operands: list[tuple[Factor, int]], automorphisms: bool = True
                    ) -> tuple[list[Factor], list[Term]]:
    """The factors and weighted terms whose spectra make up the product's (see the module docstring).

    >>> p3 = np.array([[0., 1, 0], [1, 0, 1], [0, 1, 0]])
    >>> factors, terms = reduce_operands([(Factor(p3, p3.sum(axis=1)), 2)])
    >>> [(t.parts, t.weight) for t in terms]
    [(((0, 2),), 1), (((0, 1), (1, 1)), 2), (((1, 2),), 1)]
    """
    factors: list[Factor] = []
    choices: list[list[tuple[tuple[tuple[int, int], ...], int]]] = []
    for factor, k in operands:
        perm = find_involution(factor.adjacency, factor.degrees) if automorphisms else None
        if perm is None:
            factors.append(factor)
            choices.append([(((len(factors) - 1, k),), 1)])
            continue
        plus, minus = split(factor, perm)
        factors += [plus, minus]
        ip, im = len(factors) - 2, len(factors) - 1
        opts = []
        for m in range(k + 1):
            parts = tuple(p for p in ((ip, k - m), (im, m)) if p[1] > 0)
            opts.append((parts, math.comb(k, m)))
        choices.append(opts)
    terms = [Term(tuple(p for parts, _ in combo for p in parts), math.prod(w for _, w in combo))
             for combo in cartesian(*choices)]
    return factors, terms
