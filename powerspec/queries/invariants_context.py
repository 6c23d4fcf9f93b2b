"""The sources one invariants query draws on, each computed at most once and only when cheap.

A :class:`Context` holds the expression node and lazily provides, with every
failure turned into ``None`` plus a recorded reason (never an exception):

* ``full(kind)`` -- the exact spectrum, when the engine's cheap bound says it
  fits the query's atom limit;
* ``ext(kind, m, bottom)`` -- the m extreme distinct eigenvalues at 160-bit
  precision (:func:`~powerspec.algebra.extremes.extremes`, any k);
* ``moments(kind)`` -- the normalised moments tau_1..tau_4 as certified
  balls (the moment engine's ball domain: exact factor traces, any k);
* ``blocks()`` -- the Laplacian from the symmetry tier (plan checked first);
* ``block_ends(top, bottom)`` -- only the ends of the Laplacian (lambda_max and the second
  smallest eigenvalue) from the symmetry tier, with its larger ends-only budget;
* ``shape`` / ``degrees`` -- exact components and the degree range.

Nothing here builds a list whose length grows with k: a left fold over more
than 10^4 copies is refused up front for every source that would need it.
"""

from __future__ import annotations

from fractions import Fraction

import numpy as np
from flint import arb, fmpq

from powerspec.algebra.engine import Engine
from powerspec.algebra.extremes import extremes
from powerspec.algebra.kinds import MATRIX_RULES
from powerspec.algebra.moments import MomentEngine, fold_copies
from powerspec.algebra.tree import Leaf, Node
from powerspec.algebra.words import MAX_FOLD
from powerspec.errors import PowerspecError
from powerspec.numbers.counts import bit_length, to_arb
from powerspec.numbers.hp import as_ball, real_part, working
from powerspec.queries.invariants_structure import (
    Count,
    degree_range,
    has_loops,
    nonnegative,
    order_count,
    shape,
)
from powerspec.spectra.spectrum import HPValues, Spectrum, mult_array
from powerspec.tiers.invariant_blocks import laplacian_blocks, laplacian_ends
from powerspec.tiers.symmetry import SymmetryError

FULL_BITS = 1 << 25
"""Most bits of exact multiplicities (atoms x bits of the order) a full enumeration may hold."""

MOMENT_ORDER = 4
"""Moments computed for the bounds (tau_1..tau_4)."""


def _flat(eng: Engine, node: Node, use: str, comb) -> list:
    out = []
    for child, k in node.operands:
        if not isinstance(child, Leaf) and MATRIX_RULES[use](child.comb) == comb:
            out += [(sp, k * kk) for sp, kk in _flat(eng, child, use, comb)]
        else:
            out.append((eng.spectrum(child, use), k))
    return out


def toward_zero_end(eng: Engine, node: Node, kind: str, bottom: bool):
    """The wanted end as a one-atom Spectrum when it is the fixed-sign product nearest zero, else None.

    For a multiplicative rule s = c + f x whose operands' non-zero s-values each
    have one sign, the non-zero products have a fixed sign and magnitudes in
    [prod min|s|^k, prod max|s|^k].  The end nearest zero is then s = 0 exactly
    when some operand has s = 0 (multiplicity: the order minus the non-zero
    products, prod (n_j - z_j)^k_j), else prod min|s|^k with multiplicity
    prod (multiplicity of that s)^k.  Exact or certified balls.
    """
    try:
        comb, use, (shift, factor) = eng.linear_form(node, kind)
    except PowerspecError:
        return None
    if comb.mode != "mul":
        return None
    c, f = (fmpq(x.numerator, x.denominator) for x in comb.to_s())
    sign, mag, mult = 1, fmpq(1), Count.of(1)
    nonzero, has_zero = Count.of(1), False
    with working():
        for sp, k in _flat(eng, node, use, comb):
            if not sp.is_real:
                return None
            svals = [(c + f * real_part(b), m)
                     for b, m in zip(sp.balls(), sp.mult.tolist(), strict=True)]
            zeros = sum(m for v, m in svals if isinstance(v, fmpq) and v == 0)
            svals = [(v, m) for v, m in svals if not (isinstance(v, fmpq) and v == 0)]
            pos = all(v > 0 for v, _ in svals)
            if not svals or (not pos and not all(v < 0 for v, _ in svals)):
                return None
            has_zero = has_zero or zeros > 0
            nonzero = nonzero * Count.power(int(sum(m for _, m in svals)), k)
            low = min(svals, key=lambda t: float(as_ball(abs(t[0])).mid()))
            if any(abs(v).overlaps(abs(low[0])) if not isinstance(v, fmpq) else False
                   for v, _ in svals if v is not low[0]):
                return None  # the smallest magnitude is not isolated at this precision
            sign *= 1 if pos or k % 2 == 0 else -1
            mag = mag * abs(low[0]) ** k if isinstance(low[0], fmpq) and k < 4096 \
                else as_ball(mag) * as_ball(abs(low[0])) ** k
            mult = mult * Count.power(int(low[1]), k)
        if has_zero:
            mag, mult = fmpq(0), order_count(node) - nonzero
        s_end = sign * mag
        x_end = (s_end - c) / f
        sh, fa = (fmpq(v.numerator, v.denominator) if isinstance(v, Fraction) else v
                  for v in (shift, factor))
        value = sh + fa * x_end
        # which end of the kind's values this is: s toward zero, mapped by x = (s - c)/f, then factor
        s_up = sign < 0  # toward zero is the top of s when the non-zero products are negative
        x_up = s_up == (f > 0)
        v_up = x_up == (factor > 0)
    if v_up == (not bottom):
        return Spectrum(HPValues([value]), mult_array([mult.value()]), merged=True)
    return None


