"""Sorting and merging eigenvalue atoms, one rule for every number domain.

Two atoms are one eigenvalue only when they are provably able to be: exact
values merge when equal; balls merge when they *overlap* (their union then
becomes one atom whose ball is the hull, so every returned ball contains
exactly as many eigenvalues as its multiplicity says).  Balls that do not
overlap are never merged, however close they are relative to their size.

For real balls the components of the union of intervals are found by one
sweep in order of *lower endpoints* with a running maximum of upper
endpoints (sorting by midpoints is not enough when radii differ: [0 +- 3],
[5 +- 0.5], [5.1 +- 2.5] -- the first and the last overlap, the middle one
breaks a midpoint-ordered sweep).  The resulting atoms are disjoint, so
their order by lower endpoint is their order by midpoint.  Complex balls are
merged by overlapping bounding boxes (a superset of overlapping disks: never
splits a cluster, may join balls whose disks only nearly touch -- the hull
still contains them).

>>> from powerspec.numbers.balls import Balls
>>> vals, mult = merge_balls(Balls.from_floats([1.0, 1.0, 2.0], [0, 0, 0]), [1, 2, 3])
>>> vals.to_floats().tolist(), mult.tolist()
([1.0, 2.0], [3, 3])
"""

from __future__ import annotations

import functools

import numpy as np
from flint import arb, fmpq

from powerspec.numbers.balls import Balls, _up
from powerspec.numbers.convert import hp_of
from powerspec.numbers.rationals import Rationals

FRAME_SPAN = 1800
"""Largest spread of binary exponents merged in one common floating-point frame."""


def group_sum(mult: np.ndarray, starts: np.ndarray) -> np.ndarray:
    """Sums of consecutive groups beginning at ``starts`` (exact for int64 and Python ints)."""
    if mult.size == 0:
        return mult
    return np.add.reduceat(mult, starts)


# ------------------------------------------------------------------ rationals
def merge_rationals(vals: Rationals, mult: np.ndarray) -> tuple[Rationals, np.ndarray]:
    """Exact values: sort ascending, equal values merged with summed multiplicities."""
    if len(vals) == 0:
        return vals, mult
    num = vals.num
    if num.size > 1 and bool((num[1:] > num[:-1]).all()):
        # already strictly ascending (distinct): nothing to sort or merge
        return Rationals(num.copy(), vals.den).reduced(), mult.copy()
    if num.size > 1 and bool((num[1:] < num[:-1]).all()):
        # strictly descending (e.g. a Cartesian power by compositions): reversed, nothing to merge
        return Rationals(num[::-1].copy(), vals.den).reduced(), mult[::-1].copy()
    o = vals.sort_order()
    num = num[o]
    m = mult[o]
    if num.dtype == object:
        brk = np.array([num[i] != num[i - 1] for i in range(1, num.size)], dtype=bool)
    else:
        brk = num[1:] != num[:-1]
    starts = np.flatnonzero(np.r_[True, brk])
    return Rationals(num[starts], vals.den).reduced(), group_sum(m, starts)


# ---------------------------------------------------------------------- balls
def order_key(b: Balls) -> np.ndarray:
    """Indices sorting real balls ascending by midpoint value (exact total order)."""
    m = b.mid.real if b.is_complex else b.mid
    frac, e2 = np.frexp(m)
    mag_e = np.where(m == 0, 0, b.exp + e2)
    sign = np.sign(m)
    # positives: by (exponent, mantissa); negatives: reversed; zeros in between
    return np.lexsort((frac, sign * mag_e, sign))


def _frame(b: Balls, idx: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray] | None:
    """(lo, hi, mid) of balls idx as floats in one common frame 2**E, rounded outward."""
    e = b.exp[idx]
    top = int(e.max()) if e.size else 0
    if e.size and top - int(e.min()) > FRAME_SPAN:
        return None
    shift = np.maximum(e - top + 900, -1100)  # values up to 2**900 keep headroom for sums
    m = b.mid[idx].real if b.is_complex else b.mid[idx]
    r = b.rad[idx]
    with np.errstate(under="ignore"):
        lo = np.ldexp(m - r, shift)
        hi = np.ldexp(m + r, shift)
    # m - r and m + r were rounded to nearest and the scaling may underflow: step outward.
    inexact = r > 0
    lo = np.where(inexact, np.nextafter(np.nextafter(lo, -np.inf), -np.inf), lo)
    hi = np.where(inexact, np.nextafter(np.nextafter(hi, np.inf), np.inf), hi)
    return lo, hi, top - 900


