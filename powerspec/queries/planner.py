"""The planner: turns a query into an :class:`~powerspec.answers.Answer`.

It resolves the expression, checks the size limit from a cheap upper bound
before any work, picks the tier that can answer (today: exact enumeration or
best-first extremes) and records how the answer was obtained.  It never
builds an n^k matrix.
"""

from __future__ import annotations

import math

from powerspec.algebra.engine import BOUND_CAP, DEFAULT_LIMIT, Engine, Node
from powerspec.algebra.kinds import MATRIX_KINDS
from powerspec.answers.answer import Answer, _text_int
from powerspec.errors import InputError, NotExactError, SizeLimitError
from powerspec.numbers.counts import EXPAND_BITS, bit_length
from powerspec.queries import distribution
from powerspec.queries.common import matrix_label, resolve
from powerspec.tiers.exact import exact_spectrum

# The extremes search (algebra.extremes) and the moment bounds (algebra.moments,
# tiers.momentbounds) are imported where they are used: the command line's cdf, count and
# quantile start faster without them.


def _bound_text(bound: int) -> str:
    return "more than 4.6e18" if bound >= BOUND_CAP else "up to " + _text_int(bound)


def _engine(matrix: str, limit: int | None, degrees: str) -> Engine:
    if matrix not in MATRIX_KINDS:
        raise InputError(f"unknown matrix kind {matrix!r}; choose one of {', '.join(MATRIX_KINDS)}")
    return Engine(DEFAULT_LIMIT if limit is None else limit, direction=degrees)


def spectrum(expr, matrix: str = "adjacency", *, limit: int | None = None,
             degrees: str = "out", workers: int = 1, scheduler: str | None = None,
             progress=None) -> Answer:
    """The full spectrum (certified atoms, exact multiplicities), or SizeLimitError saying what it
    would need.

    >>> spectrum("cart(K(2)^3)").atoms.atoms()
    [(-3.0, 1), (-1.0, 3), (1.0, 3), (3.0, 1)]
    """
    node = resolve(expr)
    eng = _engine(matrix, limit, degrees)
    bound = eng.bound(node, matrix)
    if bound <= eng.limit and not eng.fits(node, matrix):
        raise SizeLimitError(
            f"the exact spectrum of {node.label()} has up to {bound} distinct eigenvalues whose "
            f"exact multiplicities (up to {bit_length(node.order)} bits each) would need more "
            "than 2 GiB; ask for the extremes with 'top'")
    try:
        if bit_length(node.order) > EXPAND_BITS:
            # astronomically many vertices: when few distinct eigenvalues exist, the extremes
            # search lists them all with closed-form counts (e.g. +-1, 2^(k-1) times each)
            whole = _all_by_extremes(eng, node, matrix)
            if whole is not None:
                return Answer("spectrum", node.label(), matrix_label(matrix, node, degrees),
                              node.order, "exact: " + whole[1] + " (every distinct eigenvalue)",
                              atoms=whole[0], inputs={"limit": eng.limit, "degrees": degrees})
        sp, method = exact_spectrum(eng, node, matrix, workers=workers, scheduler=scheduler,
                                    progress=progress)
    except SizeLimitError as exc:
        raise SizeLimitError(
            f"the exact spectrum of {node.label()} may hold {_bound_text(bound)} distinct "
            f"eigenvalues ({_text_int(node.order)} vertices), over the limit of {eng.limit} "
            f"({exc}); ask for the extremes with 'top', for distribution questions with "
            "'cdf', 'count' or 'quantile', or raise --limit") from exc
    if method.startswith("exact: eigenvalues combined") and len(sp) < bound < 10**12:
        method += f" (merged {bound} candidate values to {len(sp)})"
    return Answer("spectrum", node.label(), matrix_label(matrix, node, degrees), node.order,
                  method, atoms=sp, inputs={"limit": eng.limit, "degrees": degrees})


