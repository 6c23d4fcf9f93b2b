"""One certified block of the symmetry tier.

For a block (λ_1, ..., λ_m) the exact block matrix is built from the exact
float64 inputs as follows (Ũ_i ≈ ρ_λi(Q̂_i), the images of the certified factor
eigenvectors, :mod:`~powerspec.tiers.symmetry.rotations`):

* the *operand matrix* X_i is A_i (Cartesian and a = 0 rules), I + b A_i
  (a = 1, b != 0), or D_i^-1/2 A_i D_i^-1/2 (a = 0, normalized and transition);
* C = (x)_i ρ(X_i) (group rules) or the Kronecker sum of dρ(X_i) (Cartesian),
  combined by the rule: a = 0: C; a = 1: (C - I)/b (computed on the diagonal of
  eigenvalue monomials, so nothing cancels); the degree diagonal Dd likewise;
* the kind: laplacian Dd - C, signless Dd + C, normalized I - S C S and
  transition S C S with S = Dd^-1/2 (similar to Dd^-1 C), adjacency C;
  for a = 0 the common factor b^(K-1) multiplies the eigenvalues at the end.

Error budget of ||B̃ - B||_2 (all terms rigorous upper bounds, see the modules):
the factor backward error φ_i through :func:`~powerspec.tiers.symmetry.factor.group_perturbation`
(or k_i φ_i for Lie images); the diagonal rounding (binary powering: relative
γ(2k + 3n)); ||Ũ - U|| <= ε_U giving ε_U (2 + ε_U) max|c|; error-free split products
for U diag(c) U^T; the scalings and subtractions (one rounding per entry, Frobenius).
Then :func:`~powerspec.tiers.symmetry.rigor.certify_symmetric` adds the eigensolver's
residual bound, and Weyl's theorem gives the radius of every eigenvalue.

>>> import numpy as np
>>> from powerspec.tiers.symmetry.plan import PowerOperand
>>> from powerspec.tiers.symmetry.reduction import Factor
>>> ops = prepare([Factor(np.array([[0., 1], [1, 0]]), np.array([1., 1]))], 0, 1, "laplacian")
>>> blk = compute_block([(ops[0], 2)], ((2,),), 0, 1, "laplacian", 1)
>>> (blk.values.round(12) + 0.0).tolist(), bool(blk.radius.max() < 1e-13)
([0.0, 0.0, 2.0], True)
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import lru_cache

import numpy as np

from powerspec.tiers.symmetry.combinatorics import Partition
from powerspec.tiers.symmetry.errors import SymmetryError
from powerspec.tiers.symmetry.factor import (
    FactorSpectrum,
    exact_normalized,
    exact_shifted,
    factor_spectrum,
    group_perturbation,
)
from powerspec.tiers.symmetry.patterns import GTModule, U, gamma
from powerspec.tiers.symmetry.plan import rule_name
from powerspec.tiers.symmetry.reduction import Factor
from powerspec.tiers.symmetry.rigor import certify_symmetric, fro_up, split_matmul, up
from powerspec.tiers.symmetry.rotations import orthogonal_image

OVERFLOW = "symmetry tier: block entries overflow float64; ask for fewer copies or bounds"


@dataclass(frozen=True)
class Block:
    """Eigenvalues of one block (ascending), their rigorous radii, and the exact multiplicity.

    Each true eigenvalue of the block lies within ``radius[i]`` of ``values[i]`` (sorted
    pairing); every eigenvalue of the block occurs ``multiplicity`` times in the product.
    ``shape`` is the tuple of partitions (one per part) labelling the block and ``parts``
    names the parts: "G1" for operand 1, "G1+"/"G1-" for its halves under an automorphism.
    """

    values: np.ndarray
    radius: np.ndarray
    multiplicity: int
    shape: tuple[Partition, ...]
    parts: tuple[str, ...] = ()


@dataclass(frozen=True)
class PreparedOperand:
    """Picklable per-factor data: the operand matrix's certified spectrum, the degrees, a name."""

    n: int
    spectrum: FactorSpectrum
    degrees: np.ndarray
    name: str = "G"


def prepare(factors: list[Factor], a: float, b: float, kind: str) -> list[PreparedOperand]:
    """Certified spectral data of each factor's operand matrix X (see the module docstring).

    >>> from powerspec.tiers.symmetry.reduction import Factor
    >>> k2 = Factor(np.array([[0.0, 2.0], [2.0, 0.0]]), np.array([2.0, 2.0]))
    >>> op, = prepare([k2], 1, 1, "laplacian")
    >>> op.spectrum.values.round(12).tolist(), op.spectrum.phi < 1e-15   # eigenvalues of I + A
    ([-1.0, 3.0], True)
    """
    rule = rule_name(a, b)
    out = []
    for fac in factors:
        adj, deg = fac.adjacency, fac.degrees
        base = fac.exact_adjacency()
        if rule == "multiplicative" and kind in ("normalized", "transition"):
            s = 1.0 / np.sqrt(deg)
            spec = factor_spectrum(adj * np.outer(s, s), exact_normalized(base, deg))
        elif rule == "shifted":
            spec = factor_spectrum(np.eye(adj.shape[0]) + b * adj, exact_shifted(base, b))
        else:
            spec = factor_spectrum(adj, base)
        out.append(PreparedOperand(adj.shape[0], spec, deg, fac.name))
    return out


