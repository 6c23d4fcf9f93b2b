"""Factors in the sympy domain: exact (possibly symbolic) matrices and their eigenvalues.

A :class:`SymbolicFactor` is the factor of a leaf of the one expression tree
(:class:`powerspec.algebra.tree.Leaf` holds it as it holds a numeric
:class:`~powerspec.factors.factor.Factor`: it has ``n``, ``name`` and
``directed``) when the numbers are sympy expressions -- symbolic weights such as
``c`` in ``[[c, 1], [1, c]]``, or the exact rationals of a numeric factor.

Eigenvalues, exact, in this order of preference:

1. the family's closed form (:func:`family_form`, the formulas of
   :mod:`~powerspec.factors.symbolic_families` in the sympy context):
   C(n), P(n), K(n), K(m, n), J(n), dicycle and their scaled / looped versions, at
   any order up to :data:`MAX_CLOSED_FORM_ORDER`;
2. ``Matrix.charpoly`` -> ``factor_list`` -> ``roots`` in a forked worker
   terminated after :data:`~powerspec.numbers.symbolic.TIME_GUARD` seconds, after
   the guards: at most :data:`MAX_SYMBOLIC_ORDER` vertices with symbols or
   :data:`MAX_EXACT_ORDER` without (checked on the *numeric* factor's order,
   before anything is converted to sympy), and no irreducible factor of degree
   above :data:`MAX_RADICAL_DEGREE` unless it is a binomial ``a x^d + c`` or
   cyclotomic (radical roots sympy writes down) -- every Abel-Ruffini case
   (e.g. ``x^5 - x - 1``) is refused with :class:`~powerspec.errors.SymbolicError`.

Conventions: degrees are out-degrees (row sums); numeric entries become exact
rationals by their shortest decimal (0.1 -> 1/10).

>>> c = sympy.Symbol("c")
>>> SymbolicFactor(sympy.Matrix([[c, 1], [1, c]]), "loops(c, K(2))").eigenvalues()
[(c + 1, 1), (c - 1, 1)]
>>> from powerspec.factors.families import C
>>> len(symbolic_factor(C(13)).eigenvalues())     # closed form: no degree-6 factor to solve
7
"""

from __future__ import annotations

import inspect
import re
from collections.abc import Callable
from typing import Any

import numpy as np
import sympy

from powerspec.errors import InputError, SymbolicError
from powerspec.factors import families
from powerspec.factors.factor import MATRIX_KINDS, Factor, from_matrix
from powerspec.factors.symbolic_families import dicycle_spectrum, unit_spectrum
from powerspec.numbers.symbolic import SYMPY, TIME_GUARD, guarded, number

MAX_SYMBOLIC_ORDER = 12
"""Largest factor (vertices) with free symbols whose eigenvalues are attempted."""

MAX_EXACT_ORDER = 40
"""Largest factor (vertices) without a closed form whose exact matrix sympy may hold."""

MAX_RADICAL_DEGREE = 4
"""Irreducible factors of the characteristic polynomial above this degree are refused
(except binomials and cyclotomic polynomials)."""

_DESCENDING = ("adjacency", "transition")

MAX_CLOSED_FORM_ORDER = 200
"""Largest family member (vertices) whose closed form the symbolic domain writes out."""

_NAME = re.compile(r"^(?:(?:scale|loops)\([^,()]+, )*(P|C|K|J|dicycle)\((\d+)(?:, (\d+))?[,)]")
_ALL_KINDS = ("adjacency", "laplacian", "signless", "transition", "normalized")
_KINDS = {"P": _ALL_KINDS, "C": ("adjacency",), "K": ("adjacency",), "Kmn": _ALL_KINDS,
          "J": ("adjacency",), "dicycle": ("adjacency",)}


# ------------------------------------------------------------ family closed forms


def _structure(factor: Factor) -> tuple[str, tuple[int, ...]] | None:
    """(family, args) of a family member named as the families name it, else None."""
    m = _NAME.match(factor.name)
    if m is None:
        return None
    args = tuple(int(x) for x in m.groups()[1:] if x is not None)
    fam = m.group(1)
    if fam == "K" and len(args) == 2:
        fam = "Kmn"
    order = args[0] + args[1] if fam == "Kmn" else args[0]
    if order != factor.n or order > MAX_CLOSED_FORM_ORDER:
        return None
    return fam, args


def _reference(fam: str, args: tuple[int, ...]) -> Factor:
    build = {"P": families.P, "C": families.C, "K": families.K, "Kmn": families.K, "J": families.J,
             "dicycle": families.dicycle}[fam]
    return build(*args)


def _off_pattern(adj) -> set[tuple[int, int]]:
    coo = adj.tocoo()
    return {(int(i), int(j)) for i, j in zip(coo.row, coo.col, strict=True) if i != j}


