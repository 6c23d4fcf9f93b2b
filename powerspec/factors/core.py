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
* Eigenvalue multisets are numpy arrays of length n sorted ascending by
  (real part, imaginary part): float64 when the spectrum is real, complex128
  otherwise.  Values within ``1e-12 * max(1, max|eigenvalue|)`` of an integer
  are snapped to that integer (see :meth:`Factor.eigenvalues`).

A :class:`Factor` is immutable: every accessor returns a fresh copy.

>>> g = cycle(4)
>>> g.n, g.directed, g.degrees().tolist()
(4, False, [2.0, 2.0, 2.0, 2.0])
>>> g.eigenvalues("laplacian").tolist()
[0.0, 2.0, 2.0, 4.0]
"""

from __future__ import annotations

import io
import math
import numbers
import operator
import os
import re
import sys
from functools import cache
from importlib import resources
from typing import Any

import numpy as np
import scipy.io
import scipy.sparse as sp

from powerspec.errors import FactorFileError, InputError

__all__ = [
    "DIRECTIONS",
    "MATRIX_KINDS",
    "SNAP_TOLERANCE",
    "Factor",
    "complete",
    "complete_bipartite",
    "cycle",
    "dicycle",
    "from_matrix",
    "load",
    "loops",
    "motif",
    "path",
    "scale",
    "star",
]

MATRIX_KINDS: tuple[str, ...] = ("adjacency", "laplacian", "signless", "normalized", "transition")
"""The matrix kinds a factor can produce (see :meth:`Factor.matrix`)."""

DIRECTIONS: tuple[str, ...] = ("out", "in")
"""Degree directions: row sums ("out", the default) or column sums ("in")."""

SNAP_TOLERANCE: float = 1e-12
"""Relative tolerance for snapping eigenvalues to integers and for regularity tests."""


# ----------------------------------------------------------------------------- helpers


def _one_line(text: Any) -> str:
    """Collapse whitespace (including newlines) so a message is one line."""
    return " ".join(str(text).split())


def _check_kind(kind: Any) -> str:
    if not isinstance(kind, str) or kind not in MATRIX_KINDS:
        raise InputError(
            f"unknown matrix kind {kind!r}: use one of {', '.join(MATRIX_KINDS)}"
        )
    return kind


def _check_direction(direction: Any) -> str:
    if not isinstance(direction, str) or direction not in DIRECTIONS:
        raise InputError(
            f"unknown degree direction {direction!r}: use 'out' (row sums) or 'in' (column sums)"
        )
    return direction


def _canonical(mat: Any) -> sp.csr_array:
    """Return a canonical float64 csr_array (duplicates summed, zeros removed, sorted)."""
    out = sp.csr_array(mat, dtype=np.float64, copy=True)
    out.sum_duplicates()
    out.eliminate_zeros()
    out.sort_indices()
    return out


def _snap(values: Any) -> np.ndarray:
    """Snap values near integers, make real if possible, sort by (real, imag).

    A real or imaginary part within ``SNAP_TOLERANCE * max(1, max|values|)`` of an
    integer becomes that integer exactly (``-0.0`` becomes ``0.0``).  A complex
    array whose imaginary parts all snap to zero is returned as float64.
    """
    vals = np.asarray(values)
    if vals.dtype.kind != "c":
        vals = vals.astype(np.float64, copy=True)
    else:
        vals = vals.astype(np.complex128, copy=True)
    if vals.size == 0:
        return vals.astype(np.float64)
    tol = SNAP_TOLERANCE * max(1.0, float(np.max(np.abs(vals))))

    def snap_part(x: np.ndarray) -> np.ndarray:
        x = np.array(x, dtype=np.float64, copy=True)
        r = np.round(x)
        near = np.abs(x - r) <= tol
        x[near] = r[near] + 0.0
        return x

    if vals.dtype.kind == "c":
        re_part = snap_part(vals.real)
        im_part = snap_part(vals.imag)
        if np.all(im_part == 0.0):
            vals = re_part
        else:
            vals = np.empty(re_part.shape, dtype=np.complex128)
            vals.real = re_part
            vals.imag = im_part
    else:
        vals = snap_part(vals)
    return np.sort(vals)


def _format_number(c: float) -> str:
    """Short display form of a real number: integers without '.0'."""
    f = float(c)
    if f.is_integer() and abs(f) < 1e16:
        return str(int(f))
    return repr(f)


def _check_real(c: Any, what: str) -> float:
    if isinstance(c, (bool, np.bool_)) or not isinstance(c, numbers.Real):
        raise InputError(f"{what} must be a real number, got {c!r} ({type(c).__name__})")
    f = float(c)
    if not math.isfinite(f):
        raise InputError(f"{what} must be finite, got {c!r}")
    return f


def _check_count(n: Any, family: str, minimum: int, arg: str = "n") -> int:
    if isinstance(n, (bool, np.bool_)):
        raise InputError(f"{family} needs an integer {arg} >= {minimum}, got a bool ({n!r})")
    try:
        value = operator.index(n)
    except TypeError:
        raise InputError(
            f"{family} needs an integer {arg} >= {minimum}, got {n!r} ({type(n).__name__})"
        ) from None
    if value < minimum:
        raise InputError(f"{family} needs {arg} >= {minimum}, got {value}")
    return int(value)


# ------------------------------------------------------------------ matrix conversion


_SUPPORTED = (
    "give a 2-D numpy array, nested list of numbers, scipy sparse array, sympy Matrix, "
    "or an object with powerspec_sparse()"
)


def _dense_to_float(arr: np.ndarray) -> np.ndarray:
    """Validate a dense array's shape and entries and return it as float64."""
    if arr.ndim != 2:
        if arr.ndim == 0:
            raise InputError(
                f"cannot read a matrix from a 0-D {type(arr.item()).__name__} value: "
                f"{_SUPPORTED}"
            )
        raise InputError(
            f"a factor matrix must be 2-D, got a {arr.ndim}-D array of shape {arr.shape}"
        )
    _check_shape(arr.shape)
    kind = arr.dtype.kind
    if kind in "biuf":
        out = arr.astype(np.float64)
    elif kind == "c":
        _check_no_imag(arr.imag)
        out = arr.real.astype(np.float64)
    elif kind == "O":
        out = _object_to_float(arr)
    else:
        raise InputError(
            f"factor matrix has non-numeric dtype {arr.dtype}: give numbers (int or float)"
        )
    _check_finite(out)
    return out


