"""Extreme eigenvalues of products too large to enumerate: best-first search.

For an associative product the eigenvalues are indexed by compositions (how
many copies take each factor eigenvalue); see :mod:`powerspec.powers`.  The
largest ones are found by a best-first search over compositions:

* **additive rules** (Cartesian): the real part of a composition's value is
  a sum, so moving one copy from a factor eigenvalue to the next smaller one
  never increases it; a heap pops compositions in non-increasing real part.
* **multiplicative rules** (direct, strong, ``mix(1, b)``, ``mix(0, b)``):
  the search runs over *magnitude classes* in non-increasing log|s|.  Each
  popped class composition carries the exact distribution of phases (for
  real spectra: the signs, by parity), computed by the exact engine.  Any
  unseen eigenvalue has real part at most e^(log|s| of the heap top), which
  gives a rigorous stopping rule: stop once M distinct candidates have real
  part above that.  This is why the largest value of lambda^k can come from
  the most negative lambda when k is even.

Complex spectra are ordered by real part, then imaginary part.  Ties in real
part between distinct complex values are all reported.  Multiplicities are
exact integers; one that would have more than :data:`MAX_MULT_BITS` bits is
refused with :class:`~powerspec.errors.SizeLimitError` rather than computed
for minutes.
"""

from __future__ import annotations

import heapq
import math

import numpy as np

from powerspec.algebra.engine import Engine, Leaf, Node
from powerspec.algebra.kinds import Combination
from powerspec.algebra.powers import outer, power
from powerspec.errors import NotExactError, SizeLimitError
from powerspec.spectra.measures import RTOL, Spectrum, concat, mult_array

MAX_MULT_BITS = 1 << 23
"""Largest multiplicity (in bits, about 2.5 million digits) computed exactly."""

MAX_STATES = 2_000_000
"""Most compositions one best-first search may visit."""


def extremes(engine: Engine, node: Node, kind: str, m: int, bottom: bool = False):
    """The m largest (smallest with ``bottom``) distinct eigenvalues, exact multiplicities.

    Returns ``(spectrum, method)``: a :class:`Spectrum` holding just those
    atoms (its ``order`` is the sum of their multiplicities) and a one-line
    description of how they were obtained.

    >>> from powerspec.algebra.grammar import parse
    >>> sp, how = extremes(Engine(), parse("cart(K(2)^1000000000)"), "adjacency", 2)
    >>> sp.atoms()
    [(999999998.0, 1000000000), (1000000000.0, 1)]
    """
    if m < 1:
        raise SizeLimitError("ask for at least one eigenvalue (m >= 1)")
    if engine.fits(node, kind):
        sp = engine.spectrum(node, kind)
        return select(sp, m, bottom), "exact enumeration of the full spectrum"
    try:
        flat = _flatten(engine, node, kind)
    except NotExactError:
        # No combination rule (e.g. the Laplacian of a product with one irregular factor):
        # the engine may still enumerate the spectrum, and refuses with the reason if not.
        return select(engine.spectrum(node, kind), m, bottom), "exact enumeration of the full spectrum"
    if flat is None:
        try:
            sp = engine.spectrum(node, kind)
        except SizeLimitError as exc:
            raise SizeLimitError(
                f"{node.label()}: extremes need an associative product (cart, direct, strong, "
                f"mix with a in {{0, 1}}) when the spectrum is this large ({exc})"
            ) from exc
        return select(sp, m, bottom), "exact enumeration of the full spectrum"
    comb, parts, post = flat
    to_shift, to_factor = comb.to_s()
    s_parts = [(sp.affine(to_shift, to_factor), k) for sp, k in parts]
    back_shift, back_factor = comb.from_s()
    total_factor = post[1] * back_factor
    want_top_s = (not bottom) if total_factor > 0 else bottom
    if comb.mode == "add":
        if not want_top_s:
            s_parts = [(sp.affine(0.0, -1.0), k) for sp, k in s_parts]
        found = _best_first_add(s_parts, m)
        if not want_top_s:
            found = found.affine(0.0, -1.0)
        how = "best-first search over compositions (additive rule)"
    else:
        found = _best_first_mul(s_parts, m, 1.0 if want_top_s else -1.0, node.order)
        how = "best-first search over magnitude classes with exact phase counts"
    result = found.affine(back_shift, back_factor).affine(post[0], post[1])
    return select(result, m, bottom), how


def select(sp: Spectrum, m: int, bottom: bool) -> Spectrum:
    """The m largest (or smallest) atoms of sp by real part, then imaginary part.

    Atoms whose real part ties (within the merging tolerance) with the last one
    selected are included too, so a complex-conjugate pair is never split.
    """
    n = len(sp)
    re = sp.real_parts()
    if not bottom:
        lo = max(0, n - m)
        while lo > 0 and _same_real(re[lo - 1], re[lo], sp):
            lo -= 1
        idx = np.arange(lo, n)
    else:
        hi = min(m, n)
        while hi < n and _same_real(re[hi], re[hi - 1], sp):
            hi += 1
        idx = np.arange(0, hi)
    mult = sp.mult[idx]
    total = int(sum(mult.tolist()))
    if sp.is_polar:
        la, t = sp.to_polar()
        return Spectrum.polar(la[idx], t[idx], mult_array(mult.tolist(), total), order=total)
    return Spectrum(sp.values[idx], mult_array(mult.tolist(), total), order=total, merge=False)


