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

from powerspec.tiers.symmetry.patterns import GTModule, U, coef_rel, gamma
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
        # delta >= ||Z^H Z - I||: real part through the stacked [Zr; Zi],
        # imaginary part Zr^T Zi - Zi^T Zr
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
        # the exact K differs from the float one entrywise by coef_rel(n):
        # ||dK||_2 <= rel sqrt(||K||_1 ||K||_inf)
        ak = np.abs(k)
        norm1, norm_inf = float(ak.sum(axis=0).max()), float(ak.sum(axis=1).max())
        k_abs2 = math.sqrt(norm1 * norm_inf) * (1 + gamma(b + 2))
        dk = coef_rel(n) * k_abs2
        self.e_norm = up(math.hypot(fro_up(er), fro_up(ei)) + e_fl + dk * math.sqrt(1 + self.delta))
        self.z_fro = math.hypot(fro_up(self.zr), fro_up(self.zi))


class _SizeGroup:
    """The blocks of one size b in one plane, stacked for batched products."""

    __slots__ = ("cols", "zr", "zi", "m", "delta", "e_norm", "z_fro")

    def __init__(self, cols: np.ndarray, eigs: list[_BlockEig]):
        self.cols = cols
        self.zr = np.stack([e.zr for e in eigs])
        self.zi = np.stack([e.zi for e in eigs])
        self.m = np.stack([e.m for e in eigs])
        self.delta = np.array([e.delta for e in eigs])
        self.e_norm = np.array([e.e_norm for e in eigs])
        self.z_fro = np.array([e.z_fro for e in eigs])

    def exp(self, cos_tab: np.ndarray, sin_tab: np.ndarray, phi: float) -> tuple[np.ndarray, float]:
        """(R stack, η): each R[g] ≈ exp(φ K) of block g, and max_g ||R[g] - exp(φ K_g)||_2 <= η."""
        m = self.m
        am = np.abs(m)
        fr = cos_tab[am][:, None, :]
        fi = (-np.sign(m) * sin_tab[am])[:, None, :]  # Φ = exp(-i φ m) = cos(m φ) - i sin(m φ)
        wr = self.zr * fr - self.zi * fi
        wi = self.zr * fi + self.zi * fr
        z = np.concatenate([self.zr, self.zi], axis=2)
        r, e_mm = split_matmul(np.concatenate([wr, wi], axis=2), z.transpose(0, 2, 1))
        d = self.delta
        if not np.all(d < 0.5):
            return r, math.inf
        eta = (1 + d) * d / (1 - d) + abs(phi) * self.e_norm * np.sqrt(1 + d) / (1 - d)
        eta += (1 + d) * 3 * U + 2 * gamma(3) * self.z_fro * np.sqrt(1 + d)
        return r, up(float(np.max(eta)) + e_mm)


class RotationCache:
    """Block eigendecompositions keyed by (plane, neighbouring rows), shared across shapes and angles."""

    def __init__(self) -> None:
        self._eig: dict[tuple, _BlockEig] = {}
        self._groups: dict[tuple, list[_SizeGroup]] = {}

    def _block(self, module: GTModule, p: int, g: int) -> _BlockEig:
        pb = module.plane_blocks(p)
        key = (module.n,) + pb.keys[g]  # n enters the coefficient error bound
        hit = self._eig.get(key)
        if hit is None:
            idx = pb.groups[g]
            t, s, v = module.lowering(p)
            pos = np.full(module.dim, -1, dtype=np.int64)
            pos[idx] = np.arange(len(idx))
            inside = (pos[t] >= 0) & (pos[s] >= 0)
            b = len(idx)
            f = np.zeros((b, b))
            f[pos[t[inside]], pos[s[inside]]] = v[inside]
            hit = _BlockEig(f - f.T, module.n)
            self._eig[key] = hit
        return hit

    def groups(self, module: GTModule, p: int) -> list[_SizeGroup]:
        """The non-trivial blocks of plane p of ``module``, grouped by size."""
        gkey = (module.shape, module.n, p)
        hit = self._groups.get(gkey)
        if hit is None:
            pb = module.plane_blocks(p)
            by_size: dict[int, list[int]] = {}
            for g, idx in enumerate(pb.groups):
                if len(idx) > 1:  # K vanishes on a one-pattern block: the image is exactly 1
                    by_size.setdefault(len(idx), []).append(g)
            hit = []
            for gs in by_size.values():
                cols = np.concatenate([pb.groups[g] for g in gs])
                hit.append(_SizeGroup(cols, [self._block(module, p, g) for g in gs]))
            self._groups[gkey] = hit
        return hit


_DEFAULT_CACHE = RotationCache()


def rotation_image(
    module: GTModule, p: int, phi: float, cache: RotationCache | None = None
) -> tuple[list[tuple[np.ndarray, np.ndarray]], float]:
    """ρ(R(p, φ)) as (columns, block stack) pairs, one per block size (1 x 1 identities omitted), and η.

    ``columns`` lists the pattern indices of the stacked blocks in order (block g
    occupies ``columns[g*b:(g+1)*b]``); η bounds the 2-norm distance to the exact image.

    >>> groups, eta = rotation_image(GTModule((1,), 2), 1, 0.3)
    >>> (cols, r), = groups
    >>> full = np.zeros((2, 2)); full[np.ix_(cols, cols)] = r[0]
    >>> bool(np.allclose(full, rotation_matrix(2, 1, 0.3), atol=1e-15)), eta < 1e-14
    (True, True)
    """
    cache = cache or _DEFAULT_CACHE
    groups = cache.groups(module, p)
    mmax = max([int(np.max(np.abs(g.m))) for g in groups], default=0)  # <= k, the table covers all m
    cos_tab, sin_tab = angle_table(phi, mmax)
    out, eta = [], 0.0
    for grp in groups:
        r, e = grp.exp(cos_tab, sin_tab, phi)
        out.append((grp.cols, r))
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
        groups, eta = rotation_image(module, p, phi, cache)
        if j == 0:
            for cols, r in groups:
                idx = cols.reshape(r.shape[0], r.shape[1])
                u[idx[:, :, None], idx[:, None, :]] = r  # u was the identity: placing blocks is exact
            eps = eta
            continue
        rnd2 = 0.0
        for cols, r in groups:
            nblk, b = r.shape[0], r.shape[1]
            x = u[:, cols].reshape(d, nblk, b).transpose(1, 0, 2)
            prod, e = split_matmul(x, r)
            u[:, cols] = prod.transpose(1, 0, 2).reshape(d, nblk * b)
            rnd2 += e * e
        eps = up(eps * (1 + eta) + eta + math.sqrt(rnd2) * (1 + 4 * U))
    w = module.weights
    flip = np.prod(np.where(np.asarray(signs) < 0, -1.0, 1.0) ** (w % 2), axis=1)
    return u * flip[:, None], eps  # ρ(S) is diagonal ±1: exact
