"""Extreme eigenvalues of products too large to enumerate: certified best-first search.

For an associative product the eigenvalues are indexed by compositions (how
many copies take each operand eigenvalue); see :mod:`powerspec.algebra.powers`.
The largest ones are found by a best-first search over compositions, and
every value is computed at high precision (Arb balls at 160 bits, exact
rationals where the operands are), so the top of ``cart(C(9)^(10^9))`` keeps
its digits *and* its distances to the next eigenvalues:

* **additive rules** (Cartesian): moving one copy from an eigenvalue to the
  next smaller one never increases the real part, so the search pops
  compositions in non-increasing real part;
* **multiplicative rules** (direct, strong, ``mix(1, b)``, ``mix(0, b)``): the
  search runs over *magnitude classes* (operand eigenvalues of identical
  |s| in the linearisation s) in non-increasing log|s|; each class
  composition carries its exact sign counts ((P + D)/2 positive, (P - D)/2
  negative with P = prod (p + q)^c and D = prod (p - q)^c, no enumeration of
  sign patterns) or, for complex spectra, its exact phase distribution.

Stopping is rigorous: every unexplored composition is bounded by the key of
the heap top plus a bound on the float error of the keys, and the search
stops once m distinct certified atoms lie strictly beyond that bound.
Multiplicities are exact integers, kept factored (e.g. ``2^999999999``) when
astronomically large.
"""

from __future__ import annotations

import heapq
import math
from fractions import Fraction

import numpy as np
from flint import arb, fmpq

from powerspec.algebra.engine import Engine, affine
from powerspec.algebra.kinds import DIRECT, MATRIX_RULES, Combination
from powerspec.algebra.powers import combine, power
from powerspec.algebra.tree import Leaf, Node, Product
from powerspec.errors import InputError, NotExactError, SizeLimitError
from powerspec.numbers.counts import BigCount, power_product
from powerspec.numbers.hp import HP, as_acb, is_real, real_part, working
from powerspec.spectra.spectrum import HPValues, Spectrum, mult_array

MAX_STATES = 200_000
"""Most compositions one best-first search may visit."""

MAX_MULT_BITS = 1 << 23
"""Largest multiplicity (in bits) computed by expanding a multinomial with two large parts."""

_U = 2.0**-53


def extremes(engine: Engine, node: Node, kind: str, m: int, bottom: bool = False):
    """The m largest (smallest with ``bottom``) distinct eigenvalues, exact multiplicities.

    Returns ``(spectrum, method)``: a :class:`Spectrum` holding just those
    atoms (its ``order`` is the sum of their multiplicities), ordered ascending,
    and a one-line description of how they were obtained.

    >>> from powerspec.algebra.grammar import parse
    >>> sp, how = extremes(Engine(), parse("cart(K(2)^1000000000)"), "adjacency", 2)
    >>> sp.atoms()
    [(999999998.0, 1000000000), (1000000000.0, 1)]
    """
    if not isinstance(m, int) or m < 1:
        raise InputError(f"ask for at least one eigenvalue (m >= 1), got {m!r}")
    if isinstance(node, Leaf) or engine.fits(node, kind):
        return select(engine.spectrum(node, kind), m, bottom), "exact enumeration of the full spectrum"
    try:
        comb, use, post = engine.linear_form(node, kind)
    except NotExactError:
        # e.g. the Laplacian of a product with one irregular factor: enumerate if the engine can
        return select(engine.spectrum(node, kind), m, bottom), "exact enumeration of the full spectrum"
    if comb.mode not in ("add", "mul"):
        try:
            sp = engine.spectrum(node, kind)
        except SizeLimitError as exc:
            raise SizeLimitError(
                f"{node.label()}: the extremes of a non-associative mix need the full spectrum, which "
                f"is too large ({exc}); ask for a smaller power") from exc
        return select(sp, m, bottom), "exact enumeration of the full spectrum"
    parts = _flat_parts(engine, node, use, comb)
    shift, factor = post
    up = (factor > 0) != bottom if not isinstance(factor, arb) else (factor > 0) != bottom
    if comb.mode == "add":
        found = _best_first_add(parts, m, up)
        how = "best-first search over compositions (additive rule), values at 160-bit precision"
    else:
        found = _best_first_mul(comb, parts, m, up, node.order)
        how = ("best-first search over magnitude classes with exact sign or phase counts, values "
               "at 160-bit precision")
    if not (shift == 0 and factor == 1):
        found = _affine_hp(found, shift, factor)
    return select(found, m, bottom), how