def _all_by_extremes(eng: Engine, node: Node, matrix: str):
    """(spectrum, method) listing every distinct eigenvalue via the extremes search, or None
    when there are more than the limit (or the search cannot run)."""
    from powerspec.algebra.extremes import extremes, search_size

    cap = min(eng.limit, 10_000)
    size = search_size(eng, node, matrix)
    if size is None or size > 4 * cap:
        return None
    try:
        sp, how = extremes(eng, node, matrix, cap + 1, max_states=4 * cap)
    except (SizeLimitError, NotExactError):
        return None
    if len(sp) > cap or sp.order != node.order:
        return None
    return sp, how


def top(expr, m: int = 5, matrix: str = "adjacency", *, bottom: bool = False,
        limit: int | None = None, degrees: str = "out", workers: int = 1,
        scheduler: str | None = None, progress=None) -> Answer:
    """The m largest (or smallest) distinct eigenvalues with exact multiplicities, any power.

    >>> top("cart(C(5)^1000)", m=1).atoms.atoms()
    [(2000.0, 1)]
    """
    from powerspec.algebra.extremes import extremes, select

    if not isinstance(m, int) or isinstance(m, bool) or m < 1:
        raise InputError(f"m must be a positive integer, got {m!r}")
    node = resolve(expr)
    eng = _engine(matrix, limit, degrees)
    try:
        sp, how = extremes(eng, node, matrix, m, bottom)
        how = "exact: " + how
    except NotExactError:
        full, how = exact_spectrum(eng, node, matrix, workers=workers, scheduler=scheduler,
                                   progress=progress)
        sp = select(full, m, bottom)
    return Answer("top", node.label(), matrix_label(matrix, node, degrees), node.order,
                  how, atoms=sp, descending=not bottom,
                  inputs={"m": m, "bottom": bottom, "limit": eng.limit, "degrees": degrees})


# ------------------------------------------------------- distribution queries
def _moment_fallback(node: Node, matrix: str, exc: NotExactError) -> bool:
    # The exact, bracket and law tiers need a spectrum that follows from the factors';
    # the moments of D(x)D - A(x)A still do, so CMS bounds answer there.
    return matrix in ("laplacian", "signless") and not node.directed and "not exact" in str(exc)


def _moment_cdf(node: Node, matrix: str, degrees: str):
    """(x -> (lower, upper) bounds on F(x), method text) from exact moments, computed once."""
    from powerspec.algebra.moments import MomentEngine
    from powerspec.tiers.momentbounds import DEFAULT_ORDER, cdf_bounds, cdf_bounds_from_moments

    if node.directed:
        cdf_bounds_from_moments(node, matrix, 0.0, direction=degrees)  # raises the clear error
    tau = MomentEngine(DEFAULT_ORDER, degrees).normalised(node, matrix)
    n_vert = node.order if isinstance(node.order, int) else None
    how = (f"Chebyshev-Markov-Stieltjes bounds from the exact moments up to order {DEFAULT_ORDER} "
           f"({DEFAULT_ORDER // 2 + 1}-node quadrature through x, exact rational recurrence)")
    return (lambda x: cdf_bounds(tau, x, lattice=n_vert)), how


def _moment_answer(query: str, node: Node, matrix: str, degrees: str, est, lo, hi, how: str,
                   inputs: dict) -> Answer:
    return Answer(query, node.label(), matrix_label(matrix, node, degrees), node.order,
                  "moments: " + how + "; estimate: midpoint of the bounds", estimate=est,
                  lower=lo, upper=hi, inputs={**inputs, "degrees": degrees, "tier": "moments"})


def cdf(expr, x: float, matrix: str = "adjacency", *, method: str = "auto", tol: float | None = None,
        limit: int | None = None, degrees: str = "out") -> Answer:
    """Fraction of eigenvalues <= x with rigorous bounds (see :mod:`powerspec.distribution`).

    Laplacian-type spectra of non-regular direct/strong products, which do not
    factor, get Chebyshev-Markov-Stieltjes bounds from their exact moments.

    >>> a = cdf("cart(K(2)^3)", 0.0)
    >>> (a.lower, a.upper)
    (0.5, 0.5)
    """
    node = resolve(expr)
    try:
        return distribution.cdf(node, x, matrix, method=method, tol=tol, limit=limit, degrees=degrees)
    except NotExactError as exc:
        if not _moment_fallback(node, matrix, exc) or method not in ("auto", "law"):
            raise
    bounds, how = _moment_cdf(node, matrix, degrees)
    lo, hi = bounds(x)
    return _moment_answer("cdf", node, matrix, degrees, (lo + hi) / 2, lo, hi, how,
                          {"x": x, "method": method})


