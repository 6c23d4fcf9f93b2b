"""The exact tier: the whole spectrum, by the cheapest exact route that applies.

1. **rules** -- the engine's combination rules (:mod:`powerspec.algebra.engine`),
   exact wherever the matrix kind factors over the product;
2. **symmetry** -- Schur--Weyl blocks (:mod:`powerspec.tiers.symmetry`) for
   products of powers of undirected factors whose matrix kind does not factor
   (the Laplacian, signless, normalized and transition matrices of direct and
   strong powers of irregular factors), size-checked from the dimension
   formulas before any work;
3. **explicit** -- the product built as a matrix (:mod:`powerspec.tiers.explicit`)
   when it has at most a few thousand vertices.

Each route returns certified atoms with exact multiplicities and says which
route answered.

>>> from powerspec.algebra.engine import Engine
>>> from powerspec.algebra.grammar import parse
>>> sp, how = exact_spectrum(Engine(), parse("direct(P(3)^6)"), "laplacian")
>>> sp.order, how.split(",")[0]
(729, 'exact: symmetry reduction (Schur-Weyl blocks)')
"""

from __future__ import annotations

import math
from collections.abc import Callable

import numpy as np

from powerspec.algebra.engine import Engine
from powerspec.algebra.tree import Leaf, Node, Product
from powerspec.errors import NotExactError, SizeLimitError
from powerspec.factors.certify import CHARPOLY_MAX
from powerspec.numbers.balls import Balls
from powerspec.spectra.spectrum import Spectrum, mult_array
from powerspec.tiers.explicit import EXPLICIT_MAX, explicit_spectrum
from powerspec.tiers.symmetry import PowerOperand, SymmetryError, blocks, plan

SYMMETRY_MAX_BLOCK = 4000
"""Largest Schur--Weyl block solved densely."""

SYMMETRY_MAX_WORK = 2e11
"""Largest total work (sum of block sizes cubed) of one symmetry-tier answer."""

_U = 2.0**-53


def symmetry_operands(engine: Engine, node: Node) -> list[PowerOperand] | None:
    """The node as operands of the symmetry tier, or None when it is not a product of powers
    of undirected factors under a rule with a in {0, 1}."""
    if not isinstance(node, Product) or node.comb.mode not in ("add", "mul") or node.directed:
        return None
    ops = []
    for child, k in node.operands:
        if not isinstance(child, Leaf):
            return None
        f = child.factor
        ops.append(PowerOperand(f.adjacency.toarray(),
                                np.array([float(d) for d in f.exact_degrees(engine.direction)]), k))
    return ops


def _degree_slack(engine: Engine, node: Product, kind: str) -> float:
    """A bound on how far every eigenvalue moves because the degrees were rounded to doubles.

    Only the diagonal degree operator of the product depends on them; Weyl's
    inequality turns a bound on its change into one on every eigenvalue.
    Returns 0.0 when every degree is an exact double.
    """
    eps, top, total = 0.0, 0.0, 0
    for child, k in node.operands:
        for d in child.factor.exact_degrees(engine.direction):
            eps = max(eps, abs(float(d) - d) if float(d) != d else 0.0)
            top = max(top, abs(float(d)))
        total += k
    if eps == 0.0:
        return 0.0
    if kind in ("normalized", "transition"):
        raise NotExactError(f"the {kind} spectrum of {node.label()} needs degrees that are exact "
                            "doubles; these weights sum to degrees that are not")
    b = abs(float(node.comb.b))
    eps = eps * (1 + 4 * _U) + 1e-300
    if node.comb.mode == "add":  # D_k = sum of k copies: each entry moves by at most k eps
        return total * eps * 1.01
    if node.comb.a == 1:  # entries prod (1 + b d_i)^w_i, divided by b
        m = 1 + b * top
        change = ((m + b * eps) ** total - m**total) / b
    else:  # entries b^(k-1) prod d_i^w_i
        change = b ** (total - 1) * ((top + eps) ** total - top**total)
    if not math.isfinite(change):
        raise SizeLimitError(f"the rounding of the degrees of {node.label()} cannot be bounded "
                             "in double precision at this power")
    return change * 1.01 + 1e-300


def symmetry_spectrum(engine: Engine, node: Node, kind: str, *, workers: int = 1,
                      scheduler: str | None = None,
                      progress: Callable[[int, int], None] | None = None) -> tuple[Spectrum, str]:
    """The spectrum from the Schur--Weyl blocks, or SizeLimitError / NotExactError."""
    ops = symmetry_operands(engine, node)
    if ops is None:
        raise NotExactError(f"{node.label()} is not a product of powers of undirected factors")
    if node.comb.rounded_coefficients:
        raise NotExactError("the symmetry tier works in binary floating point: mix coefficients "
                            "must be binary fractions (such as 1/4 or 0.375), not "
                            f"{node.comb.a}, {node.comb.b}")
    a, b = float(node.comb.a), float(node.comb.b)
    try:
        the_plan = plan(ops, a, b, kind)
        the_plan.check(max_block=SYMMETRY_MAX_BLOCK, max_work=SYMMETRY_MAX_WORK)
    except SymmetryError as exc:
        raise SizeLimitError(str(exc)) from exc
    slack = _degree_slack(engine, node, kind)
    vals, rads, mults = [], [], []
    for blk in blocks(ops, a, b, kind, workers=workers, scheduler=scheduler, progress=progress):
        vals.append(np.asarray(blk.values, dtype=float))
        rads.append(np.asarray(blk.radius, dtype=float) + slack)
        mults.extend([int(blk.multiplicity)] * len(blk.values))
    v = np.concatenate(vals) if vals else np.zeros(0)
    r = np.concatenate(rads) if rads else np.zeros(0)
    from_balls = Balls.from_floats(v, r)
    order = node.order
    sp = Spectrum(from_balls, mult_array(mults, order if isinstance(order, int) else None), order=order)
    how = (f"exact: symmetry reduction (Schur-Weyl blocks), {the_plan.blocks} blocks, largest "
           f"{the_plan.largest}; certified block radii")
    return sp, how