def family_form(factor: Factor, ctx: Any = SYMPY) -> Callable[[str], list | None] | None:
    """The closed form ``kind -> [(value, multiplicity)] or None`` of a family member, or None.

    A factor whose own closed form takes a context (``closed_form(kind, adjacency,
    ctx=...)``) is asked directly.  Otherwise the family is recognised from the
    canonical name the families give (``scale(0.5, C(11))``), *verified* against
    the family's adjacency pattern, and the weights are read off the matrix:
    off-diagonal weights all w and loops all l give the eigenvalues of w G + l I
    (dicycle: l + the n-th roots of the product of its arc weights).  None when the
    factor is not such a member of at most :data:`MAX_CLOSED_FORM_ORDER` vertices.

    >>> from powerspec.factors.families import C, scale
    >>> family_form(scale(3, C(4)))("adjacency")
    [(6, 1), (0, 2), (-6, 1)]
    """
    own = factor.closed_form
    if own is not None and "ctx" in inspect.signature(own).parameters:
        return lambda kind: own(kind, factor.adjacency, ctx=ctx)
    st = _structure(factor)
    if st is None:
        return None
    fam, args = st
    adj = factor.adjacency
    diag = np.unique(adj.diagonal())
    if diag.size > 1:
        return None
    loop = float(diag[0])
    coo = adj.tocoo()
    off = coo.row != coo.col
    if fam == "dicycle":
        n = args[0]
        if np.any((coo.col[off] - coo.row[off]) % n != 1):
            return None
        dense = adj.toarray() if n <= MAX_CLOSED_FORM_ORDER else None
        weights = [float(dense[i, (i + 1) % n]) for i in range(n)]
        return lambda kind: dicycle_spectrum(weights, loop, ctx) if kind == "adjacency" else None
    if _off_pattern(adj) != _off_pattern(_reference(fam, args).adjacency):
        return None
    w_vals = np.unique(coo.data[off])
    if w_vals.size != 1:
        return None
    w, l_ = ctx.rational(float(w_vals[0])), ctx.rational(loop)
    base = "K" if fam == "Kmn" else fam
    if fam == "J":  # J(n) is K(n) with unit loops: its pattern off the diagonal is K(n)'s
        base = "K"

    def form(kind: str) -> list | None:
        if kind not in _KINDS[fam]:
            return None
        unit = unit_spectrum(base, args, kind, ctx)
        if unit is None:
            return None
        if kind == "adjacency":
            return [(w * v + l_, m) for v, m in unit]
        if kind == "laplacian":
            return [(w * v, m) for v, m in unit]
        if kind == "signless":
            return [(w * v + 2 * l_, m) for v, m in unit]
        if l_ != 0 or (kind == "normalized" and w < 0):
            return None
        return unit  # transition and normalized do not see a common weight

    return form


def check_kind(kind: str) -> None:
    """Raise InputError for an unknown matrix kind."""
    if kind not in MATRIX_KINDS:
        raise InputError(f"unknown matrix kind {kind!r}; choose one of {', '.join(MATRIX_KINDS)}")


def descending(kind: str) -> bool:
    """True for kinds listed largest first (adjacency, transition), False for Laplacian-like ones."""
    return kind in _DESCENDING


