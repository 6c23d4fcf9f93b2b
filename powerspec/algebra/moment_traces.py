"""Exact traces tr(M^p) of factor matrices and of words in their letters, by modular arithmetic.

A factor's matrix of any kind has rational entries (the exact binary values
of its float64 weights, divided by degrees for the transition and normalized
kinds).  It is held as an integer matrix N over one common denominator
(:class:`IntMatrix`), so tr(M^p) = tr(N^p) / den^p.  The integer traces are
computed modulo several primes -- float64 BLAS products of residue stacks
for small factors, scipy sparse products by column blocks for large sparse
ones -- and reconstructed by the Chinese remainder theorem from the bound
|tr(N^p)| <= n ||N||_inf^p.  Every step is exact: residues stay below 2^b
with n (2^b)^2 < 2^53 (float64) or row-nnz (2^b)^2 < 2^62 (int64), so no
product of weights or counts can overflow.  The cost (primes x products x
flops) is estimated and checked against :data:`MAX_WORK` before any work.

>>> from powerspec.factors import K
>>> [int(t) for t in matrix_traces(factor_matrix(K(1, 3000), "adjacency"), 4)]
[3001, 0, 6000, 0, 18000000]
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from fractions import Fraction
from functools import lru_cache

import numpy as np
import scipy.sparse as sp
from flint import fmpz

from powerspec.errors import InputError, SizeLimitError
from powerspec.factors import Factor

MAX_WORK = 6 * 10**9
"""Largest estimated number of multiply-adds (over all primes) one trace computation may take."""

DENSE_MAX = 400
"""Factors up to this order use dense float64 products of residue stacks."""

BLOCK_BYTES = 1 << 27
"""Memory for the dense column blocks of the sparse path (per array set)."""

MAX_DEN_BITS = 1 << 16
"""Largest common denominator (in bits) of a factor matrix's entries."""


@dataclass(frozen=True)
class IntMatrix:
    """An exact rational n x n matrix: integer entries (Python ints) over one common denominator.

    ``rows``/``cols`` index the non-zero entries ``nums``; the matrix is
    ``sum nums[i] e_rows[i] e_cols[i]^T / den``.
    """

    n: int
    rows: np.ndarray
    cols: np.ndarray
    nums: tuple[int, ...]
    den: int
    symmetric: bool

    @property
    def nnz(self) -> int:
        """Number of stored non-zero entries."""
        return len(self.nums)

    def row_norm(self) -> int:
        """max_i sum_j |N_ij| (exact), at least 1."""
        sums = [0] * self.n
        for r, x in zip(self.rows.tolist(), self.nums, strict=True):
            sums[r] += abs(x)
        return max(max(sums, default=0), 1)

    def max_row_nnz(self) -> int:
        """Most non-zero entries in one row (at least 1)."""
        return int(np.max(np.bincount(self.rows, minlength=1), initial=1)) if self.nnz else 1

    def residues(self, p: int) -> np.ndarray:
        """The entries modulo p as int64 (non-negative)."""
        nums = self.nums
        if all(-(2**62) < x < 2**62 for x in nums):
            return np.mod(np.array(nums, dtype=np.int64), p)
        return np.array([x % p for x in nums], dtype=np.int64)


