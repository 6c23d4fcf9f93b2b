"""Exact combination of spectra: pairwise products and k-th powers.

All functions work in *s-space* (see :mod:`powerspec.products`): the
combination is either plain addition (``mode='add'``) or multiplication
(``mode='mul'``).  Multiplicities are exact integers throughout.

Two strategies compute ``S^k``:

* **compositions** -- every atom of the power is indexed by a composition
  c of k into r parts (r = distinct atoms of S); its value is sum c_i s_i (or
  prod s_i^c_i) and its multiplicity the multinomial (k; c) * prod m_i^c_i.
  Cost: the number of compositions, C(k + r - 1, r - 1); exact binomials come
  from cached Pascal rows.
* **squaring** -- binary exponentiation with merging after every step.  Its
  cost follows the number of *distinct* values of the intermediate powers,
  which is far below the composition count when eigenvalues are
  commensurable (cycles, integer spectra).

Every step checks its pair count against a budget *before* allocating, and
raises :class:`~powerspec.errors.SizeLimitError` instead of starting work
that would not fit.
"""

from __future__ import annotations

import math

import numpy as np

from powerspec.errors import SizeLimitError
from powerspec.spectra.measures import LINEAR_MAX, Spectrum, mult_array, outer_mult, polar_add, polar_mul

_LOG_LINEAR_MAX = math.log(LINEAR_MAX)


def identity(mode: str) -> Spectrum:
    """The one-vertex spectrum neutral for the mode ({0} for add, {1} for mul)."""
    return Spectrum.from_values([0.0 if mode == "add" else 1.0])


def composition_count(k: int, r: int) -> int:
    """Number of compositions of k into r non-negative parts, C(k + r - 1, r - 1).

    >>> composition_count(3, 2)
    4
    """
    if r == 0:
        return 0 if k else 1
    return math.comb(k + r - 1, r - 1)


def check_pairs(a: Spectrum, b: Spectrum, budget: int) -> None:
    """Raise SizeLimitError before combining when len(a) * len(b) exceeds the pair budget."""
    pairs = len(a) * len(b)
    if pairs > budget:
        raise SizeLimitError(
            f"combining {len(a)} by {len(b)} distinct eigenvalues needs {pairs} pairs, "
            f"more than the budget of {budget}"
        )


def outer(a: Spectrum, b: Spectrum, mode: str, budget: int) -> Spectrum:
    """The spectrum {a_i + b_j} (add) or {a_i * b_j} (mul), merged; exact multiplicities.

    >>> outer(Spectrum.from_values([1, -1]), Spectrum.from_values([1, -1]), "add", 100).atoms()
    [(-2.0, 1), (0.0, 2), (2.0, 1)]
    """
    check_pairs(a, b, budget)
    mult = outer_mult(a.mult, b.mult, a.order, b.order)
    order = a.order * b.order
    # Sums add absolute rounding errors; products of doubles err only relatively.
    atol = (a.atol or 0.0) + (b.atol or 0.0) if mode == "add" else 0.0
    linear_ok = not (a.is_polar or b.is_polar)
    if linear_ok:
        ma = float(np.max(np.abs(a.values), initial=0.0))
        mb = float(np.max(np.abs(b.values), initial=0.0))
        bound = ma + mb if mode == "add" else ma * mb
        linear_ok = bound < LINEAR_MAX
    if linear_ok:
        av, bv = a.values, b.values
        vals = (np.add.outer(av, bv) if mode == "add" else np.multiply.outer(av, bv)).ravel()
        return Spectrum(vals, mult, order=order, atol=atol)
    la, ta = a.to_polar()
    lb, tb = b.to_polar()
    op = polar_add if mode == "add" else polar_mul
    l2, t2 = op(la[:, None], ta[:, None], lb[None, :], tb[None, :])
    return Spectrum.polar(np.ravel(l2), np.ravel(t2), mult, order=order, atol=atol)


def power(s: Spectrum, k: int, mode: str, budget: int, limit: int) -> Spectrum:
    """The k-fold combination S o S o ... o S (k >= 1) in the given mode, exact multiplicities.

    Uses compositions when their number is within ``budget``, squaring with
    merging otherwise; raises SizeLimitError when either would exceed
    ``budget`` pairs or a merged intermediate exceeds ``limit`` atoms.

    >>> power(Spectrum.from_values([1, -1]), 4, "add", 10**6, 10**6).atoms()
    [(-4.0, 1), (-2.0, 4), (0.0, 6), (2.0, 4), (4.0, 1)]
    """
    if k == 1:
        return s
    if composition_count(k, len(s)) <= budget:
        return _compositions(s, k, mode)
    return _squaring(s, k, mode, budget, limit)


