"""Vectorised certified balls in scaled form: the certified-float number domain.

A :class:`Balls` array holds n real or complex numbers, each as a ball

    (mid_i +- rad_i) * 2**exp_i,

``mid`` float64 (or complex128), ``rad`` float64 >= 0 (a disk radius for
complex values), ``exp`` int64, normalised so that max(|Re mid|, |Im mid|,
rad) lies in [1/2, 1) (or everything is zero).  The scaled form neither
overflows nor underflows: 2**(+-10**9) is as easy as 1.

Every operation returns balls that contain the exact result for all points of
the input balls (midpoint-radius interval arithmetic; S. M. Rump, "Fast and
parallel interval arithmetic", BIT 39, 1999).  Rounding errors of the
midpoints are measured *exactly* with the error-free transformations TwoSum
(Knuth, TAOCP vol. 2, 4.2.2) and TwoProduct (Dekker 1971, splitting with
2**27 + 1) and added to the radius, so a result that happens to be exact
(sums and products of integers below 2**53, dyadic rationals) keeps radius 0
-- exact values stay exact, nothing is ever snapped.  Sums of radii are
rounded up by a factor (1 + 2**-50) plus two subnormal units, which covers
the rounding of those few float additions (each at most a relative 2**-53).

>>> x = Balls.from_floats([1.0, 0.1])
>>> y = x.mul(x)
>>> y.is_exact().tolist()           # 1*1 is exact; 0.1*0.1 is not
[True, False]
>>> z = Balls.from_floats([0.5]).pow_int(np.array([1100]))
>>> z.exp.tolist(), z.mid.tolist()  # 2**-1100 without underflow
([-1099], [0.5])
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np

_SPLIT = 134217729.0  # 2**27 + 1
_UP = 1.0 + 2.0**-50
_TINY = 1e-323  # two subnormal units: covers one underflowing rounding each
EXP_LIMIT = 2**62
"""Largest |binary exponent| the scaled form holds; larger results are refused by the caller."""


def _up(r: np.ndarray) -> np.ndarray:
    """An upper bound of a non-negative float expression computed with a few roundings."""
    return np.where(r > 0, r * _UP + _TINY, 0.0)


def two_sum(a: np.ndarray, b: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(s, e) with s = fl(a + b) and a + b = s + e exactly (Knuth's TwoSum)."""
    s = a + b
    bb = s - a
    e = (a - (s - bb)) + (b - bb)
    return s, e