def _same_real(x: float, y: float, sp: Spectrum) -> bool:
    if sp.is_real or not (np.isfinite(x) and np.isfinite(y)):
        return False
    return abs(x - y) <= RTOL * max(abs(x), abs(y)) + (sp.atol or 0.0)


def _flatten(engine: Engine, node: Node, kind: str):
    """(combination, [(child spectrum, copies)], (post shift, post factor)) or None."""
    if isinstance(node, Leaf):
        return None
    comb, use, post = engine.linear_form(node, kind)
    if comb.mode is None:
        return None
    parts = [(engine.spectrum(child, use), k) for child, k in node.operands]
    return comb, parts, post


def _check_bits(bits: float, what: str) -> None:
    if bits > MAX_MULT_BITS:
        digits = int(bits * math.log10(2)) + 1
        raise SizeLimitError(
            f"the multiplicity of {what} has about {digits} decimal digits, too many to "
            f"compute exactly; ask for a smaller power or use the laws tier"
        )


def _log2_multinomial(k: int, counts) -> float:
    return (math.lgamma(k + 1) - sum(math.lgamma(c + 1) for c in counts)) / math.log(2)


def _multinomial(k: int, counts) -> int:
    out, left = 1, k
    for c in counts:
        out *= math.comb(left, c)
        left -= c
    return out


def _start_state(sizes: list[int], parts) -> tuple:
    """All copies of every operand on its first (most extreme) atom."""
    start: list[int] = []
    for r, (_, k) in zip(sizes, parts, strict=True):
        start.extend([k] + [0] * (r - 1))
    return tuple(start)


def _push_successors(state: tuple, offsets, seen: set, heap: list, key) -> None:
    """Push every state reached by moving one copy to the next atom of its operand."""
    for j in range(len(offsets) - 1):
        for p in range(offsets[j], offsets[j + 1] - 1):
            if state[p]:
                nxt = list(state)
                nxt[p] -= 1
                nxt[p + 1] += 1
                nxt = tuple(nxt)
                if nxt not in seen:
                    seen.add(nxt)
                    heapq.heappush(heap, (-key(nxt), nxt))


def _best_first_add(parts: list[tuple[Spectrum, int]], m: int) -> Spectrum:
    """Atoms of the additive combination with the m largest real parts (exact)."""
    atoms = []  # per operand: values sorted by real part descending, multiplicities
    for sp, _ in parts:
        o = np.lexsort((-np.imag(sp.values), -np.real(sp.values)))
        atoms.append((sp.values[o], [int(x) for x in sp.mult[o].tolist()]))
    offsets = np.cumsum([0] + [len(v) for v, _ in atoms])
    reals = np.concatenate([np.real(v) for v, _ in atoms])
    start = _start_state([len(v) for v, _ in atoms], parts)

    def key(state):
        return float(np.dot(state, reals))

    heap = [(-key(start), start)]
    seen = {start}
    found_vals, found_mult = [], []
    visited = 0
    scale = max(1.0, abs(key(start)))
    while heap:
        neg, state = heapq.heappop(heap)
        level = -neg
        visited += 1
        if visited > MAX_STATES:
            raise SizeLimitError(f"the extremes search visited more than {MAX_STATES} compositions")
        val, mult = _state_value_add(state, atoms, parts, offsets)
        found_vals.append(val)
        found_mult.append(mult)
        _push_successors(state, offsets, seen, heap, key)
        next_level = -heap[0][0] if heap else -math.inf
        if len(found_vals) >= m and next_level < level - RTOL * scale:
            sp = Spectrum(np.array(found_vals), mult_array(found_mult))
            if len(sp) >= m:
                return sp
    return Spectrum(np.array(found_vals), mult_array(found_mult))


def _state_value_add(state, atoms, parts, offsets):
    val = 0.0
    mult = 1
    bits = 0.0
    for j, ((_v, ms), (_, k)) in enumerate(zip(atoms, parts, strict=True)):
        counts = state[offsets[j] : offsets[j + 1]]
        bits += _log2_multinomial(k, counts) + sum(
            c * math.log2(mm) for c, mm in zip(counts, ms, strict=True) if c
        )
    _check_bits(bits, "an extreme eigenvalue")
    for j, ((v, ms), (_, k)) in enumerate(zip(atoms, parts, strict=True)):
        counts = state[offsets[j] : offsets[j + 1]]
        mult *= _multinomial(k, counts)
        for c, mm, x in zip(counts, ms, v, strict=True):
            if c:
                mult *= mm**c
                val = val + c * x
    return val, mult