def _flat_parts(engine: Engine, node: Product, use: str, comb: Combination):
    """[(atoms at high precision, multiplicities, copies)]; nested same-rule products flattened."""
    out = []

    def collect(n: Product, mult: int) -> None:
        for child, k in n.operands:
            if isinstance(child, Product) and MATRIX_RULES[use](child.comb) == comb:
                collect(child, mult * k)
            else:
                try:
                    sp = engine.spectrum(child, use)
                except SizeLimitError as exc:
                    raise SizeLimitError(
                        f"the extremes search needs the spectrum of each operand; {child.label()} is "
                        f"too large ({exc})") from exc
                vals = list(sp.hp) if sp.hp is not None else sp.balls()
                out.append((vals, [int(x) for x in sp.mult.tolist()], mult * k))

    collect(node, 1)
    return out


def _affine_hp(sp: Spectrum, shift, factor) -> Spectrum:
    if sp.domain != "hp":
        return affine(sp, shift, factor)
    sh, fa = _hp(shift), _hp(factor)
    with working():
        items = [sh + fa * v for v in sp.values.items]
    return Spectrum(HPValues(items), sp.mult.copy(), order=sp.order)


def _hp(x) -> HP:
    if isinstance(x, Fraction):
        return fmpq(x.numerator, x.denominator)
    return x


# ------------------------------------------------------------------ selection
def select(sp: Spectrum, m: int, bottom: bool) -> Spectrum:
    """The m largest (or smallest) atoms of sp by real part, then imaginary part.

    Atoms whose real part may tie with the last one selected are included too,
    so a complex-conjugate pair is never split.
    """
    n = len(sp)
    re = sp.real_midpoints()
    rad = sp.radii()
    cplx = not sp.is_real

    def tie(i: int, j: int) -> bool:
        return cplx and abs(re[i] - re[j]) <= rad[i] + rad[j]

    if not bottom:
        lo = max(0, n - m)
        while lo > 0 and tie(lo - 1, lo):
            lo -= 1
        idx = np.arange(lo, n)
    else:
        hi = min(m, n)
        while hi < n and tie(hi, hi - 1):
            hi += 1
        idx = np.arange(0, hi)
    return sp.take(idx)


# --------------------------------------------------------------- additive rule
def _count_pow(base: int, e: int):
    return power_product([(base, e)]) if e else 1


def _multinomial(k: int, counts: list[int]):
    """k! / prod c_i! (sum c_i = k), exact: the product of C(left, c) over all but the largest part.

    Refused (SizeLimitError) when it would have more than MAX_MULT_BITS bits
    -- several parts of a huge k, which only a very deep search reaches.
    """
    big = counts.index(max(counts))
    bits = (math.lgamma(k + 1) - math.lgamma(counts[big] + 1)
            - sum(math.lgamma(c + 1) for i, c in enumerate(counts) if i != big)) / math.log(2)
    if bits > MAX_MULT_BITS:
        raise SizeLimitError("a multiplicity would be a multinomial of more than 2^23 bits "
                             "(several large parts); ask for fewer eigenvalues")
    out, left = 1, k
    for i, c in enumerate(counts):
        if i != big and c:
            out *= math.comb(left, c)
            left -= c
    return out


def _state_mult(state: tuple, parts, offsets) -> object:
    total: object = 1
    for j, (_, ms, k) in enumerate(parts):
        counts = list(state[offsets[j]:offsets[j + 1]])
        total = total * _multinomial(k, counts)
        for c, mm in zip(counts, ms, strict=True):
            if c and mm != 1:
                total = total * _count_pow(mm, c)
    return total


def _start(parts) -> tuple:
    s: list[int] = []
    for vals, _, k in parts:
        s.extend([k] + [0] * (len(vals) - 1))
    return tuple(s)


def _successors(state: tuple, offsets):
    for j in range(len(offsets) - 1):
        for p in range(offsets[j], offsets[j + 1] - 1):
            if state[p]:
                nxt = list(state)
                nxt[p] -= 1
                nxt[p + 1] += 1
                yield tuple(nxt)