def merge_balls(b: Balls, mult) -> tuple[Balls, np.ndarray]:
    """Sort ascending (real part, then imaginary part) and merge overlapping balls (hulls)."""
    mult = np.asarray(mult) if not isinstance(mult, np.ndarray) else mult
    if len(b) == 0:
        return b, mult
    if b.is_complex:
        return _merge_complex(b, mult)
    o = order_key(b)
    b, mult = b.take(o), mult[o]
    fr = _frame(b, np.arange(len(b)))
    if fr is None:
        o, starts = _starts_exact(b)
    else:
        lo, hi, _ = fr
        # sweep by lower endpoints (stable: equal ones keep midpoint order), see the docstring
        o = np.argsort(lo, kind="stable")
        run = np.maximum.accumulate(hi[o])
        starts = np.flatnonzero(np.r_[True, lo[o][1:] > run[:-1]])
    b, mult = b.take(o), mult[o]
    out, m = _hulls(b, starts), group_sum(mult, starts)
    # a hull is a ball rounded outward: it can reach the next group across a gap of an ulp;
    # merge again until no two results overlap
    if len(out) < len(b) and _neighbours_overlap(out):
        return merge_balls(out, m)
    return out, m


def _neighbours_overlap(b: Balls) -> bool:
    """True when two consecutive balls of a sorted real list overlap (outward-rounded test)."""
    fr = _frame(b, np.arange(len(b)))
    if fr is None:
        ends = [_lo_hi(hp_of(b, i)) for i in range(len(b))]
        return any(not (ends[i + 1][0] > ends[i][1]) for i in range(len(b) - 1))
    lo, hi, _ = fr
    o = np.argsort(lo, kind="stable")
    return bool(np.any(lo[o][1:] <= np.maximum.accumulate(hi[o])[:-1]))


def _starts_exact(b: Balls) -> tuple[np.ndarray, np.ndarray]:
    """(order by lower endpoint, cluster starts in it) by exact comparisons (for spectra
    spanning more than FRAME_SPAN octaves)."""
    ends = [_lo_hi(hp_of(b, i)) for i in range(len(b))]
    order = sorted(range(len(b)), key=functools.cmp_to_key(
        lambda i, j: -1 if ends[i][0] < ends[j][0] else 1 if ends[i][0] > ends[j][0] else i - j))
    starts = [0]
    run_hi = None
    for pos, i in enumerate(order):
        lo_i, hi_i = ends[i]
        if run_hi is not None and lo_i > run_hi:
            starts.append(pos)
        run_hi = hi_i if run_hi is None or hi_i > run_hi else run_hi
    return np.array(order, dtype=np.int64), np.array(starts, dtype=np.int64)


def _lo_hi(x):
    if isinstance(x, fmpq):
        a = arb(x)
        return a, a
    return x.lower(), x.upper()


def _hulls(b: Balls, starts: np.ndarray) -> Balls:
    """One ball per group: the member itself for singletons, else the hull of the group."""
    n = len(b)
    ends = np.r_[starts[1:], n]
    single = ends - starts == 1
    if np.all(single):
        return b.take(starts)
    out = b.take(starts)
    mid, rad, exp = out.mid.copy(), out.rad.copy(), out.exp.copy()
    for gi in np.flatnonzero(~single):
        s, t = int(starts[gi]), int(ends[gi])
        idx = np.arange(s, t)
        if np.all(b.rad[idx] == 0) and np.all(b.mid[idx] == b.mid[s]) and np.all(b.exp[idx] == b.exp[s]):
            continue  # identical exact values
        fr = _frame(b, idx)
        if fr is None:
            raise ValueError("cannot form the hull of balls spanning more than 1800 octaves")
        lo, hi, base = fr
        a, z = float(lo.min()), float(hi.max())
        c = 0.5 * a + 0.5 * z
        r = _up(np.array([max(z - c, c - a)]))[0]
        h = Balls(np.array([c]), np.array([r]), np.array([base], dtype=np.int64))
        mid[gi], rad[gi], exp[gi] = h.mid[0], h.rad[0], h.exp[0]
    return Balls(mid, rad, exp, normalise=False)


