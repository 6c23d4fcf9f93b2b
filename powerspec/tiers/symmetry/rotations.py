"""Images of orthogonal matrices in the Gelfand--Tsetlin basis, with rigorous error bounds.

An orthogonal Q is factored as ``Q = S R_1 R_2 ... R_N`` (:func:`givens_factor`):
N = n(n-1)/2 rotations ``R(p, φ) = exp(φ (E_{p+1,p} - E_{p,p+1}))`` in adjacent
planes (p, p+1), plane p used n - p times (the small planes most often), and
S = diag(±1).  Then ρ(Q) = ρ(S) ρ(R_1) ... ρ(R_N) with ρ(S) = diag(prod s_i^{w_i})
and ρ(R(p, φ)) = exp(φ K_p), K_p = dρ(E_{p+1,p}) - dρ(E_{p,p+1}), block diagonal over
the patterns that agree outside row p (Bürgisser, SIAM J. Comput. 30(3), 2000).

Each block of K_p is exponentiated through the eigendecomposition of the
Hermitian H = i K (cached per block key: it does not depend on φ):
``H Z = Z M + E`` with M the rounded (integer) eigenvalues.  With G = Z^H Z - I,
||G|| <= δ < 1, the solution F(s) = exp(-i s H) Z - Z exp(-i s M) of
F' = -i H F - i E exp(-i s M), F(0) = 0 (Duhamel) has ||F(φ)|| <= |φ| ||E||, and
exp(φ K) = (Z Φ + F)(I + G)^-1 Z^H with Φ = exp(-i φ M); hence

    ||exp(φ K) - Z Φ Z^H|| <= (1 + δ) δ/(1 - δ) + |φ| ||E|| sqrt(1 + δ)/(1 - δ),

to which the rounding of forming Re(Z Φ Z^H) (error-free split products,
:func:`~powerspec.tiers.symmetry.rigor.split_matmul`) and of Φ itself (cos and sin
of m φ from python-flint at 128 bits, rounded once) are added.  ||E|| includes the
error of the float GT coefficients (relative ``coef_rel(n)``).  Products of the
block-diagonal images accumulate ``ε <- ε (1 + η) + η + (rounding)`` in the 2-norm.

>>> import numpy as np
>>> from powerspec.tiers.symmetry.patterns import GTModule
>>> q = np.linalg.qr(np.random.default_rng(1).standard_normal((3, 3)))[0]
>>> signs, rots = givens_factor(q)
>>> bool(np.allclose(compose(signs, rots), q, atol=1e-14))
True
>>> u, eps = orthogonal_image(GTModule((1,), 3), signs, rots)
>>> bool(np.allclose(u, q, atol=1e-14)), eps < 1e-13
(True, True)
"""

from __future__ import annotations

import math

import flint
import numpy as np

from powerspec.tiers.symmetry.patterns import U, GTModule, coef_rel, gamma
from powerspec.tiers.symmetry.rigor import fro_up, gram_defect, split_matmul, up

Rotation = tuple[int, float]
"""(p, φ): the rotation exp(φ (E_{p+1,p} - E_{p,p+1})) in the 1-based plane (p, p+1)."""


def rotation_matrix(n: int, p: int, phi: float) -> np.ndarray:
    """The n x n float rotation R(p, φ) (identity except [[c, -s], [s, c]] at rows/cols p, p+1).

    >>> rotation_matrix(2, 1, 0.0).tolist()
    [[1.0, -0.0], [0.0, 1.0]]
    """
    r = np.eye(n)
    c, s = math.cos(phi), math.sin(phi)
    r[p - 1, p - 1] = c
    r[p, p] = c
    r[p - 1, p] = -s
    r[p, p - 1] = s
    return r


def givens_factor(q: np.ndarray) -> tuple[np.ndarray, list[Rotation]]:
    """(signs, rotations) with q ≈ diag(signs) @ R_1 @ ... @ R_N (float64 angles; exact definition).

    Rows are cleared bottom-up by rotating adjacent columns (c, c+1), so plane p is
    used n - p times; only signs[0] can be -1 (it carries det q).  The returned angles
    define an exactly orthogonal matrix close to q; callers bound the distance.

    >>> s, r = givens_factor(np.array([[0.0, 1.0], [1.0, 0.0]]))
    >>> s.tolist(), [(p, round(f, 12)) for p, f in r]
    ([-1.0, 1.0], [(1, 1.570796326795)])
    """
    q = np.array(q, dtype=float)
    n = q.shape[0]
    applied: list[Rotation] = []
    for r in range(n - 1, 0, -1):
        for c in range(r):
            x, y = q[r, c], q[r, c + 1]
            phi = math.atan2(-x, y)  # cos x + sin y = 0 and the new (r, c+1) entry is >= 0
            q = q @ rotation_matrix(n, c + 1, phi)
            applied.append((c + 1, phi))
    signs = np.where(np.diag(q) < 0, -1.0, 1.0)
    # q R_1' ... R_N' = S  =>  q = S R_N'^T ... R_1'^T, and R(p, φ)^T = R(p, -φ)
    return signs, [(p, -phi) for p, phi in reversed(applied)]


