"""Factor families in textbook notation, with their closed-form spectra.

``P(n)`` path, ``C(n)`` cycle, ``K(n)`` complete graph, ``K(m, n)`` complete
bipartite graph (the star is ``K(1, n)``), ``J(n)`` the all-ones matrix,
``dicycle(n, w)`` a directed cycle with arc weights, ``scale(c, G)``,
``loops(c, G)`` and the shipped demo ``motif()``.

Closed forms are written for the *structure* of a family and read the actual
weights off the factor's matrix: a factor whose off-diagonal weights all
equal w and whose loops all equal l has the eigenvalues of w G + l I.  So a
scaled or looped family keeps an exact closed form for the float64 matrix
it really holds.  Values are exact rationals where rational (Niven's theorem
for the cosines, perfect squares for the square roots) and certified Arb
balls otherwise.  Spectra used (textbook, e.g. Brouwer & Haemers, *Spectra
of Graphs*, 2012, ch. 1 -- from memory; each is tested against numpy):

* P_n: adjacency 2 cos(pi j / (n+1)), j = 1..n; Laplacian (= signless, P_n is
  bipartite) 2 - 2 cos(pi j / n), j = 0..n-1; transition cos(pi j / (n-1)),
  j = 0..n-1 (n >= 2), normalized Laplacian 1 - cos(pi j / (n-1));
* C_n: adjacency 2 cos(2 pi j / n), j = 0..n-1 (regular: other kinds follow);
* K_n: n - 1 once, -1 (n - 1 times);
* K_{m,n}: adjacency +-sqrt(mn), 0 (m + n - 2 times); Laplacian and signless
  0, m (n - 1 times), n (m - 1 times), m + n; transition 1, -1, 0 (m + n - 2
  times); normalized Laplacian 0, 2, 1 (m + n - 2 times);
* dicycle with arc weights w_i: the n-th roots of prod w_i (the adjacency is a
  weighted cyclic shift, whose n-th power is (prod w_i) I).
"""

from __future__ import annotations

import functools
import io
from collections.abc import Callable
from fractions import Fraction
from functools import cache
from importlib import resources

import numpy as np
import scipy.sparse as sp
from flint import fmpq

from powerspec.errors import InputError, SizeLimitError
from powerspec.factors.factor import Factor, from_matrix
from powerspec.factors.matrix import _check_count, _check_real, _format_number
from powerspec.factors.symbolic_families import dicycle_spectrum, unit_spectrum
from powerspec.numbers import hp
from powerspec.numbers.hp import rational, working

MAX_FAMILY_ORDER = 1_000_000
"""Largest order of a family factor (its closed form is evaluated atom by atom)."""

MAX_FAMILY_NNZ = 4_000_000
"""Largest number of stored adjacency entries of a family factor (memory)."""

REUSE_NNZ = 4096
"""Family members with at most this many stored entries are built once per process and reused."""

REUSE_MAX = 512
"""Most family members kept for reuse (the oldest is dropped first)."""

Form = Callable[[str, sp.csr_array], list | None]

_BUILT: dict[tuple, Factor] = {}


def _reused(build: Callable[..., Factor]) -> Callable[..., Factor]:
    """Build a small family member once and hand out the same immutable Factor afterwards.

    A :class:`Factor` is an immutable value (its certified spectra are memoised inside it),
    so ``K(2)`` built twice is the same factor twice.  The key is the family and its exact
    positional integer arguments; calls with anything else (keywords, weights, non-int
    numbers) build afresh and so keep their own validation.  Only members with at most
    :data:`REUSE_NNZ` stored entries are kept, at most :data:`REUSE_MAX` of them.
    """

    @functools.wraps(build)
    def family(*args, **kwargs) -> Factor:
        if kwargs or not all(type(a) is int for a in args):
            return build(*args, **kwargs)
        key = (build.__name__, *args)
        f = _BUILT.get(key)
        if f is None:
            f = build(*args)
            if f.nnz <= REUSE_NNZ:
                if len(_BUILT) >= REUSE_MAX:
                    for oldest in list(_BUILT)[:1]:  # list(): a snapshot, safe under threads
                        _BUILT.pop(oldest, None)
                _BUILT[key] = f
        return f

    return family


