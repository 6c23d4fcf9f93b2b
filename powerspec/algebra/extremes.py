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
from powerspec.factors.factor import ENDS_MIN
from powerspec.numbers.counts import BigCount, power_product
from powerspec.numbers.hp import HP, as_acb, is_real, real_part, working
from powerspec.spectra.spectrum import HPValues, Spectrum, exact_sort_key, mult_array

MAX_STATES = 200_000
"""Most compositions one best-first search may visit."""

SMALL_SEARCH_STATES = 2_000
"""States the search may visit (plus 50 per wanted atom) for a product small enough to enumerate."""

STUCK_STATES = 1_000
"""States after which a search whose wanted end cannot be separated from the rest may refuse."""

MAX_MULT_BITS = 1 << 23
"""Largest multiplicity (in bits) computed by expanding a multinomial with two large parts."""

_U = 2.0**-53


def extremes(engine: Engine, node: Node, kind: str, m: int, bottom: bool = False,
             max_states: int = MAX_STATES):
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
    if isinstance(node, Leaf):
        return select(engine.spectrum(node, kind), m, bottom), "exact enumeration of the full spectrum"
    enumerate_ = "exact enumeration of the full spectrum"
    if engine.fits(node, kind):
        # Even where the full spectrum is small, its values went through double-ball
        # arithmetic: the gap between the top two atoms of cart(K(1, 3)^1000) keeps only 13
        # digits.  The search computes the few wanted values at 160 bits; a short, bounded
        # try, then the enumeration.
        try:
            return _search(engine, node, kind, m, bottom,
                           min(max_states, SMALL_SEARCH_STATES + 50 * m))
        except (NotExactError, SizeLimitError):
            return select(engine.spectrum(node, kind), m, bottom), enumerate_
    try:
        return _search(engine, node, kind, m, bottom, max_states)
    except NotExactError:
        # e.g. the Laplacian of a product with one irregular factor: enumerate if the engine can
        return select(engine.spectrum(node, kind), m, bottom), enumerate_
    except _NotAssociative:
        try:
            sp = engine.spectrum(node, kind)
        except SizeLimitError as exc:
            raise SizeLimitError(
                f"{node.label()}: the extremes of a non-associative mix need the full spectrum, which "
                f"is too large ({exc}); ask for a smaller power") from exc
        return select(sp, m, bottom), enumerate_


class _NotAssociative(NotExactError):
    """The node's rule is a non-associative mix: no composition search (enumerate instead)."""


def _search(engine: Engine, node: Node, kind: str, m: int, bottom: bool, max_states: int):
    """(atoms, method) from the best-first search, or NotExactError where it does not apply."""
    comb, use, post = engine.linear_form(node, kind)
    if comb.mode not in ("add", "mul"):
        raise _NotAssociative(node.label())
    parts = _flat_parts(engine, node, use, comb, m)
    shift, factor = post
    up = (factor > 0) != bottom if not isinstance(factor, arb) else (factor > 0) != bottom
    if comb.mode == "add":
        found = _best_first_add(parts, m, up, max_states)
        how = "best-first search over compositions (additive rule), values at 160-bit precision"
    else:
        found = _best_first_mul(comb, parts, m, up, node.order, max_states)
        how = ("best-first search over magnitude classes with exact sign or phase counts, values "
               "at 160-bit precision")
    if not (shift == 0 and factor == 1):
        found = _affine_hp(found, shift, factor)
    return select(found, m, bottom), how


def search_size(engine: Engine, node: Node, kind: str) -> int | None:
    """Number of compositions the extremes search could visit in all (over operand atoms for
    additive rules, over magnitude classes for multiplicative ones), or None when it does not
    apply.  Cheap: operand spectra only."""
    if isinstance(node, Leaf):
        return None
    try:
        comb, use, _ = engine.linear_form(node, kind)
        if comb.mode not in ("add", "mul"):
            return None
        parts = _flat_parts(engine, node, use, comb)
        shift, factor = comb.to_s()
        total = 1
        for vals, ms, k in parts:
            r = len(vals) if comb.mode == "add" else len(_classes(vals, ms, shift, factor)[0])
            total *= math.comb(k + r - 1, r - 1) if r > 1 else 1
            if total > 10**18:
                return total
        return total
    except (NotExactError, SizeLimitError):
        return None