def _object_to_float(arr: np.ndarray) -> np.ndarray:
    out = np.empty(arr.shape, dtype=np.float64)
    any_imag = 0
    for idx, entry in np.ndenumerate(arr):
        if isinstance(entry, (str, bytes)) or entry is None:
            raise InputError(
                f"factor matrix entry {idx} is {entry!r}, not a number: give numbers only"
            )
        if getattr(entry, "free_symbols", None):
            raise InputError(
                f"factor matrix entry {idx} contains symbols ({entry}): symbolic factors go "
                "through the symbolic bridge, not from_matrix"
            )
        try:
            z = complex(entry)
        except (TypeError, ValueError):
            raise InputError(
                f"factor matrix entry {idx} is {entry!r} ({type(entry).__name__}), "
                "not a number: give numbers only"
            ) from None
        if z.imag != 0:
            any_imag += 1
        out[idx] = z.real
    if any_imag:
        raise InputError(
            f"factor matrix has {any_imag} complex entries: only real weights are supported"
        )
    return out


def _check_shape(shape: tuple[int, ...]) -> None:
    if len(shape) != 2:
        raise InputError(f"a factor matrix must be 2-D, got shape {tuple(shape)}")
    rows, cols = shape
    if rows != cols:
        raise InputError(
            f"a factor matrix must be square, got shape ({rows}, {cols}): give an n x n matrix"
        )
    if rows == 0:
        raise InputError("factor matrix is empty (0 vertices): a factor needs at least 1 vertex")


def _check_no_imag(imag: np.ndarray) -> None:
    count = int(np.count_nonzero(imag))
    if count:
        raise InputError(
            f"factor matrix has {count} complex entries: only real weights are supported"
        )


def _check_finite(values: np.ndarray) -> None:
    bad = int(np.count_nonzero(~np.isfinite(values)))
    if bad:
        raise InputError(
            f"factor matrix has {bad} non-finite entries (NaN or inf): every weight must be finite"
        )


