"""``--method estimate``: the published sorted-degree estimate of product Laplacians, bracketed.

The Laplacians of direct and strong products of irregular factors do not
factor (D_G (x) D_H - A_G (x) A_H).  The literature's estimate pairs the i-th
smallest factor Laplacian eigenvalue with the i-th smallest degree
(:func:`~powerspec.tiers.symmetry.heuristic.sorted_degree_laplacian`); it is
an *estimate* with no error guarantee.  Every answer here is labelled so and
carries, per listed value, the rigorous Weyl bracket of the true eigenvalues
at the same sorted positions
(:func:`~powerspec.tiers.symmetry.heuristic.weyl_laplacian_brackets`).  The
exact spectrum (symmetry tier) remains the default; this is for comparison
with papers that use the estimate, and for sizes past the exact tiers.

>>> e = estimate("direct(P(3)^2)")
>>> [(round(v, 9), m) for v, m in e.atoms][:3], e.brackets[0][0] <= 0.0 <= e.brackets[0][1]
([(0.0, 1), (1.0, 3), (2.0, 2)], True)
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from decimal import ROUND_CEILING, ROUND_FLOOR, Context

from powerspec.algebra.engine import Engine
from powerspec.algebra.tree import Product
from powerspec.answers.answer import dump_json, json_count, json_value
from powerspec.errors import InputError, SizeLimitError
from powerspec.interfaces.report import vertices
from powerspec.queries.common import matrix_label, resolve
from powerspec.tiers.exact import symmetry_operands
from powerspec.tiers.symmetry.heuristic import sorted_degree_laplacian, weyl_laplacian_brackets

MAX_ROWS = 2_000_000
"""Largest number of index multisets (rows of the estimate) computed."""

MERGE_REL = 1e-12
"""Estimated values closer than this (relative) are one row: they differ by rounding only."""

METHOD = ("estimate: sorted-degree approximation (the i-th smallest factor Laplacian eigenvalue "
          "paired with the i-th smallest degree; an estimate, not certified); bounds: Weyl's "
          "inequalities for L = D - A bracket the true eigenvalues at the same sorted positions "
          "(rigorous, outward-rounded)")


def outward(x: float, rounding: str, digits: int = 12) -> str:
    """x rounded to ``digits`` significant digits towards -inf (ROUND_FLOOR) or +inf (ROUND_CEILING).

    >>> outward(-15.000000000000238, ROUND_FLOOR), outward(17.000000000002277, ROUND_CEILING)
    ('-15.0000000001', '17.0000000001')
    """
    d = Context(prec=digits, rounding=rounding).create_decimal(x)
    return f"{d:g}" if d == d.to_integral_value() else f"{d.normalize():f}" if abs(d) >= 1e-4 \
        else f"{d.normalize():e}"


@dataclass
class Estimate:
    """The estimate of a Laplacian spectrum: values, multiplicities and a Weyl bracket per row."""

    query: str
    expression: str
    matrix: str
    order: int
    atoms: list[tuple[float, int]]
    brackets: list[tuple[float, float]]
    descending: bool = False
    inputs: dict = field(default_factory=dict)
    method: str = METHOD

    def to_dict(self) -> dict:
        """The JSON object: the stable keys, ``atoms`` as ``[value, multiplicity]`` and
        ``brackets`` as ``[lower, upper]`` per atom (no ``radii``: estimates are not balls)."""
        return {"expression": self.expression, "matrix": self.matrix,
                "order": json_count(self.order), "method": self.method,
                "atoms": [[json_value(v)[0], json_count(m)] for v, m in self.atoms],
                "brackets": [[lo, hi] for lo, hi in self.brackets],
                "estimate": True, "query": self.query, "inputs": dict(self.inputs)}

    def to_json(self) -> str:
        """JSON text, read back by Python's json.loads."""
        return dump_json(self.to_dict()) + "\n"

    def to_text(self, head: int | None = None) -> str:
        """The table: estimate, Weyl bracket, multiplicity (``head`` rows at most)."""
        rows = list(zip(self.atoms, self.brackets, strict=True))
        shown = rows if head is None else rows[:head]
        lines = [f"powerspec {self.query} (estimate)"]
        for k, v in (("expression", self.expression), ("matrix", self.matrix),
                     ("order", vertices(self.order)), ("method", self.method)):
            lines.append(f"  {k:<11} {v}")
        total = sum(m for (_, m), _ in rows)
        lines.append(f"  {'atoms':<11} {len(rows)} distinct estimated values, {total} counted "
                     "with multiplicity")
        if len(shown) < len(rows):
            lines.append(f"  {'':<11} showing the first {len(shown)} rows")
        lines.append("")
        cells = [(f"{v:.12g}", f"[{outward(lo, ROUND_FLOOR)}, {outward(hi, ROUND_CEILING)}]", str(m))
                 for (v, m), (lo, hi) in shown]
        w = max([len("estimate")] + [len(a) for a, _, _ in cells])
        wb = max([len("Weyl bracket")] + [len(b) for _, b, _ in cells])
        lines.append(f"  {'estimate':>{w}}  {'Weyl bracket':<{wb}}  multiplicity")
        lines.extend(f"  {a:>{w}}  {b:<{wb}}  {c}" for a, b, c in cells)
        return "\n".join(lines) + "\n"


