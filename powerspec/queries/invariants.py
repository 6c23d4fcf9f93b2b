"""The ``invariants`` query: spectral invariants of a product at any k, each certified or bracketed.

Each invariant is ``{"value", "lower", "upper", "method"}`` (see
:mod:`~powerspec.queries.invariants_entries`): ``value`` is exact (an int, an
exact factored count, a rational) or a certified ball printed with only its
covered digits; ``lower`` / ``upper`` are rigorous bounds from the
certified radii, rounded outward; a bracket without a tight value has the
ball spanning it as its value; ``value`` None with a ``method`` saying why
when nothing rigorous is available.  Logs are natural.

The invariants (adjacency A, Laplacian L = D - A with out-degrees unless
``degrees="in"``, heat-kernel time t):

* ``spectral_radius``, ``log_spectral_radius``, ``epidemic_threshold`` (1/lambda_max);
* ``spectral_gap`` (lambda_1 - lambda_2 counted with multiplicity) and
  ``spectral_gap_distinct`` (lambda_1 minus the next distinct eigenvalue),
  from the high-precision atoms (operand differences for Cartesian rules);
* ``algebraic_connectivity`` and ``laplacian_spectral_radius``;
* ``nullity`` (multiplicity of 0 in A) and ``components`` (exact, from the
  graph structure, Weichsel 1962 for direct products);
* ``spanning_trees``, ``log_spanning_trees``, ``kirchhoff_index`` (matrix-tree theorem);
* ``energy``, ``estrada_index`` / ``log_estrada_index``, ``heat_trace`` / ``log_heat_trace``.

Where the Laplacian does not factor (direct / strong products of irregular
factors) the symmetry tier's blocks answer when its plan is small enough
(checked first); past that, ``laplacian_spectral_radius`` and
``algebraic_connectivity`` come from the blocks' ends alone (a larger budget,
also checked first), else Weyl brackets and moment bounds, and the method says so.
No source builds anything whose size grows with k.

>>> inv = invariants("cart(K(2)^3)").invariants
>>> inv["spectral_radius"]["value"], inv["nullity"]["value"], inv["spanning_trees"]["value"]
(3, 0, 384)
"""

from __future__ import annotations

import math

from powerspec.algebra.engine import DEFAULT_LIMIT
from powerspec.answers.answer import Answer
from powerspec.errors import InputError
from powerspec.queries.common import resolve
from powerspec.queries.invariants_context import Context
from powerspec.queries.invariants_entries import entry, unavailable
from powerspec.queries.invariants_spectral import (
    algebraic_connectivity,
    epidemic_threshold,
    laplacian_radius,
    nullity,
    spectral_gaps,
    spectral_radius,
)
from powerspec.queries.invariants_sums import energy, exp_sum, spanning_trees

EXACT_LIMIT = 200_000
"""Distinct eigenvalues the invariants query enumerates by default (keeps queries fast)."""


def _components(cx: Context) -> dict:
    if not cx.undirected or not cx.nonneg:
        return unavailable("not defined here: needs an undirected graph with non-negative weights")
    s = cx.shape
    if s is None:
        return unavailable("not available: " + (cx.why(("shape",)) or "unknown structure"))
    return entry(s.c, s.c, s.c, "exact: graph structure -- components multiply over Cartesian and "
                                "strong products; direct products by Weichsel 1962 (a pair of connected "
                                "bipartite graphs gives two components)")


def invariants(expr, *, limit: int | None = None, degrees: str = "out", t: float = 1.0) -> Answer:
    """The ``invariants`` query: an Answer whose ``invariants`` maps names to entries.

    ``limit`` caps the distinct eigenvalues enumerated for exact sums
    (default :data:`EXACT_LIMIT`); ``t`` is the heat-kernel time.

    >>> inv = invariants("cart(C(4)^2)").invariants
    >>> inv["algebraic_connectivity"]["value"], inv["components"]["value"]
    (2, 1)
    """
    if degrees not in ("out", "in"):
        raise InputError(f"degree direction must be 'out' or 'in', got {degrees!r}")
    try:
        t = float(t)
    except (TypeError, ValueError):
        raise InputError(f"the heat-kernel time t must be a number, got {t!r}") from None
    if not math.isfinite(t) or t < 0 or t > 1e15:
        raise InputError(f"the heat-kernel time t must be finite, >= 0 and <= 1e15, got {t!r}")
    if limit is not None and (not isinstance(limit, int) or isinstance(limit, bool) or limit < 1):
        raise InputError(f"the limit must be a positive integer, got {limit!r}")
    node = resolve(expr)
    cx = Context(node, EXACT_LIMIT if limit is None else min(limit, DEFAULT_LIMIT), degrees, t)
    out: dict[str, dict] = {}
    out["spectral_radius"], out["log_spectral_radius"], rho = spectral_radius(cx)
    out["epidemic_threshold"] = epidemic_threshold(cx, rho)
    out["spectral_gap"], out["spectral_gap_distinct"] = spectral_gaps(cx)
    out["algebraic_connectivity"], alg_lower = algebraic_connectivity(cx)
    out["laplacian_spectral_radius"], lap_upper = laplacian_radius(cx)
    out["nullity"] = nullity(cx)
    out["components"] = _components(cx)
    out["spanning_trees"], out["log_spanning_trees"], out["kirchhoff_index"] = \
        spanning_trees(cx, alg_lower, lap_upper)
    out["energy"] = energy(cx, rho)
    out["estrada_index"], out["log_estrada_index"] = exp_sum(cx, "adjacency")
    out["heat_trace"], out["log_heat_trace"] = exp_sum(cx, "laplacian", lap_upper, alg_lower)
    method = ("each invariant carries its own method; values are exact or certified balls, lower/upper "
              "are rigorous (outward-rounded) bounds")
    return Answer("invariants", node.label(), "adjacency/laplacian", node.order, method,
                  invariants=out, inputs={"limit": cx.limit, "degrees": degrees, "t": t},
                  notes=[f"heat_trace uses t = {t:g}; spectral_gap is lambda_1 - lambda_2 of the "
                         "adjacency matrix counted with multiplicity; logs are natural"])


__all__ = ["EXACT_LIMIT", "invariants"]
