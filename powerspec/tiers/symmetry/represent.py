"""ρ_λ(X) for diagonal, orthogonal, symmetric and general real X, and dρ_λ(X) (uncertified helpers).

These build the GL_n-representation matrices in the orthonormal Gelfand--Tsetlin
basis from the same pieces as the certified blocks: ρ(diag(t)) = diag(prod t_i^w_i)
(0^0 = 1), ρ(Q) from the Givens factorisation, ρ(X) = ρ(U) ρ(Σ) ρ(V)^T from an SVD
X = U Σ V^T, and dρ(X) = sum X_ij dρ(E_ij).  They are accurate to roughly 1e-13
relative to ||X||^k (no radius is returned; the certified path is
:func:`~powerspec.tiers.symmetry.blocks`).

>>> import numpy as np
>>> m = GTModule((1, 1), 3)          # the exterior square
>>> x = np.diag([2.0, 3.0, 5.0])
>>> sorted(np.linalg.eigvalsh(rho(m, x)).round(12).tolist())
[6.0, 10.0, 15.0]
"""

from __future__ import annotations

import numpy as np

from powerspec.tiers.symmetry.block import monomials
from powerspec.tiers.symmetry.patterns import GTModule
from powerspec.tiers.symmetry.rotations import givens_factor, orthogonal_image

__all__ = ["GTModule", "drho", "rho", "rho_diagonal", "rho_orthogonal", "rho_symmetric"]


def rho_diagonal(module: GTModule, t: np.ndarray) -> np.ndarray:
    """The diagonal of ρ_λ(diag(t)): the monomials t^w of the pattern weights (relative γ(2k+2n)).

    >>> rho_diagonal(GTModule((2,), 2), np.array([2.0, 3.0])).tolist()
    [4.0, 6.0, 9.0]
    """
    return monomials(np.asarray(t, dtype=float), module.weights)


def rho_orthogonal(module: GTModule, q: np.ndarray) -> np.ndarray:
    """ρ_λ(Q) for a real orthogonal Q (through its Givens factorisation).

    >>> q = np.array([[0.0, -1.0], [1.0, 0.0]])
    >>> rho_orthogonal(GTModule((1,), 2), q).round(12).tolist()
    [[0.0, -1.0], [1.0, 0.0]]
    """
    signs, rots = givens_factor(q)
    return orthogonal_image(module, signs, rots)[0]


def rho_symmetric(module: GTModule, x: np.ndarray) -> np.ndarray:
    """ρ_λ(X) = ρ(Q) ρ(Λ) ρ(Q)^T for a real symmetric X = Q Λ Q^T.

    >>> (rho_symmetric(GTModule((2,), 2), np.eye(2) * 2).round(12) + 0.0).tolist()
    [[4.0, 0.0, 0.0], [0.0, 4.0, 0.0], [0.0, 0.0, 4.0]]
    """
    vals, q = np.linalg.eigh(np.asarray(x, dtype=float))
    u = rho_orthogonal(module, q)
    out = (u * rho_diagonal(module, vals)) @ u.T
    return 0.5 * (out + out.T)


def rho(module: GTModule, x: np.ndarray) -> np.ndarray:
    """ρ_λ(X) for any real square X, from the SVD X = U Σ V^T (Σ >= 0, so 0^0 = 1 is harmless).

    >>> rho(GTModule((1,), 2), np.array([[1.0, 2.0], [3.0, 4.0]])).round(12).tolist()
    [[1.0, 2.0], [3.0, 4.0]]
    """
    u, s, vt = np.linalg.svd(np.asarray(x, dtype=float))
    return (rho_orthogonal(module, u) * rho_diagonal(module, s)) @ rho_orthogonal(module, vt.T).T


def drho(module: GTModule, x: np.ndarray) -> np.ndarray:
    """The Lie-algebra image dρ_λ(X) = sum X_ij dρ(E_ij) (dense; for small modules and tests).

    >>> drho(GTModule((2,), 2), np.diag([1.0, 0.0])).diagonal().tolist()
    [2.0, 1.0, 0.0]
    """
    n = module.n
    out = np.zeros((module.dim, module.dim))
    for i in range(n):
        for j in range(n):
            if x[i, j] != 0:
                out += x[i, j] * module.e_matrix(i + 1, j + 1)
    return out