def _sparse_to_csr(mat: Any) -> sp.csr_array:
    """Validate a scipy sparse matrix or array and return its canonical csr form."""
    _check_shape(tuple(mat.shape))
    kind = mat.dtype.kind
    if kind not in "biufc":
        raise InputError(
            f"factor matrix has non-numeric dtype {mat.dtype}: give numbers (int or float)"
        )
    coo = sp.coo_array(mat)
    data = np.asarray(coo.data)
    if kind == "c":
        _check_no_imag(data.imag)
        data = data.real
    data = data.astype(np.float64)
    _check_finite(data)
    coo = sp.coo_array((data, coo.coords), shape=coo.shape)
    return _canonical(coo)


def _sympy_to_float(mat: Any) -> np.ndarray:
    if mat.free_symbols:
        names = ", ".join(sorted(str(s) for s in mat.free_symbols))
        raise InputError(
            f"sympy Matrix has free symbols ({names}): symbolic factors go through the "
            "symbolic bridge, not from_matrix"
        )
    rows, cols = mat.shape
    _check_shape((rows, cols))
    arr = np.empty((rows, cols), dtype=object)
    for i in range(rows):
        for j in range(cols):
            arr[i, j] = mat[i, j]
    out = _object_to_float(arr)
    _check_finite(out)
    return out


def _to_csr(obj: Any) -> sp.csr_array:
    """Convert any supported matrix-like object to a validated canonical csr_array."""
    hook = getattr(obj, "powerspec_sparse", None)
    if callable(hook) and not isinstance(obj, type):
        result = hook()
        if not sp.issparse(result):
            raise InputError(
                f"powerspec_sparse() of {type(obj).__name__} returned "
                f"{type(result).__name__}: it must return a scipy sparse array"
            )
        return _sparse_to_csr(result)
    if sp.issparse(obj):
        return _sparse_to_csr(obj)
    sympy = sys.modules.get("sympy")
    if sympy is not None and isinstance(obj, sympy.MatrixBase):
        return _canonical(sp.csr_array(_sympy_to_float(obj)))
    try:
        arr = np.asarray(obj)
    except (ValueError, TypeError):
        if isinstance(obj, (list, tuple)):
            raise InputError(
                "cannot read a matrix from ragged nested lists: every row must have the "
                "same length and hold only numbers"
            ) from None
        raise InputError(f"cannot read a matrix from {type(obj).__name__}: {_SUPPORTED}") from None
    return _canonical(sp.csr_array(_dense_to_float(arr)))


# ---------------------------------------------------------------------------- Factor


