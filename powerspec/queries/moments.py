"""The ``moments`` query: exact spectral moments tr(M^p) as an Answer."""

from __future__ import annotations

from powerspec.algebra.moments import (
    MomentEngine,
    _answer_value,
    _check_order,
    _finish,
    moments_method,
)
from powerspec.answers.answer import Answer
from powerspec.queries.common import resolve


def moment_answer(expr, order: int = 8, matrix: str = "adjacency", *, degrees: str = "out",
                  per_vertex: bool = False):
    """The ``moments`` query: an Answer with ``moments=[(p, tr(M^p)), ...]``, exact.

    Integral values stay Python ints; non-integral ones are Fractions (written
    as numbers in JSON).

    >>> moment_answer("cart(C(4)^2)", order=2).moments
    [(1, 0), (2, 64)]
    """
    node = resolve(expr)
    _check_order(order)
    eng = MomentEngine(order, degrees)
    vals = _finish(node, eng.normalised(node, matrix), per_vertex)
    what = "tr(M^p)/order (moments of the eigenvalue distribution)" if per_vertex else "tr(M^p)"
    method = f"{moments_method(eng)}; values are {what}"
    label = matrix
    if matrix in ("laplacian", "signless", "transition") and node.directed:
        label = f"{matrix} ({degrees}-degree)"
    return Answer("moments", node.label(), label, node.order, method,
                  moments=[(p, _answer_value(v)) for p, v in vals],
                  inputs={"order": order, "degrees": degrees, "per_vertex": per_vertex})


__all__ = ["moment_answer"]
