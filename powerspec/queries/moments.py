"""The ``moments`` query: exact spectral moments tr(M^p) as an Answer.

Values are exact: Python ints (integer weights), Fractions (decimal weights
at their exact binary value), or -- for products with astronomically many
vertices -- exact factored counts such as ``40 * 3^1999998`` (written as
strings in JSON, like every integer of more than 4000 digits).
"""

from __future__ import annotations

from powerspec.algebra.moment_domains import EXACT
from powerspec.algebra.moment_factored import factorable, factored
from powerspec.algebra.moments import (
    MomentEngine,
    check_order,
    moments_method,
    plain,
    scale_by_order,
)
from powerspec.algebra.words import WordTraces
from powerspec.answers.answer import Answer
from powerspec.errors import SizeLimitError
from powerspec.queries.common import matrix_label, resolve


def moment_answer(expr, order: int = 8, matrix: str = "adjacency", *, degrees: str = "out",
                  per_vertex: bool = False) -> Answer:
    """The ``moments`` query: an Answer with ``moments=[(p, tr(M^p)), ...]``, exact.

    With ``per_vertex`` the values are tr(M^p)/order, the moments of the
    eigenvalue distribution.  Size checks (digit limits, word-expansion and
    factor-trace work) happen before the work; SizeLimitError says what to
    ask instead.

    >>> moment_answer("cart(C(4)^2)", order=2).moments
    [(1, 0), (2, 64)]
    >>> moment_answer("direct(K(2)^5000000)", order=2).moments
    [(1, 0), (2, 2^5000000)]
    """
    node = resolve(expr)
    check_order(order)
    eng = MomentEngine(order, degrees)
    how_extra = ""
    try:
        tau = eng.normalised(node, matrix)
        if per_vertex:
            vals = [plain(v) for v in tau]
        else:
            vals = [plain(scale_by_order(node.order, v)) for v in tau]
    except SizeLimitError:
        if per_vertex or not factorable(node, matrix):
            raise
        vals = [plain(v) for v in factored(node, matrix, order, eng.normalised,
                                           WordTraces(EXACT, order, degrees))]
        how_extra = "; kept in exact factored form (sums of powers of operand traces)"
    what = "tr(M^p)/order (moments of the eigenvalue distribution)" if per_vertex else "tr(M^p)"
    method = f"{moments_method(eng)}{how_extra}; values are {what}"
    return Answer("moments", node.label(), matrix_label(matrix, node, degrees), node.order, method,
                  moments=[(p, v) for p, v in enumerate(vals) if p],
                  inputs={"order": order, "degrees": degrees, "per_vertex": per_vertex})


__all__ = ["moment_answer"]
