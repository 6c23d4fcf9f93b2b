"""Extremes of multiplicative powers (direct, strong, mix(1, b), mix(0, b)): magnitude classes.

The eigenvalues are s-values (s = shift + factor x, the linearisation of the
rule) that multiply.  Operand eigenvalues of one |s| form a class; the search
runs over class compositions in non-increasing log|s| (or, when every product
has the sign opposite to the wanted end, non-decreasing), each carrying its
exact sign counts ((P + D)/2 positive, (P - D)/2 negative with P = prod (p + q)^c
and D = prod (p - q)^c) or, for complex spectra, its exact phase distribution.
Stopping is certified on the eigenvalues x themselves, after shifting back.

>>> from flint import fmpq
>>> from powerspec.algebra.kinds import DIRECT
>>> sp = best_first_mul(DIRECT, [([fmpq(2), fmpq(-1), fmpq(-1)], [1, 1, 1], 3)], 1, True, 27)
>>> [(float(v), m) for v, m in zip(sp.real_midpoints(), sp.mult.tolist())][-1:]   # 2^3 once
[(8.0, 1)]
"""

from __future__ import annotations

from fractions import Fraction

import numpy as np
from flint import arb, fmpq

from powerspec.algebra.compositions import MAX_STATES, Frontier, U, as_hp, count_pow, multinomial
from powerspec.algebra.kinds import DIRECT, Combination
from powerspec.algebra.powers import combine, power
from powerspec.errors import NotExactError, SizeLimitError
from powerspec.numbers.counts import BigCount
from powerspec.numbers.hp import HP, as_acb, is_real, real_part, working
from powerspec.spectra.spectrum import HPValues, Spectrum, exact_sort_key, mult_array

STUCK_STATES = 1_000
"""States after which a search whose wanted end cannot be separated from the rest may refuse."""


class _Class:
    """Operand eigenvalues sharing one exact |s|: magnitude, sign counts or phase spectrum."""

    __slots__ = ("mag", "log", "log_err", "pos", "neg", "phases")

    def __init__(self, mag: HP, pos: int, neg: int, phases: Spectrum | None):
        self.mag = mag
        with working():
            lg = (arb(mag) if isinstance(mag, fmpq) else mag).log()
        self.log = float(lg.mid())
        self.log_err = float(lg.rad()) + abs(self.log) * 4 * U
        self.pos, self.neg, self.phases = pos, neg, phases


def classes(vals: list[HP], mults: list[int], shift: Fraction, factor: Fraction):
    """(classes sorted by |s| descending, number of zero s-values) for one operand.

    A class holds the operand eigenvalues whose |s| balls overlap (x and -x,
    or values closer than the working precision can separate); its magnitude
    is the hull of theirs, so every value of a class composition lies in the
    class magnitude power times its sign or phase -- rigorous, and distinct
    true values that close would be one atom anyway.
    """
    sh, fa = as_hp(shift), as_hp(factor)
    zeros = 0
    real = all(is_real(v) for v in vals)
    items = []
    with working():
        for v, mm in zip(vals, mults, strict=True):
            s = sh + fa * (real_part(v) if real else v)
            if isinstance(s, fmpq) and s == 0:
                zeros += mm
                continue
            if as_acb(s).contains(0):
                raise NotExactError("an operand eigenvalue cannot be separated from zero at 160-bit "
                                    "precision; the extremes search needs its sign")
            mag = abs(s) if real else abs(as_acb(s))
            items.append((mag, s, mm))
        items.sort(key=lambda t: exact_sort_key(t[0]), reverse=True)
        groups: list[list] = []
        for mag, s, mm in items:
            g = groups[-1] if groups else None
            if g is not None and _overlaps(g[0], mag):
                g[0] = g[0] if (isinstance(g[0], fmpq) and g[0] == mag) else arb(g[0]).union(arb(mag))
            else:
                g = [mag, 0, 0, []]
                groups.append(g)
            if real:
                g[1 if s > 0 else 2] += mm
            else:
                g[3].append((as_acb(s) / mag, mm))
    classes = []
    for mag, pos, neg, ph in groups:
        phases = Spectrum.from_hp([p for p, _ in ph], [mm for _, mm in ph]) if ph else None
        classes.append(_Class(mag, pos, neg, phases))
    classes.sort(key=lambda c: -c.log)
    return classes, zeros


def _overlaps(a: HP, b: HP) -> bool:
    if isinstance(a, fmpq) and isinstance(b, fmpq):
        return a == b
    return arb(a).overlaps(arb(b))