def _best_first_add(parts, m: int, up: bool) -> Spectrum:
    """Atoms of the additive combination with the m largest (up) or smallest real parts."""
    sign = 1 if up else -1
    ordered = []
    with working():
        for vals, ms, k in parts:
            keyed = sorted(zip(vals, ms, strict=True),
                           key=lambda t: -sign * float(as_acb(t[0]).real.mid()))
            ordered.append(([v for v, _ in keyed], [mm for _, mm in keyed], k))
    offsets = np.cumsum([0] + [len(v) for v, _, _ in ordered])
    flat = [v for vals, _, _ in ordered for v in vals]
    with working():
        re = np.array([sign * float(as_acb(v).real.mid()) for v in flat])
        rad = np.array([float(as_acb(v).real.rad()) + abs(float(as_acb(v).real.mid())) * _U
                        for v in flat])
    ks = [k for _, _, k in ordered]
    eps = sum(k * (float(np.max(np.abs(re[offsets[j]:offsets[j + 1]]))) * 8 * _U
                   + float(np.max(rad[offsets[j]:offsets[j + 1]])))
              for j, k in enumerate(ks)) * 1.01 + 1e-300

    def key(state) -> float:
        return float(np.dot(np.array(state, dtype=float), re))

    start = _start(ordered)
    heap = [(-key(start), start)]
    seen = {start}
    found_v: list[HP] = []
    found_m: list = []
    visited = 0
    while heap:
        neg, state = heapq.heappop(heap)
        visited += 1
        if visited > MAX_STATES:
            raise SizeLimitError(f"the extremes search visited more than {MAX_STATES} compositions; "
                                 "ask for fewer eigenvalues")
        with working():
            val = fmpq(0)
            for c, v in zip(state, flat, strict=True):
                if c:
                    val = val + v * c
        found_v.append(val)
        found_m.append(_state_mult(state, ordered, offsets))
        for nxt in _successors(state, offsets):
            if nxt not in seen:
                seen.add(nxt)
                heapq.heappush(heap, (-key(nxt), nxt))
        if len(found_v) >= m and (not heap or _enough(found_v, found_m, m, sign,
                                                         -heap[0][0] + eps)):
            break
    return Spectrum(HPValues(found_v), mult_array(found_m))


def _enough(vals: list[HP], mults: list, m: int, sign: int, bound: float) -> bool:
    """True when m merged atoms have sign * (real part) certainly above ``bound``."""
    sp = Spectrum(HPValues(list(vals)), mult_array(mults))
    with working():
        b = arb(fmpq(*float(bound).as_integer_ratio()))
        above = 0
        for x in sp.values.items:
            r = real_part(x)
            r = arb(r) if isinstance(r, fmpq) else r
            if (r * sign) > b:
                above += 1
        return above >= m


# ---------------------------------------------------------- multiplicative rule
class _Class:
    """Operand eigenvalues sharing one exact |s|: magnitude, sign counts or phase spectrum."""

    __slots__ = ("mag", "log", "log_err", "pos", "neg", "phases")

    def __init__(self, mag: HP, pos: int, neg: int, phases: Spectrum | None):
        self.mag = mag
        with working():
            lg = (arb(mag) if isinstance(mag, fmpq) else mag).log()
        self.log = float(lg.mid())
        self.log_err = float(lg.rad()) + abs(self.log) * 4 * _U
        self.pos, self.neg, self.phases = pos, neg, phases


def _classes(vals: list[HP], mults: list[int], shift: Fraction, factor: Fraction):
    """(classes sorted by |s| descending, number of zero s-values) for one operand.

    A class holds the operand eigenvalues whose |s| balls overlap (x and -x,
    or values closer than the working precision can separate); its magnitude
    is the hull of theirs, so every value of a class composition lies in the
    class magnitude power times its sign or phase -- rigorous, and distinct
    true values that close would be one atom anyway.
    """
    sh, fa = _hp(shift), _hp(factor)
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
        items.sort(key=lambda t: -float(arb(t[0]).mid()))
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