class Factor:
    """An immutable factor graph: a real square weighted adjacency matrix.

    Build one with a family (:func:`cycle`, :func:`path`, ...), with
    :func:`from_matrix`, or with :func:`load`; ``Factor(matrix, name,
    closed_form=None)`` accepts whatever :func:`from_matrix` accepts (except a
    Factor) and validates it the same way.

    Attributes (read-only; each access returns a fresh copy):

    * ``adjacency`` -- canonical ``scipy.sparse.csr_array``, float64, n x n
      (duplicates summed, explicit zeros removed, indices sorted);
    * ``name`` -- display label such as ``"cycle(10)"``;
    * ``closed_form`` -- adjacency eigenvalues from a family's closed form
      (snapped and sorted like :meth:`eigenvalues`), or ``None``.

    >>> g = from_matrix([[0, 1], [0, 0]], name="arc")
    >>> g.n, g.directed, g.has_loops
    (2, True, False)
    >>> g.adjacency.toarray().tolist()
    [[0.0, 1.0], [0.0, 0.0]]
    """

    __slots__ = ("_adj", "_name", "_closed_form", "_cache")

    def __init__(self, adjacency: Any, name: str | None = None,
                 closed_form: Any | None = None):
        if isinstance(adjacency, Factor):
            raise InputError("Factor() got a Factor: use from_matrix(), which returns it as is")
        adj = _to_csr(adjacency)
        n = adj.shape[0]
        if name is None:
            name = f"matrix({n}x{n})"
        if not isinstance(name, str):
            raise InputError(f"a factor name must be a string, got {type(name).__name__}")
        if closed_form is not None:
            cf = np.asarray(closed_form)
            if cf.ndim != 1 or cf.shape[0] != n or cf.dtype.kind not in "biufc":
                raise InputError(
                    f"closed_form for {name} must be a 1-D numeric array of length {n}, "
                    f"got shape {cf.shape} and dtype {cf.dtype}"
                )
            if not np.all(np.isfinite(cf)):
                raise InputError(f"closed_form for {name} has non-finite values")
            closed_form = _snap(cf)
            closed_form.flags.writeable = False
        object.__setattr__(self, "_adj", adj)
        object.__setattr__(self, "_name", name)
        object.__setattr__(self, "_closed_form", closed_form)
        object.__setattr__(self, "_cache", {})

    def __setattr__(self, key: str, value: Any) -> None:
        raise AttributeError(f"Factor is immutable: cannot set {key!r}")

    def __delattr__(self, key: str) -> None:
        raise AttributeError(f"Factor is immutable: cannot delete {key!r}")

    def __reduce__(self):
        return (Factor, (self._adj, self._name, self._closed_form))

    def __repr__(self) -> str:
        return f"Factor({self._name!r}, n={self.n})"

    # -- basic attributes -------------------------------------------------------------

    @property
    def adjacency(self) -> sp.csr_array:
        """A copy of the canonical float64 adjacency matrix (csr_array)."""
        return self._adj.copy()

    @property
    def name(self) -> str:
        """The display label, e.g. ``"cycle(10)"``."""
        return self._name

    @property
    def closed_form(self) -> np.ndarray | None:
        """A copy of the closed-form adjacency eigenvalues, or None if there is none."""
        return None if self._closed_form is None else self._closed_form.copy()

    @property
    def n(self) -> int:
        """Number of vertices."""
        return int(self._adj.shape[0])

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

        >>> loops(1, path(2)).degrees().tolist()
        [2.0, 2.0]
        >>> dicycle(3).degrees("in").tolist()
        [1.0, 1.0, 1.0]
        """
        direction = _check_direction(direction)
        axis = 1 if direction == "out" else 0
        return np.asarray(self._adj.sum(axis=axis), dtype=np.float64).ravel()

    def is_regular(self, direction: str = "out") -> bool:
        """True when all degrees agree within ``1e-12 * max(1, max|degree|)``.

        >>> cycle(5).is_regular(), star(3).is_regular()
        (True, False)
        """
        d = self.degrees(direction)
        tol = SNAP_TOLERANCE * max(1.0, float(np.max(np.abs(d))))
        return bool(np.max(d) - np.min(d) <= tol)

    # -- matrices ---------------------------------------------------------------------

    def matrix(self, kind: str = "adjacency", direction: str = "out") -> sp.csr_array:
        """The factor's matrix of the given kind, as a canonical float64 csr_array.

        ``D`` is ``diag(degrees(direction))``.  ``adjacency``: A; ``laplacian``:
        D - A; ``signless``: D + A; ``normalized``: I - D^-1/2 A D^-1/2
        (undirected, all degrees > 0); ``transition``: D^-1 A (all degrees
        non-zero).  Entries are exact up to float64 rounding of the products.

        >>> path(3).matrix("laplacian").toarray().tolist()
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

    # -- eigenvalues ------------------------------------------------------------------

    def eigenvalues(self, kind: str = "adjacency", direction: str = "out") -> np.ndarray:
        """The eigenvalue multiset of ``matrix(kind, direction)``.

        Returns an array of length n sorted ascending by (real, imag): float64
        when the spectrum is real, complex128 otherwise.

        How it is obtained: for ``adjacency`` the family's closed form when
        there is one; for the other kinds of a regular factor (degree d) with
        a closed form, d - lambda, d + lambda, 1 - lambda/d, lambda/d.
        Otherwise numerically on the dense matrix: ``numpy.linalg.eigvalsh``
        for symmetric matrices (``transition`` and ``normalized`` of an
        undirected factor with positive degrees go through the symmetric
        D^-1/2 A D^-1/2), ``numpy.linalg.eigvals`` otherwise, with the usual
        backward-stable accuracy (about 1e-15 * ||M|| for symmetric matrices;
        defective eigenvalues of non-symmetric ones can be much less accurate).

        Snapping: a real or imaginary part within ``1e-12 * max(1, s)`` of an
        integer, s = max|eigenvalue|, is replaced by that integer exactly; an
        array whose imaginary parts all snap to 0 is returned real.  Results
        are cached per (kind, direction); a fresh copy is returned.

        >>> cycle(4).eigenvalues().tolist()
        [-2.0, 0.0, 0.0, 2.0]
        >>> dicycle(4).eigenvalues().tolist()
        [(-1+0j), -1j, 1j, (1+0j)]
        """
        kind = _check_kind(kind)
        direction = _check_direction(direction)
        key = ("eigenvalues", kind, self._effective_direction(kind, direction))
        if key not in self._cache:
            values = self._compute_eigenvalues(kind, direction)
            values.flags.writeable = False
            self._cache[key] = values
        return self._cache[key].copy()

    def _compute_eigenvalues(self, kind: str, direction: str) -> np.ndarray:
        cf = self._closed_form
        if cf is not None:
            if kind == "adjacency":
                return cf.copy()
            if self.is_regular(direction):
                d = float(np.mean(self.degrees(direction)))
                if kind == "laplacian":
                    return _snap(d - cf)
                if kind == "signless":
                    return _snap(d + cf)
                if kind == "transition" and d != 0:
                    return _snap(cf / d)
                if kind == "normalized" and d > 0 and not self.directed:
                    return _snap(1.0 - cf / d)
        if not self.directed and kind in ("transition", "normalized"):
            if kind == "normalized" or np.all(self.degrees() > 0):
                s = self._positive_degree_scaling()
                dense = self._adj.toarray() * s[:, None] * s[None, :]
                mu = np.linalg.eigvalsh(dense)
                return _snap(mu if kind == "transition" else 1.0 - mu)
        dense = self.matrix(kind, direction).toarray()
        if np.array_equal(dense, dense.T):
            return _snap(np.linalg.eigvalsh(dense))
        return _snap(np.linalg.eigvals(dense))


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