class SymbolicFactor:
    """A factor graph whose matrix entries are exact sympy expressions (symbols allowed).

    Build it from a square sympy matrix, or with :func:`symbolic_factor` from a
    numeric factor (converted lazily: nothing is converted when the order is
    refused, and family members answer from their closed form).

    >>> g = SymbolicFactor(sympy.Matrix([[0, 2], [2, 0]]), "scale(2, K(2))")
    >>> g.n, g.directed, g.degrees()
    (2, False, [2, 2])
    """

    def __init__(self, matrix: Any, name: str | None = None):
        try:
            m = sympy.ImmutableMatrix(matrix)
        except (TypeError, ValueError, sympy.SympifyError) as exc:
            raise InputError(f"cannot read a sympy matrix from {type(matrix).__name__}: {exc}") from None
        if m.rows == 0 or m.rows != m.cols:
            raise InputError(f"a factor matrix must be square and non-empty, got {m.rows}x{m.cols}")
        for e in m:
            if e.has(sympy.zoo, sympy.nan, sympy.oo, -sympy.oo):
                raise InputError(f"factor matrix entries must be finite, got {e}")
            if not e.is_number and not e.free_symbols:
                raise InputError(f"factor matrix entry {e} is not a number or expression")
        self._matrix: sympy.ImmutableMatrix | None = m
        self._numeric: Factor | None = None
        self._n = int(m.rows)
        self.name = name if name is not None else f"matrix({m.rows}x{m.rows})"
        self._form = None
        self._cache: dict[str, list] = {}

    @classmethod
    def from_factor(cls, factor: Factor, name: str | None = None) -> SymbolicFactor:
        """The exact counterpart of a numeric factor; refuses an order sympy cannot afford.

        >>> SymbolicFactor.from_factor(Factor([[0, 0.1], [0.1, 0]])).matrix
        Matrix([
        [   0, 1/10],
        [1/10,    0]])
        """
        form = family_form(factor)
        if form is None and factor.n > MAX_EXACT_ORDER:
            raise SymbolicError(
                f"{factor.name} has {factor.n} vertices and no closed form; symbolic eigenvalues "
                f"are attempted up to {MAX_EXACT_ORDER} vertices (families with a closed form up to "
                f"{MAX_CLOSED_FORM_ORDER}); use the numeric engine (drop --symbolic)")
        self = cls.__new__(cls)
        self._matrix = None
        self._numeric = factor
        self._n = factor.n
        self.name = name or factor.name
        self._form = form
        self._cache = {}
        return self

    def __repr__(self) -> str:
        return f"SymbolicFactor({self.name!r}, n={self.n})"

    # ---------------------------------------------------------------- structure
    @property
    def n(self) -> int:
        """Number of vertices."""
        return self._n

    @property
    def matrix(self) -> sympy.ImmutableMatrix:
        """The exact adjacency matrix (converted on first use, within :data:`MAX_EXACT_ORDER`)."""
        if self._matrix is None:
            if self._n > MAX_EXACT_ORDER:
                raise SymbolicError(
                    f"{self.name} has {self._n} vertices; sympy holds exact matrices up to "
                    f"{MAX_EXACT_ORDER} vertices; use the numeric engine (drop --symbolic)")
            coo = self._numeric.adjacency.tocoo()
            m = sympy.zeros(self._n, self._n)
            for i, j, v in zip(coo.row, coo.col, coo.data, strict=True):
                m[int(i), int(j)] = number(float(v))
            self._matrix = sympy.ImmutableMatrix(m)
        return self._matrix

    @property
    def symbols(self) -> tuple[sympy.Symbol, ...]:
        """The free symbols of the entries, sorted by name."""
        if self._numeric is not None:
            return ()
        return tuple(sorted(self._matrix.free_symbols, key=lambda s: s.name))

    @property
    def directed(self) -> bool:
        """True when the matrix is not identically symmetric."""
        if self._numeric is not None:
            return self._numeric.directed
        return any(sympy.expand(x) != 0 for x in (self._matrix - self._matrix.T))

    def entry_bound(self) -> float:
        """An upper bound on |entry| (a symbol counts as 1): sizes numbers before any work."""
        if self._numeric is not None:
            data = self._numeric.adjacency.data
            return float(abs(data).max()) if data.size else 0.0
        out = 0.0
        for e in self._matrix:
            e = e.subs({s: 1 for s in e.free_symbols})
            out = max(out, float(abs(complex(sympy.N(e, 15)))))
        return out

    def degrees(self) -> list[sympy.Expr]:
        """Exact out-degrees (row sums)."""
        if self._numeric is not None and self._matrix is None:
            adj = self._numeric.adjacency
            return [sympy.Add(*[number(float(v)) for v in adj.data[adj.indptr[i]:adj.indptr[i + 1]]])
                    for i in range(self._n)]
        return [sympy.expand(sum(self.matrix.row(i))) for i in range(self._n)]

    def regular_degree(self) -> sympy.Expr | None:
        """The common degree when all row sums are identical expressions, else None."""
        d = self.degrees()
        return d[0] if all(sympy.expand(x - d[0]) == 0 for x in d) else None

    def nonnegative(self, kind: str = "adjacency") -> bool:
        """True when every entry of the kind's matrix is provably >= 0."""
        if self._numeric is not None and kind == "adjacency":
            return bool((self._numeric.adjacency.data >= 0).all())
        return all(e.is_nonnegative is True for e in self.kind_matrix(kind))

    def kind_matrix(self, kind: str = "adjacency") -> sympy.ImmutableMatrix:
        """The exact matrix of a kind: A, D - A, D + A, I - D^-1/2 A D^-1/2 or D^-1 A."""
        check_kind(kind)
        a = self.matrix
        if kind == "adjacency":
            return a
        d = self.degrees()
        if kind in ("laplacian", "signless"):
            sign = -1 if kind == "laplacian" else 1
            return sympy.ImmutableMatrix(sympy.diag(*d) + sign * a)
        if any(x == 0 for x in d):
            raise InputError(f"the {kind} matrix needs non-zero degrees; {self.name} has a zero degree")
        if kind == "transition":
            return sympy.ImmutableMatrix(sympy.diag(*[1 / x for x in d]) * a)
        if self.directed:
            raise InputError("the normalized Laplacian is defined for undirected graphs only; "
                             "use --matrix laplacian or transition")
        h = sympy.diag(*[1 / sympy.sqrt(x) for x in d])
        return sympy.ImmutableMatrix(sympy.eye(self._n) - h * a * h)

    # -------------------------------------------------------------- eigenvalues
    def closed_form(self, kind: str = "adjacency") -> list[tuple[sympy.Expr, int]] | None:
        """The family's exact eigenvalues for a kind (sorted, merged), or None.

        >>> from powerspec.factors.families import P
        >>> symbolic_factor(P(3)).closed_form("laplacian")
        [(0, 1), (1, 1), (3, 1)]
        """
        check_kind(kind)
        if self._form is None:
            return None
        key = "#form " + kind
        if key not in self._cache:
            pairs = self._form(kind)
            self._cache[key] = None if pairs is None else SYMPY.sort_pairs(
                SYMPY.merge(pairs), descending(kind))
        return self._cache[key]

    def eigenvalues(self, kind: str = "adjacency", timeout: float | None = TIME_GUARD
                    ) -> list[tuple[sympy.Expr, int]]:
        """Distinct exact eigenvalues with multiplicities (Python ints), sorted.

        Adjacency and transition values descend, Laplacian-like ones ascend.  Raises
        SymbolicError when the guards refuse (see the module docstring).
        """
        check_kind(kind)
        form = self.closed_form(kind)
        if form is not None:
            return list(form)
        if kind not in self._cache:
            m = self.kind_matrix(kind)
            limit = MAX_SYMBOLIC_ORDER if m.free_symbols else MAX_EXACT_ORDER
            if self._n > limit:
                raise SymbolicError(
                    f"{self.name} has {self._n} vertices; symbolic eigenvalues are attempted up to "
                    f"{limit} vertices{' with symbols' if m.free_symbols else ''}; "
                    "use the numeric engine (drop --symbolic)")
            pairs = guarded(_eigen_job, (m, self.name), timeout, f"the eigenvalues of {self.name}")
            self._cache[kind] = SYMPY.sort_pairs(pairs, descending(kind))
        return list(self._cache[kind])