@lru_cache(maxsize=512)
def gt_module(shape: Partition, n: int) -> GTModule:
    """The (cached) Gelfand--Tsetlin module of highest weight ``shape`` for GL_n.

    >>> gt_module((2, 1), 3).dim
    8
    """
    return GTModule(shape, n)


def monomials(base: np.ndarray, weights: np.ndarray) -> np.ndarray:
    """prod_j base_j^w_j for each row w of ``weights`` by binary powering (0^0 = 1).

    Relative error at most γ(2k + 2n) for exact bases (k = row sum): each squaring at
    most doubles the relative error and adds one rounding.

    >>> monomials(np.array([2.0, 3.0]), np.array([[2, 1], [0, 0]])).tolist()
    [12.0, 1.0]
    """
    d = weights.shape[0]
    res = np.ones(d)
    for j, x in enumerate(np.asarray(base, dtype=float)):
        e = weights[:, j].astype(np.int64).copy()
        pw = np.full(d, x)
        while np.any(e > 0):
            odd = (e & 1).astype(bool)
            res[odd] *= pw[odd]
            e >>= 1
            if np.any(e > 0):
                pw = pw * pw
    return res


def _operand_data(op: PreparedOperand, k: int, shape: Partition, rule: str, b: float, need_deg: bool):
    module = gt_module(shape, op.n)
    u, eps = orthogonal_image(module, op.spectrum.signs, list(op.spectrum.rotations))
    w = module.weights
    n = op.n
    vals = op.spectrum.values
    if rule == "cartesian":
        x = w @ vals
        x_err = gamma(n + 1) * (w @ np.abs(vals))
        pert = k * op.spectrum.phi
        dv = w @ op.degrees if need_deg else None
        d_err = gamma(n + 1) * (w @ np.abs(op.degrees)) if need_deg else None
    else:
        x = monomials(vals, w)
        x_err = gamma(2 * k + 2 * n) * np.abs(x)
        pert = group_perturbation(shape, vals, op.spectrum.phi)
        dv = d_err = None
        if need_deg:
            base = op.degrees if rule == "multiplicative" else 1.0 + b * op.degrees
            dv = monomials(base, w)
            d_err = gamma(3 * k + 2 * n) * np.abs(dv)  # 1 + b d is rounded once: k more roundings
    return u, eps, x, x_err, pert, dv, d_err


def _combine(
    parts: list[tuple[np.ndarray, np.ndarray]], additive: bool
) -> tuple[np.ndarray, np.ndarray]:
    """Kronecker-ordered outer product (or sum) of per-operand diagonals with entrywise error bounds."""
    val, err = parts[0]
    for v2, e2 in parts[1:]:
        if additive:
            new = np.add.outer(val, v2).ravel()
            err = np.add.outer(err, e2).ravel() + U * np.abs(new)
        else:
            new = np.multiply.outer(val, v2).ravel()
            err = (np.multiply.outer(err, np.abs(v2) + e2) + np.multiply.outer(np.abs(val), e2)).ravel()
            err = err + U * np.abs(new)
        val = new
    return val, err


def _product_perturbation(norms: list[float], perts: list[float]) -> float:
    """Upper bound of prod (n_i + p_i) - prod n_i, summed as a telescoping series of positive terms.

    Forming the two products and subtracting would cancel catastrophically when p_i << n_i.

    >>> 1.5 <= _product_perturbation([2.0, 3.0], [0.5, 0.0]) < 1.5 + 1e-14
    True
    """
    total = 0.0
    for j, pj in enumerate(perts):
        if pj == 0.0:
            continue
        term = pj * math.prod(norms[:j]) * math.prod(n + p for n, p in zip(norms[j + 1:], perts[j + 1:],
                                                                             strict=True))
        total += term
    return up(total * (1 + gamma(2 * len(norms) + 2)))