# --------------------------------------------------------------------------- families


def _family(rows: np.ndarray, cols: np.ndarray, n: int, name: str,
            closed_form: np.ndarray) -> Factor:
    data = np.ones(len(rows), dtype=np.float64)
    adj = sp.coo_array((data, (rows, cols)), shape=(n, n))
    return Factor(adj, name, closed_form)


def path(n: int) -> Factor:
    """The path on n >= 1 vertices (0 - 1 - ... - n-1).

    Closed form: 2 cos(pi j / (n+1)), j = 1..n (float64, snapped).

    >>> path(3).eigenvalues().round(6).tolist()
    [-1.414214, 0.0, 1.414214]
    """
    n = _check_count(n, "path(n)", 1)
    i = np.arange(n - 1)
    rows = np.concatenate([i, i + 1])
    cols = np.concatenate([i + 1, i])
    cf = 2.0 * np.cos(np.pi * np.arange(1, n + 1) / (n + 1))
    return _family(rows, cols, n, f"path({n})", cf)


def cycle(n: int) -> Factor:
    """The cycle on n >= 3 vertices.

    Closed form: 2 cos(2 pi j / n), j = 0..n-1 (float64, snapped).

    >>> cycle(3).eigenvalues().tolist()
    [-1.0, -1.0, 2.0]
    """
    n = _check_count(n, "cycle(n)", 3)
    i = np.arange(n)
    rows = np.concatenate([i, (i + 1) % n])
    cols = np.concatenate([(i + 1) % n, i])
    cf = 2.0 * np.cos(2.0 * np.pi * np.arange(n) / n)
    return _family(rows, cols, n, f"cycle({n})", cf)


def complete(n: int) -> Factor:
    """The complete graph K_n, n >= 1.

    Closed form: n-1 once and -1 (n-1 times), exact.

    >>> complete(4).eigenvalues().tolist()
    [-1.0, -1.0, -1.0, 3.0]
    """
    n = _check_count(n, "complete(n)", 1)
    rows, cols = np.nonzero(~np.eye(n, dtype=bool))
    cf = np.concatenate([[n - 1.0], -np.ones(n - 1)])
    return _family(rows, cols, n, f"complete({n})", cf)


def star(n: int) -> Factor:
    """The star K_{1,n}: hub vertex 0 joined to n >= 1 leaves (n+1 vertices).

    Closed form: +-sqrt(n) and 0 (n-1 times); sqrt is correctly rounded float64.

    >>> star(4).eigenvalues().tolist()
    [-2.0, 0.0, 0.0, 0.0, 2.0]
    """
    n = _check_count(n, "star(n)", 1)
    leaves = np.arange(1, n + 1)
    hub = np.zeros(n, dtype=int)
    rows = np.concatenate([hub, leaves])
    cols = np.concatenate([leaves, hub])
    r = math.sqrt(n)
    cf = np.concatenate([[-r], np.zeros(n - 1), [r]])
    return _family(rows, cols, n + 1, f"star({n})", cf)