def count(expr, a: float, b: float, matrix: str = "adjacency", *, method: str = "auto",
          tol: float | None = None, limit: int | None = None, degrees: str = "out") -> Answer:
    """Number of eigenvalues in [a, b] with rigorous bounds, out of the exact order.

    >>> count("cart(K(2)^4)", -0.5, 0.5).estimate    # C(4, 2) = 6 eigenvalues at 0
    6
    """
    node = resolve(expr)
    try:
        return distribution.count(node, a, b, matrix, method=method, tol=tol, limit=limit,
                                  degrees=degrees)
    except NotExactError as exc:
        if not _moment_fallback(node, matrix, exc) or method not in ("auto", "law"):
            raise
    if a > b:
        raise InputError(f"count needs a <= b, got a = {a}, b = {b}")
    bounds, how = _moment_cdf(node, matrix, degrees)
    # Bounds are on F(x) = P(X <= x); F(a-) >= F(a - delta) for any delta > 0.
    delta = 1e-9 * max(1.0, abs(a), abs(b))
    lo_a = bounds(a - delta)[0]
    hi_a = bounds(a)[1]
    lo_b, hi_b = bounds(b)
    n = node.order
    if not isinstance(n, int):
        raise SizeLimitError("the product's order is kept factored; ask for cdf (a fraction) instead")
    # F(b) >= lo_b and F(a-) <= hi_a; F(b) <= hi_b and F(a-) >= lo_a.
    lower = max(0, math.ceil(n * max(0.0, lo_b - hi_a) - 1e-9))
    upper = min(n, math.floor(n * min(1.0, hi_b - lo_a) + 1e-9))
    return _moment_answer("count", node, matrix, degrees, (lower + upper) // 2, lower, upper, how,
                          {"a": a, "b": b, "method": method})


def quantile(expr, q: float, matrix: str = "adjacency", *, method: str = "auto",
             tol: float | None = None, limit: int | None = None, degrees: str = "out") -> Answer:
    """The q-quantile of the eigenvalue distribution with rigorous bounds.

    >>> quantile("cart(K(2)^4)", 0.5).estimate
    0.0
    """
    node = resolve(expr)
    try:
        return distribution.quantile(node, q, matrix, method=method, tol=tol, limit=limit,
                                     degrees=degrees)
    except NotExactError as exc:
        if not _moment_fallback(node, matrix, exc) or method not in ("auto", "law"):
            raise
    if not (0.0 < q < 1.0):
        raise InputError(f"q must lie strictly between 0 and 1, got {q}")
    factors = node.leaves()
    if any((f.adjacency.data < 0).any() for f in factors):
        raise NotExactError("moment-based quantiles need non-negative weights (for a support bound)")
    # With non-negative weights the Laplacian/signless spectrum lies in [0, 2 d_max] (Gershgorin).
    eng = _engine(matrix, limit, degrees)
    top_degree = float(max(eng.degrees(node).real_parts()))
    lo_x, hi_x = 0.0, 2.0 * top_degree
    bounds, how = _moment_cdf(node, matrix, degrees)

    def bisect(side: int) -> float:
        # smallest x (to 1e-7 of the range) whose bound on F(x) reaches q
        a, b = lo_x, hi_x
        while b - a > 1e-6 * max(1.0, hi_x):
            mid = (a + b) / 2
            if bounds(mid)[side] >= q:
                b = mid
            else:
                a = mid
        return a, b

    # Q >= inf{x: upper(x) >= q} and Q <= inf{x: lower(x) >= q}
    lower = bisect(1)[0]
    upper = bisect(0)[1]
    return _moment_answer("quantile", node, matrix, degrees, (lower + upper) / 2, lower, upper,
                          "inverted " + how, {"q": q, "method": method})
