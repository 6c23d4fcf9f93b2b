"""Matrix conversion and validation: any matrix-like input -> a canonical float64 CSR array.

Also the shared argument checks of the factor layer (matrix kinds, degree
directions, counts, finite reals).
"""

from __future__ import annotations

import math
import numbers
import operator
import sys
from typing import Any

import numpy as np
import scipy.sparse as sp

from powerspec.errors import InputError

MATRIX_KINDS: tuple[str, ...] = ("adjacency", "laplacian", "signless", "normalized", "transition")
"""The matrix kinds a factor can produce (see :meth:`Factor.matrix`)."""

DIRECTIONS: tuple[str, ...] = ("out", "in")
"""Degree directions: row sums ("out", the default) or column sums ("in")."""


# ----------------------------------------------------------------------------- helpers


def _one_line(text: Any) -> str:
    """Collapse whitespace (including newlines) so a message is one line."""
    return " ".join(str(text).split())


def clip(text: Any, limit: int = 40, *, tail: bool = False) -> str:
    """``text`` quoted for a message, cut to ``limit`` characters (the end kept with ``tail``).

    Error messages repeat user input through this, so that a 10,000-digit
    literal or a long path cannot flood the terminal.

    >>> clip("C(5)")
    "'C(5)'"
    >>> clip("x" * 100, 10)
    "'xxxxxxx...' (100 characters)"
    >>> clip("/a/very/long/path/to/file.mtx", 12, tail=True)
    "'.../file.mtx' (29 characters)"
    """
    s = str(text)
    if len(s) <= limit:
        return repr(s)
    cut = "..." + s[len(s) - limit + 3:] if tail else s[:limit - 3] + "..."
    return f"{cut!r} ({len(s)} characters)"


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


def _format_number(c: float) -> str:
    """Short display form of a real number: integers without '.0'."""
    f = float(c)
    if f.is_integer() and abs(f) < 1e16:
        return str(int(f))
    return repr(f)


def _check_real(c: Any, what: str) -> float:
    if isinstance(c, (bool, np.bool_)) or not isinstance(c, numbers.Real):
        raise InputError(f"{what} must be a real number, got {c!r} ({type(c).__name__})")
    try:
        f = float(c)
    except OverflowError:  # an int or Fraction beyond the double range
        f = math.inf
    if not math.isfinite(f):
        raise InputError(f"{what} must be finite, got {clip(c)}")
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