def best_first_mul(comb: Combination, parts, m: int, up: bool, order,
                    max_states: int = MAX_STATES) -> Spectrum:
    """Atoms of a multiplicative combination with the m largest (up) or smallest s-values."""
    shift, factor = comb.to_s()
    ops = []
    zero_free = 1
    real = True
    any_zero = False
    sign = 1  # the common sign of every product, when each operand's s-values share one sign
    for vals, ms, k in parts:
        cls, zeros = classes(vals, ms, shift, factor)
        ops.append((cls, k))
        total = sum(ms)
        zero_free = zero_free * count_pow(total - zeros, k) if total - zeros else 0
        real = real and all(c.phases is None for c in cls)
        any_zero = any_zero or zeros > 0
        if sign and real and all(c.neg == 0 for c in cls):
            pass
        elif sign and real and all(c.pos == 0 for c in cls):
            sign = sign * (-1) ** (k % 2)
        else:
            sign = 0
    # s = shift + factor x: the wanted end of x is the wanted end of s when factor > 0
    s_up = up if factor > 0 else not up
    sigma = 1 if s_up else -1
    # every product has the one sign opposite to the wanted end (e.g. the bottom of a strong
    # power whose 1 + lambda are all positive): the wanted end is the smallest |s|, so the
    # search runs up from the smallest magnitudes instead of down from the largest
    ascending = real and not any_zero and sign == -sigma
    if ascending:
        ops = [(cls[::-1], k) for cls, k in ops]
    found_s: list[HP] = []
    found_m: list = []
    if any(len(cls) == 0 for cls, _ in ops):
        return finish_mul([], [], order, comb)  # every product has a zero factor
    offsets = np.cumsum([0] + [len(c) for c, _ in ops])
    # keys relative to the start (all copies in each operand's largest class): their float
    # error follows the few moved copies, not k
    with working():
        lg = [(arb(c.mag) if isinstance(c.mag, fmpq) else c.mag).log() for cls, _ in ops for c in cls]
        tops = np.repeat(offsets[:-1], np.diff(offsets))
        dl = [lg[i] - lg[t] for i, t in enumerate(tops)]
        dlog = np.array([float(d.mid()) for d in dl])
        if ascending:  # the heap pops the largest key: the smallest growth of log|s| first
            dlog = -dlog
        derr = np.array([float(d.rad()) + abs(float(d.mid())) * 4 * U for d in dl]) * 1.01
        base_log = arb(0)
        for j, (_cls, k) in enumerate(ops):
            base_log = base_log + lg[offsets[j]] * k

    def key(state) -> tuple[float, float]:
        c = np.array(state, dtype=float)
        c[offsets[:-1]] = 0.0
        return float(np.dot(c, dlog)), float(np.dot(c, derr)) * (1 + 8 * U) + 1e-300

    start = tuple(x for cls, k in ops for x in ([k] + [0] * (len(cls) - 1)))
    frontier = Frontier(start, key, offsets, max_states, "magnitude combinations")
    next_check = m
    stuck_run = 0
    while frontier:
        state = frontier.pop()
        for v, mm in _class_values(state, ops, offsets, real):
            found_s.append(v)
            found_m.append(mm)
        frontier.expand(state)
        if frontier and len(found_s) >= next_check:
            # every unexplored s has sigma * s <= bound: below exp(base_log + top key) in |s|
            # (descending), or of the unwanted sign and at least exp(base_log - top key) in |s|
            # (ascending)
            top = frontier.top()
            with working():
                if ascending:
                    bound = -(base_log + arb(fmpq(*float(-top).as_integer_ratio()))).exp()
                else:
                    bound = (base_log + arb(fmpq(*float(top).as_integer_ratio()))).exp()
            count, stuck = _certified_x(found_s, found_m, comb, sigma * bound, up)
            if count >= m:
                return finish_mul(found_s, found_m, None, comb)
            stuck_run = stuck_run + 1 if stuck else 0
            # ties at the bound clear within a check or two; a run of checks whose most extreme
            # ball keeps holding the bound means the precision, not the search, is the limit
            if stuck_run >= 6 and frontier.visited > STUCK_STATES:
                raise SizeLimitError(
                    "the wanted eigenvalues lie closer together than 160-bit precision separates "
                    "(many distinct values share one ball once shifted back); ask for the other "
                    "end, or for cdf/count, whose bounds hold at any resolution")
            next_check = len(found_s) + max(1, len(found_s) // 8)
    # every non-zero value is known; the rest of the spectrum sits at s = 0
    zero_count = order - zero_free if zero_free else order
    return finish_mul(found_s, found_m, zero_count, comb)


def _certified_x(vals: list[HP], mults: list, comb: Combination, s_bound: arb,
                 up: bool) -> tuple[int, bool]:
    """(number of wanted x-atoms certainly beyond every unexplored value, stuck).

    Unexplored s-values lie on the unwanted side of ``s_bound``; the check is made on the
    eigenvalues x = (s - shift) / factor after merging, because s-values that are distinct
    may overlap once shifted back (1 + tiny - 1), and a merged atom is complete only when
    no unexplored value can fall inside it.  ``stuck`` is True when the most extreme merged
    atom itself contains the bound's image: unexplored values may lie inside it.
    """
    if not vals:
        return 0, False
    sp = finish_mul(vals, mults, None, comb)
    back_shift, back_factor = comb.from_s()
    count = 0
    with working():
        xb = as_hp(back_shift) + as_hp(back_factor) * s_bound
        balls = sp.balls()
        for x in (balls[::-1] if up else balls):
            r = real_part(x)
            r = arb(r) if isinstance(r, fmpq) else r
            if not (r > xb if up else r < xb):
                return count, count == 0 and r.overlaps(xb)
            count += 1
    return count, False


def _class_values(state: tuple, ops, offsets, real: bool):
    """The s-values of one class composition with exact multiplicities."""
    mag: HP = fmpq(1)
    weight: object = 1
    diff: object = 1
    phase: Spectrum | None = None
    with working():
        for j, (cls, k) in enumerate(ops):
            counts = list(state[offsets[j]:offsets[j + 1]])
            weight = weight * multinomial(k, counts)
            diff = diff * multinomial(k, counts)
            for c, cl in zip(counts, cls, strict=True):
                if not c:
                    continue
                # exact while the power stays below 2^16384 (3^700 is 1110 bits), a ball beyond
                mag = mag * (cl.mag ** c if isinstance(cl.mag, fmpq) and _bits(cl.mag) * c <= 1 << 14
                             else (arb(cl.mag) if isinstance(cl.mag, fmpq) else cl.mag) ** c)
                if real:
                    weight = weight * count_pow(cl.pos + cl.neg, c)
                    d = cl.pos - cl.neg
                    diff = diff * (0 if d == 0 else (-1) ** c * count_pow(-d, c) if d < 0
                                   else count_pow(d, c))
                else:
                    ph = cl.phases if cl.phases is not None else _sign_phases(cl)
                    pw = power(ph, c, DIRECT, 4 * MAX_STATES, MAX_STATES)
                    phase = pw if phase is None else _mul_spectra(phase, pw)
        if real:
            out = []
            pos = _half(weight + diff)
            neg = _half(weight - diff)
            if _positive(pos):
                out.append((mag, pos))
            if _positive(neg):
                out.append((-mag, neg))
            return out
        return [(mag * z, mm * weight) for z, mm in zip(phase.balls(), phase.mult.tolist(),
                                                         strict=True)]


def _bits(x: fmpq) -> int:
    return max(int(x.p).bit_length(), int(x.q).bit_length())


def _sign_phases(cl: _Class) -> Spectrum:
    """The phases (+1 / -1 with their counts) of a real class inside a complex product."""
    pairs = [(v, m) for v, m in ((1.0, cl.pos), (-1.0, cl.neg)) if m]
    return Spectrum.from_values([v for v, _ in pairs], [m for _, m in pairs])


def _mul_spectra(a: Spectrum, b: Spectrum) -> Spectrum:
    return combine(DIRECT, a, b, 4 * MAX_STATES)


def _half(x):
    return x // 2 if isinstance(x, (int, BigCount)) else x


def _positive(x) -> bool:
    return x > 0 if isinstance(x, int) else x.sign() > 0


def finish_mul(found_s, found_m, zero_count, comb: Combination) -> Spectrum:
    """x = (s - shift) / factor for the found s-values (and the zero atom when known)."""
    shift, factor = comb.to_s()
    items, mults = list(found_s), list(found_m)
    if zero_count is not None and not (isinstance(zero_count, int) and zero_count == 0):
        items.append(fmpq(0))
        mults.append(zero_count)
    back_shift, back_factor = comb.from_s()
    bs, bf = as_hp(back_shift), as_hp(back_factor)
    with working():
        xs = [bs + bf * s for s in items]
    return Spectrum(HPValues(xs), mult_array(mults))


__all__ = ["STUCK_STATES", "best_first_mul", "classes", "finish_mul"]
