"""Factor graphs: build, read and validate them, and give their matrices and spectra.

A *factor* is a real square weighted adjacency matrix ``A`` (n x n, float64,
any real weights, signed or not, self-loops allowed).  Conventions used
throughout powerspec:

* **Directed** means "the adjacency matrix is not exactly symmetric".  An
  entry ``A[u, v]`` is the weight of the arc ``u -> v``.
* **Degrees** are weighted (strengths).  The *out*-degree of ``u`` is the row
  sum ``sum_v A[u, v]``, the *in*-degree the column sum.  Out-degree is the
  default everywhere.  A self-loop of weight ``c`` adds ``c`` **once** to the
  degree (it is the diagonal entry ``A[u, u]``), not twice.
* Matrix kinds (:data:`MATRIX_KINDS`), with ``D`` the diagonal matrix of the
  chosen degrees: ``adjacency`` A; ``laplacian`` D - A; ``signless`` D + A;
  ``normalized`` I - D^-1/2 A D^-1/2 (undirected factors with positive
  degrees only); ``transition`` D^-1 A (row-stochastic for non-negative
  weights and out-degrees).
* Spectra are certified (:meth:`Factor.spectrum`): exact rationals where
  the eigenvalue is rational, rigorous balls otherwise (see
  :mod:`powerspec.factors.certify`); nothing is ever snapped.
  :meth:`Factor.eigenvalues` gives the midpoints as a numpy array.

A :class:`Factor` is immutable: every accessor returns a fresh copy.

>>> from powerspec.factors.families import C, K, P, dicycle, loops
>>> g = C(4)
>>> g.n, g.directed, g.degrees().tolist()
(4, False, [2.0, 2.0, 2.0, 2.0])
>>> g.eigenvalues("laplacian").tolist()
[0.0, 2.0, 2.0, 4.0]
"""

from __future__ import annotations

from collections.abc import Callable
from fractions import Fraction
from typing import Any

import numpy as np
import scipy.sparse as sp
from flint import fmpq

from powerspec.errors import InputError
from powerspec.factors.certify import exact_degrees, numeric_eigenvalues, regular_map
from powerspec.factors.matrix import (
    DIRECTIONS,
    MATRIX_KINDS,
    _canonical,
    _check_direction,
    _check_kind,
    _to_csr,
)
from powerspec.spectra.spectrum import Spectrum

__all__ = ["DIRECTIONS", "ENDS_MIN", "MATRIX_KINDS", "Factor", "from_matrix"]

ENDS_MIN = 20_000
"""Factors above this order give only the ends of their spectrum to the extremes search."""


# ---------------------------------------------------------------------------- Factor