# ------------------------------------------------------------------ exact entries
def exact_entries(adj: sp.csr_array) -> tuple[np.ndarray, np.ndarray, list[int], int]:
    """(rows, cols, integer numerators, power-of-two denominator) of a float64 sparse matrix.

    Every float64 is m 2^e exactly; the common denominator is 2^-min(e).

    >>> r, c, nums, den = exact_entries(sp.csr_array(np.array([[0, 0.1], [0.5, 0]])))
    >>> [Fraction(x, den) for x in nums] == [Fraction(0.1), Fraction(0.5)]
    True
    """
    coo = sp.coo_array(adj)
    keep = coo.data != 0
    rows = coo.row[keep].astype(np.int64)
    cols = coo.col[keep].astype(np.int64)
    data = coo.data[keep]
    if data.size == 0:
        return rows, cols, [], 1
    if not np.all(np.isfinite(data)):
        raise InputError("cannot take exact traces of a matrix with non-finite entries")
    mant, ex = np.frexp(data)
    m = (mant * 2.0**53).astype(np.int64)
    e = ex.astype(np.int64) - 53
    tz = np.zeros_like(m)
    odd = m.copy()
    for _ in range(53):  # strip trailing zero bits (vectorised)
        even = (odd & 1) == 0
        if not np.any(even):
            break
        odd = np.where(even, odd >> 1, odd)
        tz += even
    e = e + tz
    e0 = int(e.min())
    nums = [int(a) << int(b - e0) for a, b in zip(odd.tolist(), e.tolist(), strict=True)]
    if e0 >= 0:
        return rows, cols, [x << e0 for x in nums], 1
    return rows, cols, nums, 1 << (-e0)


def _degrees(rows, cols, nums, n: int, direction: str, directed: bool) -> list[int]:
    axis = rows if (direction == "out" or not directed) else cols
    d = [0] * n
    for i, x in zip(axis.tolist(), nums, strict=True):
        d[i] += x
    return d