class Context:
    """Lazy, cached sources for one invariants query (see the module docstring)."""

    def __init__(self, node: Node, limit: int, direction: str, t: float):
        self.node = node
        self.limit = limit
        self.direction = direction
        self.t = t
        self.eng = Engine(limit, direction=direction)
        self.order = node.order
        self._ext_eng = None
        with working():
            self.n_arb = to_arb(self.order)
            self.log_n = self.n_arb.log()
        self.undirected = not node.directed
        self.nonneg = nonnegative(node)
        self.loops = has_loops(node)
        self.folds = fold_copies(node)
        self.fold_ok = self.folds <= MAX_FOLD
        self.reasons: dict[str, str] = {}
        self._cache: dict = {}

    # ------------------------------------------------------------------ helpers
    def _get(self, key, compute):
        if key not in self._cache:
            try:
                with np.errstate(all="ignore"):  # balls carry the rigour; no float noise on stderr
                    self._cache[key] = compute()
            except (PowerspecError, SymmetryError, ValueError, OverflowError, MemoryError) as exc:
                self.reasons[str(key)] = str(exc).split("\n")[0][:160]
                self._cache[key] = None
            except Exception as exc:  # noqa: BLE001 - a failing source must not sink the query
                self.reasons[str(key)] = f"internal error in this source ({type(exc).__name__}: " \
                    f"{str(exc)[:80]}); please report it"
                self._cache[key] = None
        return self._cache[key]

    def why(self, key) -> str:
        """The recorded reason a source is missing ('' when none)."""
        return self.reasons.get(str(key), "")

    def fold_reason(self) -> str:
        """Why the spectral sources are unavailable for a long left fold."""
        return (f"not available: a non-associative mix is a left fold, and {self.folds} copies exceed "
                f"the cap of {MAX_FOLD} (decided from the expression, before any work)")

    # ------------------------------------------------------------------ sources
    @property
    def ext_eng(self) -> Engine:
        """The engine the extremes use: its atom limit keeps any full enumeration small in bits."""
        if self._ext_eng is None:
            bits = max(bit_length(self.order), 1)
            try:
                bits += self._value_bits(self.node, "adjacency")
            except Exception:  # noqa: BLE001 - a size estimate only
                bits += 64
            self._ext_eng = Engine(max(1, min(self.limit, FULL_BITS // (8 * bits))),
                                   direction=self.direction)
        return self._ext_eng

    def exact_kind(self, kind: str) -> bool:
        """True when the kind's spectrum follows exactly from the factors' (rules or regularity)."""
        def check(node: Node) -> bool:
            if isinstance(node, Leaf):
                return True
            if MATRIX_RULES[kind](node.comb) is not None:
                return all(check(c) for c, _ in node.operands)
            return self.eng.is_regular(node)
        result = self._get(("exact_kind", kind), lambda: self.fold_ok and check(self.node))
        return bool(result)

    def spectrum_of(self, node: Node, kind: str):
        """The exact spectrum of a node of the tree when cheap (atoms x bits), else ValueError."""
        if not isinstance(node, Leaf):
            bound = self.eng.bound(node, kind)
            bits = max(bit_length(node.order), 1) + self._value_bits(node, kind)
            if bound > self.limit or bound * bits > FULL_BITS:
                raise ValueError(f"the exact spectrum may hold {bound} atoms of about {bits} bits "
                                 f"each (limit {self.limit} atoms, {FULL_BITS} bits)")
        return self.eng.spectrum(node, kind)

    def _value_bits(self, node: Node, kind: str) -> int:
        """Rough size in bits of one exact eigenvalue of the node (rational factor values grow)."""
        if isinstance(node, Leaf):
            v = self.eng.spectrum(node, kind).values
            num = getattr(v, "num", None)
            if num is None:
                return 64
            top = max((abs(int(x)).bit_length() for x in num.tolist()), default=0)
            return max(top, int(v.den).bit_length(), 1)
        rule = MATRIX_RULES[kind](node.comb)
        use = kind if rule is not None else "adjacency"
        kids = [(self._value_bits(c, use), k) for c, k in node.operands]
        if node.comb.mode == "add":
            return max(b for b, _ in kids) + sum(k for _, k in kids).bit_length()
        return sum(b * k for b, k in kids) + 64

    def full(self, kind: str):
        """The exact spectrum, or None (too large, not exact, or refused)."""
        def compute():
            if not self.fold_ok:
                raise ValueError(self.fold_reason())
            return self.spectrum_of(self.node, kind)
        return self._get(("full", kind), compute)

    def ext(self, kind: str, m: int, bottom: bool):
        """The m extreme distinct eigenvalues (Spectrum, ascending), or None.

        The end of a multiplicative product whose sign is fixed and whose wanted
        end is the one nearest zero is the product of the operands' smallest
        magnitudes (a closed form); the best-first search would have to walk
        every magnitude class to reach it, so it is not asked (m = 1 only).
        """
        def compute():
            if not self.fold_ok:
                raise ValueError(self.fold_reason())
            eng = self.ext_eng
            if not isinstance(self.node, Leaf) and not eng.fits(self.node, kind):
                near_zero = toward_zero_end(eng, self.node, kind, bottom)
                if near_zero is not None:
                    if m != 1:
                        raise ValueError("the extremes search would walk every magnitude class to "
                                         "reach this end")
                    return near_zero
            return extremes(eng, self.node, kind, m, bottom)[0]
        return self._get(("ext", kind, m, bottom), compute)

    def covering(self, kind: str):
        """The whole spectrum from the extremes when a few top atoms already hold every eigenvalue."""
        def compute():
            top = self.ext(kind, 4, False)
            if top is None:
                raise ValueError("the extremes are not available")
            total = Count.of(0)
            for m in top.mult.tolist():
                total = total + Count.of(m)
            if (order_count(self.node) - total).value() != 0:
                raise ValueError("the extreme atoms do not cover the spectrum")
            return top
        return self._get(("covering", kind), compute)

    def moments(self, kind: str):
        """[1, tau_1, ..., tau_4] as certified balls (normalised traces), or None."""
        return self._get(("moments", kind),
                         lambda: MomentEngine(MOMENT_ORDER, self.direction, "ball").normalised(
                             self.node, kind))

    def blocks(self):
        """The Laplacian's certified block spectrum from the symmetry tier, or None."""
        return self._get(("blocks",), lambda: laplacian_blocks(self.node, self.direction))

    def block_ends(self, top: bool, bottom: bool):
        """The Laplacian's certified ends (:class:`~powerspec.tiers.invariant_blocks.LaplacianEnds`)."""
        return self._get(("block_ends", top, bottom),
                         lambda: laplacian_ends(self.node, self.direction, top=top, bottom=bottom))

    @property
    def shape(self):
        """The exact component summary (structure.Shape) or None."""
        return self._get(("shape",), lambda: shape(self.node))

    @property
    def degrees(self):
        """(min, max) degree balls for non-negative rules, or None."""
        return self._get(("degrees",), lambda: degree_range(self.node, self.direction))

    def count_arb(self, n) -> arb:
        """A certified ball for an exact count."""
        return to_arb(n)


__all__ = ["Context", "FULL_BITS", "MOMENT_ORDER"]