def exact_feasible(engine: Engine, node: Node, kind: str) -> bool:
    """Cheap check, before any work, that :func:`exact_spectrum` fits the size limits."""
    try:
        engine.linear_form(node, kind) if isinstance(node, Product) else None
        return engine.fits(node, kind)
    except NotExactError:
        pass
    if isinstance(node.order, int) and node.order <= EXPLICIT_MAX:
        return True
    p = _symmetry_plan(engine, node, kind)
    return p is not None and p.blocks * p.largest <= 4 * engine.limit


def _symmetry_plan(engine: Engine, node: Node, kind: str):
    """The symmetry tier's plan within its limits, or None where it does not apply."""
    ops = symmetry_operands(engine, node)
    if ops is None or node.comb.rounded_coefficients:
        return None
    try:
        p = plan(ops, float(node.comb.a), float(node.comb.b), kind)
        p.check(max_block=SYMMETRY_MAX_BLOCK, max_work=SYMMETRY_MAX_WORK)
    except SymmetryError:
        return None
    return p


def symmetry_seconds(engine: Engine, node: Node, kind: str) -> float | None:
    """Predicted seconds of :func:`symmetry_spectrum` on this project's 2-core machine, or None
    when the symmetry route does not apply or exceeds its limits.

    About 1.5 ms per block (projection, eigensolve and certification of each block) plus
    15 ns per unit of work (sum of block sizes cubed); measured on the Laplacians of
    strong(P(3)^k), k = 30 / 90 (256 / 2116 blocks: 0.47 / 5.4 s), direct(P(3)^60) (1.8 s),
    direct(K(1, 3)^12) (0.93 s) and direct(P(4)^20) (0.81 s).

    >>> from powerspec.algebra.grammar import parse
    >>> 1 < symmetry_seconds(Engine(), parse("strong(P(3)^90)"), "laplacian") < 20
    True
    """
    p = _symmetry_plan(engine, node, kind)
    return None if p is None else 1.5e-3 * p.blocks + 1.5e-8 * p.work


def exact_seconds(engine: Engine, node: Node, kind: str, per_atom: float) -> float:
    """Predicted seconds of :func:`exact_spectrum` by the route it will take: ``per_atom`` times
    the engine's bound on the distinct eigenvalues for the product rules (the caller's model),
    :func:`symmetry_seconds` for the symmetry blocks, and about 0.37 s per 1000^3 for an
    explicit build (direct(K(1, 3)^5), 1024 vertices: 0.40 s; strong(P(3)^7), 2187: 2.7 s).
    """
    try:
        engine.linear_form(node, kind) if isinstance(node, Product) else None
        return per_atom * engine.bound(node, kind)
    except NotExactError:
        pass
    n = node.order if isinstance(node.order, int) else None
    explicit = None if n is None or n > EXPLICIT_MAX else 1e-3 + 0.37 * (n / 1000) ** 3
    if n is not None and n <= CHARPOLY_MAX:
        return explicit
    sym = symmetry_seconds(engine, node, kind)
    return sym if sym is not None else (explicit if explicit is not None else math.inf)


def exact_spectrum(engine: Engine, node: Node, kind: str, *, workers: int = 1,
                   scheduler: str | None = None,
                   progress: Callable[[int, int], None] | None = None) -> tuple[Spectrum, str]:
    """(spectrum, method) by rules, then symmetry blocks, then an explicit build.

    Raises SizeLimitError when the spectrum is exact but too large for every
    route, NotExactError when no route applies (the message says why).
    """
    try:
        return engine.spectrum(node, kind), "exact: eigenvalues combined from the factors' spectra"
    except NotExactError as exc:
        reason = exc
    if isinstance(node.order, int) and node.order <= CHARPOLY_MAX:
        sp = explicit_spectrum(node, kind, engine.direction)
        return sp, (f"exact: explicit build of the {node.order}-vertex product, exact "
                    "characteristic polynomial")
    try:
        return symmetry_spectrum(engine, node, kind, workers=workers, scheduler=scheduler,
                                 progress=progress)
    except (NotExactError, SizeLimitError) as exc:
        sym_reason = exc
    if isinstance(node.order, int) and node.order <= EXPLICIT_MAX:
        sp = explicit_spectrum(node, kind, engine.direction)
        return sp, f"exact: explicit build of the {node.order}-vertex product, certified eigensolver"
    if isinstance(sym_reason, SizeLimitError):
        raise SizeLimitError(f"{reason}; the symmetry reduction is too large: {sym_reason}")
    raise NotExactError(f"{reason}; {sym_reason}")


__all__ = ["EXPLICIT_MAX", "exact_feasible", "exact_seconds", "exact_spectrum", "symmetry_operands",
           "symmetry_seconds", "symmetry_spectrum"]