def factor_matrix(factor: Factor, kind: str, direction: str = "out") -> IntMatrix:
    """The factor's matrix of ``kind`` as an exact :class:`IntMatrix`.

    ``normalized`` is taken in its rational similar form I - D^-1 A (same
    traces as I - D^-1/2 A D^-1/2).  Raises InputError when the kind is
    undefined (zero or negative degrees, a directed normalized Laplacian).

    >>> from powerspec.factors import P
    >>> m = factor_matrix(P(3), "transition")
    >>> sorted(Fraction(x, m.den) for x in m.nums)
    [Fraction(1, 2), Fraction(1, 2), Fraction(1, 1), Fraction(1, 1)]
    """
    n = factor.n
    directed = factor.directed
    rows, cols, nums, den = exact_entries(factor.adjacency)
    if kind == "adjacency":
        return IntMatrix(n, rows, cols, tuple(nums), den, not directed)
    d = _degrees(rows, cols, nums, n, direction, directed)
    off = rows != cols
    diag_a = [0] * n
    for r, c, x in zip(rows.tolist(), cols.tolist(), nums, strict=True):
        if r == c:
            diag_a[r] += x
    if kind in ("laplacian", "signless"):
        s = -1 if kind == "laplacian" else 1
        o_nums = [s * x for x, keep in zip(nums, off.tolist(), strict=True) if keep]
        diag = [d[i] + s * diag_a[i] for i in range(n)]
        return _assemble(n, rows[off], cols[off], o_nums, diag, den, not directed)
    if kind == "normalized":
        if directed:
            raise InputError(f"the normalized Laplacian needs an undirected factor, but {factor.name} "
                             "is directed: use 'laplacian' or 'transition'")
        if any(x <= 0 for x in d):
            raise InputError(f"the normalized Laplacian needs every degree > 0 in {factor.name}: "
                             "use 'laplacian'")
    elif any(x == 0 for x in d):
        raise InputError(f"the transition matrix needs every degree non-zero in {factor.name}: "
                         "use 'laplacian'")
    lcm = 1
    for x in set(d):
        lcm = math.lcm(lcm, abs(x))
        if lcm.bit_length() > MAX_DEN_BITS:
            raise SizeLimitError(f"the {kind} matrix of {factor.name} has too many distinct degrees "
                                 "for exact traces (common denominator over 2^16 bits)")
    scale = [lcm // x for x in d]  # row i of D^-1 A is a_i / d_i = a_i * scale_i / lcm
    r_list = rows.tolist()
    if kind == "transition":
        t_nums = [x * scale[r] for r, x in zip(r_list, nums, strict=True)]
        return IntMatrix(n, rows, cols, tuple(t_nums), lcm, False)
    o_nums = [-x * scale[r] for r, x, keep in zip(r_list, nums, off.tolist(), strict=True) if keep]
    diag = [lcm - diag_a[i] * scale[i] for i in range(n)]
    return _assemble(n, rows[off], cols[off], o_nums, diag, lcm, False)


def _assemble(n, rows, cols, nums, diag, den, symmetric) -> IntMatrix:
    keep = [i for i in range(n) if diag[i] != 0]
    r = np.concatenate([rows, np.array(keep, dtype=np.int64)])
    c = np.concatenate([cols, np.array(keep, dtype=np.int64)])
    return IntMatrix(n, r, c, tuple(list(nums) + [diag[i] for i in keep]), den, symmetric)


# ------------------------------------------------------------------ primes and CRT
@lru_cache(maxsize=64)
def _primes(bits: int, count: int) -> tuple[int, ...]:
    """The ``count`` largest primes below 2^bits."""
    out = []
    x = (1 << bits) - 1
    while len(out) < count:
        if fmpz(x).is_prime():
            out.append(x)
        x -= 2
    return tuple(out)


def _crt(residues: np.ndarray, primes: tuple[int, ...]) -> list[int]:
    """Symmetric CRT reconstruction of each column of ``residues`` (shape primes x values)."""
    m = math.prod(primes)
    coef = []
    for p in primes:
        q = m // p
        coef.append(q * pow(q % p, -1, p))
    out = []
    for col in residues.T.tolist():
        x = sum(int(r) * c for r, c in zip(col, coef, strict=True)) % m
        out.append(x - m if 2 * x > m else x)
    return out


def _prime_plan(bound_bits: float, bits: int) -> tuple[int, ...]:
    """Primes below 2^bits whose product exceeds 2^(bound_bits + 2)."""
    count = max(1, math.ceil((bound_bits + 2) / (bits - 1)))
    return _primes(bits, count)


def _dense_bits(n: int) -> int:
    # n (p - 1)^2 < 2^53 for exact float64 dot products of residues
    return max(8, min(26, (53 - math.ceil(math.log2(max(n, 2)))) // 2))


def _check(work: float, what: str) -> None:
    if work > MAX_WORK:
        raise SizeLimitError(f"exact {what} would need about {work:.2g} multiply-adds, over the limit "
                             f"of {MAX_WORK:.1g}; ask for a lower --order or a smaller factor")


# ------------------------------------------------------------------ twins and costs
def twin_classes(mat: IntMatrix, extra: list[int] | None = None) -> tuple[list[int], list[int]]:
    """(representatives, class sizes) of the vertices grouped into false twins.

    Vertices u, v with the same off-diagonal row and column entries, the same
    diagonal entry (and the same ``extra`` value) are exchanged by the
    automorphism (u v) of the matrix, so (M^p)_uu = (M^p)_vv for every p (and
    every word in matrices sharing the automorphism): one representative per
    class suffices.

    >>> from powerspec.factors import K
    >>> twin_classes(factor_matrix(K(1, 5), "adjacency"))
    ([0, 1], [1, 5])
    """
    n = mat.n
    rows: list[list] = [[] for _ in range(n)]
    cols: list[list] = [[] for _ in range(n)]
    diag = [0] * n
    for r, c, x in zip(mat.rows.tolist(), mat.cols.tolist(), mat.nums, strict=True):
        if r == c:
            diag[r] += x
        else:
            rows[r].append((c, x))
            if not mat.symmetric:
                cols[c].append((r, x))
    groups: dict = {}
    for u in range(n):
        key = (tuple(sorted(rows[u])), tuple(sorted(cols[u])), diag[u],
               extra[u] if extra is not None else None)
        groups.setdefault(key, []).append(u)
    reps = sorted((g[0], len(g)) for g in groups.values())
    return [r for r, _ in reps], [m for _, m in reps]


_DENSE_FLOP = 1.0
_SPARSE_OP = 8.0
"""Relative costs of one BLAS multiply-add and of one sparse int64 multiply-add (measured ~8x)."""


def _work(dense_flops: float, sparse_ops: float) -> float:
    return _DENSE_FLOP * dense_flops + _SPARSE_OP * sparse_ops


# ------------------------------------------------------------------ traces of powers
def matrix_traces(mat: IntMatrix, order: int) -> list[Fraction]:
    """[tr(M^0) = n, tr(M), ..., tr(M^order)] exactly (Fractions; integral for integer entries).

    Small factors use dense residue stacks; large sparse ones the columns of
    one representative per twin class.  The work is estimated and checked
    before it starts (SizeLimitError past :data:`MAX_WORK`).

    >>> from powerspec.factors import P
    >>> [int(t) for t in matrix_traces(factor_matrix(P(3), "laplacian"), 3)]
    [3, 4, 10, 28]
    """
    n = mat.n
    if mat.nnz == 0:
        return [Fraction(n)] + [Fraction(0)] * order
    bound = math.log2(n) + order * math.log2(mat.row_norm())
    reps, sizes = twin_classes(mat)
    d_primes = _prime_plan(bound, _dense_bits(n))
    s_bits = max(8, min(24, (62 - math.ceil(math.log2(mat.max_row_nnz() + 1))) // 2))
    s_primes = _prime_plan(bound, s_bits)
    steps = (order + 1) // 2 * (1 if mat.symmetric else 2)
    dense = _work(len(d_primes) * max(order - 1, 0) * float(n) ** 3, 0) if n <= DENSE_MAX else math.inf
    sparse = _work(0, len(s_primes) * (steps * float(mat.nnz + n) + order * n) * len(reps))
    _check(min(dense, sparse), "traces of the factor matrix")
    if dense <= sparse:
        primes, res = d_primes, _dense_power_traces(mat, order, d_primes)
    else:
        primes, res = s_primes, _sparse_power_traces(mat, order, s_primes, reps, sizes)
    ints = _crt(res, primes)
    return [Fraction(n)] + [Fraction(t, mat.den**p) for p, t in enumerate(ints, 1)]


def _residue_stack(mat: IntMatrix, primes: tuple[int, ...]) -> np.ndarray:
    out = np.zeros((len(primes), mat.n, mat.n))
    for i, p in enumerate(primes):
        np.add.at(out[i], (mat.rows, mat.cols), mat.residues(p).astype(float))
        out[i] = np.fmod(out[i], p)
    return out


def _dense_power_traces(mat: IntMatrix, order: int, primes: tuple[int, ...]) -> np.ndarray:
    """Residues of tr(N^p), p = 1..order: array (primes, order)."""
    ps = np.array(primes, dtype=float)[:, None, None]
    r = _residue_stack(mat, primes)
    out = np.zeros((len(primes), order), dtype=np.int64)
    x = r
    for p in range(1, order + 1):
        if p > 1:
            x = np.fmod(np.matmul(x, r), ps)
        out[:, p - 1] = np.fmod(np.trace(x, axis1=1, axis2=2), ps[:, 0, 0]).astype(np.int64)
    return out


def _sparse_residues(mat: IntMatrix, p: int) -> sp.csr_array:
    a = sp.csr_array((mat.residues(p), (mat.rows, mat.cols)), shape=(mat.n, mat.n), dtype=np.int64)
    a.sum_duplicates()
    a.data %= p
    return a


def _unit_columns(n: int, reps: list[int]) -> np.ndarray:
    e = np.zeros((n, len(reps)), dtype=np.int64)
    e[reps, np.arange(len(reps))] = 1
    return e


def _sparse_power_traces(mat: IntMatrix, order: int, primes: tuple[int, ...], reps: list[int],
                         sizes: list[int]) -> np.ndarray:
    """Residues of tr(N^p) = sum_r |class r| (N^p)_rr from the columns N^j e_r (j <= order/2).

    (N^q)_rr = sum_l ((N^T)^lo)_lr (N^hi)_lr with lo + hi = q; for symmetric N
    one set of columns serves both sides.
    """
    n = mat.n
    h = (order + 1) // 2
    bs = max(1, min(len(reps), BLOCK_BYTES // (8 * n * (h + 1) * 2)))
    out = np.zeros((len(primes), order), dtype=np.int64)
    for i, p in enumerate(primes):
        a = _sparse_residues(mat, p)
        at = a if mat.symmetric else sp.csr_array(a.T)
        acc = [0] * order
        for start in range(0, len(reps), bs):
            block = reps[start:start + bs]
            w = np.array(sizes[start:start + bs], dtype=np.int64) % p
            ys = [_unit_columns(n, block)]
            zs = ys if mat.symmetric else [ys[0]]
            for _ in range(h):
                ys.append((a @ ys[-1]) % p)
                if not mat.symmetric:
                    zs.append((at @ zs[-1]) % p)
            for q in range(1, order + 1):
                lo = q // 2
                acc[q - 1] = (acc[q - 1] + _weighted_dots(zs[lo], ys[q - lo], w, p)) % p
        out[i] = acc
    return out


def _weighted_dots(z: np.ndarray, y: np.ndarray, w: np.ndarray, p: int) -> int:
    """sum_j w_j (z_:j . y_:j) mod p for residues below 2^24 (row chunks keep int64 sums exact)."""
    total = np.zeros(z.shape[1], dtype=np.int64)
    step = 1 << 13
    for lo in range(0, z.shape[0], step):
        total = (total + np.einsum("ij,ij->j", z[lo:lo + step], y[lo:lo + step]) % p) % p
    return int(np.sum((total * w) % p)) % p


# ------------------------------------------------------------------ words in two letters
def word_table(factor: Factor, basis: tuple[Fraction, Fraction], order: int,
               direction: str = "out") -> dict[tuple[int, int], Fraction]:
    """tr(w) for every word w of length 1..order in the letters c I + f D (bit 0) and c I + f A (bit 1).

    Keys are (length, mask) with bit i of the mask the i-th letter; values
    exact Fractions (unnormalised traces).  Depth-first over the words (each
    step one product); dense residue stacks for small factors, the columns of
    twin-class representatives for large ones.  The work (2^(order+1)
    products) is checked before it starts.

    >>> from powerspec.factors import P
    >>> t = word_table(P(3), (Fraction(0), Fraction(1)), 2)
    >>> [int(t[(2, m)]) for m in range(4)]      # tr(DD), tr(AD), tr(DA), tr(AA)
    [6, 0, 0, 4]
    """
    c, f = Fraction(basis[0]), Fraction(basis[1])
    n = factor.n
    rows, cols, nums, den = exact_entries(factor.adjacency)
    d = _degrees(rows, cols, nums, n, direction, factor.directed)
    q = math.lcm(c.denominator, f.denominator * den)
    cq = c * q
    fq = f * q / den  # integral: q is a multiple of f's denominator times den
    dl = [int(cq + fq * x) for x in d]
    a_nums = [int(fq * x) for x in nums]
    shift = int(cq)
    if shift:
        rows = np.concatenate([rows, np.arange(n, dtype=np.int64)])
        cols = np.concatenate([cols, np.arange(n, dtype=np.int64)])
        a_nums = a_nums + [shift] * n
    amat = IntMatrix(n, rows, cols, tuple(a_nums), q, not factor.directed)
    norm = max(amat.row_norm(), max((abs(x) for x in dl), default=1), 1)
    bound = math.log2(n) + order * math.log2(norm)
    reps, sizes = twin_classes(amat, dl)
    nodes = float(2 ** (order + 1))
    d_primes = _prime_plan(bound, _dense_bits(n))
    s_bits = max(8, min(24, (62 - math.ceil(math.log2(amat.max_row_nnz() + 1))) // 2))
    s_primes = _prime_plan(bound, s_bits)
    dense = _work(len(d_primes) * nodes * float(n) ** 3, 0) if n <= DENSE_MAX else math.inf
    sparse = _work(0, len(s_primes) * nodes * float(amat.nnz + 2 * n) * len(reps)
                   + len(s_primes) * nodes * 2000)  # per-step interpreter overhead
    _check(min(dense, sparse), "word traces (2^order products)")
    if dense <= sparse:
        primes = d_primes
        keys, vals = _dense_words(amat, dl, order, primes)
    else:
        primes = s_primes
        keys, vals = _sparse_words(amat, dl, order, primes, reps, sizes)
    ints = _crt(vals, primes)
    return {k: Fraction(t, q ** k[0]) for k, t in zip(keys, ints, strict=True)}


def _dense_words(amat: IntMatrix, dl: list[int], order: int, primes: tuple[int, ...]):
    n = amat.n
    ps = np.array(primes, dtype=float)
    r_a = _residue_stack(amat, primes)
    r_d = np.stack([np.array([x % p for x in dl], dtype=float) for p in primes])
    keys: list[tuple[int, int]] = []
    vals: list[np.ndarray] = []

    def visit(prefix: np.ndarray, p: int, mask: int) -> None:
        keys.append((p, mask))
        vals.append(np.fmod(np.trace(prefix, axis1=1, axis2=2), ps))
        if p == order:
            return
        visit(np.fmod(prefix * r_d[:, None, :], ps[:, None, None]), p + 1, mask)
        visit(np.fmod(np.matmul(prefix, r_a), ps[:, None, None]), p + 1, mask | (1 << p))

    eye = np.broadcast_to(np.eye(n), (len(primes), n, n))
    visit(np.fmod(eye * r_d[:, None, :], ps[:, None, None]), 1, 0)
    visit(r_a, 1, 1)
    return keys, np.array(vals, dtype=np.int64).T


def _sparse_words(amat: IntMatrix, dl: list[int], order: int, primes: tuple[int, ...],
                  reps: list[int], sizes: list[int]):
    """Words built right to left on the representative columns: S_(L w) = L S_w."""
    keys: list[tuple[int, int]] = []
    rows = []
    for i, p in enumerate(primes):
        vals: list[int] = []
        _WordWalk(_sparse_residues(amat, p), dl, sizes, reps, p, order).run(
            keys if i == 0 else None, vals)
        rows.append(vals)
    return keys, np.array(rows, dtype=np.int64)


class _WordWalk:
    """Depth-first walk over the words modulo one prime (one column block per representative)."""

    def __init__(self, a: sp.csr_array, dl: list[int], sizes: list[int], reps: list[int], p: int,
                 order: int):
        self.a, self.p, self.order = a, p, order
        self.dv = np.array([x % p for x in dl], dtype=np.int64)[:, None]
        self.w = np.array(sizes, dtype=np.int64) % p
        self.idx = (np.array(reps), np.arange(len(reps)))
        self.e = _unit_columns(a.shape[0], reps)

    def run(self, keys: list | None, vals: list[int]) -> None:
        """Append (length, mask) keys (when given) and the trace residues in visiting order."""
        self._visit((self.dv * self.e) % self.p, 1, 0, keys, vals)
        self._visit((self.a @ self.e) % self.p, 1, 1, keys, vals)

    def _visit(self, y: np.ndarray, length: int, mask: int, keys, vals) -> None:
        p = self.p
        if keys is not None:
            keys.append((length, mask))
        vals.append(int(np.sum((y[self.idx] * self.w) % p) % p))
        if length == self.order:
            return
        self._visit((self.dv * y) % p, length + 1, mask << 1, keys, vals)
        self._visit((self.a @ y) % p, length + 1, (mask << 1) | 1, keys, vals)


__all__ = ["DENSE_MAX", "IntMatrix", "MAX_WORK", "exact_entries", "factor_matrix", "matrix_traces",
           "twin_classes", "word_table"]