def _split(a: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    c = _SPLIT * a
    hi = c - (c - a)
    return hi, a - hi


def two_prod(a: np.ndarray, b: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(p, e) with p = fl(a * b) and a * b = p + e exactly (Dekker; |a|, |b| <= 1 here)."""
    p = a * b
    ah, al = _split(a)
    bh, bl = _split(b)
    e = ((ah * bh - p) + ah * bl + al * bh) + al * bl
    return p, e


def _abs_up(m: np.ndarray) -> np.ndarray:
    """An upper bound of |m| (modulus for complex m)."""
    if m.dtype.kind == "c":
        return np.abs(m) * _UP
    return np.abs(m)


def _mag(m: np.ndarray) -> np.ndarray:
    if m.dtype.kind == "c":
        return np.maximum(np.abs(m.real), np.abs(m.imag))
    return np.abs(m)


class Balls:
    """n certified real or complex balls (mid +- rad) * 2**exp (see the module docstring)."""

    __slots__ = ("mid", "rad", "exp")

    def __init__(self, mid: np.ndarray, rad: np.ndarray, exp: np.ndarray, normalise: bool = True):
        self.mid = mid
        self.rad = rad
        self.exp = exp
        if normalise:
            self._normalise()

    # ---------------------------------------------------------------- build
    @classmethod
    def from_floats(cls, values: Sequence | np.ndarray, rad: Sequence | np.ndarray | None = None
                    ) -> Balls:
        """Balls around float (or complex) values, exact (radius 0) unless ``rad`` is given.

        >>> Balls.from_floats([3.0, -0.25]).to_floats().tolist()
        [3.0, -0.25]
        """
        v = np.asarray(values)
        v = v.astype(np.complex128 if v.dtype.kind == "c" else np.float64)
        r = np.zeros(v.shape, dtype=np.float64) if rad is None else np.asarray(rad, dtype=np.float64)
        if not (np.all(np.isfinite(v)) and np.all(np.isfinite(r))):
            raise ValueError("ball midpoints and radii must be finite")
        return cls(v.copy(), r.copy(), np.zeros(v.shape, dtype=np.int64))

    @classmethod
    def empty(cls, complex_: bool = False) -> Balls:
        """No balls."""
        dt = np.complex128 if complex_ else np.float64
        return cls(np.zeros(0, dt), np.zeros(0), np.zeros(0, np.int64), normalise=False)

    def _normalise(self) -> None:
        m, r, e = self.mid, self.rad, self.exp
        scale = np.maximum(_mag(m), r)
        _, k = np.frexp(scale)
        k = np.where(scale == 0, 0, k).astype(np.int64)
        if not np.any(k):
            self.exp = np.where(scale == 0, 0, e)
            return
        m2 = _ldexp(m, -k)
        r2 = np.ldexp(r, -k)
        # Scaling by 2**-k is exact unless the result is subnormal; cover that rounding.
        lossy = (_mag(m2) < 2.0**-1020) & (m != 0) | (r2 < 2.0**-1020) & (r > 0)
        self.mid = m2
        self.rad = np.where(lossy, _up(r2 + 2 * _TINY), r2)
        self.exp = np.where(scale == 0, 0, e + k)

    # -------------------------------------------------------------- access
    def __len__(self) -> int:
        return int(self.mid.shape[0])

    @property
    def is_complex(self) -> bool:
        """True when the midpoints are complex128."""
        return self.mid.dtype.kind == "c"

    def is_exact(self) -> np.ndarray:
        """Boolean mask of the exact entries (radius zero)."""
        return self.rad == 0

    def take(self, idx) -> Balls:
        """The balls at the given indices (or boolean mask)."""
        return Balls(self.mid[idx], self.rad[idx], self.exp[idx], normalise=False)

    def repeat(self, counts) -> Balls:
        """Each ball repeated counts[i] times."""
        return Balls(np.repeat(self.mid, counts), np.repeat(self.rad, counts),
                     np.repeat(self.exp, counts), normalise=False)

    def as_complex(self) -> Balls:
        """The same balls with complex midpoints."""
        if self.is_complex:
            return self
        return Balls(self.mid.astype(np.complex128), self.rad, self.exp, normalise=False)

    def real_if_possible(self) -> Balls:
        """Real balls when every imaginary midpoint is exactly zero (radii keep covering)."""
        if self.is_complex and np.all(self.mid.imag == 0):
            return Balls(self.mid.real.copy(), self.rad, self.exp, normalise=False)
        return self

    def to_floats(self) -> np.ndarray:
        """Midpoints as plain float64/complex128 (+-inf or 0 beyond the double range)."""
        with np.errstate(over="ignore", under="ignore"):
            return _ldexp(self.mid, np.clip(self.exp, -2000, 2000))

    def radii(self) -> np.ndarray:
        """Radii as plain floats, rounded up (inf beyond the double range)."""
        with np.errstate(over="ignore", under="ignore"):
            r = np.ldexp(self.rad, np.clip(self.exp, -2000, 2000))
        return np.where((self.rad > 0) & (r < 5e-324 * 4), 1e-323, _up(r))

    def log2_abs(self) -> np.ndarray:
        """log2 |mid * 2**exp| as floats (-inf for a zero midpoint)."""
        with np.errstate(divide="ignore"):
            return np.log2(np.abs(self.mid)) + self.exp

    # ---------------------------------------------------------- arithmetic
    @staticmethod
    def concat(parts: Sequence[Balls]) -> Balls:
        """All balls of several arrays, in order."""
        parts = [p for p in parts if len(p)]
        if not parts:
            return Balls.empty()
        if any(p.is_complex for p in parts):
            parts = [p.as_complex() for p in parts]
        return Balls(np.concatenate([p.mid for p in parts]), np.concatenate([p.rad for p in parts]),
                     np.concatenate([p.exp for p in parts]), normalise=False)

    def neg(self) -> Balls:
        """-x (exact)."""
        return Balls(-self.mid, self.rad.copy(), self.exp.copy(), normalise=False)

    def add(self, other: Balls) -> Balls:
        """Elementwise x + y (broadcasting), certified."""
        xm, xr, xe, ym, yr, ye = _bcast(self, other)
        zx = (xm == 0) & (xr == 0)
        zy = (ym == 0) & (yr == 0)
        big = np.int64(-(2**62))
        top = np.maximum(np.where(zx, big, xe), np.where(zy, big, ye))
        top = np.where(zx & zy, 0, top)
        sx, sy = np.maximum(xe - top, -2100), np.maximum(ye - top, -2100)
        a, ar = _shift(xm, xr, sx)
        b, br = _shift(ym, yr, sy)
        if a.dtype.kind == "c" or b.dtype.kind == "c":
            a, b = a.astype(np.complex128), b.astype(np.complex128)
            s_re, e_re = two_sum(a.real, b.real)
            s_im, e_im = two_sum(a.imag, b.imag)
            s = s_re + 1j * s_im
            err = np.abs(e_re) + np.abs(e_im)
        else:
            s, e = two_sum(a, b)
            err = np.abs(e)
        return Balls(s, _up(ar + br + err), top)

    def sub(self, other: Balls) -> Balls:
        """Elementwise x - y, certified."""
        return self.add(other.neg())

    def mul(self, other: Balls) -> Balls:
        """Elementwise x * y (broadcasting), certified."""
        xm, xr, xe, ym, yr, ye = _bcast(self, other)
        if xm.dtype.kind == "c" or ym.dtype.kind == "c":
            xm, ym = xm.astype(np.complex128), ym.astype(np.complex128)
            p1, e1 = two_prod(xm.real, ym.real)
            p2, e2 = two_prod(xm.imag, ym.imag)
            p3, e3 = two_prod(xm.real, ym.imag)
            p4, e4 = two_prod(xm.imag, ym.real)
            re, e5 = two_sum(p1, -p2)
            im, e6 = two_sum(p3, p4)
            p = re + 1j * im
            err = _up(np.abs(e1) + np.abs(e2) + np.abs(e5)) + _up(np.abs(e3) + np.abs(e4) + np.abs(e6))
        else:
            p, e = two_prod(xm, ym)
            err = np.abs(e)
        rad = _up(_abs_up(xm) * yr + xr * _abs_up(ym) + xr * yr + err)
        return Balls(p, rad, xe + ye)

    def mul_int(self, c: np.ndarray) -> Balls:
        """x * c for integer arrays c (|c| < 2**62), certified (exact while products are)."""
        c = np.asarray(c, dtype=np.int64)
        hi = (c >> 31).astype(np.float64) * 2.0**31
        lo = (c & (2**31 - 1)).astype(np.float64)
        # c = hi + lo exactly, each part a float; two scaled products then a certified sum
        return self.mul(Balls.from_floats(hi)).add(self.mul(Balls.from_floats(lo)))

    def pow_int(self, c: np.ndarray) -> Balls:
        """x ** c elementwise for integer arrays c >= 0 (x**0 = 1, also for x = 0), certified.

        Binary powering: at most 2 log2(max c) certified multiplications.
        """
        c = np.asarray(c, dtype=np.int64)
        x = self if len(self) == c.shape[0] else self.take(np.zeros(c.shape[0], dtype=np.int64))
        one = np.ones(c.shape[0])
        res = Balls(one.astype(x.mid.dtype), np.zeros(c.shape[0]), np.zeros(c.shape[0], np.int64),
                    normalise=False)
        base, k = x, c.copy()
        while np.any(k):
            odd = (k & 1).astype(bool)
            if np.any(odd):
                prod = res.mul(base)
                res = _where(odd, prod, res)
            k >>= 1
            if np.any(k):
                base = base.mul(base)
        return res

    def contains_zero(self) -> np.ndarray:
        """True where the ball contains 0."""
        return _mag(self.mid) <= self.rad


def _ldexp(m: np.ndarray, k) -> np.ndarray:
    if m.dtype.kind == "c":
        return np.ldexp(m.real, k) + 1j * np.ldexp(m.imag, k)
    return np.ldexp(m, k)


def _shift(m: np.ndarray, r: np.ndarray, s: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(m * 2**s, radius) for s <= 0, with the underflow loss added to the radius."""
    with np.errstate(under="ignore"):
        m2 = _ldexp(m, s)
        r2 = np.ldexp(r, s)
    # |m|, r < 1, so below 2**-1021 the shifted values may have been rounded or flushed.
    lossy = s < -1021
    return m2, np.where(lossy & ((m != 0) | (r > 0)), r2 + 2 * _TINY, r2)


def _bcast(x: Balls, y: Balls):
    return np.broadcast_arrays(x.mid, x.rad, x.exp, y.mid, y.rad, y.exp)


def _where(mask: np.ndarray, a: Balls, b: Balls) -> Balls:
    dt = np.complex128 if (a.is_complex or b.is_complex) else np.float64
    return Balls(np.where(mask, a.mid, b.mid).astype(dt), np.where(mask, a.rad, b.rad),
                 np.where(mask, a.exp, b.exp), normalise=False)


def scalar(mid: float | complex, rad: float = 0.0, exp: int = 0) -> Balls:
    """A single ball (mid +- rad) * 2**exp."""
    m = np.array([mid], dtype=np.complex128 if isinstance(mid, complex) else np.float64)
    return Balls(m, np.array([float(rad)]), np.array([int(exp)], dtype=np.int64))


def exact_log2_floor(m: float, e: int) -> int:
    """floor(log2 |m * 2**e|) for m != 0 (exact)."""
    return e + math.frexp(m)[1] - 1


__all__ = ["Balls", "EXP_LIMIT", "scalar", "two_prod", "two_sum"]