def _merge_complex(b: Balls, mult: np.ndarray) -> tuple[Balls, np.ndarray]:
    """Bounding-box components by alternating real / imaginary sweeps until stable."""
    e = b.exp
    if int(e.max()) - int(e.min()) > FRAME_SPAN:
        raise ValueError("complex spectra spanning more than 1800 octaves are not merged")
    top = int(e.max())
    shift = np.maximum(e - top + 900, -1100)
    with np.errstate(under="ignore"):
        re = np.ldexp(b.mid.real, shift)
        im = np.ldexp(b.mid.imag, shift)
        r = np.ldexp(b.rad, shift)
    r = np.where(b.rad > 0, _up(r) + 1e-300, 0.0)
    label = np.zeros(len(b), dtype=np.int64)
    for _ in range(64):
        new = _components(label, re, r) if _ % 2 == 0 else _components(label, im, r)
        if np.array_equal(new, label) and _ > 0:
            break
        label = new
    order = np.lexsort((im, re))
    # group by label, groups ordered by their smallest (re, im) member
    first = {}
    for i in order.tolist():
        first.setdefault(int(label[i]), i)
    groups = sorted(first, key=lambda g: (re[first[g]], im[first[g]]))
    mids, rads, exps, mults = [], [], [], []
    for g in groups:
        idx = np.flatnonzero(label == g)
        if idx.size == 1 or (np.all(b.rad[idx] == 0) and np.all(b.mid[idx] == b.mid[idx[0]])
                             and np.all(e[idx] == e[idx[0]])):
            i = int(idx[0])
            mids.append(b.mid[i]), rads.append(b.rad[i]), exps.append(e[i])
        else:
            lo_r, hi_r = float(np.min(re[idx] - r[idx])), float(np.max(re[idx] + r[idx]))
            lo_i, hi_i = float(np.min(im[idx] - r[idx])), float(np.max(im[idx] + r[idx]))
            c = complex(0.5 * lo_r + 0.5 * hi_r, 0.5 * lo_i + 0.5 * hi_i)
            rr = float(_up(np.array([abs(hi_r - lo_r) * 0.5 + abs(hi_i - lo_i) * 0.5]))[0])
            h = Balls(np.array([c]), np.array([rr]), np.array([top - 900], dtype=np.int64))
            mids.append(h.mid[0]), rads.append(h.rad[0]), exps.append(h.exp[0])
        mults.append(group_sum(mult[idx], np.array([0]))[0])
    out = Balls(np.array(mids, dtype=np.complex128), np.array(rads), np.array(exps, dtype=np.int64),
                normalise=False)
    m = np.empty(len(mults), dtype=mult.dtype)
    m[:] = mults
    return out.real_if_possible(), m


def _components(label: np.ndarray, key: np.ndarray, r: np.ndarray) -> np.ndarray:
    """Refine labels: within each label, split into components of [key - r, key + r] overlaps."""
    o = np.lexsort((key - r, label))  # by lower endpoint within each label (see merge_balls)
    lo, hi = key[o] - r[o], key[o] + r[o]
    lab = label[o]
    new = np.empty_like(label)
    cur = 0
    run = -np.inf
    prev_lab = None
    for j in range(o.size):
        if prev_lab is None or lab[j] != prev_lab or lo[j] > run:
            cur += 1
            run = hi[j]
        else:
            run = max(run, hi[j])
        prev_lab = lab[j]
        new[o[j]] = cur
    return new


__all__ = ["FRAME_SPAN", "group_sum", "merge_balls", "merge_rationals", "order_key"]