def _flat_parts(engine: Engine, node: Product, use: str, comb: Combination,
                ends_m: int | None = None):
    """[(atoms at high precision, multiplicities, copies)]; nested same-rule products flattened."""
    out = []

    def collect(n: Product, mult: int) -> None:
        for child, k in n.operands:
            if isinstance(child, Product) and MATRIX_RULES[use](child.comb) == comb:
                collect(child, mult * k)
            elif (comb.mode == "add" and ends_m is not None and isinstance(child, Leaf)
                  and child.factor.n > ENDS_MIN
                  and (vals := child.factor.ends(use, ends_m, engine.direction)) is not None):
                # Cartesian-type rule: a composition with a copy on an operand's (m+1)-th
                # largest value is beaten by m distinct ones, so the ends suffice
                sp = Spectrum.from_hp([v for v, _ in vals], [mm for _, mm in vals])
                out.append((list(sp.hp) if sp.hp is not None else sp.balls(),
                            [int(x) for x in sp.mult.tolist()], mult * k))
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


def _best_first_add(parts, m: int, up: bool, max_states: int = MAX_STATES) -> Spectrum:
    """Atoms of the additive combination with the m largest (up) or smallest real parts.

    Keys are taken relative to the start state (all copies on each operand's top
    eigenvalue): key = sum over moved copies of (lambda_i - lambda_top), so their float
    error follows the few moved copies, not k.  Each pushed state's key error is
    bounded and the running maximum ``eps`` covers every heap state; since moving a
    copy down never raises the value, every unexplored state lies below
    (heap top key + eps) relative to the start value.
    """
    sign = 1 if up else -1
    ordered = []
    with working():
        for vals, ms, k in parts:
            keyed = sorted(zip(vals, ms, strict=True), key=lambda t: exact_sort_key(t[0]),
                           reverse=up)  # exact order: moving a copy down never raises the value
            ordered.append(([v for v, _ in keyed], [mm for _, mm in keyed], k))
    offsets = np.cumsum([0] + [len(v) for v, _, _ in ordered])
    flat = [v for vals, _, _ in ordered for v in vals]
    tops = np.repeat(offsets[:-1], np.diff(offsets))
    with working():
        delta_hp = [as_acb(flat[i]).real - as_acb(flat[t]).real for i, t in enumerate(tops)]
        delta = np.array([sign * float(d.mid()) for d in delta_hp])
        derr = np.array([float(d.rad()) + abs(float(d.mid())) * 4 * _U for d in delta_hp]) * 1.01
        base = fmpq(0)
        for vals, _, k in ordered:
            base = base + as_acb(vals[0]).real * k

    def key(state) -> tuple[float, float]:
        c = np.array(state, dtype=float)
        c[offsets[:-1]] = 0.0  # the top atom's copies are in the base value
        return float(np.dot(c, delta)), float(np.dot(c, derr)) * (1 + 8 * _U) + 1e-300

    start = _start(ordered)
    heap = [(-0.0, start)]
    seen = {start}
    eps = 0.0
    found_v: list[HP] = []
    found_m: list = []
    visited = 0
    next_check = m
    while heap:
        neg, state = heapq.heappop(heap)
        visited += 1
        if visited > max_states:
            raise SizeLimitError(f"the extremes search visited more than {max_states} compositions; "
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
                kv, ke = key(nxt)
                eps = max(eps, ke)
                heapq.heappush(heap, (-kv, nxt))
        if not heap:
            break
        if len(found_v) >= next_check:
            if _enough(found_v, found_m, m, sign, base, -heap[0][0] + eps):
                break
            next_check = len(found_v) + max(1, len(found_v) // 8)
    return Spectrum(HPValues(found_v), mult_array(found_m))


def _enough(vals: list[HP], mults: list, m: int, sign: int, base, rel_bound: float) -> bool:
    """True when m merged atoms have sign * (Re(v) - base) certainly above ``rel_bound``."""
    with working():
        b = arb(fmpq(*float(rel_bound).as_integer_ratio()))
        keep = []
        for x, mm in zip(vals, mults, strict=True):
            r = real_part(x)
            r = arb(r) if isinstance(r, fmpq) else r
            if (r - base) * sign > b:
                keep.append((x, mm))
    if len(keep) < m:
        return False
    return len(Spectrum(HPValues([x for x, _ in keep]), mult_array([mm for _, mm in keep]))) >= m


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


def _best_first_mul(comb: Combination, parts, m: int, up: bool, order,
                    max_states: int = MAX_STATES) -> Spectrum:
    """Atoms of a multiplicative combination with the m largest (up) or smallest s-values."""
    shift, factor = comb.to_s()
    ops = []
    zero_free = 1
    real = True
    any_zero = False
    sign = 1  # the common sign of every product, when each operand's s-values share one sign
    for vals, ms, k in parts:
        cls, zeros = _classes(vals, ms, shift, factor)
        ops.append((cls, k))
        total = sum(ms)
        zero_free = zero_free * _count_pow(total - zeros, k) if total - zeros else 0
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
        return _finish_mul([], [], order, comb)  # every product has a zero factor
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
        derr = np.array([float(d.rad()) + abs(float(d.mid())) * 4 * _U for d in dl]) * 1.01
        base_log = arb(0)
        for j, (_cls, k) in enumerate(ops):
            base_log = base_log + lg[offsets[j]] * k

    def key(state) -> tuple[float, float]:
        c = np.array(state, dtype=float)
        c[offsets[:-1]] = 0.0
        return float(np.dot(c, dlog)), float(np.dot(c, derr)) * (1 + 8 * _U) + 1e-300

    start = tuple(x for cls, k in ops for x in ([k] + [0] * (len(cls) - 1)))
    heap = [(-0.0, start)]
    seen = {start}
    eps = 0.0
    visited = 0
    next_check = m
    stuck_run = 0
    while heap:
        neg, state = heapq.heappop(heap)
        visited += 1
        if visited > max_states:
            raise SizeLimitError(f"the extremes search visited more than {max_states} magnitude "
                                 "combinations; ask for fewer eigenvalues")
        for v, mm in _class_values(state, ops, offsets, real):
            found_s.append(v)
            found_m.append(mm)
        for nxt in _successors(state, offsets):
            if nxt not in seen:
                seen.add(nxt)
                kv, ke = key(nxt)
                eps = max(eps, ke)
                heapq.heappush(heap, (-kv, nxt))
        if heap and len(found_s) >= next_check:
            # every unexplored s has sigma * s <= bound: below exp(base_log + top key) in |s|
            # (descending), or of the unwanted sign and at least exp(base_log - top key) in |s|
            # (ascending)
            with working():
                if ascending:
                    bound = -(base_log + arb(fmpq(*float(heap[0][0] - eps).as_integer_ratio()))).exp()
                else:
                    bound = (base_log + arb(fmpq(*float(-heap[0][0] + eps).as_integer_ratio()))).exp()
            count, stuck = _certified_x(found_s, found_m, comb, sigma * bound, up)
            if count >= m:
                return _finish_mul(found_s, found_m, None, comb)
            stuck_run = stuck_run + 1 if stuck else 0
            # ties at the bound clear within a check or two; a run of checks whose most extreme
            # ball keeps holding the bound means the precision, not the search, is the limit
            if stuck_run >= 6 and visited > STUCK_STATES:
                raise SizeLimitError(
                    "the wanted eigenvalues lie closer together than 160-bit precision separates "
                    "(many distinct values share one ball once shifted back); ask for the other "
                    "end, or for cdf/count, whose bounds hold at any resolution")
            next_check = len(found_s) + max(1, len(found_s) // 8)
    # every non-zero value is known; the rest of the spectrum sits at s = 0
    zero_count = order - zero_free if zero_free else order
    return _finish_mul(found_s, found_m, zero_count, comb)


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
    sp = _finish_mul(vals, mults, None, comb)
    back_shift, back_factor = comb.from_s()
    count = 0
    with working():
        xb = _hp(back_shift) + _hp(back_factor) * s_bound
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