def _is_binomial(f: sympy.Poly) -> bool:
    terms = f.terms()
    return len(terms) == 2 and min(t[0][0] for t in terms) == 0


def _eigen_job(m: sympy.ImmutableMatrix, name: str) -> list[tuple[sympy.Expr, int]]:
    """Eigenvalues via charpoly -> factor_list -> roots, with the degree guard."""
    char = m.charpoly()
    x = char.gen
    _, facs = sympy.factor_list(sympy.Poly(char.as_expr(), x))
    out: dict[sympy.Expr, int] = {}
    for f, e in facs:
        d = f.degree()
        if d > MAX_RADICAL_DEGREE and not (_is_binomial(f) or f.is_cyclotomic):
            text = str(f.as_expr()).replace(str(x), "x")
            text = text if len(text) <= 80 else text[:77] + "..."
            raise SymbolicError(
                f"the characteristic polynomial of {name} has an irreducible factor of degree {d} "
                f"({text}) that sympy cannot solve in radicals; use the numeric engine "
                "(drop --symbolic); moments --symbolic needs no eigenvalues")
        rts = sympy.roots(f, multiple=False)
        if sum(rts.values()) != d or any(r.has(sympy.CRootOf) for r in rts):
            raise SymbolicError(
                f"sympy found no closed form for the eigenvalues of {name} (a degree-{d} factor "
                "of the characteristic polynomial); use the numeric engine (drop --symbolic)")
        for r, mult in rts.items():
            out[r] = out.get(r, 0) + int(mult) * int(e)
    return list(out.items())


def symbolic_factor(obj: Any, name: str | None = None) -> SymbolicFactor:
    """A SymbolicFactor from a SymbolicFactor, a numeric Factor or Leaf, a sympy Matrix or an array.

    >>> from powerspec.factors.families import C
    >>> symbolic_factor(C(3)).eigenvalues()
    [(2, 1), (-1, 2)]
    """
    if isinstance(obj, SymbolicFactor):
        return obj
    inner = getattr(obj, "factor", None)  # a tree Leaf
    if isinstance(inner, (Factor, SymbolicFactor)):
        return symbolic_factor(inner, name)
    if isinstance(obj, Factor):
        return SymbolicFactor.from_factor(obj, name)
    if isinstance(obj, sympy.MatrixBase) and obj.free_symbols:
        return SymbolicFactor(obj, name)
    return SymbolicFactor.from_factor(from_matrix(obj), name)


__all__ = ["MAX_CLOSED_FORM_ORDER", "MAX_EXACT_ORDER", "MAX_RADICAL_DEGREE", "MAX_SYMBOLIC_ORDER",
           "SymbolicFactor", "check_kind", "descending", "family_form", "symbolic_factor"]
