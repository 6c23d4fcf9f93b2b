"""Gelfand--Tsetlin patterns of a shape and the Lie-algebra action on them.

A pattern of shape lambda (n entries, zero padded) is a triangle of integers,
row r (r = 1..n) having r entries, row n = lambda, and consecutive rows
interlacing: ``row[r+1][i] >= row[r][i] >= row[r+1][i+1]``.  The patterns
index the orthonormal Gelfand--Tsetlin basis of the GL_n-module of highest
weight lambda (Gelfand & Tsetlin 1950; Zhelobenko 1973; Molev,
arXiv math/0211289, Thm. 2.3 for the unitary normalisation), in which

* ``E_rr`` acts diagonally by the weight ``w_r = sum(row r) - sum(row r-1)``;
* the lowering operator ``E_{p+1,p}`` sends a pattern to the patterns with one
  entry of row p lowered by one, with coefficient sqrt(c2),

      c2 = - prod_{j<=p+1} (l_pi - l_{p+1,j} - 1) prod_{j<=p-1} (l_pi - l_{p-1,j})
             / prod_{j != i} (l_pi - l_pj)(l_pi - l_pj - 1),     l_rj = row[r][j] - j + 1,

  (the numerator vanishes exactly when the lowered array is not a pattern);
* ``E_{p,p+1}`` is the transpose (the basis is orthonormal for the
  U(n)-invariant inner product, so dρ(X*) = dρ(X)*).

The signs (all coefficients positive) are pinned by the tests of the
commutation relations [E_ij, E_kl] = δ_jk E_il - δ_li E_kj.  The coefficients
are square roots of ratios of integers; in float64 each is correct to a
relative ``COEF_REL`` (products of at most 2n-1 integers, one division, one
correctly rounded square root).

>>> m = GTModule((2, 1), 3)
>>> m.dim, m.weights.sum(axis=0).tolist()
(8, [8, 8, 8])
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass, field

import numpy as np

from powerspec.tiers.symmetry.combinatorics import Partition, padded

U = 2.0**-53
"""Unit roundoff of float64."""


def gamma(m: float) -> float:
    """The rounding-error constant γ_m = m u / (1 - m u) (Higham, Accuracy and Stability, §3.1).

    >>> 0 < gamma(10) < 1.2e-15
    True
    """
    mu = m * U
    if mu >= 0.5:
        raise ValueError("gamma(m) needs m u < 1/2")
    return mu / (1.0 - mu)


@dataclass
class PlaneBlocks:
    """The invariant blocks of the rotation generators in plane (p, p+1).

    ``E_{p,p+1}`` and ``E_{p+1,p}`` only change row p, so the patterns that
    agree outside row p span invariant subspaces.  ``groups[g]`` holds the
    pattern indices of one block (in a canonical order: row p sorted) and
    ``keys[g]`` its shape-independent key (rows p-1 and p+1 shifted to end in
    0, which is all the coefficients depend on).
    """

    p: int
    groups: list[np.ndarray]
    keys: list[tuple]


@dataclass
class GTModule:
    """The Gelfand--Tsetlin basis of the GL_n-module of highest weight lambda.

    ``patterns[a]`` is the flat tuple of rows 1..n of pattern a; ``weights``
    is the (d, n) integer weight matrix; ``lowering(p)`` the sparse matrix of
    dρ(E_{p+1,p}) in COO form (target, source, value).
    """

    shape: Partition
    n: int
    patterns: list[tuple[tuple[int, ...], ...]] = field(init=False)
    weights: np.ndarray = field(init=False)
    _index: dict = field(init=False, repr=False)
    _lower: dict = field(init=False, repr=False)
    _planes: dict = field(init=False, repr=False)

    def __post_init__(self) -> None:
        top = padded(self.shape, self.n)
        pats: list[tuple[tuple[int, ...], ...]] = []

        def down(rows: list[tuple[int, ...]]) -> None:
            upper = rows[0]
            if len(upper) == 1:
                pats.append(tuple(rows))
                return
            # descending ranges: the highest weight comes first, and for lambda = (1) the
            # patterns are e_1, ..., e_n in order (so rho_(1)(X) = X)
            ranges = [range(upper[i], upper[i + 1] - 1, -1) for i in range(len(upper) - 1)]
            for row in itertools.product(*ranges):
                down([row] + rows)

        down([top])
        self.patterns = pats
        self._index = {pat: a for a, pat in enumerate(pats)}
        sums = np.array([[sum(r) for r in pat] for pat in pats], dtype=np.int64)
        sums = sums.reshape(len(pats), self.n)
        zero = np.zeros((len(pats), 1), np.int64)
        self.weights = np.diff(np.concatenate([zero, sums], axis=1), axis=1)
        self._lower = {}
        self._planes = {}

    @property
    def dim(self) -> int:
        """d_lambda, the number of patterns."""
        return len(self.patterns)

    def lowering(self, p: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """dρ(E_{p+1,p}) as (target, source, value) arrays, 1 <= p < n (values to COEF_REL).

        >>> t, s, v = GTModule((1,), 2).lowering(1)
        >>> t.tolist(), s.tolist(), v.tolist()
        ([1], [0], [1.0])
        """
        if p in self._lower:
            return self._lower[p]
        tgt, src, val = [], [], []
        for a, pat in enumerate(self.patterns):
            row = pat[p - 1]
            up = pat[p]
            dn = pat[p - 2] if p >= 2 else ()
            lp = [row[j] - j for j in range(p)]
            lu = [up[j] - j for j in range(p + 1)]
            ld = [dn[j] - j for j in range(p - 1)]
            for i in range(p):
                num = -1.0
                for x in lu:
                    num *= lp[i] - x - 1
                for x in ld:
                    num *= lp[i] - x
                if num <= 0.0:
                    continue  # the lowered array is not a pattern
                den = 1.0
                for j in range(p):
                    if j != i:
                        den *= (lp[i] - lp[j]) * (lp[i] - lp[j] - 1)
                newrow = row[:i] + (row[i] - 1,) + row[i + 1:]
                b = self._index[pat[: p - 1] + (newrow,) + pat[p:]]
                tgt.append(b)
                src.append(a)
                val.append(float(np.sqrt(num / den)))
        out = (np.array(tgt, dtype=np.int64), np.array(src, dtype=np.int64), np.array(val))
        self._lower[p] = out
        return out

    def lowering_dense(self, p: int) -> np.ndarray:
        """dρ(E_{p+1,p}) as a dense (d, d) array (for tests and small modules)."""
        t, s, v = self.lowering(p)
        out = np.zeros((self.dim, self.dim))
        out[t, s] = v
        return out

    def plane_blocks(self, p: int) -> PlaneBlocks:
        """The invariant blocks of plane (p, p+1), 1 <= p < n (see :class:`PlaneBlocks`).

        >>> [g.tolist() for g in GTModule((2,), 2).plane_blocks(1).groups]
        [[2, 1, 0]]
        """
        if p in self._planes:
            return self._planes[p]
        groups: dict[tuple, list[tuple[tuple[int, ...], int]]] = {}
        for a, pat in enumerate(self.patterns):
            groups.setdefault(pat[: p - 1] + pat[p:], []).append((pat[p - 1], a))
        idx, keys = [], []
        for rest, members in groups.items():
            members.sort()
            idx.append(np.array([a for _, a in members], dtype=np.int64))
            up = rest[p - 1]
            dn = rest[p - 2] if p >= 2 else ()
            s = up[-1]
            keys.append((p, tuple(x - s for x in dn), tuple(x - s for x in up)))
        self._planes[p] = PlaneBlocks(p, idx, keys)
        return self._planes[p]

    def e_matrix(self, i: int, j: int) -> np.ndarray:
        """dρ(E_ij) as a dense array, 1-based indices (commutators of the simple ones; tests only).

        >>> m = GTModule((1,), 3)
        >>> bool(np.allclose(m.e_matrix(3, 1), np.eye(3)[:, [2]] @ np.eye(3)[[0], :]))
        True
        """
        if i == j:
            return np.diag(self.weights[:, i - 1].astype(float))
        if i < j:
            return self.e_matrix(j, i).T
        if i == j + 1:
            return self.lowering_dense(j)
        a = self.e_matrix(i, i - 1)
        b = self.e_matrix(i - 1, j)
        return a @ b - b @ a


COEF_REL = 8 * U
"""Relative error bound of one float64 Gelfand--Tsetlin coefficient (see the module docstring).

The integer products are exact while below 2^53 and otherwise carry at most
(2n - 1) roundings; the bound used is gamma(4 n) with n <= 16, and
:func:`coef_rel` returns it for a given n."""


def coef_rel(n: int) -> float:
    """Relative error bound of a float64 GT coefficient for GL_n (products, division, sqrt).

    >>> coef_rel(3) < 1e-14
    True
    """
    return gamma(4 * n + 4)
