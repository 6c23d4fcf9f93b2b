"""Closed forms in the powers: spectral radius, extremes, moments, Estrada index, spanning trees.

Each form is derived from a :class:`~powerspec.algebra.symbolic_family.SpectrumFamily`
(values from the rule table) or from the trace identities of
:mod:`powerspec.algebra.symbolic_traces`, and is valid under the assumption its
note states (``closed_forms`` returns the notes beside the forms).
:func:`evaluate` substitutes integer powers and evaluates the nested Sums and
Products exactly.

>>> from powerspec.algebra.symbolic_tree import symbolic_expression
>>> forms, _ = closed_forms(symbolic_expression("cart(K(2)^k)"))
>>> forms["spectral_radius"], forms["variance"]
(k, k)
>>> evaluate(forms["spanning_trees"], k=3)       # Q_3 has 384 spanning trees
384
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import sympy

from powerspec.algebra.kinds import CARTESIAN
from powerspec.algebra.symbolic_family import SpectrumFamily, spectrum_family
from powerspec.algebra.symbolic_traces import traces
from powerspec.algebra.tree import Leaf, Node, Product
from powerspec.errors import InputError, NotExactError, SymbolicError
from powerspec.numbers.symbolic import numeric

HEAT_TIME = sympy.Symbol("t", positive=True)
"""The time t of the heat trace tr(exp(-t L))."""


def _ratio(e: sympy.Expr) -> sympy.Expr:
    # Combine b1**k / b2**k into (b1/b2)**k (k is an integer power, so force is safe).
    e = sympy.powsimp(sympy.expand(sympy.powdenest(e, force=True)), combine="base", force=True)
    return sympy.expand(sympy.powsimp(e, force=True))


def _is_real(e: sympy.Expr) -> bool:
    z = numeric(e)
    if z is not None:
        return abs(z.imag) <= 1e-20 * max(1.0, abs(z))
    return e.is_real is True


def _radius(values: Sequence[sympy.Expr]) -> sympy.Expr:
    """Largest modulus among exact values (chosen numerically; Max of Abs with symbols)."""
    if any(v.free_symbols for v in values):
        return sympy.Max(*[sympy.Abs(v) for v in values])
    best = max(values, key=lambda v: abs(numeric(v)))
    return sympy.Abs(best)


def _extreme(values: Sequence[sympy.Expr], largest: bool) -> int:
    key = [(numeric(v) or 0j).real for v in values]
    best = max(key) if largest else min(key)
    return key.index(best)


def _nonneg_tree(node: Node, kind: str) -> bool:
    if isinstance(node, Leaf):
        return node.factor.nonnegative(kind)
    return (node.comb.a >= 0 and node.comb.b >= 0
            and all(_nonneg_tree(c, kind) for c, _ in node.operands))


def _spanning_trees(node: Node) -> tuple[sympy.Expr, sympy.Expr] | str:
    """(count as a sympy Product, its logarithm as a Sum), or the reason it is omitted."""
    if not (isinstance(node, Product) and node.comb == CARTESIAN):
        return "spanning trees: closed form given for Cartesian products only"
    if any(f.directed for f in node.leaves()):
        return "spanning trees: the factors must be undirected"
    try:
        fam = spectrum_family(node, "laplacian")
    except (NotExactError, SymbolicError) as exc:
        return f"spanning trees: {exc}"
    for blk in fam.blocks:
        if blk.values[0] != 0 or blk.mults[0] != 1:
            return "spanning trees: every operand must be connected (a simple zero Laplacian eigenvalue)"
    value, mult, js = fam.eigenvalue, fam.multiplicity, fam.indices
    if not js:
        return "spanning trees: every operand has a single vertex"
    # Matrix-tree theorem: tau = prod of the nonzero Laplacian eigenvalues / N.  The zero
    # eigenvalue is the all-base composition j = 0 (Laplacian values ascend); the Kronecker
    # delta turns its factor 0^1 into 1^1.  With one index the range starts at 1.
    limits = fam.products()
    if len(js) == 1:
        limits = [(js[0], 1, limits[0][2])]
        body = value
    else:
        body = value + sympy.KroneckerDelta(sympy.Add(*js), 0)
    tau = sympy.Product(body ** mult, *limits) / fam.order
    log_n = sympy.Add(*[b.power * sympy.log(b.n) for b in fam.blocks])
    log_tau = sympy.Sum(mult * sympy.log(body), *limits) - log_n
    return tau, log_tau


def _radius_form(fam: SpectrumFamily, node: Node, kind: str, forms: dict, notes: list) -> None:
    blocks = fam.blocks
    if fam.post != (0, 1):
        notes.append("spectral radius: omitted for a kind obtained from the regular form")
    elif fam.mode == "add":
        if len(blocks) == 1:
            forms["spectral_radius"] = blocks[0].power * _radius(blocks[0].values)
        elif all(_is_real(v) for blk in blocks for v in blk.values):
            hi = sympy.Add(*[b.power * b.values[_extreme(b.values, True)] for b in blocks])
            lo = sympy.Add(*[b.power * b.values[_extreme(b.values, False)] for b in blocks])
            forms["spectral_radius"] = sympy.Max(hi, -lo)
        else:
            notes.append("spectral radius: omitted for a sum of complex spectra")
    elif fam.shift == 0:
        big_k = sympy.Add(*[b.power for b in blocks])
        forms["spectral_radius"] = sympy.Abs(fam.factor) ** (big_k - 1) * sympy.Mul(
            *[_radius(b.values) ** b.power for b in blocks])
    elif fam.factor.is_positive and _nonneg_tree(node, kind):
        s = sympy.Mul(*[(1 + fam.factor * _radius(b.values)) ** b.power for b in blocks])
        forms["spectral_radius"] = (s - 1) / fam.factor
        notes.append("spectral radius: Perron-Frobenius (entrywise non-negative factors)")
    else:
        notes.append("spectral radius: no closed form without entrywise non-negative factors")


def _extremes(fam: SpectrumFamily, node: Node, kind: str, forms: dict, notes: list) -> None:
    """largest / smallest eigenvalue with multiplicity, where a closed form is valid."""
    blocks = fam.blocks
    if fam.post != (0, 1):
        return
    if fam.mode == "add" and all(_is_real(v) and not v.free_symbols for b in blocks for v in b.values):
        # Real spectra: the max (min) of a sum of independent choices is the sum of the maxima
        # (minima), attained only by choosing the maximum in every copy.
        for name, top in (("largest", True), ("smallest", False)):
            idx = [_extreme(b.values, top) for b in blocks]
            forms[name] = sympy.Add(*[b.power * b.values[i] for b, i in zip(blocks, idx, strict=True)])
            forms[name + "_multiplicity"] = sympy.Mul(
                *[sympy.Integer(b.mults[i]) ** b.power for b, i in zip(blocks, idx, strict=True)])
    elif fam.mode == "mul" and fam.shift == 1 and fam.factor.is_positive and _nonneg_tree(node, kind):
        # Perron-Frobenius: 1 + b*rho is the unique largest |1 + b*lambda|, so only the all-rho
        # composition reaches it.
        tops = []
        for b in blocks:
            if any(v.free_symbols for v in b.values):
                return
            tops.append(_extreme([sympy.Abs(v) for v in b.values], True))
        s = sympy.Mul(*[(1 + fam.factor * b.values[i]) ** b.power
                        for b, i in zip(blocks, tops, strict=True)])
        forms["largest"] = (s - 1) / fam.factor
        forms["largest_multiplicity"] = sympy.Mul(
            *[sympy.Integer(b.mults[i]) ** b.power for b, i in zip(blocks, tops, strict=True)])
    else:
        notes.append("largest/smallest eigenvalue: closed form given for real Cartesian-type "
                     "spectra and Perron-Frobenius strong-type products only")


def moment_forms(node: Node, kind: str = "adjacency", max_power: int = 4) -> dict[str, sympy.Expr]:
    """``moment_p`` = tr(M^p), p = 1..max_power; ``mean`` = tr(M)/N; ``variance`` = tr(M^2)/N - mean^2.

    From the trace identities only (no eigenvalues).

    >>> from powerspec.algebra.symbolic_tree import symbolic_expression
    >>> moment_forms(symbolic_expression("cart(P(3)^k)"), max_power=2)["variance"]
    4*k/3
    """
    tr = traces(node, kind, max(max_power, 2))
    forms = {f"moment_{p}": tr[p] for p in range(1, max_power + 1)}
    mean = _ratio(tr[1] / tr[0])
    forms["mean"] = mean
    forms["variance"] = _ratio(tr[2] / tr[0] - mean ** 2)
    return forms


def closed_forms(node: Node, kind: str = "adjacency", max_power: int = 4
                 ) -> tuple[dict[str, sympy.Expr], list[str]]:
    """Closed forms in the powers: ({name: expression}, notes on assumptions and omissions).

    Names: ``order``; ``spectral_radius`` (Cartesian-type sums: sum k_b rho_b for one
    operand or real spectra -- attained by repeating a largest-modulus eigenvalue;
    direct-type: |b|^(K-1) prod rho_b^k_b; strong and mix(1, b > 0): ((prod (1 + b
    rho_b)^k_b) - 1)/b for entrywise non-negative matrices, by Perron-Frobenius);
    ``epidemic_threshold`` = 1/radius (adjacency); ``largest``/``smallest`` with their
    multiplicities; ``moment_p``, ``mean``, ``variance`` (see :func:`moment_forms`);
    ``estrada_index`` = prod (sum m e^lambda)^k for Cartesian adjacency; ``heat_trace`` =
    prod (sum m e^(-t alpha))^k for Cartesian Laplacians; ``spanning_trees`` /
    ``log_spanning_trees`` for Cartesian products of connected undirected factors
    (matrix-tree theorem: prod of nonzero Laplacian eigenvalues / N).
    """
    fam = spectrum_family(node, kind)
    forms: dict[str, sympy.Expr] = {"order": fam.order}
    notes: list[str] = []
    _radius_form(fam, node, kind, forms, notes)
    _extremes(fam, node, kind, forms, notes)
    if kind == "adjacency" and "spectral_radius" in forms:
        forms["epidemic_threshold"] = 1 / forms["spectral_radius"]
    try:
        forms.update(moment_forms(node, kind, max_power))
    except (SymbolicError, NotExactError) as exc:
        notes.append(f"moments: {exc}")
    if fam.mode == "add" and fam.post == (0, 1):
        def heat(blk, scale):
            return sympy.Add(*[m * sympy.exp(scale * v)
                               for v, m in zip(blk.values, blk.mults, strict=True)]) ** blk.power
        if kind == "adjacency":
            forms["estrada_index"] = sympy.Mul(*[heat(b, 1) for b in fam.blocks])
        if kind == "laplacian":
            forms["heat_trace"] = sympy.Mul(*[heat(b, -HEAT_TIME) for b in fam.blocks])
    st = _spanning_trees(node)
    if isinstance(st, str):
        notes.append(st)
    else:
        forms["spanning_trees"], forms["log_spanning_trees"] = st
    return forms, notes


def evaluate(expr: Any, **values: Any) -> sympy.Expr:
    """Substitute symbols by name and evaluate every Sum/Product by explicit exact loops.

    sympy's ``doit`` leaves nested ranges such as (j2, 0, k - j1) unevaluated; this
    loops over them once the powers are integers.

    >>> from powerspec.algebra.symbolic_tree import symbolic_expression
    >>> forms, _ = closed_forms(symbolic_expression("cart(C(4)^k)"))
    >>> evaluate(forms["spanning_trees"], k=2)        # the 4x4 torus (matrix-tree theorem)
    42467328
    """
    e = sympy.sympify(expr)
    e = e.subs({s: values[s.name] for s in e.free_symbols if s.name in values})
    return _loops(e)


def _loops(e: sympy.Expr) -> sympy.Expr:
    if isinstance(e, (sympy.Product, sympy.Sum)):
        body, limits = e.function, list(e.limits)
        var, lo, hi = limits[-1]
        if not (lo.is_Integer and hi.is_Integer):
            names = sorted(map(str, (lo - hi).free_symbols))
            raise InputError(f"cannot evaluate {e}: give integer values for {names}")

        def inner(v):
            return body.subs(var, v) if len(limits) == 1 else type(e)(body, *limits[:-1]).subs(var, v)

        parts = [_loops(inner(v)) for v in range(int(lo), int(hi) + 1)]
        return sympy.Mul(*parts) if isinstance(e, sympy.Product) else sympy.Add(*parts)
    if e.args:
        return e.func(*[_loops(a) for a in e.args])
    return e


__all__ = ["HEAT_TIME", "closed_forms", "evaluate", "moment_forms"]