def _squaring(s: Spectrum, k: int, mode: str, budget: int, limit: int) -> Spectrum:
    result: Spectrum | None = None
    base = s
    while True:
        if k & 1:
            result = base if result is None else outer(result, base, mode, budget)
            _check_atoms(result, limit)
        k >>= 1
        if not k:
            return result
        base = outer(base, base, mode, budget)
        _check_atoms(base, limit)


def _check_atoms(s: Spectrum, limit: int) -> None:
    if len(s) > limit:
        raise SizeLimitError(
            f"an intermediate power already has {len(s)} distinct eigenvalues, over the "
            f"limit of {limit}"
        )


class _Pascal:
    """Cached rows C(n, 0..n) as int64 or object arrays (exact)."""

    def __init__(self, big: bool):
        self.big = big
        self.rows: dict[int, np.ndarray] = {}

    def row(self, n: int) -> np.ndarray:
        r = self.rows.get(n)
        if r is None:
            vals = [1] * (n + 1)
            c = 1
            for j in range(1, n // 2 + 1):
                c = c * (n - j + 1) // j
                vals[j] = vals[n - j] = c
            r = np.empty(n + 1, dtype=object) if self.big else np.empty(n + 1, dtype=np.int64)
            r[:] = vals
            self.rows[n] = r
        return r


def _compositions(s: Spectrum, k: int, mode: str) -> Spectrum:
    r = len(s)
    order = s.order**k
    big = order >= 2**62
    pascal = _Pascal(big)
    polar = s.is_polar
    if not polar:
        top = float(np.max(np.abs(s.values), initial=0.0))
        polar = (mode == "add" and k * top >= LINEAR_MAX) or (
            mode == "mul" and top > 0 and k * math.log(top) >= _LOG_LINEAR_MAX
        )
    if polar:
        la_s, ta_s = s.to_polar()
    rem = np.array([k], dtype=np.int64)
    w = mult_array([1], order)
    if polar:
        acc_l = np.array([-np.inf if mode == "add" else 0.0])
        acc_t = np.zeros(1)
    else:
        acc = np.array([0.0 if mode == "add" else 1.0], dtype=s.values.dtype)
    for i in range(r):
        if i == r - 1:
            c = rem.copy()
            src = np.arange(rem.size)
        else:
            counts = rem + 1
            src = np.repeat(np.arange(rem.size), counts)
            offsets = np.cumsum(counts) - counts
            c = np.arange(src.size, dtype=np.int64) - np.repeat(offsets, counts)
        n_before = rem[src]
        w = w[src]
        if i < r - 1:
            # Exact binomial C(rem, c) from cached Pascal rows, one row per distinct rem
            # (the last part takes all that remains, so its binomial is 1).
            binom = np.empty(src.size, dtype=object if big else np.int64)
            for n in np.unique(n_before):
                sel = n_before == n
                binom[sel] = pascal.row(int(n))[c[sel]]
            w = w * binom
        m_i = int(s.mult[i])
        if m_i != 1:
            cmax = int(c.max()) if c.size else 0
            pw = mult_array([m_i**j for j in range(cmax + 1)], order)
            w = w * pw[c]
        rem = n_before - c
        if polar:
            acc_l, acc_t = acc_l[src], acc_t[src]
            with np.errstate(invalid="ignore"):
                li = np.where(c == 0, 0.0, c * la_s[i])
            if mode == "mul":
                acc_l, acc_t = polar_mul(acc_l, acc_t, li, np.mod(c * ta_s[i], 1.0))
            else:
                # c * s_i in polar form, then add.
                with np.errstate(divide="ignore"):
                    cl = np.where(c == 0, -np.inf, np.log(np.maximum(c, 1)) + la_s[i])
                acc_l, acc_t = polar_add(acc_l, acc_t, cl, np.full(c.size, ta_s[i]))
        else:
            acc = acc[src]
            vi = s.values[i]
            acc = acc + c * vi if mode == "add" else acc * np.power(vi, c)
    atol = k * (s.atol or 0.0) if mode == "add" else 0.0
    if polar:
        return Spectrum.polar(acc_l, acc_t, w, order=order, atol=atol)
    return Spectrum(acc, w, order=order, atol=atol)