class Factor:
    """An immutable factor graph: a real square weighted adjacency matrix.

    Build one with a family (``P``, ``C``, ``K``, ... in
    :mod:`powerspec.factors.families`), with :func:`from_matrix`, or with
    :func:`load`; ``Factor(matrix, name, closed_form=None)`` accepts whatever
    :func:`from_matrix` accepts (except a Factor) and validates it the same way.

    Attributes (read-only; each access returns a fresh copy):

    * ``adjacency`` -- canonical ``scipy.sparse.csr_array``, float64, n x n
      (duplicates summed, explicit zeros removed, indices sorted);
    * ``name`` -- display label such as ``"C(10)"``;
    * ``closed_form`` -- a family's closed form: a callable taking a matrix
      kind and the actual adjacency and returning [(value, multiplicity)]
      (exact flint rationals or Arb balls), or None when it does not apply;
      ``None`` for plain matrices.

    >>> g = from_matrix([[0, 1], [0, 0]], name="arc")
    >>> g.n, g.directed, g.has_loops
    (2, True, False)
    >>> g.adjacency.toarray().tolist()
    [[0.0, 1.0], [0.0, 0.0]]
    """

    __slots__ = ("_adj", "_name", "_closed_form", "_cache")

    def __init__(self, adjacency: Any, name: str | None = None,
                 closed_form: Callable[[str, Any], list | None] | None = None):
        if isinstance(adjacency, Factor):
            raise InputError("Factor() got a Factor: use from_matrix(), which returns it as is")
        adj = _to_csr(adjacency)
        n = adj.shape[0]
        if name is None:
            name = f"matrix({n}x{n})"
        if not isinstance(name, str):
            raise InputError(f"a factor name must be a string, got {type(name).__name__}")
        if closed_form is not None and not callable(closed_form):
            raise InputError("closed_form must be a callable kind -> [(value, multiplicity)] or None")
        object.__setattr__(self, "_adj", adj)
        object.__setattr__(self, "_name", name)
        object.__setattr__(self, "_closed_form", closed_form)
        object.__setattr__(self, "_cache", {})

    def __setattr__(self, key: str, value: Any) -> None:
        raise AttributeError(f"Factor is immutable: cannot set {key!r}")

    def __delattr__(self, key: str) -> None:
        raise AttributeError(f"Factor is immutable: cannot delete {key!r}")

    def __reduce__(self):
        return (Factor, (self._adj, self._name, None))

    def __repr__(self) -> str:
        return f"Factor({self._name!r}, n={self.n})"

    # -- basic attributes -------------------------------------------------------------

    @property
    def adjacency(self) -> sp.csr_array:
        """A copy of the canonical float64 adjacency matrix (csr_array)."""
        return self._adj.copy()

    @property
    def name(self) -> str:
        """The display label, e.g. ``"C(10)"``."""
        return self._name

    @property
    def closed_form(self) -> Callable[[str, Any], list | None] | None:
        """The family's closed form ((kind, adjacency) -> [(value, multiplicity)] or None), if any."""
        return self._closed_form

    @property
    def n(self) -> int:
        """Number of vertices."""
        return int(self._adj.shape[0])

    @property
    def nnz(self) -> int:
        """Number of stored (non-zero) adjacency entries, exact.

        >>> from powerspec.factors.families import C
        >>> C(5).nnz
        10
        """
        return int(self._adj.nnz)

    @property
    def directed(self) -> bool:
        """True when the adjacency matrix is not exactly symmetric."""
        if "directed" not in self._cache:
            diff = self._adj - self._adj.T
            self._cache["directed"] = bool(sp.csr_array(diff).count_nonzero())
        return self._cache["directed"]

    @property
    def has_loops(self) -> bool:
        """True when some diagonal entry (self-loop weight) is non-zero."""
        return bool(np.any(self._adj.diagonal() != 0))

    # -- degrees ----------------------------------------------------------------------

    def degrees(self, direction: str = "out") -> np.ndarray:
        """Weighted degrees: row sums (``"out"``) or column sums (``"in"``), float64.

        A self-loop of weight ``c`` adds ``c`` once.  Exact up to float64 summation.

        >>> from powerspec.factors.families import C, K, P, dicycle, loops
        >>> loops(1, P(2)).degrees().tolist()
        [2.0, 2.0]
        >>> from powerspec.factors.families import C, K, P, dicycle, loops
        >>> dicycle(3).degrees("in").tolist()
        [1.0, 1.0, 1.0]
        """
        direction = _check_direction(direction)
        axis = 1 if direction == "out" else 0
        return np.asarray(self._adj.sum(axis=axis), dtype=np.float64).ravel()

    def exact_degrees(self, direction: str = "out") -> list[Fraction]:
        """Exact weighted degrees (sums of the exact float64 entries) as Fractions.

        >>> from powerspec.factors.families import P, scale
        >>> scale(0.1, P(3)).exact_degrees()[1] == 2 * Fraction(0.1)
        True
        """
        direction = _check_direction(direction)
        key = ("exact_degrees", direction)
        if key not in self._cache:
            self._cache[key] = tuple(exact_degrees(self._adj, direction))
        return list(self._cache[key])

    def regular_degree(self, direction: str = "out") -> Fraction | None:
        """The common exact degree when the factor is regular, else None."""
        d = self.exact_degrees(direction)
        return d[0] if all(x == d[0] for x in d) else None

    def is_regular(self, direction: str = "out") -> bool:
        """True when all degrees are exactly equal.

        >>> from powerspec.factors.families import C, K, P, dicycle, loops
        >>> C(5).is_regular(), K(1, 3).is_regular()
        (True, False)
        """
        return self.regular_degree(direction) is not None

    # -- matrices ---------------------------------------------------------------------

    def matrix(self, kind: str = "adjacency", direction: str = "out") -> sp.csr_array:
        """The factor's matrix of the given kind, as a canonical float64 csr_array.

        ``D`` is ``diag(degrees(direction))``.  ``adjacency``: A; ``laplacian``:
        D - A; ``signless``: D + A; ``normalized``: I - D^-1/2 A D^-1/2
        (undirected, all degrees > 0); ``transition``: D^-1 A (all degrees
        non-zero).  Entries are exact up to float64 rounding of the products.

        >>> from powerspec.factors.families import C, K, P, dicycle, loops
        >>> P(3).matrix("laplacian").toarray().tolist()
        [[1.0, -1.0, 0.0], [-1.0, 2.0, -1.0], [0.0, -1.0, 1.0]]
        """
        kind = _check_kind(kind)
        direction = _check_direction(direction)
        key = ("matrix", kind, self._effective_direction(kind, direction))
        if key not in self._cache:
            self._cache[key] = self._build_matrix(kind, direction)
        return self._cache[key].copy()

    def _effective_direction(self, kind: str, direction: str) -> str:
        if kind == "adjacency" or not self.directed:
            return "out"
        return direction

    def _positive_degree_scaling(self) -> np.ndarray:
        """1/sqrt(d) for the normalized matrix; InputError unless undirected, d > 0."""
        if self.directed:
            raise InputError(
                f"the normalized Laplacian needs an undirected factor, but {self._name} is "
                "directed: use 'laplacian' or 'transition'"
            )
        d = self.degrees()
        bad = int(np.count_nonzero(d <= 0))
        if bad:
            raise InputError(
                f"the normalized Laplacian needs every degree > 0, but {bad} vertices of "
                f"{self._name} have degree <= 0: use 'laplacian' instead"
            )
        return 1.0 / np.sqrt(d)

    def _inverse_degrees(self, direction: str) -> np.ndarray:
        d = self.degrees(direction)
        bad = int(np.count_nonzero(d == 0))
        if bad:
            raise InputError(
                f"the transition matrix needs every {direction}-degree non-zero, but {bad} "
                f"vertices of {self._name} have {direction}-degree 0: use 'laplacian' instead"
            )
        return 1.0 / d

    def _build_matrix(self, kind: str, direction: str) -> sp.csr_array:
        a = self._adj
        n = self.n
        if kind == "adjacency":
            return _canonical(a)
        if kind in ("laplacian", "signless"):
            dmat = sp.diags_array(self.degrees(direction), format="csr")
            return _canonical(dmat - a if kind == "laplacian" else dmat + a)
        if kind == "normalized":
            s = sp.diags_array(self._positive_degree_scaling(), format="csr")
            return _canonical(sp.eye_array(n, format="csr") - s @ a @ s)
        inv = sp.diags_array(self._inverse_degrees(direction), format="csr")
        return _canonical(inv @ a)

    # -- spectra ----------------------------------------------------------------------

    def certified(self, kind: str = "adjacency", direction: str = "out") -> list:
        """The kind's eigenvalues as [(value, multiplicity)], certified.

        Values are exact flint rationals (``fmpq``) where the eigenvalue is
        rational and Arb balls (``arb`` / ``acb``) containing it otherwise;
        multiplicities are exact.  Routes: the family's closed form, the
        regular-graph map from the adjacency spectrum, or the certified
        numerical routes of :mod:`powerspec.factors.certify`.  Cached.
        """
        kind = _check_kind(kind)
        direction = _check_direction(direction)
        direction = self._effective_direction(kind, direction)
        key = ("certified", kind, direction)
        if key not in self._cache:
            self._check_kind_allowed(kind, direction)
            self._cache[key] = tuple(self._certify(kind, direction))
        return list(self._cache[key])

    def _check_kind_allowed(self, kind: str, direction: str) -> None:
        if kind == "normalized":
            self._positive_degree_scaling()
        elif kind == "transition":
            self._inverse_degrees(direction)

    def _certify(self, kind: str, direction: str) -> list:
        if self._adj.nnz == 0:  # the zero matrix: every kind that is defined is 0
            return [(fmpq(0), self.n)]
        cf = self._closed_form
        if cf is not None:
            vals = cf(kind, self._adj)
            if vals is not None:
                return vals
            if kind != "adjacency":
                d = self.regular_degree(direction)
                adj = cf("adjacency", self._adj)
                if d is not None and adj is not None:
                    mapped = regular_map(kind, d, adj)
                    if mapped is not None:
                        return mapped
        return numeric_eigenvalues(self._adj, kind, self.exact_degrees(direction), not self.directed)

    def ends(self, kind: str, m: int, direction: str = "out") -> list | None:
        """The m largest and m smallest distinct eigenvalues, certified, or None.

        Cheap for very large family members whose closed form is monotone (paths,
        cycles); the full certified spectrum for factors of at most ENDS_MIN vertices;
        None otherwise (the caller then needs the full spectrum).
        """
        if self.n <= ENDS_MIN:
            return self.certified(kind, direction)
        cf = self._closed_form
        if cf is None:
            return None
        self._check_kind_allowed(kind, self._effective_direction(kind, direction))
        try:
            vals = cf(kind, self._adj, ends_m=m)
        except TypeError:
            return None
        if vals is None and kind != "adjacency":
            d = self.regular_degree(direction)
            adj = cf("adjacency", self._adj, ends_m=m)
            if d is not None and adj is not None:
                vals = regular_map(kind, d, adj)
        return vals

    def spectrum(self, kind: str = "adjacency", direction: str = "out"):
        """The kind's certified spectrum as a :class:`~powerspec.spectra.spectrum.Spectrum`.

        >>> from powerspec.factors.families import C
        >>> C(4).spectrum("laplacian").atoms()
        [(0.0, 1), (2.0, 2), (4.0, 1)]
        """
        kind = _check_kind(kind)
        direction = _check_direction(direction)  # checked before the memo, as on the first call
        key = ("spectrum", kind, self._effective_direction(kind, direction))
        if key not in self._cache:
            vals = self.certified(kind, direction)
            self._cache[key] = Spectrum.from_hp([v for v, _ in vals], [m for _, m in vals])
        return self._cache[key]

    def eigenvalues(self, kind: str = "adjacency", direction: str = "out") -> np.ndarray:
        """The eigenvalue multiset's midpoints: an array of length n, ascending by (real, imag).

        float64 when the spectrum is real, complex128 otherwise.  Exact
        eigenvalues are returned exactly (when representable); the others are
        the midpoints of certified balls (see :meth:`spectrum` for radii).

        >>> from powerspec.factors.families import C, dicycle
        >>> C(4).eigenvalues().tolist()
        [-2.0, 0.0, 0.0, 2.0]
        >>> dicycle(4).eigenvalues().tolist()
        [(-1+0j), -1j, 1j, (1+0j)]
        """
        sp_ = self.spectrum(kind, direction)
        vals = sp_.expand()
        if vals.dtype.kind == "c":
            o = np.lexsort((vals.imag, vals.real))
            vals = vals[o]
        return vals


# ------------------------------------------------------------------------ from_matrix


def from_matrix(obj: Any, name: str | None = None) -> Factor:
    """Make a :class:`Factor` from a matrix-like object.

    Accepts 2-D numpy arrays and nested lists of numbers (bool, int, float;
    complex only with all imaginary parts zero), any scipy.sparse array or
    matrix, a sympy Matrix with numeric entries, an object with a
    ``powerspec_sparse()`` method returning a scipy sparse array, or any
    object supporting ``__array__``.  A Factor is returned unchanged.

    Returns a Factor whose adjacency holds the entries converted to float64
    (exact for integers up to 2**53).  Raises InputError for: not 2-D,
    non-square, empty, non-numeric, complex, non-finite entries, or a sympy
    Matrix with free symbols.  The default name is ``"matrix(NxN)"``.

    >>> g = from_matrix([[0, 2], [2, 0]], name="edge")
    >>> g.name, g.eigenvalues().tolist()
    ('edge', [-2.0, 2.0])
    """
    if isinstance(obj, Factor):
        return obj
    return Factor(obj, name)
