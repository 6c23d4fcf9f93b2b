"""Factor families in textbook notation, with their closed-form spectra."""

from __future__ import annotations

import io
import math
from functools import cache
from importlib import resources

import numpy as np
import scipy.io
import scipy.sparse as sp

from powerspec.errors import InputError
from powerspec.factors.factor import Factor, from_matrix
from powerspec.factors.matrix import _check_count, _check_real, _format_number

# --------------------------------------------------------------------------- families


def _family(rows: np.ndarray, cols: np.ndarray, n: int, name: str,
            closed_form: np.ndarray) -> Factor:
    data = np.ones(len(rows), dtype=np.float64)
    adj = sp.coo_array((data, (rows, cols)), shape=(n, n))
    return Factor(adj, name, closed_form)


def P(n: int) -> Factor:
    """The path P_n on n >= 1 vertices (0 - 1 - ... - n-1).

    Closed form: 2 cos(pi j / (n+1)), j = 1..n.

    >>> P(3).eigenvalues().round(6).tolist()
    [-1.414214, 0.0, 1.414214]
    """
    n = _check_count(n, "P(n)", 1)
    i = np.arange(n - 1)
    rows = np.concatenate([i, i + 1])
    cols = np.concatenate([i + 1, i])
    cf = 2.0 * np.cos(np.pi * np.arange(1, n + 1) / (n + 1))
    return _family(rows, cols, n, f"P({n})", cf)


def C(n: int) -> Factor:
    """The cycle C_n on n >= 3 vertices.

    Closed form: 2 cos(2 pi j / n), j = 0..n-1.

    >>> C(3).eigenvalues().tolist()
    [-1.0, -1.0, 2.0]
    """
    n = _check_count(n, "C(n)", 3)
    i = np.arange(n)
    rows = np.concatenate([i, (i + 1) % n])
    cols = np.concatenate([(i + 1) % n, i])
    cf = 2.0 * np.cos(2.0 * np.pi * np.arange(n) / n)
    return _family(rows, cols, n, f"C({n})", cf)


_ABSENT = object()


def K(m: int, n: int = _ABSENT) -> Factor:
    """The complete graph K_m (one argument) or the complete bipartite graph K_{m,n} (two).

    K_m, m >= 1: eigenvalues m-1 once and -1 (m-1 times), exact.
    K_{m,n}, m, n >= 1 (vertices 0..m-1 | m..m+n-1; the star is K(1, n)):
    eigenvalues +-sqrt(mn) and 0 (m+n-2 times).

    >>> K(4).eigenvalues().tolist()
    [-1.0, -1.0, -1.0, 3.0]
    >>> K(1, 4).eigenvalues().tolist()
    [-2.0, 0.0, 0.0, 0.0, 2.0]
    """
    if n is _ABSENT:
        m = _check_count(m, "K(n)", 1)
        rows, cols = np.nonzero(~np.eye(m, dtype=bool))
        cf = np.concatenate([[m - 1.0], -np.ones(m - 1)])
        return _family(rows, cols, m, f"K({m})", cf)
    m = _check_count(m, "K(m, n)", 1, "m")
    n = _check_count(n, "K(m, n)", 1, "n")
    left = np.repeat(np.arange(m), n)
    right = np.tile(np.arange(m, m + n), m)
    rows = np.concatenate([left, right])
    cols = np.concatenate([right, left])
    r = math.sqrt(m * n)
    cf = np.concatenate([[-r], np.zeros(m + n - 2), [r]])
    return _family(rows, cols, m + n, f"K({m}, {n})", cf)


def J(n: int) -> Factor:
    """The all-ones matrix J_n, n >= 1 (K_n with a loop of weight 1 at every vertex).

    Eigenvalues n once and 0 (n-1 times), exact.  The expected adjacency of
    a block model with c equal communities of size N is P (x) J_N.

    >>> J(3).eigenvalues().tolist()
    [0.0, 0.0, 3.0]
    """
    n = _check_count(n, "J(n)", 1)
    rows, cols = np.nonzero(np.ones((n, n), dtype=bool))
    cf = np.concatenate([[float(n)], np.zeros(n - 1)])
    return _family(rows, cols, n, f"J({n})", cf)


def dicycle(n: int, w=None) -> Factor:
    """The directed cycle i -> i+1 (mod n), n >= 2, with optional arc weights w[i] on i -> i+1.

    Without weights the eigenvalues are the n-th roots of unity exp(2 pi i j / n).
    With weights they are g * exp(2 pi i j / n) for g = (prod w)^(1/n) when the
    product of the weights is positive, g * exp(pi i (2j + 1) / n) with
    g = |prod w|^(1/n) when it is negative, and all zero when a weight is 0.

    >>> dicycle(3).directed
    True
    >>> dicycle(4).eigenvalues("laplacian").tolist()
    [0j, (1-1j), (1+1j), (2+0j)]
    >>> dicycle(2, w=[4, 1]).eigenvalues().tolist()
    [-2.0, 2.0]
    """
    n = _check_count(n, "dicycle(n)", 2)
    i = np.arange(n)
    if w is None:
        cf = np.exp(2j * np.pi * np.arange(n) / n)
        return _family(i, (i + 1) % n, n, f"dicycle({n})", cf)
    try:
        weights = [_check_real(x, "dicycle(n, w): each weight") for x in w]
    except TypeError:
        raise InputError(f"dicycle(n, w): w must be a list of {n} numbers, got {w!r}") from None
    if len(weights) != n:
        raise InputError(f"dicycle(n, w): w must have n = {n} weights, got {len(weights)}")
    prod = math.prod(weights)
    if prod == 0.0:
        cf = np.zeros(n, dtype=complex)
    else:
        g = math.exp(sum(math.log(abs(x)) for x in weights) / n)
        half = 0.0 if prod > 0 else 0.5
        cf = g * np.exp(2j * np.pi * (np.arange(n) + half) / n)
    adj = sp.coo_array((np.array(weights, dtype=np.float64), (i, (i + 1) % n)), shape=(n, n))
    shown = ", ".join(_format_number(x) for x in weights)
    return Factor(adj, f"dicycle({n}, w=[{shown}])", cf)


def scale(c: float, g: Factor) -> Factor:
    """The factor g with every weight multiplied by the finite real c (c = 0 allowed).

    The closed form, if any, is multiplied by c.  Name ``"scale(c, name)"``.

    >>> h = scale(0.5, C(4))
    >>> h.name, h.eigenvalues().tolist()
    ('scale(0.5, C(4))', [-1.0, 0.0, 0.0, 1.0])
    """
    f = _check_real(c, "scale(c, G): c")
    g = from_matrix(g)
    cf = g._closed_form
    return Factor(g._adj * f, f"scale({_format_number(f)}, {g.name})",
                  None if cf is None else cf * f)


def loops(c: float, g: Factor) -> Factor:
    """The factor g plus c times the identity (a loop of weight c at every vertex).

    The closed form, if any, is shifted by c.  Name ``"loops(c, name)"``.

    >>> h = loops(1, K(3))
    >>> h.name, h.eigenvalues().tolist(), h.has_loops
    ('loops(1, K(3))', [0.0, 0.0, 3.0], True)
    """
    f = _check_real(c, "loops(c, G): c")
    g = from_matrix(g)
    cf = g._closed_form
    adj = g._adj + f * sp.eye_array(g.n, format="csr")
    return Factor(adj, f"loops({_format_number(f)}, {g.name})",
                  None if cf is None else cf + f)


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


__all__ = ["C", "J", "K", "P", "dicycle", "loops", "motif", "scale"]