def _best_first_mul(comb: Combination, parts, m: int, up: bool, order) -> Spectrum:
    """Atoms of a multiplicative combination with the m largest (up) or smallest s-values."""
    shift, factor = comb.to_s()
    ops = []
    zero_free = 1
    real = True
    for vals, ms, k in parts:
        cls, zeros = _classes(vals, ms, shift, factor)
        ops.append((cls, k))
        total = sum(ms)
        zero_free = zero_free * _count_pow(total - zeros, k) if total - zeros else 0
        real = real and all(c.phases is None for c in cls)
    # s = shift + factor x: the wanted end of x is the wanted end of s when factor > 0
    s_up = up if factor > 0 else not up
    sigma = 1 if s_up else -1
    offsets = np.cumsum([0] + [len(c) for c, _ in ops])
    logs = np.array([c.log for cls, _ in ops for c in cls])
    eps = sum(k * max((c.log_err for c in cls), default=0.0) for cls, k in ops) * 1.01 + 1e-12
    found_s: list[HP] = []
    found_m: list = []
    if any(len(cls) == 0 for cls, _ in ops):
        return _finish_mul([], [], order, comb)  # every product has a zero factor
    start = tuple(x for cls, k in ops for x in ([k] + [0] * (len(cls) - 1)))

    def key(state) -> float:
        return float(np.dot(np.array(state, dtype=float), logs))

    heap = [(-key(start), start)]
    seen = {start}
    visited = 0
    while heap:
        neg, state = heapq.heappop(heap)
        visited += 1
        if visited > MAX_STATES:
            raise SizeLimitError(f"the extremes search visited more than {MAX_STATES} magnitude "
                                 "combinations; ask for fewer eigenvalues")
        for v, mm in _class_values(state, ops, offsets, real):
            found_s.append(v)
            found_m.append(mm)
        for nxt in _successors(state, offsets):
            if nxt not in seen:
                seen.add(nxt)
                heapq.heappush(heap, (-key(nxt), nxt))
        if heap and _enough_mul(found_s, found_m, m, sigma, -heap[0][0] + eps):
            return _finish_mul(found_s, found_m, None, comb)
    # every non-zero value is known; the rest of the spectrum sits at s = 0
    zero_count = order - zero_free if zero_free else order
    return _finish_mul(found_s, found_m, zero_count, comb)


def _enough_mul(vals: list[HP], mults: list, m: int, sigma: int, log_bound: float) -> bool:
    """True when m merged s-atoms have sigma * Re(s) certainly above exp(log_bound)."""
    if len(vals) < m:
        return False
    sp = Spectrum(HPValues(list(vals)), mult_array(mults))
    with working():
        b = arb(fmpq(*float(log_bound).as_integer_ratio())).exp()
        above = 0
        for x in sp.values.items:
            r = real_part(x)
            r = arb(r) if isinstance(r, fmpq) else r
            if r * sigma > b:
                above += 1
        return above >= m


def _class_values(state: tuple, ops, offsets, real: bool):
    """The s-values of one class composition with exact multiplicities."""
    mag: HP = fmpq(1)
    weight: object = 1
    diff: object = 1
    phase: Spectrum | None = None
    with working():
        for j, (cls, k) in enumerate(ops):
            counts = list(state[offsets[j]:offsets[j + 1]])
            weight = weight * _multinomial(k, counts)
            diff = diff * _multinomial(k, counts)
            for c, cl in zip(counts, cls, strict=True):
                if not c:
                    continue
                mag = mag * (cl.mag ** c if isinstance(cl.mag, fmpq) and c * 64 < 1 << 14
                             else (arb(cl.mag) if isinstance(cl.mag, fmpq) else cl.mag) ** c)
                if real:
                    weight = weight * _count_pow(cl.pos + cl.neg, c)
                    d = cl.pos - cl.neg
                    diff = diff * (0 if d == 0 else (-1) ** c * _count_pow(-d, c) if d < 0
                                   else _count_pow(d, c))
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


def _finish_mul(found_s, found_m, zero_count, comb: Combination) -> Spectrum:
    """x = (s - shift) / factor for the found s-values (and the zero atom when known)."""
    shift, factor = comb.to_s()
    items, mults = list(found_s), list(found_m)
    if zero_count is not None and not (isinstance(zero_count, int) and zero_count == 0):
        items.append(fmpq(0))
        mults.append(zero_count)
    back_shift, back_factor = comb.from_s()
    bs, bf = _hp(back_shift), _hp(back_factor)
    with working():
        xs = [bs + bf * s for s in items]
    return Spectrum(HPValues(xs), mult_array(mults))


__all__ = ["MAX_MULT_BITS", "MAX_STATES", "extremes", "select"]