def _classes(sp: Spectrum):
    """Magnitude classes of the non-zero atoms: [(log|s|, phase spectrum, atom count)]."""
    la, t = sp.to_polar()
    nz = ~np.isneginf(la)
    la, t, mult = la[nz], t[nz], sp.mult[nz]
    o = np.argsort(-la, kind="stable")
    la, t, mult = la[o], t[o], mult[o]
    classes = []
    i = 0
    while i < la.size:
        j = i + 1
        while j < la.size and abs(la[j] - la[i]) <= RTOL * max(1.0, abs(la[i])):
            j += 1
        ms = [int(x) for x in mult[i:j].tolist()]
        phases = Spectrum.polar(np.zeros(j - i), t[i:j], mult_array(ms))
        classes.append((float(np.mean(la[i:j])), phases, sum(ms)))
        i = j
    return classes


def _best_first_mul(parts, m: int, sigma: float, order: int) -> Spectrum:
    """Atoms of the multiplicative combination with the m largest sigma * real part."""
    cls = [_classes(sp) for sp, _ in parts]
    offsets = np.cumsum([0] + [len(c) for c in cls])
    logs = np.concatenate([[c[0] for c in cj] for cj in cls]) if offsets[-1] else np.zeros(0)
    has_zero = any(bool(np.any(np.isneginf(sp.logabs))) for sp, _ in parts)
    if any(len(cj) == 0 for cj in cls):
        # Every eigenvalue has a zero factor: the product is the zero spectrum.
        _check_bits(order.bit_length(), "the eigenvalue at s = 0")
        return Spectrum.from_values([0.0], [order])
    start = _start_state([len(cj) for cj in cls], parts)

    def key(state):
        return float(np.dot(state, logs))

    heap = [(-key(start), start)]
    seen = {start}
    found: list[Spectrum] = []
    raw = 0
    visited = 0
    counted = 0
    while heap:
        neg, state = heapq.heappop(heap)
        level = -neg
        visited += 1
        if visited > MAX_STATES:
            raise SizeLimitError(
                f"the extremes search visited more than {MAX_STATES} magnitude combinations "
                "without isolating the requested eigenvalues"
            )
        sp = _state_spectrum_mul(state, cls, parts, offsets, level)
        counted += sp.order
        found.append(sp)
        raw += len(sp)
        _push_successors(state, offsets, seen, heap, key)
        if not heap:
            break
        next_level = -heap[0][0]
        if raw >= m and next_level < level - RTOL * max(1.0, abs(level)):
            cand = concat(found)
            keys = _signed_log_real(cand, sigma)
            if len(keys) >= m:
                tau = np.sort(keys)[-m]
                if tau > next_level + RTOL * max(1.0, abs(next_level)):
                    return cand
    cand = concat(found)
    positive = int(np.sum(np.isfinite(_signed_log_real(cand, sigma))))
    if has_zero and positive < m:
        # Heap exhausted: every non-zero eigenvalue is in `found`, the rest sit at s = 0.
        _check_bits(order.bit_length(), "the eigenvalue at s = 0")
        nonzero_total = math.prod(
            sum(c[2] for c in cj) ** k for cj, (_, k) in zip(cls, parts, strict=True))
        cand = concat([cand, Spectrum.from_values([0.0], [order - nonzero_total])])
    return cand


def _signed_log_real(sp: Spectrum, sigma: float) -> np.ndarray:
    """log(sigma * Re v) for atoms with sigma * Re v > 0, -inf for the others."""
    la, t = sp.to_polar()
    c = sigma * np.cos(2 * np.pi * t)
    c = np.where(t == 0.0, sigma, np.where(t == 0.5, -sigma, c))
    c = np.where(np.isin(t, (0.25, 0.75)), 0.0, c)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(c > 0, la + np.log(np.where(c > 0, c, 1.0)), -np.inf)


def _state_spectrum_mul(state, cls, parts, offsets, level) -> Spectrum:
    bits = 0.0
    for j, (cj, (_, k)) in enumerate(zip(cls, parts, strict=True)):
        counts = state[offsets[j] : offsets[j + 1]]
        bits += _log2_multinomial(k, counts) + sum(
            c * math.log2(cl[2]) for c, cl in zip(counts, cj, strict=True) if c
        )
    _check_bits(bits, "an extreme eigenvalue")
    phase: Spectrum | None = None
    weight = 1
    for j, (cj, (_, k)) in enumerate(zip(cls, parts, strict=True)):
        counts = state[offsets[j] : offsets[j + 1]]
        weight *= _multinomial(k, counts)
        for c, (_, ph, _) in zip(counts, cj, strict=True):
            if c:
                pw = power(ph, c, "mul", 4 * MAX_STATES, MAX_STATES)
                phase = pw if phase is None else _outer_mul(phase, pw)
    la, t = phase.to_polar()
    mult = [int(x) * weight for x in phase.mult.tolist()]
    total = sum(mult)
    return Spectrum.polar(np.full(la.size, level), t, mult_array(mult, total), order=total)


def _outer_mul(a: Spectrum, b: Spectrum) -> Spectrum:
    return outer(a, b, "mul", 4 * MAX_STATES)


__all__ = ["extremes", "select", "Combination", "MAX_MULT_BITS"]
