"""Certified spectral data of one symmetric factor matrix, and its effect on the blocks.

For a real symmetric X (given exactly: float64 entries, or entries that are exact
real numbers such as those of D^-1/2 A D^-1/2), :func:`factor_spectrum` returns
float eigenvalues Λ̃, an *exactly orthogonal* Q̂ = S R_1 ... R_N defined by float64
Givens angles, and a rigorous φ >= ||Q̂^T X Q̂ - Λ̃||_2, computed in python-flint ball
arithmetic at 200 bits (the n x n matrices are tiny).  So X = Q̂ (Λ̃ + F) Q̂^T exactly
with ||F|| <= φ, and ρ_λ(X) = ρ(Q̂) ρ_λ(Λ̃ + F) ρ(Q̂)^T.

:func:`group_perturbation` bounds ||ρ_λ(Λ̃ + F) - ρ_λ(Λ̃)||_2 (the group image): for any
τ > 0 put W = diag(|Λ̃| + τ)^(1/2); then Λ̃ + F = W (S' + G) W with ||S'|| <= 1,
||G|| <= φ/τ, and since ρ is multiplicative and ||ρ_λ(Y)|| <= ||Y^(x)k|| = ||Y||^k
(ρ_λ(Y) (x) I is the restriction of Y^(x)k to an invariant subspace, in orthonormal
bases),

    ||ρ_λ(Λ̃ + F) - ρ_λ(Λ̃)|| <= ||ρ_λ(W)||^2 ((1 + φ/τ)^k - 1),
    ||ρ_λ(W)||^2 = prod_i (s_i + τ)^λ_i     (s = |Λ̃| sorted descending),

the maximum of a monomial over the weights of λ being attained at λ itself
(rearrangement).  The bound is minimised over a grid of τ; it is *relative to the
block's own scale*, not to ||X||^k.  For the Lie-algebra image (Cartesian powers)
||dρ_λ(F)|| <= k φ.

>>> import numpy as np
>>> fs = factor_spectrum(np.array([[0.0, 1.0], [1.0, 0.0]]))
>>> fs.values.round(12).tolist(), fs.phi < 1e-15
([-1.0, 1.0], True)
>>> group_perturbation((2, 1), fs.values, 1e-16) < 1e-14
True
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

import flint
import numpy as np

from powerspec.tiers.symmetry.rigor import SAFE, up
from powerspec.tiers.symmetry.rotations import Rotation, compose_arb, givens_factor

PREC = 200
"""Bits of the ball arithmetic used for the n x n factor computations."""


@dataclass(frozen=True)
class FactorSpectrum:
    """Λ̃ (float eigenvalues), Q̂ = diag(signs) R_1 ... R_N, and φ >= ||Q̂^T X Q̂ - diag(Λ̃)||_2."""

    values: np.ndarray
    signs: np.ndarray
    rotations: tuple[Rotation, ...]
    phi: float


def exact_matrix(x: np.ndarray) -> Callable[[], flint.arb_mat]:
    """A builder of the exact ball matrix of a float64 matrix (entries are exact binary numbers).

    >>> exact_matrix(np.array([[0.1]]))()[0, 0].rad() == 0
    True
    """

    def build() -> flint.arb_mat:
        return flint.arb_mat([[float(v) for v in row] for row in np.asarray(x, dtype=float)])

    return build


def exact_shifted(base: Callable[[], flint.arb_mat], b: float) -> Callable[[], flint.arb_mat]:
    """A builder of the exact I + b X from a builder of the exact X (ball arithmetic).

    >>> float(exact_shifted(exact_matrix(np.array([[2.0]])), 0.5)()[0, 0].mid())
    2.0
    """

    def build() -> flint.arb_mat:
        x = base()
        n = x.nrows()
        bb = flint.arb(float(b))
        return flint.arb_mat([[(1 if i == j else 0) + bb * x[i, j] for j in range(n)] for i in range(n)])

    return build


def exact_normalized(base: Callable[[], flint.arb_mat], deg: np.ndarray) -> Callable[[], flint.arb_mat]:
    """A builder of the exact D^-1/2 A D^-1/2 (degrees > 0) from a builder of the exact A.

    >>> m = exact_normalized(exact_matrix(np.array([[0.0, 1.0], [1.0, 0.0]])), np.array([1.0, 4.0]))()
    >>> float(m[0, 1].mid())
    0.5
    """

    def build() -> flint.arb_mat:
        a = base()
        n = a.nrows()
        s = [1 / flint.arb(float(v)).sqrt() for v in deg]
        return flint.arb_mat([[s[i] * a[i, j] * s[j] for j in range(n)] for i in range(n)])

    return build


def factor_spectrum(
    x_float: np.ndarray, exact: Callable[[], flint.arb_mat] | None = None
) -> FactorSpectrum:
    """Certified spectral data of the symmetric matrix whose exact value ``exact()`` builds.

    ``x_float`` is a float64 approximation used for the eigensolver; ``exact`` defaults to
    the float64 matrix itself.  φ is a rigorous upper bound (ball arithmetic).

    >>> fs = factor_spectrum(np.diag([3.0, 1.0]))
    >>> fs.values.tolist(), fs.phi < 1e-15
    ([1.0, 3.0], True)
    """
    x_float = np.asarray(x_float, dtype=float)
    vals, q = np.linalg.eigh(x_float)
    signs, rots = givens_factor(q)
    old = flint.ctx.prec
    flint.ctx.prec = PREC
    try:
        qa = compose_arb(signs, rots, PREC)
        xa = (exact or exact_matrix(x_float))()
        f = qa.transpose() * xa * qa
        n = len(vals)
        total = flint.arb(0)
        for i in range(n):
            for j in range(n):
                e = f[i, j] - (float(vals[i]) if i == j else 0)
                total += e.abs_upper() ** 2
        phi = float(total.sqrt().upper()) if n else 0.0
    finally:
        flint.ctx.prec = old
    return FactorSpectrum(vals, signs, tuple(rots), up(phi) if phi > 0 else 0.0)


def group_perturbation(shape: tuple[int, ...], values: np.ndarray, phi: float) -> float:
    """Upper bound of ||ρ_λ(Λ̃ + F) - ρ_λ(Λ̃)||_2 for ||F|| <= φ (see the module docstring).

    >>> group_perturbation((3,), np.array([2.0, 0.5]), 0.0)
    0.0
    """
    if phi == 0.0:
        return 0.0
    k = sum(shape)
    s = np.sort(np.abs(np.asarray(values, dtype=float)))[::-1]
    lam = np.zeros(len(s))
    lam[: len(shape)] = shape
    taus = phi * 2.0 ** np.arange(0, 200, 0.5)
    with np.errstate(divide="ignore", over="ignore"):
        logw = (lam[None, :] * np.log(s[None, :] + taus[:, None])).sum(axis=1)
        grow = np.expm1(k * np.log1p(phi / taus))
        cand = np.exp(logw) * grow
    cand = cand[np.isfinite(cand)]
    if cand.size == 0:
        return math.inf
    return up(float(cand.min()) * SAFE)
