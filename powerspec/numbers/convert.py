"""Conversions between the number domains: exact rationals, high-precision balls, scaled balls.

Every conversion is certified: a value converted to a coarser domain gets a
radius that covers its rounding; nothing is converted to a finer domain
except exactly.

>>> b = to_balls([fmpq(1, 3), fmpq(2)])
>>> b.is_exact().tolist()                  # 1/3 is not a double; 2 is
[False, True]
>>> hp_of(b, 1)
2
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np
from flint import acb, arb, fmpq

from powerspec.numbers.balls import Balls
from powerspec.numbers.hp import HP, working
from powerspec.numbers.rationals import Rationals


def _scaled_arb(x: arb) -> tuple[float, float, int]:
    """(mantissa, radius, exponent) with x inside (mantissa +- radius) * 2**exponent."""
    m, e = x.mid().man_exp()
    rm, re_ = x.rad().man_exp()
    m, e, rm, re_ = int(m), int(e), int(rm), int(re_)
    if m == 0:
        if rm == 0:
            return 0.0, 0.0, 0
        b = rm.bit_length()
        return 0.0, math.ldexp(float(rm), -b) * (1 + 2.0**-50), re_ + b
    b = abs(m).bit_length()
    if b <= 53:
        mant, err = math.ldexp(float(m), -b), 0.0
    else:
        # round the midpoint to 53 bits and keep the exact remainder as radius
        shift = b - 53
        top = m >> shift
        rem = m - (top << shift)
        if 2 * rem >= (1 << shift):
            top += 1
            rem -= 1 << shift
        mant = math.ldexp(float(top), -53)
        err = 0.0
        if rem:
            # |rem| < 2^shift may pass the double range (midpoints of more than 1077 bits):
            # bound it from above by its leading 60 bits plus one unit of the last of them
            cut = max(abs(rem).bit_length() - 60, 0)
            err = math.ldexp(float((abs(rem) >> cut) + 1) * (1 + 2.0**-52), cut - b)
    exp = e + b
    rad = 0.0
    if rm:
        # arb radii have 30-bit mantissas, so float(rm) is exact; clamping the shift
        # from below only enlarges the radius.
        rad = math.ldexp(float(rm), max(re_ - exp, -1100)) * (1 + 2.0**-50) + 5e-324
    return mant, rad + err, exp


def to_balls(values: Sequence[HP]) -> Balls:
    """Scaled certified balls containing the given exact or high-precision values."""
    n = len(values)
    cplx = any(isinstance(v, acb) and not v.imag.is_zero() for v in values)
    mid = np.zeros(n, dtype=np.complex128 if cplx else np.float64)
    rad = np.zeros(n)
    exp = np.zeros(n, dtype=np.int64)
    with working():
        for i, v in enumerate(values):
            if isinstance(v, acb):
                mr, rr, er = _scaled_arb(v.real)
                mi, ri, ei = _scaled_arb(v.imag)
                top = max(er if mr or rr else -(2**62), ei if mi or ri else -(2**62))
                top = 0 if top == -(2**62) else top
                a, ar = np.ldexp(mr, er - top), np.ldexp(rr, er - top)
                b, br = np.ldexp(mi, ei - top), np.ldexp(ri, ei - top)
                mid[i] = complex(a, b) if cplx else a
                rad[i] = (ar + br + (0.0 if cplx else abs(b))) * (1 + 2.0**-50) + 1e-323 * (ar + br > 0)
                exp[i] = top
            else:
                m, r, e = _scaled_arb(arb(v) if isinstance(v, fmpq) else v)
                mid[i], rad[i], exp[i] = m, r, e
    return Balls(mid, rad, exp)


def rationals_to_balls(r: Rationals) -> Balls:
    """Scaled balls containing exact rationals (exact when the value is a short dyadic)."""
    if r.den == 1 and r.num.dtype != object and len(r) and int(np.max(np.abs(r.num))) < 2**53:
        return Balls.from_floats(r.num.astype(np.float64))
    return to_balls([fmpq(int(v), r.den) for v in r.num.tolist()])


def hp_of(b: Balls, i: int) -> HP:
    """Ball i as an exact rational (radius 0, real) or an arb / acb ball."""
    m, r, e = b.mid[i], float(b.rad[i]), int(b.exp[i])
    with working():
        two = arb(2) ** e
        if b.is_complex and m.imag != 0:
            re_q = fmpq(*float(m.real).as_integer_ratio())
            im_q = fmpq(*float(m.imag).as_integer_ratio())
            z = acb(arb(re_q), arb(im_q))
            z = z * two
            if r:
                rr = arb(0, r) * two
                z = acb(z.real + rr, z.imag + rr)
            return z
        mr = float(m.real) if b.is_complex else float(m)
        v = arb(fmpq(*mr.as_integer_ratio())) * two
        if r == 0:
            p, q = mr.as_integer_ratio()
            return fmpq(p * 2**e, q) if e >= 0 and abs(e) < 4096 else (
                fmpq(p, q * 2**-e) if abs(e) < 4096 else v)
        return v + arb(0, r) * two


def hp_list(b: Balls) -> list[HP]:
    """All balls as high-precision scalars."""
    return [hp_of(b, i) for i in range(len(b))]


def rationals_to_hp(r: Rationals) -> list[fmpq]:
    """Exact rationals as flint rationals."""
    return [fmpq(int(v), r.den) for v in r.num.tolist()]


__all__ = ["hp_list", "hp_of", "rationals_to_balls", "rationals_to_hp", "to_balls"]