def _operands(expr, matrix: str, degrees: str):
    if matrix != "laplacian":
        raise InputError("--method estimate gives the sorted-degree estimate of Laplacian spectra; "
                         "use it with --matrix laplacian")
    node = resolve(expr)
    if not isinstance(node, Product) or node.comb.mode != "mul":
        raise InputError(f"{node.label()}: --method estimate is for direct, strong and mix(a, b) "
                         "products with a in {0, 1} and b != 0 (Cartesian Laplacians are exact by "
                         "the product rule); drop --method estimate")
    ops = symmetry_operands(Engine(direction=degrees), node)
    if ops is None:
        raise InputError(f"{node.label()}: --method estimate needs a product of powers of undirected "
                         "factors")
    rows = math.prod(math.comb(op.adjacency.shape[0] + op.copies - 1, op.copies) for op in ops)
    if rows > MAX_ROWS:
        raise SizeLimitError(f"the sorted-degree estimate of {node.label()} has {rows:.3g} distinct "
                             f"index multisets, over {MAX_ROWS:,}; use smaller powers, or 'cdf' and "
                             "'quantile' for the exact-moment bounds")
    return node, ops


def _merge(atoms: list[tuple[float, int]]) -> list[tuple[float, int]]:
    out: list[tuple[float, int]] = []
    for v, m in atoms:
        if out and abs(v - out[-1][0]) <= MERGE_REL * max(abs(v), abs(out[-1][0]), 1.0):
            out[-1] = (out[-1][0], out[-1][1] + m)
        else:
            out.append((v, m))
    return out


def _pair(atoms: list[tuple[float, int]], segments) -> list[tuple[float, float]]:
    """Per atom (sorted ascending) the Weyl bracket of the sorted positions it covers."""
    out, j, left = [], 0, segments[0][0]
    for _, m in atoms:
        lo, hi, need = segments[j][1], segments[j][2], m
        while need > 0:
            take = min(need, left)
            hi = max(hi, segments[j][2])
            need -= take
            left -= take
            if left == 0 and j + 1 < len(segments):
                j += 1
                left = segments[j][0]
        out.append((lo, hi))
    return out


def estimate(expr, matrix: str = "laplacian", *, degrees: str = "out", m: int | None = None,
             bottom: bool = False) -> Estimate:
    """The sorted-degree estimate of the Laplacian spectrum, each row with its Weyl bracket.

    With ``m`` only the m largest (``bottom``: smallest) distinct values are kept, in that order.
    """
    node, ops = _operands(expr, matrix, degrees)
    a, b = float(node.comb.a), float(node.comb.b)
    atoms = _merge(sorted_degree_laplacian(ops, a, b))
    brackets = _pair(atoms, weyl_laplacian_brackets(ops, a, b))
    label = matrix_label(matrix, node, degrees)
    if m is None:
        return Estimate("spectrum", node.label(), label, node.order, atoms, brackets,
                        inputs={"degrees": degrees, "method": "estimate"})
    idx = list(range(len(atoms)))
    idx = idx[:m] if bottom else idx[::-1][:m]
    return Estimate("top", node.label(), label, node.order, [atoms[i] for i in idx],
                    [brackets[i] for i in idx], descending=not bottom,
                    inputs={"m": m, "bottom": bottom, "degrees": degrees, "method": "estimate"})


__all__ = ["Estimate", "MAX_ROWS", "METHOD", "estimate"]