def complete_bipartite(m: int, n: int) -> Factor:
    """The complete bipartite graph K_{m,n}, m, n >= 1 (vertices 0..m-1 | m..m+n-1).

    Closed form: +-sqrt(mn) and 0 (m+n-2 times); sqrt is correctly rounded float64.

    >>> complete_bipartite(2, 2).eigenvalues().tolist()
    [-2.0, 0.0, 0.0, 2.0]
    """
    m = _check_count(m, "complete_bipartite(m, n)", 1, "m")
    n = _check_count(n, "complete_bipartite(m, n)", 1, "n")
    left = np.repeat(np.arange(m), n)
    right = np.tile(np.arange(m, m + n), m)
    rows = np.concatenate([left, right])
    cols = np.concatenate([right, left])
    r = math.sqrt(m * n)
    cf = np.concatenate([[-r], np.zeros(m + n - 2), [r]])
    return _family(rows, cols, m + n, f"complete_bipartite({m}, {n})", cf)


def dicycle(n: int) -> Factor:
    """The directed cycle i -> i+1 (mod n), n >= 2.

    Closed form: exp(2 pi i j / n), j = 0..n-1 (complex128, parts snapped;
    for n = 2 the graph is symmetric and the spectrum +-1 is real).

    >>> dicycle(3).directed
    True
    >>> dicycle(4).eigenvalues("laplacian").tolist()
    [0j, (1-1j), (1+1j), (2+0j)]
    """
    n = _check_count(n, "dicycle(n)", 2)
    i = np.arange(n)
    cf = np.exp(2j * np.pi * np.arange(n) / n)
    return _family(i, (i + 1) % n, n, f"dicycle({n})", cf)


def scale(c: float, g: Factor) -> Factor:
    """The factor g with every weight multiplied by the finite real c (c = 0 allowed).

    The closed form, if any, is multiplied by c.  Name ``"scale(c, name)"``.

    >>> h = scale(0.5, cycle(4))
    >>> h.name, h.eigenvalues().tolist()
    ('scale(0.5, cycle(4))', [-1.0, 0.0, 0.0, 1.0])
    """
    f = _check_real(c, "scale(c, G): c")
    g = from_matrix(g)
    cf = g._closed_form
    return Factor(g._adj * f, f"scale({_format_number(f)}, {g.name})",
                  None if cf is None else cf * f)


def loops(c: float, g: Factor) -> Factor:
    """The factor g plus c times the identity (a loop of weight c at every vertex).

    The closed form, if any, is shifted by c.  Name ``"loops(c, name)"``.

    >>> h = loops(1, complete(3))
    >>> h.name, h.eigenvalues().tolist(), h.has_loops
    ('loops(1, complete(3))', [0.0, 0.0, 3.0], True)
    """
    f = _check_real(c, "loops(c, G): c")
    g = from_matrix(g)
    cf = g._closed_form
    adj = g._adj + f * sp.eye_array(g.n, format="csr")
    return Factor(adj, f"loops({_format_number(f)}, {g.name})",
                  None if cf is None else cf + f)


# ------------------------------------------------------------------------------ files


_INTEGER_LABEL = re.compile(r"[+-]?[0-9]+")


def _read_bytes(path_str: str) -> bytes:
    try:
        with open(path_str, "rb") as fh:
            return fh.read()
    except FileNotFoundError:
        raise FactorFileError(f"factor file not found: {path_str!r} (check the path)") from None
    except OSError as exc:
        reason = _one_line(exc.strerror or exc)
        raise FactorFileError(f"cannot read factor file {path_str!r}: {reason}") from None


def _load_mtx(raw: bytes, path_str: str, name: str) -> Factor:
    try:
        mat = scipy.io.mmread(io.BytesIO(raw))
    except Exception as exc:  # scipy raises ValueError and others for malformed files
        raise FactorFileError(
            f"cannot parse Matrix Market file {path_str!r}: {_one_line(exc)}"
        ) from None
    try:
        return Factor(mat, name)
    except InputError as exc:
        raise FactorFileError(f"Matrix Market file {path_str!r}: {exc}") from None