def _uniform(adj: sp.csr_array) -> tuple[fmpq, fmpq] | None:
    """(w, l) when every off-diagonal stored weight is w and every loop is l, else None."""
    coo = adj.tocoo()
    off = coo.row != coo.col
    w = np.unique(coo.data[off])
    diag = adj.diagonal()
    l_ = np.unique(diag)
    if w.size > 1 or l_.size > 1:
        return None
    return rational(float(w[0]) if w.size else 0.0), rational(float(l_[0]))


def _affine(values: list[tuple], w: fmpq, shift: fmpq) -> list[tuple]:
    with working():
        return [(w * v + shift, m) for v, m in values]


def _grouped(pairs: list[tuple]) -> list[tuple]:
    """Merge equal exact values (balls are left as they are)."""
    out: dict = {}
    rest = []
    for v, m in pairs:
        if isinstance(v, fmpq):
            out[v] = out.get(v, 0) + m
        else:
            rest.append((v, m))
    return [(v, m) for v, m in out.items()] + rest


def _unit(family: str, args: tuple[int, ...]) -> Callable[[str], list | None]:
    """The unit-weight closed form of a family member, in exact rationals and Arb balls."""
    return lambda kind: unit_spectrum(family, args, kind, hp)


def _ends_unit(family: str, n: int, m: int) -> Callable[[str], list | None]:
    """Only the m largest and m smallest distinct unit-weight eigenvalues of P_n or C_n.

    The closed forms are monotone in their index j, so the ends are the first and last
    indices (the same formulas as the full closed form, Brouwer & Haemers ch. 1 -- from
    memory).  Used by the extremes search of Cartesian products of very large factors.
    """
    def unit(kind: str) -> list | None:
        with working():
            if family == "C":
                if kind != "adjacency":
                    return None
                js = sorted(set(range(min(m + 1, n // 2 + 1)))
                            | set(range(max(0, n // 2 - m), n // 2 + 1)))
                return [(2 * hp.cos2pi(Fraction(j, n)), 1 if 2 * j in (0, n) else 2) for j in js]
            if kind == "adjacency":
                js = sorted(set(range(1, min(m, n) + 1)) | set(range(max(1, n - m + 1), n + 1)))
                return [(2 * hp.cos2pi(Fraction(j, 2 * (n + 1))), 1) for j in js]
            if kind in ("laplacian", "signless"):
                js = sorted(set(range(min(m, n))) | set(range(max(0, n - m), n)))
                return [(2 - 2 * hp.cos2pi(Fraction(j, 2 * n)), 1) for j in js]
            return None
    return unit


def _form(unit: Callable[[str], list | None], kinds: tuple[str, ...],
          ends: Callable[[int], Callable[[str], list | None]] | None = None) -> Form:
    """Closed form of w G + l I from the unit-weight spectra ``unit(kind)`` of G.

    With ``ends=m`` the form returns only the m largest and m smallest distinct
    eigenvalues when the family can give them cheaply (else None).
    """

    def form(kind: str, adj: sp.csr_array, ends_m: int | None = None) -> list | None:
        if ends_m is not None:
            if ends is None:
                return None
            use = ends(ends_m)
            if use(kind) is None:
                return None
        else:
            use = unit
        wl = _uniform(adj)
        if wl is None or kind not in kinds:
            return None
        w, l_ = wl
        if w == 0:
            return None
        if kind == "adjacency":
            return _affine(use(kind), w, l_)
        if kind == "laplacian":
            return _affine(use(kind), w, fmpq(0))
        if kind == "signless":
            return _affine(use(kind), w, 2 * l_)
        if l_ != 0 or (kind == "normalized" and w < 0):
            return None
        return use(kind)  # transition and normalized do not see a common weight

    return form


def _family(rows: np.ndarray, cols: np.ndarray, n: int, name: str, form: Form) -> Factor:
    if rows.size > MAX_FAMILY_NNZ:
        raise SizeLimitError(f"{name} would store {rows.size} adjacency entries, more than "
                             f"{MAX_FAMILY_NNZ}; use a smaller family member")
    data = np.ones(len(rows), dtype=np.float64)
    adj = sp.coo_array((data, (rows, cols)), shape=(n, n))
    return Factor(adj, name, form)


def _order(n: int, what: str) -> None:
    if n > MAX_FAMILY_ORDER:
        raise SizeLimitError(f"{what} has {n} vertices, more than the {MAX_FAMILY_ORDER} a family "
                             "factor may have; use a smaller one")


# --------------------------------------------------------------------- families
@_reused
def P(n: int) -> Factor:
    """The path P_n on n >= 1 vertices (0 - 1 - ... - n-1).

    >>> P(3).eigenvalues().round(6).tolist()
    [-1.414214, 0.0, 1.414214]
    """
    n = _check_count(n, "P(n)", 1)
    _order(n, f"P({n})")
    i = np.arange(n - 1)
    rows = np.concatenate([i, i + 1])
    cols = np.concatenate([i + 1, i])
    kinds = ("adjacency", "laplacian", "signless", "transition", "normalized")
    return _family(rows, cols, n, f"P({n})",
                   _form(_unit("P", (n,)), kinds, lambda m: _ends_unit("P", n, m)))


@_reused
def C(n: int) -> Factor:
    """The cycle C_n on n >= 3 vertices.

    >>> C(3).eigenvalues().tolist()
    [-1.0, -1.0, 2.0]
    """
    n = _check_count(n, "C(n)", 3)
    _order(n, f"C({n})")
    i = np.arange(n)
    rows = np.concatenate([i, (i + 1) % n])
    cols = np.concatenate([(i + 1) % n, i])

    return _family(rows, cols, n, f"C({n})",
                   _form(_unit("C", (n,)), ("adjacency",), lambda m: _ends_unit("C", n, m)))


_ABSENT = object()


@_reused
def K(m: int, n: int = _ABSENT) -> Factor:
    """The complete graph K_m (one argument) or the complete bipartite graph K_{m,n} (two).

    K_m, m >= 1: vertices 0..m-1.  K_{m,n}, m, n >= 1: vertices 0..m-1 | m..m+n-1;
    the star with n leaves is K(1, n).

    >>> K(4).eigenvalues().tolist()
    [-1.0, -1.0, -1.0, 3.0]
    >>> K(1, 4).eigenvalues().tolist()
    [-2.0, 0.0, 0.0, 0.0, 2.0]
    """
    if n is _ABSENT:
        m = _check_count(m, "K(n)", 1)
        _order(m, f"K({m})")
        if m * (m - 1) > MAX_FAMILY_NNZ:
            raise SizeLimitError(f"K({m}) would store {m * (m - 1)} adjacency entries, more than "
                                 f"{MAX_FAMILY_NNZ}; use a smaller family member")
        rows, cols = np.nonzero(~np.eye(m, dtype=bool))
        return _family(rows, cols, m, f"K({m})", _form(_unit("K", (m,)), ("adjacency",)))
    m = _check_count(m, "K(m, n)", 1, "m")
    n = _check_count(n, "K(m, n)", 1, "n")
    _order(m + n, f"K({m}, {n})")
    if 2 * m * n > MAX_FAMILY_NNZ:
        raise SizeLimitError(f"K({m}, {n}) would store {2 * m * n} adjacency entries, more than "
                             f"{MAX_FAMILY_NNZ}; use a smaller family member")
    left = np.repeat(np.arange(m), n)
    right = np.tile(np.arange(m, m + n), m)
    rows = np.concatenate([left, right])
    cols = np.concatenate([right, left])

    kinds = ("adjacency", "laplacian", "signless", "transition", "normalized")
    return _family(rows, cols, m + n, f"K({m}, {n})", _form(_unit("K", (m, n)), kinds))


@_reused
def J(n: int) -> Factor:
    """The all-ones matrix J_n, n >= 1 (K_n with a loop of weight 1 at every vertex).

    Eigenvalues n once and 0 (n-1 times), exact.  The expected adjacency of a
    block model with c equal communities of size N is P (x) J_N.

    >>> J(3).eigenvalues().tolist()
    [0.0, 0.0, 3.0]
    """
    n = _check_count(n, "J(n)", 1)
    _order(n, f"J({n})")
    if n * n > MAX_FAMILY_NNZ:
        raise SizeLimitError(f"J({n}) would store {n * n} entries, more than {MAX_FAMILY_NNZ}; "
                             "use a smaller family member")
    rows, cols = np.nonzero(np.ones((n, n), dtype=bool))
    # J_n = K_n + I: the K_n form reads the unit loop off the matrix
    return _family(rows, cols, n, f"J({n})", _form(_unit("J", (n,)), ("adjacency",)))


def _dicycle_form(n: int) -> Form:
    def form(kind: str, adj: sp.csr_array) -> list | None:
        if kind != "adjacency":
            return None
        diag = np.unique(adj.diagonal())
        if diag.size > 1:
            return None
        loop = rational(float(diag[0]))
        dense_w = [float(adj[i, (i + 1) % n]) for i in range(n)]
        if adj.nnz != sum(1 for w in dense_w if w) + (n if loop != 0 else 0):
            return None
        return dicycle_spectrum([rational(w) for w in dense_w], loop, hp)
    return form


@_reused
def dicycle(n: int, w=None) -> Factor:
    """The directed cycle i -> i+1 (mod n), n >= 2, with optional arc weights w[i] on i -> i+1.

    Without weights the eigenvalues are the n-th roots of unity.  With
    weights they are the n-th roots of prod w_i: g exp(2 pi i j / n) with
    g = (prod w)^(1/n) when the product is positive, g exp(pi i (2j + 1) / n)
    with g = |prod w|^(1/n) when it is negative, and all zero when a weight is 0.

    >>> dicycle(3).directed
    True
    >>> dicycle(4).eigenvalues("laplacian").tolist()
    [0j, (1-1j), (1+1j), (2+0j)]
    >>> dicycle(2, w=[4, 1]).eigenvalues().tolist()
    [-2.0, 2.0]
    """
    n = _check_count(n, "dicycle(n)", 2)
    _order(n, f"dicycle({n})")
    i = np.arange(n)
    if w is None:
        weights = [1.0] * n
        name = f"dicycle({n})"
    else:
        try:
            weights = [_check_real(x, "dicycle(n, w): each weight") for x in w]
        except TypeError:
            raise InputError(f"dicycle(n, w): w must be a list of {n} numbers") from None
        if len(weights) != n:
            raise InputError(f"dicycle(n, w): w must have n = {n} weights, got {len(weights)}")
        name = f"dicycle({n}, w=[{', '.join(_format_number(x) for x in weights)}])"
    adj = sp.coo_array((np.array(weights, dtype=np.float64), (i, (i + 1) % n)), shape=(n, n))
    return Factor(adj, name, _dicycle_form(n))


def scale(c: float, g: Factor) -> Factor:
    """The factor g with every weight multiplied by the finite real c (c = 0 allowed).

    The closed form, if any, carries over (it reads the scaled weights).
    Name ``"scale(c, name)"``.

    >>> h = scale(0.5, C(4))
    >>> h.name, h.eigenvalues().tolist()
    ('scale(0.5, C(4))', [-1.0, 0.0, 0.0, 1.0])
    """
    f = _check_real(c, "scale(c, G): c")
    g = from_matrix(g)
    return Factor(g.adjacency * f, f"scale({_format_number(f)}, {g.name})", g.closed_form)


def loops(c: float, g: Factor) -> Factor:
    """The factor g plus c times the identity (a loop of weight c at every vertex).

    The closed form, if any, carries over.  Name ``"loops(c, name)"``.

    >>> h = loops(1, K(3))
    >>> h.name, h.eigenvalues().tolist(), h.has_loops
    ('loops(1, K(3))', [0.0, 0.0, 3.0], True)
    """
    f = _check_real(c, "loops(c, G): c")
    g = from_matrix(g)
    adj = g.adjacency + f * sp.eye_array(g.n, format="csr")
    return Factor(adj, f"loops({_format_number(f)}, {g.name})", g.closed_form)


@cache
def motif() -> Factor:
    """The built-in 9-vertex demo motif (hand-made, fictional), named ``"motif"``.

    Read from the package data file ``powerspec/data/motif.mtx``: undirected,
    connected, not regular, not bipartite, with two weighted edges and one
    self-loop.

    >>> g = motif()
    >>> g.n, g.directed, g.is_regular()
    (9, False, False)
    """
    import scipy.io  # only here and in load(): a heavy import the other families do not need

    ref = resources.files("powerspec").joinpath("data").joinpath("motif.mtx")
    mat = scipy.io.mmread(io.BytesIO(ref.read_bytes()))
    return Factor(mat, "motif")


__all__ = ["C", "J", "K", "MAX_FAMILY_NNZ", "MAX_FAMILY_ORDER", "P", "dicycle", "loops", "motif",
           "scale"]