def compose(signs: np.ndarray, rots: list[Rotation]) -> np.ndarray:
    """diag(signs) @ R_1 @ ... @ R_N in float64 (for checks).

    >>> compose(np.array([1.0, -1.0]), []).tolist()
    [[1.0, 0.0], [0.0, -1.0]]
    """
    n = len(signs)
    out = np.diag(np.asarray(signs, dtype=float))
    for p, phi in rots:
        out = out @ rotation_matrix(n, p, phi)
    return out


def compose_arb(signs: np.ndarray, rots: list[Rotation], prec: int = 200) -> flint.arb_mat:
    """The exact orthogonal matrix diag(signs) R_1 ... R_N as a python-flint ball matrix.

    >>> m = compose_arb(np.array([1.0, 1.0]), [(1, 0.5)])
    >>> abs(float(m[1, 0].mid()) - math.sin(0.5)) < 1e-16
    True
    """
    old = flint.ctx.prec
    flint.ctx.prec = prec
    try:
        n = len(signs)
        out = flint.arb_mat([[float(signs[i]) if i == j else 0 for j in range(n)] for i in range(n)])
        for p, phi in rots:
            c, s = flint.arb(phi).cos(), flint.arb(phi).sin()
            r = flint.arb_mat([[1 if i == j else 0 for j in range(n)] for i in range(n)])
            r[p - 1, p - 1] = c
            r[p, p] = c
            r[p - 1, p] = -s
            r[p, p - 1] = s
            out = out * r
        return out
    finally:
        flint.ctx.prec = old


def angle_table(phi: float, m_max: int) -> tuple[np.ndarray, np.ndarray]:
    """(cos(j φ), sin(j φ)) for j = 0..m_max, each within 2u of the exact value.

    Computed in ball arithmetic at 128 bits and rounded once to float64.

    >>> c, s = angle_table(0.25, 2)
    >>> bool(abs(c[2] - math.cos(0.5)) < 1e-16)
    True
    """
    old = flint.ctx.prec
    flint.ctx.prec = 128
    try:
        c = np.empty(m_max + 1)
        s = np.empty(m_max + 1)
        for j in range(m_max + 1):
            t = flint.arb(phi) * j
            c[j] = float(t.cos().mid())
            s[j] = float(t.sin().mid())
        return c, s
    finally:
        flint.ctx.prec = old


class _BlockEig:
    """Cached eigendecomposition of one block of H = i K_p with its rigorous residual bounds."""

    __slots__ = ("zr", "zi", "m", "delta", "e_norm", "z_fro")

    def __init__(self, k: np.ndarray, n: int):
        b = k.shape[0]
        mu, z = np.linalg.eigh(1j * k)
        m = np.rint(mu)
        self.zr = np.ascontiguousarray(z.real)
        self.zi = np.ascontiguousarray(z.imag)
        self.m = m.astype(np.int64)
        # delta >= ||Z^H Z - I||: real part through the stacked [Zr; Zi], imaginary part Zr^T Zi - Zi^T Zr
        w = np.vstack([self.zr, self.zi])
        im, e_im = split_matmul(self.zr.T, self.zi)
        im_part = im - im.T
        self.delta = up(gram_defect(w) + fro_up(im_part) + 2 * e_im + gamma(1) * fro_up(im_part))
        # E = H Z - Z M with H = i K: E = (-K Zi - Zr M) + i (K Zr - Zi M)
        kz, e_kz = split_matmul(k, np.hstack([self.zr, self.zi]))
        kzr, kzi = kz[:, :b], kz[:, b:]
        zrm, zim = self.zr * m, self.zi * m
        er = -kzi - zrm
        ei = kzr - zim
        e_fl = e_kz + gamma(2) * (fro_up(kz) + fro_up(zrm) + fro_up(zim))
        # the exact K differs from the float one entrywise by coef_rel(n): ||dK||_2 <= rel sqrt(||K||_1 ||K||_inf)
        ak = np.abs(k)
        k_abs2 = math.sqrt(float(ak.sum(axis=0).max()) * float(ak.sum(axis=1).max())) * (1 + gamma(b + 2))
        dk = coef_rel(n) * k_abs2
        self.e_norm = up(math.hypot(fro_up(er), fro_up(ei)) + e_fl + dk * math.sqrt(1 + self.delta))
        self.z_fro = math.hypot(fro_up(self.zr), fro_up(self.zi))

    def exp(self, cos_tab: np.ndarray, sin_tab: np.ndarray, phi: float) -> tuple[np.ndarray, float]:
        """(R, η): R ≈ exp(φ K) of this block and ||R - exp(φ K)||_2 <= η."""
        m = self.m
        am = np.abs(m)
        fr = cos_tab[am]
        fi = -np.sign(m) * sin_tab[am]  # Φ = exp(-i φ m) = cos(m φ) - i sin(m φ)
        wr = self.zr * fr - self.zi * fi
        wi = self.zr * fi + self.zi * fr
        r, e_mm = split_matmul(np.hstack([wr, wi]), np.hstack([self.zr, self.zi]).T)
        d = self.delta
        if not d < 0.5:
            return r, math.inf
        eta = (1 + d) * d / (1 - d) + abs(phi) * self.e_norm * math.sqrt(1 + d) / (1 - d)
        eta += (1 + d) * 3 * U + 2 * gamma(3) * self.z_fro * math.sqrt(1 + d) + e_mm
        return r, up(eta)