def block_matrix(parts: list[tuple[PreparedOperand, int]], shapes: tuple[Partition, ...], a: float,
                 b: float, kind: str) -> tuple[np.ndarray, float, float]:
    """(B̃, err, scale): the float block, a rigorous ||B̃ - B||_2 <= err, and the eigenvalue scale.

    The block's exact eigenvalues are ``scale`` times those of B (``scale`` = b^(K-1) for the
    a = 0 rule and the laplacian, signless and adjacency kinds, else 1.0; see the module
    docstring).  B̃ is exactly symmetric.
    """
    rule = rule_name(a, b)
    norm_direct = rule == "multiplicative" and kind in ("normalized", "transition")
    need_deg = kind != "adjacency" and not norm_direct
    data = [_operand_data(op, k, lam, rule, b, need_deg)
            for (op, k), lam in zip(parts, shapes, strict=True)]
    # the orthogonal frame: Kronecker product of the operands' images
    u = data[0][0]
    eps_u = data[0][1]
    for part in data[1:]:
        u = np.kron(u, part[0])
        eps_u = (1 + eps_u) * (1 + part[1]) - 1
    if len(data) > 1:
        eps_u += gamma(len(data)) * fro_up(u)
    eps_u = up(eps_u)
    additive = rule == "cartesian"
    c, c_err = _combine([(p[2], p[3]) for p in data], additive)
    if additive:
        pert = sum(p[4] for p in data)
    else:
        pert = _product_perturbation([float(np.max(np.abs(p[2]) + p[3])) for p in data],
                                     [p[4] for p in data])
    if need_deg:
        dd, dd_err = _combine([(p[5], p[6]) for p in data], additive)
    if rule == "shifted":
        # (P - 1)/b: the subtraction and division round once each
        c_new = (c - 1.0) / b
        c_err = (c_err + U * np.abs(c - 1.0)) / abs(b) + U * np.abs(c_new)
        c, pert = c_new, pert / abs(b)
        if need_deg:
            d_new = (dd - 1.0) / b
            dd_err = (dd_err + U * np.abs(dd - 1.0)) / abs(b) + U * np.abs(d_new)
            dd = d_new
    if not (np.all(np.isfinite(c)) and math.isfinite(pert)):
        raise SymmetryError(OVERFLOW)
    cmax = float(np.max(np.abs(c) + c_err))
    cerr = float(np.max(c_err))
    # C = U diag(c) U^T from split products
    y = u * c
    cmat, e_mm = split_matmul(y, u.T)
    bt = 0.5 * (cmat + cmat.T)
    err = pert + cerr * (1 + eps_u) ** 2 + eps_u * (2 + eps_u) * cmax
    err += U * fro_up(y) * (1 + eps_u) + e_mm + U * fro_up(bt)
    diag = np.diag_indices(bt.shape[0])
    if kind in ("laplacian", "signless"):
        if kind == "laplacian":
            bt = -bt
        bt[diag] += dd
        err += float(np.max(dd_err)) + U * float(np.max(np.abs(bt[diag])))
    elif kind in ("normalized", "transition") and not norm_direct:
        lower = dd - dd_err
        if not np.all(lower > 0):
            raise SymmetryError(f"symmetry tier: a product vertex has zero degree; the {kind} matrix is "
                                "undefined (remove isolated vertices)")
        rel = float(np.max(dd_err / lower))
        e_s = up(0.5 * rel / (1 - rel) + 3 * U)
        s = 1.0 / np.sqrt(dd)
        smax2 = float(np.max(s)) ** 2 * (1 + e_s) ** 2
        # ||S C S - S~ C~ S~|| <= ||S||^2 ||C - C~|| + (2 e + e^2) ||S||^2 ||C~||, ||C~|| <= cmax + err
        err = smax2 * err + (2 * e_s + e_s * e_s) * smax2 * (cmax + err)
        bt = bt * s[:, None] * s[None, :]
        err += gamma(3) * fro_up(bt)
    if kind == "normalized":
        bt = -bt
        bt[diag] += 1.0
        err += U * float(np.max(np.abs(bt[diag])))
    if not np.all(np.isfinite(bt)):
        raise SymmetryError(OVERFLOW)
    scale = 1.0
    if rule == "multiplicative" and kind in ("laplacian", "signless", "adjacency"):
        total = sum(k for _, k in parts)
        scale = float(monomials(np.array([b]), np.array([[total - 1]]))[0])
    return bt, err, scale


def scale_gamma(parts: list[tuple[PreparedOperand, int]]) -> float:
    """Relative error bound of the computed ``scale`` of :func:`block_matrix` (binary powering).

    >>> scale_gamma([]) > 0
    True
    """
    return gamma(2 * sum(k for _, k in parts) + 2)


def compute_block(parts: list[tuple[PreparedOperand, int]], shapes: tuple[Partition, ...], a: float,
                  b: float, kind: str, multiplicity: int) -> Block:
    """The certified eigenvalues of block ``shapes`` of the product of ``parts`` (operand, copies)."""
    names = tuple(op.name for op, _ in parts)
    bt, err, scale = block_matrix(parts, shapes, a, b, kind)
    mu, r = certify_symmetric(bt)
    radius = up(err + r)
    if scale != 1.0:
        mu_scaled = mu * scale
        g = scale_gamma(parts)
        rad = radius * abs(scale) * (1 + g) + g * np.abs(mu_scaled)
        if scale < 0:  # keep the values ascending
            mu_scaled, rad = mu_scaled[::-1].copy(), rad[::-1].copy()
        return Block(mu_scaled, rad, multiplicity, tuple(shapes), names)
    return Block(mu, np.full(mu.shape, radius), multiplicity, tuple(shapes), names)
