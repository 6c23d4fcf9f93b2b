"""The planner: turns a query into an :class:`~powerspec.answers.Answer`.

It resolves the expression, checks the size limit from a cheap upper bound
before any work, picks the tier that can answer (today: exact enumeration or
best-first extremes) and records how the answer was obtained.  It never
builds an n^k matrix.
"""

from __future__ import annotations

from pathlib import Path

from .algebra import DEFAULT_LIMIT, Engine, Leaf, Node
from .answers import Answer, _text_int
from .errors import InputError, SizeLimitError
from .expressions import parse
from .extremes import extremes
from .factors import Factor, from_matrix
from .products import MATRIX_KINDS


def resolve(expr, base_dir: str | Path | None = None) -> Node:
    """An expression node from text, a node, a Factor or any matrix-like object.

    >>> resolve("cart(cycle(4)^2)").order
    16
    """
    if isinstance(expr, str):
        return parse(expr, base_dir)
    if isinstance(expr, Node.__args__):
        return expr
    if isinstance(expr, Factor):
        return Leaf(expr)
    return Leaf(from_matrix(expr))


def _engine(matrix: str, limit: int | None, degrees: str) -> Engine:
    if matrix not in MATRIX_KINDS:
        raise InputError(f"unknown matrix kind {matrix!r}; choose one of {', '.join(MATRIX_KINDS)}")
    return Engine(DEFAULT_LIMIT if limit is None else limit, direction=degrees)


def _matrix_label(matrix: str, node: Node, degrees: str) -> str:
    if matrix in ("laplacian", "signless", "transition") and node.directed:
        return f"{matrix} ({degrees}-degree)"
    return matrix


def spectrum(expr, matrix: str = "adjacency", *, limit: int | None = None,
             degrees: str = "out") -> Answer:
    """The full exact spectrum, or SizeLimitError saying what it would need.

    >>> spectrum("cart(complete(2)^3)").atoms.atoms()
    [(-3.0, 1), (-1.0, 3), (1.0, 3), (3.0, 1)]
    """
    node = resolve(expr)
    eng = _engine(matrix, limit, degrees)
    bound = eng.bound(node, matrix)
    if bound <= eng.limit and not eng.fits(node, matrix):
        raise SizeLimitError(
            f"the exact spectrum of {node.label()} has up to {bound} distinct eigenvalues whose "
            f"exact multiplicities (up to {node.order.bit_length()} bits each) would need more "
            "than 2 GiB; ask for the extremes with 'top'"
        )
    try:
        sp = eng.spectrum(node, matrix)
    except SizeLimitError as exc:
        raise SizeLimitError(
            f"the exact spectrum of {node.label()} may hold up to {_text_int(bound)} distinct "
            f"eigenvalues ({_text_int(node.order)} vertices), over the limit of {eng.limit} "
            f"({exc}); ask for the extremes with 'top', for distribution questions with "
            "'cdf', 'count' or 'quantile', or raise --limit"
        ) from exc
    method = "exact: eigenvalues combined from the factors' spectra"
    if len(sp) < bound:
        method += f" (merged {bound} candidate values to {len(sp)})" if bound < 10**12 else ""
    return Answer("spectrum", node.label(), _matrix_label(matrix, node, degrees), node.order,
                  method, atoms=sp, inputs={"limit": eng.limit, "degrees": degrees})


def top(expr, m: int = 5, matrix: str = "adjacency", *, bottom: bool = False,
        limit: int | None = None, degrees: str = "out") -> Answer:
    """The m largest (or smallest) distinct eigenvalues with exact multiplicities, any power.

    >>> top("cart(cycle(5)^1000)", m=1).atoms.atoms()
    [(2000.0, 1)]
    """
    if not isinstance(m, int) or isinstance(m, bool) or m < 1:
        raise InputError(f"m must be a positive integer, got {m!r}")
    node = resolve(expr)
    eng = _engine(matrix, limit, degrees)
    sp, how = extremes(eng, node, matrix, m, bottom)
    return Answer("top", node.label(), _matrix_label(matrix, node, degrees), node.order,
                  "exact: " + how, atoms=sp,
                  inputs={"m": m, "bottom": bottom, "limit": eng.limit, "degrees": degrees})