class RotationCache:
    """Block eigendecompositions keyed by (plane, neighbouring rows), shared across shapes and angles."""

    def __init__(self) -> None:
        self._eig: dict[tuple, _BlockEig] = {}

    def block(self, module: GTModule, p: int, g: int) -> _BlockEig:
        """The cached decomposition of block g of plane p of ``module``."""
        pb = module.plane_blocks(p)
        key = pb.keys[g]
        hit = self._eig.get(key)
        if hit is None:
            idx = pb.groups[g]
            t, s, v = module.lowering(p)
            pos = {int(a): i for i, a in enumerate(idx)}
            b = len(idx)
            f = np.zeros((b, b))
            for tt, ss, vv in zip(t.tolist(), s.tolist(), v.tolist(), strict=True):
                if tt in pos and ss in pos:
                    f[pos[tt], pos[ss]] = vv
            hit = _BlockEig(f - f.T, module.n)
            self._eig[key] = hit
        return hit


_DEFAULT_CACHE = RotationCache()


def rotation_image(
    module: GTModule, p: int, phi: float, cache: RotationCache | None = None
) -> tuple[list[tuple[np.ndarray, np.ndarray]], float]:
    """ρ(R(p, φ)) as a list of (pattern indices, block) pairs (1 x 1 identity blocks omitted) and η.

    η bounds the 2-norm distance to the exact image.

    >>> blocks, eta = rotation_image(GTModule((1,), 2), 1, 0.3)
    >>> (idx, r), = blocks
    >>> full = np.zeros((2, 2)); full[np.ix_(idx, idx)] = r
    >>> bool(np.allclose(full, rotation_matrix(2, 1, 0.3), atol=1e-15)), eta < 1e-14
    (True, True)
    """
    cache = cache or _DEFAULT_CACHE
    pb = module.plane_blocks(p)
    kmax = int(sum(module.shape))
    cos_tab, sin_tab = angle_table(phi, kmax)
    out, eta = [], 0.0
    for g, idx in enumerate(pb.groups):
        if len(idx) == 1:
            continue  # K vanishes on a one-pattern block: the image is exactly 1
        r, e = cache.block(module, p, g).exp(cos_tab, sin_tab, phi)
        out.append((idx, r))
        eta = max(eta, e)
    return out, eta


def orthogonal_image(
    module: GTModule, signs: np.ndarray, rots: list[Rotation], cache: RotationCache | None = None
) -> tuple[np.ndarray, float]:
    """(Ũ, ε): Ũ ≈ ρ_λ(diag(signs) R_1 ... R_N) and ||Ũ - ρ_λ(...)||_2 <= ε rigorously.

    >>> u, eps = orthogonal_image(GTModule((2,), 2), np.array([1.0, 1.0]), [(1, 0.1)])
    >>> bool(np.allclose(u @ u.T, np.eye(3), atol=1e-14)), eps < 1e-13
    (True, True)
    """
    d = module.dim
    u = np.eye(d)
    eps = 0.0
    for j, (p, phi) in enumerate(rots):
        blocks, eta = rotation_image(module, p, phi, cache)
        if j == 0:
            for idx, r in blocks:
                u[np.ix_(idx, idx)] = r  # u was the identity: placing the blocks is exact
            eps = eta
            continue
        rnd2 = 0.0
        for idx, r in blocks:
            cols, e = split_matmul(u[:, idx], r)
            u[:, idx] = cols
            rnd2 += e * e
        eps = up(eps * (1 + eta) + eta + math.sqrt(rnd2) * (1 + 4 * U))
    w = module.weights
    flip = np.prod(np.where(np.asarray(signs) < 0, -1.0, 1.0) ** (w % 2), axis=1)
    return u * flip[:, None], eps  # ρ(S) is diagonal ±1: exact
