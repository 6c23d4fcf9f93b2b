"""Rigorous bounds on a CDF from finitely many exact moments (Chebyshev–Markov–Stieltjes).

Given the moments mu_0, ..., mu_2n of a positive measure on the real line,
every measure with those moments has, at any point xi,

    sum_{x_j < xi} w_j  <=  F(xi-)  <=  F(xi)  <=  sum_{x_j <= xi} w_j,

where (x_j, w_j) is the quadrature with n + 1 nodes that contains xi as a
node and integrates every polynomial of degree <= 2n exactly (the
"canonical representation" through xi; Akhiezer, *The classical moment
problem*, ch. 3, and Krein & Nudelman, ch. III -- from memory).  Its nodes
are the zeros of (t - a) pi_n(t) - b_n pi_(n-1)(t) with a chosen so that xi
is a zero (pi_k the monic orthogonal polynomials), its weights are the
Christoffel numbers 1 / sum_{k<=n} pi_k(x_j)^2 / h_k.

Exactness.  The recurrence coefficients and norms h_k are computed in exact
rational arithmetic from the exact moments (no Hankel ill-conditioning), so
a singular Hankel matrix is detected exactly: h_k = 0 means the measure has
exactly k atoms (the zeros of pi_k), the measure is determined and the
bounds collapse to the exact CDF.  The weight at xi is exact; only the
location of the other nodes is numerical, found with mpmath at 60 and at
120 digits; the two sums must agree to 1e-40 or the precision is raised,
and the result is widened by :data:`SLACK` and rounded outward to doubles.

>>> from fractions import Fraction
>>> lo, hi = cdf_bounds([1, 0, 1, 0, 3], 0.5)   # moments of the standard normal
>>> bool(lo <= 0.6914624612740131 <= hi)         # Phi(0.5), mpmath.ncdf
True
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from fractions import Fraction

import mpmath

from powerspec.algebra.moments import MomentEngine
from powerspec.errors import InputError

SLACK = 1e-30
"""Absolute widening of the numerically summed weights (far above the mpmath error)."""

DEFAULT_ORDER = 12
"""Moments used by :func:`cdf_bounds_from_moments` (up to mu_12: a 7-node quadrature)."""


def _frac(x) -> Fraction:
    if isinstance(x, Fraction):
        return x
    if isinstance(x, int):
        return Fraction(x)
    f = float(x)
    if not math.isfinite(f):
        raise InputError(f"moments and points must be finite numbers, got {x!r}")
    return Fraction(f)


def recurrence(moments: Sequence) -> tuple[list[Fraction], list[Fraction], list[Fraction], int]:
    """Exact three-term recurrence of the monic orthogonal polynomials of a moment sequence.

    Returns ``(a, b, h, k)``: pi_(j+1) = (t - a_j) pi_j - b_j pi_(j-1), squared
    norms h_j = <pi_j, pi_j>, for every j the moments determine; ``k`` is the
    number of atoms when the measure is finitely supported with k <= n (then
    h_k = 0 exactly), else -1.  Raises InputError if the sequence cannot be
    the moments of a positive measure (some h_j < 0).

    >>> a, b, h, k = recurrence([1, 0, 1, 0, 1])   # the two-point measure on -1, 1
    >>> [str(v) for v in a], [str(v) for v in b[1:]], [str(v) for v in h], k
    (['0', '0'], ['1'], ['1', '1', '0'], 2)
    """
    mu = [_frac(m) for m in moments]
    if len(mu) < 1 or mu[0] <= 0:
        raise InputError("moment bounds need mu_0 > 0 (the total mass)")
    n = (len(mu) - 1) // 2

    def inner(p: list[Fraction], q: list[Fraction]) -> Fraction:
        return sum((pi * qj * mu[i + j] for i, pi in enumerate(p) if pi for j, qj in enumerate(q) if qj),
                   Fraction(0))

    polys = [[Fraction(1)]]
    h = [mu[0]]
    a: list[Fraction] = []
    b: list[Fraction] = [Fraction(0)]
    for j in range(n):
        pj = polys[j]
        tp = [Fraction(0)] + pj
        a.append(inner(tp, pj) / h[j])
        nxt = [(tp[i] if i < len(tp) else 0) - a[j] * (pj[i] if i < len(pj) else 0)
               for i in range(j + 2)]
        if j > 0:
            prev = polys[j - 1]
            nxt = [c - b[j] * (prev[i] if i < len(prev) else 0) for i, c in enumerate(nxt)]
        hn = inner(nxt, nxt)
        if hn < 0:
            raise InputError("these numbers are not the moments of a positive measure (a Hankel "
                             "determinant is negative); check that they are exact")
        h.append(hn)
        if hn == 0:
            return a, b, h, j + 1
        b.append(hn / h[j])
        polys.append(nxt)
    return a, b, h, -1


def _eval_all(a, b, t, count):
    """[pi_0(t), ..., pi_count(t)] by the recurrence (works for Fraction or mpf t)."""
    if not isinstance(t, Fraction):
        a = [mpmath.mpf(v.numerator) / v.denominator for v in a[:count]]
        b = [mpmath.mpf(v.numerator) / v.denominator for v in b[:count]]
    vals = [t * 0 + 1]
    if count >= 1:
        vals.append(t - a[0])
    for j in range(1, count):
        vals.append((t - a[j]) * vals[j] - b[j] * vals[j - 1])
    return vals


def _nodes(diag: list, off: list, dps: int) -> list:
    """Eigenvalues of the symmetric tridiagonal matrix (mpmath, dps digits)."""
    with mpmath.workdps(dps):
        m = len(diag)
        mat = mpmath.zeros(m, m)
        for i, d in enumerate(diag):
            mat[i, i] = mpmath.mpf(d.numerator) / d.denominator
        for i, e in enumerate(off):
            s = mpmath.sqrt(mpmath.mpf(e.numerator) / e.denominator)
            mat[i, i + 1] = s
            mat[i + 1, i] = s
        return sorted(mpmath.eigsy(mat, eigvals_only=True))


def _weight(a, b, h, n, x):
    """Christoffel number 1 / sum_{k<=n} pi_k(x)^2 / h_k at an mpf point."""
    vals = _eval_all(a, b, x, n)
    return 1 / sum(v * v * hk.denominator / hk.numerator for v, hk in zip(vals, h[: n + 1], strict=True))


def _sum_below(a, b, h, n, diag, off, xi: Fraction, dps: int) -> tuple:
    """(sum of weights at nodes < xi, sum at nodes > xi) at the given precision."""
    with mpmath.workdps(dps):
        xs = mpmath.mpf(xi.numerator) / xi.denominator
        nodes = _nodes(diag, off, dps)
        # one node is xi itself (exactly, by construction): drop the closest
        skip = min(range(len(nodes)), key=lambda i: abs(nodes[i] - xs))
        below = above = mpmath.mpf(0)
        for i, x in enumerate(nodes):
            if i == skip:
                continue
            w = _weight(a, b, h, n, x)
            if x < xs:
                below += w
            else:
                above += w
        return below, above


def _down(fr: Fraction) -> float:
    f = float(fr)
    return math.nextafter(f, -math.inf) if Fraction(f) > fr else f


def _up(fr: Fraction) -> float:
    f = float(fr)
    return math.nextafter(f, math.inf) if Fraction(f) < fr else f


def _outward(lo, hi, lattice: int | None = None) -> tuple[float, float]:
    """Doubles lo' <= lo - SLACK and hi' >= hi + SLACK, clipped to [0, 1].

    With ``lattice`` N (every mass a multiple of 1/N, as for N eigenvalues)
    the bounds are moved inward to the nearest multiple of 1/N, which keeps
    them valid and makes them exact when the moments determine the CDF.
    """
    with mpmath.workdps(60):
        lo_m, hi_m = lo - SLACK, hi + SLACK
        if lattice is not None:
            lo_fr = Fraction(int(mpmath.ceil(lo_m * lattice)), lattice)
            hi_fr = Fraction(int(mpmath.floor(hi_m * lattice)), lattice)
        else:
            lo_fr = Fraction(int(mpmath.floor(lo_m * 2**80)), 2**80)
            hi_fr = Fraction(int(mpmath.ceil(hi_m * 2**80)), 2**80)
    return max(0.0, _down(lo_fr)), min(1.0, _up(hi_fr))


def cdf_bounds(moments: Sequence, x, *, lattice: int | None = None) -> tuple[float, float]:
    """Rigorous (lower, upper) bounds on F(x) = mass of (-inf, x] / total mass.

    ``moments`` are mu_0, mu_1, ..., mu_m of a positive measure, exact (ints
    or Fractions; floats are taken at their exact binary value); mu_0 is the
    total mass and need not be 1.  Uses mu_0..mu_2n with 2n <= m.  When the
    moments show the measure has at most n atoms the two bounds are the exact
    CDF (up to outward rounding to doubles).

    With ``lattice`` N (every mass a multiple of 1/N, e.g. a spectrum of N
    eigenvalues) the bounds are snapped inward to multiples of 1/N.

    >>> cdf_bounds([2, 0, 2, 0, 2, 0, 2], 0.0, lattice=2)   # atoms -1, 1 with mass 1 each
    (0.5, 0.5)
    """
    mu = [_frac(m) for m in moments]
    xi = _frac(x)
    m0 = mu[0] if mu else Fraction(0)
    if m0 <= 0:
        raise InputError("moment bounds need mu_0 > 0 (the total mass)")
    mu = [m / m0 for m in mu]
    if lattice is not None and (not isinstance(lattice, int) or lattice < 1):
        raise InputError(f"lattice must be a positive integer, got {lattice!r}")
    if lattice is not None and lattice > 2**60:
        lattice = None  # snapping to such a fine lattice gains nothing
    if len(mu) < 3:
        return 0.0, 1.0
    a, b, h, k = recurrence(mu[: 2 * ((len(mu) - 1) // 2) + 1])
    if k > 0:
        return _finite_support(a, b, h, k, xi, lattice)
    n = len(a)
    pis = _eval_all(a, b, xi, n)
    if pis[n] == 0:
        # xi is a zero of pi_n: the n-point Gauss rule already has xi as a node.
        w_xi = 1 / sum(v * v / hk for v, hk in zip(pis[:n], h[:n], strict=True))
        diag, off, m = a[:n], b[1:n], n - 1
    else:
        a_last = xi - b[n] * pis[n - 1] / pis[n]
        w_xi = 1 / sum(v * v / hk for v, hk in zip(pis, h[: n + 1], strict=True))
        diag, off, m = a[:n] + [a_last], b[1 : n + 1], n
    aa = diag
    for dps in (60, 120, 240):
        lo1, up1 = _sum_below(aa, [Fraction(0)] + off, h, m, diag, off, xi, dps)
        lo2, up2 = _sum_below(aa, [Fraction(0)] + off, h, m, diag, off, xi, 2 * dps)
        if abs(lo1 - lo2) < mpmath.mpf(10) ** -40 and abs(up1 - up2) < mpmath.mpf(10) ** -40:
            break
    else:
        raise InputError("the moment quadrature did not stabilise at 480 digits; use fewer moments")
    with mpmath.workdps(60):
        wx = mpmath.mpf(w_xi.numerator) / w_xi.denominator
        lower = lo2
        upper = 1 - up2  # = lower + w_xi; the complement is summed independently
        upper = max(upper, lower + wx)
    return _outward(lower, upper, lattice)


def _finite_support(a, b, h, k, xi: Fraction, lattice) -> tuple[float, float]:
    """The exact CDF of the k-atom measure (Gauss rule of pi_k), rounded outward."""
    pis = _eval_all(a, b, xi, k)
    at_xi = pis[k] == 0
    diag, off = a[:k], b[1:k]
    for dps in (60, 120, 240):
        nodes = _nodes(diag, off, dps)
        with mpmath.workdps(dps):
            xs = mpmath.mpf(xi.numerator) / xi.denominator
            skip = min(range(len(nodes)), key=lambda i: abs(nodes[i] - xs)) if at_xi else -1
            tot = mpmath.mpf(0)
            for i, x in enumerate(nodes):
                if i == skip:
                    continue
                if x < xs:
                    tot += _weight(a, b, h, k - 1, x)
            if at_xi:
                tot += 1 / sum(v * v / hk for v, hk in zip(pis[:k], h[:k], strict=True))
            gap = min((abs(x - xs) for i, x in enumerate(nodes) if i != skip), default=mpmath.inf)
        if gap > mpmath.mpf(10) ** (-dps // 2):
            return _outward(tot, tot, lattice)
    raise InputError("a support point of the moment measure is too close to x to resolve")


def cdf_bounds_from_moments(node, kind: str, x, *, order: int = DEFAULT_ORDER,
                            direction: str = "out") -> tuple[float, float, str]:
    """Rigorous (lower, upper, method) for the fraction of eigenvalues <= x, from exact moments.

    Works for any product whose matrix has a real spectrum (undirected
    factors; every kind), including the Laplacians of non-regular direct and
    strong products whose spectrum does not factor.  ``order`` is the largest
    moment used (an even number 2n gives an (n+1)-node quadrature).

    >>> from powerspec.algebra.grammar import parse
    >>> lo, hi, how = cdf_bounds_from_moments(parse("cart(K(2)^3)"), "adjacency", 0.0)
    >>> lo, hi                                    # Q_3: eigenvalues -3, -1^3, 1^3, 3
    (0.5, 0.5)
    """
    if node.directed:
        raise InputError(
            f"CDF bounds from moments need a real spectrum, and {node.label()} is directed; "
            "use an undirected graph"
        )
    if not isinstance(order, int) or isinstance(order, bool) or order < 2:
        raise InputError(f"the moment order must be an integer >= 2, got {order!r}")
    order -= order % 2
    eng = MomentEngine(order, direction)
    tau = eng.normalised(node, kind)
    n_vert = node.order
    lo, hi = cdf_bounds(tau, x, lattice=n_vert if isinstance(n_vert, int) else None)
    nodes = order // 2 + 1
    method = (f"Chebyshev-Markov-Stieltjes bounds from the exact moments up to order {order} "
              f"({nodes}-node quadrature through x, exact rational recurrence)")
    if lo == hi:
        method = f"exact: the moments up to order {order} determine the measure (few atoms)"
    return lo, hi, method


cdf_bounds_for = cdf_bounds_from_moments
"""Alias of :func:`cdf_bounds_from_moments`."""

__all__ = ["cdf_bounds", "cdf_bounds_from_moments", "cdf_bounds_for", "recurrence"]