def _parse_edge_list(text: str, path_str: str, directed: bool, name: str) -> Factor:
    edges: list[tuple[str, str, float]] = []
    for lineno, line in enumerate(text.splitlines(), start=1):
        body = re.split(r"[#%]", line, maxsplit=1)[0]
        tokens = body.split()
        if not tokens:
            continue
        if len(tokens) not in (2, 3):
            raise FactorFileError(
                f"{path_str!r} line {lineno}: expected 'u v' or 'u v weight', "
                f"got {line.strip()!r}"
            )
        weight = 1.0
        if len(tokens) == 3:
            try:
                weight = float(tokens[2])
            except ValueError:
                raise FactorFileError(
                    f"{path_str!r} line {lineno}: weight {tokens[2]!r} is not a number "
                    f"(line {line.strip()!r})"
                ) from None
            if not math.isfinite(weight):
                raise FactorFileError(
                    f"{path_str!r} line {lineno}: weight {tokens[2]!r} is not finite "
                    f"(line {line.strip()!r})"
                )
        edges.append((tokens[0], tokens[1], weight))
    if not edges:
        raise FactorFileError(
            f"no edges found in {path_str!r}: give one edge per line as 'u v' or 'u v weight'"
        )
    labels = [lab for u, v, _ in edges for lab in (u, v)]
    if all(_INTEGER_LABEL.fullmatch(lab) for lab in labels):
        keys: list[Any] = [int(lab) for lab in labels]
        order = sorted(set(keys))
    else:
        keys = labels
        order = list(dict.fromkeys(keys))
    index = {key: i for i, key in enumerate(order)}
    src = np.fromiter((index[k] for k in keys[0::2]), dtype=np.int64, count=len(edges))
    dst = np.fromiter((index[k] for k in keys[1::2]), dtype=np.int64, count=len(edges))
    w = np.array([e[2] for e in edges], dtype=np.float64)
    if not directed:
        off = src != dst
        src, dst, w = (np.concatenate([src, dst[off]]), np.concatenate([dst, src[off]]),
                       np.concatenate([w, w[off]]))
    n = len(order)
    return Factor(sp.coo_array((w, (src, dst)), shape=(n, n)), name)


def load(path: str | os.PathLike, directed: bool = False) -> Factor:
    """Read a factor from a Matrix Market file or a whitespace edge list.

    * A name ending in ``.mtx`` (any case) is read with ``scipy.io.mmread``
      (symmetric/general storage as the file declares; ``directed`` is
      ignored).  It must be real, square, non-empty and finite.
    * Anything else is an edge list: lines ``u v`` (weight 1) or ``u v w``;
      ``#`` and ``%`` start comments; blank lines are ignored; labels are any
      tokens.  Vertices are the distinct labels, in numeric order if all are
      integers, else in order of first appearance.  Undirected by default
      (``w`` is added to A[u,v] and A[v,u]; a loop ``u u w`` adds w once);
      ``directed=True`` adds to A[u,v] only.  Repeated lines add up.

    Returns a Factor named ``load("<path as given>")``; weights are exact
    float64 parses of the file's numbers.  Raises FactorFileError (one line)
    for a missing or unreadable file, a bad line, a bad or non-finite
    weight, an edge list with no edges, or a Matrix Market parse failure.

    >>> import os, tempfile
    >>> fd, name = tempfile.mkstemp(suffix=".txt")
    >>> with os.fdopen(fd, "w") as fh:
    ...     _ = fh.write("a b\\nb c 2  # weighted\\n")
    >>> g = load(name)
    >>> g.n, g.adjacency.toarray().tolist()
    (3, [[0.0, 1.0, 0.0], [1.0, 0.0, 2.0], [0.0, 2.0, 0.0]])
    >>> os.remove(name)
    """
    try:
        path_str = os.fsdecode(os.fspath(path))
    except TypeError:
        raise FactorFileError(
            f"load() needs a file path (str or os.PathLike), got {type(path).__name__}"
        ) from None
    name = f'load("{path_str}")'
    raw = _read_bytes(path_str)
    if path_str.lower().endswith(".mtx"):
        return _load_mtx(raw, path_str, name)
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise FactorFileError(
            f"cannot read factor file {path_str!r}: not UTF-8 text (byte {exc.start})"
        ) from None
    return _parse_edge_list(text, path_str, bool(directed), name)


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
    ref = resources.files("powerspec").joinpath("data").joinpath("motif.mtx")
    mat = scipy.io.mmread(io.BytesIO(ref.read_bytes()))
    return Factor(mat, "motif")
