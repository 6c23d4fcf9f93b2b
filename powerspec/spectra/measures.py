"""Spectral measures: finite eigenvalue multisets with exact multiplicities.

A :class:`Spectrum` holds distinct eigenvalues ("atoms") and, for each, an
exact integer multiplicity.  Multiplicities are numpy ``int64`` while the
total (the order of the graph) fits in 63 bits and Python integers (numpy
``object`` arrays) beyond that, so counts such as C(2000, 1000) stay exact.

Values are stored in one of two forms:

* **linear** -- a float64 (real spectrum) or complex128 array;
* **polar** -- ``logabs`` = log|v| (``-inf`` for an exact zero) and ``turns``
  = arg(v) / 2pi in [0, 1).  This form is used when some |v| exceeds
  :data:`LINEAR_MAX` (products of powers overflow a double quickly); values
  are then returned as mpmath numbers, never as ``inf``.  Their relative
  precision is that of log|v| in a double: about |log v| * 2.2e-16.

Merging tolerance.  Two atoms x, y are the same eigenvalue when
``|x - y| <= RTOL * max(|x|, |y|) + atol`` (linear form; real and imaginary
parts are clustered in turn).  ``atol`` is carried by each spectrum as a
bound on its absolute rounding error: ``ATOL_REL * max(1, max|v|)`` for
eigenvalues from an eigensolver, added up by sums (k-fold sums get k times
the factor's), scaled by affine maps, and zero after products -- products of
doubles have *relative* error, and exact zeros stay exact.  In polar form
log|v| must agree within ``RTOL * max(1, |log|v||)`` and the phase within
``RTOL`` turns.  Genuinely distinct eigenvalues closer than the tolerance
are reported as one atom.  Clustering is by sorted gaps, so a chain of atoms
each within tolerance of the next is merged into one; its value is the mean
of the merged values, snapped to an integer within the tolerance.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Iterator, Sequence
from typing import Any

import mpmath
import numpy as np

from powerspec.errors import InputError

RTOL = 1e-10
"""Relative merging tolerance (see module docstring)."""

ATOL_REL = 1e-12
"""Absolute rounding allowance of eigensolver output, relative to its largest |value|."""

LINEAR_MAX = 1e300
"""Largest |value| kept in linear (float) form; beyond it the polar form is used."""

_LOG_LINEAR_MAX = math.log(LINEAR_MAX)
_INT64_SAFE = 2**62


def mult_array(mult: Iterable[int], total: int | None = None) -> np.ndarray:
    """Return multiplicities as int64 when ``total`` (or their sum) fits, else as Python ints.

    >>> mult_array([1, 2]).dtype
    dtype('int64')
    >>> mult_array([2**70]).dtype
    dtype('O')
    """
    seq = [int(m) for m in mult]
    if total is None:
        total = sum(seq)
    if total < _INT64_SAFE:
        return np.array(seq, dtype=np.int64)
    out = np.empty(len(seq), dtype=object)
    out[:] = seq
    return out


def outer_mult(a: np.ndarray, b: np.ndarray, order_a: int, order_b: int) -> np.ndarray:
    """Flattened products a_i * b_j, exact (int64 if order_a*order_b fits, else Python ints)."""
    if a.dtype != object and b.dtype != object and order_a * order_b < _INT64_SAFE:
        return np.multiply.outer(a, b).ravel()
    return np.multiply.outer(_as_object(a), _as_object(b)).ravel()


def _as_object(m: np.ndarray) -> np.ndarray:
    if m.dtype == object:
        return m
    out = np.empty(m.shape, dtype=object)
    out[...] = [int(x) for x in m.ravel()] if m.ndim == 1 else m.astype(object)
    return out


def cis(turns: np.ndarray) -> np.ndarray:
    """exp(2 pi i t), exact at the quarter turns (so real signs stay exactly real)."""
    t = np.asarray(turns, dtype=float)
    out = np.exp(2j * np.pi * t)
    for q, v in ((0.0, 1.0), (0.25, 1j), (0.5, -1.0), (0.75, -1j)):
        out = np.where(t == q, v, out)
    return out


def _turns_of(z: np.ndarray) -> np.ndarray:
    t = np.angle(z) / (2 * np.pi)
    t = np.where(t < 0, t + 1.0, t)
    t = np.where(t >= 1.0, t - 1.0, t)
    return np.where(z == 0, 0.0, t)


def polar_mul(la, ta, lb, tb):
    """Polar product: log-magnitudes add, phases add modulo one turn."""
    t = np.mod(ta + tb, 1.0)
    return la + lb, t


def polar_add(la, ta, lb, tb):
    """Polar sum a + b computed without overflow (relative precision of a double)."""
    la, ta, lb, tb = np.broadcast_arrays(la, ta, lb, tb)
    m = np.maximum(la, lb)
    both_zero = np.isneginf(m)
    m_safe = np.where(both_zero, 0.0, m)
    with np.errstate(invalid="ignore"):
        z = np.exp(la - m_safe) * cis(ta) + np.exp(lb - m_safe) * cis(tb)
    z = np.where(both_zero, 0.0, z)
    with np.errstate(divide="ignore"):
        mag = np.log(np.abs(z))
    return np.where(z == 0, -np.inf, m_safe + mag), _turns_of(z)


def _gap_breaks(sorted_keys: np.ndarray, mag: np.ndarray, rtol: float, atol: float):
    """True where consecutive sorted keys differ by more than rtol*max(mag) + atol."""
    thr = rtol * np.maximum(mag[:-1], mag[1:]) + atol
    return np.diff(sorted_keys) > thr


def _cluster_starts(sorted_keys: np.ndarray, mag: np.ndarray, rtol: float, atol: float):
    starts = np.empty(sorted_keys.shape[0], dtype=bool)
    if starts.size:
        starts[0] = True
        starts[1:] = _gap_breaks(sorted_keys, mag, rtol, atol)
    return starts


def _cluster2(a: np.ndarray, b: np.ndarray, mag: np.ndarray, rtol: float, atol: float):
    """Order and cluster-start indices grouping points close in ``a`` then in ``b``."""
    o = np.argsort(a, kind="stable")
    rank = np.empty(o.size, dtype=np.int64)
    rank[o] = np.cumsum(_cluster_starts(a[o], mag[o], rtol, atol))
    o2 = np.lexsort((b, rank))
    st = np.empty(o2.size, dtype=bool)
    st[0] = True
    st[1:] = (np.diff(rank[o2]) != 0) | _gap_breaks(b[o2], mag[o2], rtol, atol)
    return o2, np.flatnonzero(st)


def _group_sum(mult: np.ndarray, starts_idx: np.ndarray) -> np.ndarray:
    if mult.size == 0:
        return mult
    return np.add.reduceat(mult, starts_idx)


def _group_mean(values: np.ndarray, starts_idx: np.ndarray) -> np.ndarray:
    counts = np.diff(np.r_[starts_idx, values.shape[0]])
    return np.add.reduceat(values, starts_idx) / counts


class Spectrum:
    """A finite multiset of eigenvalues with exact integer multiplicities.

    Atoms are merged with the tolerance described in the module docstring and
    kept sorted in ascending order of real part, then imaginary part.

    >>> s = Spectrum.from_values([1.0, -1.0, 1.0 + 1e-15])
    >>> s.atoms()
    [(-1.0, 1), (1.0, 2)]
    >>> s.order
    3
    """

    __slots__ = ("_values", "_logabs", "_turns", "mult", "_order", "_real", "atol")

    def __init__(
        self,
        values: np.ndarray | None,
        mult: np.ndarray,
        *,
        logabs: np.ndarray | None = None,
        turns: np.ndarray | None = None,
        merge: bool = True,
        order: int | None = None,
        atol: float | None = None,
    ):
        mult = np.asarray(mult)
        if mult.dtype != object:
            mult = mult.astype(np.int64, copy=False)
        if values is not None:
            values = np.asarray(values)
            if values.dtype.kind == "c":
                if values.size == 0 or np.all(values.imag == 0):
                    values = values.real.astype(float)
                else:
                    values = values.astype(np.complex128)
            else:
                values = values.astype(float)
            if not np.all(np.isfinite(values)):
                # Linear values must be finite; overflowed inputs go to polar form.
                raise InputError("eigenvalues must be finite; use the polar form for huge values")
        self._values = values
        self._logabs = None if logabs is None else np.asarray(logabs, dtype=float)
        self._turns = None if turns is None else np.asarray(turns, dtype=float)
        self.mult = mult
        self._order = order
        self.atol = atol
        if merge:
            self._merge()
        self._real = self._compute_real()

    # ----------------------------------------------------------------- build
    @classmethod
    def from_values(cls, values: Sequence[Any] | np.ndarray, mult: Sequence[int] | None = None):
        """Spectrum of the given eigenvalues (each with multiplicity 1 unless ``mult`` is given).

        >>> Spectrum.from_values([2, 0, 0]).atoms()
        [(0.0, 2), (2.0, 1)]
        """
        vals = np.asarray(values)
        if vals.dtype == object:
            vals = vals.astype(complex)
        if mult is None:
            m = np.ones(vals.shape[0], dtype=np.int64)
        else:
            m = mult_array(mult)
        return cls(vals, m)

    @classmethod
    def polar(cls, logabs: np.ndarray, turns: np.ndarray, mult: np.ndarray, *, order=None,
              atol: float = 0.0):
        """Spectrum from polar data; converted to linear form when every value fits."""
        return cls(None, mult, logabs=logabs, turns=turns, order=order, atol=atol)

    @classmethod
    def empty(cls) -> Spectrum:
        """The empty multiset."""
        return cls(np.zeros(0), np.zeros(0, dtype=np.int64))

    # -------------------------------------------------------------- merging
    def _merge(self) -> None:
        if self._values is None:
            self._merge_polar()
            if self._logabs.size and np.max(self._logabs) <= _LOG_LINEAR_MAX:
                z = np.exp(self._logabs) * cis(self._turns)
                z = np.where(np.isneginf(self._logabs), 0.0, z)
                self._values = z.real.copy() if np.all(z.imag == 0) else z
                self._logabs, self._turns = None, None
                if self.atol is None:
                    self.atol = 0.0
            elif self._logabs.size == 0:
                self._values, self._logabs, self._turns = np.zeros(0), None, None
        else:
            self._merge_linear()

    def _merge_linear(self) -> None:
        v, m = self._values, self.mult
        keep = m != 0
        if not np.all(keep):
            v, m = v[keep], m[keep]
        if v.size == 0:
            self._values, self.mult = np.zeros(0), m
            return
        if self.atol is None:
            self.atol = ATOL_REL * max(1.0, float(np.max(np.abs(v))))
        atol = self.atol
        if v.dtype.kind != "c":
            order = np.argsort(v, kind="stable")
            v, m = v[order], m[order]
            idx = np.flatnonzero(_cluster_starts(v, np.abs(v), RTOL, atol))
            self._values = _snap(_group_mean(v, idx), atol)
            self.mult = _group_sum(m, idx)
            return
        re, im = v.real, v.imag
        mag = np.abs(v)
        order, idx = _cluster2(re, im, mag, RTOL, atol)
        re_o, im_o = re[order], im[order]
        vals = _snap(_group_mean(re_o, idx), atol) + 1j * _snap(_group_mean(im_o, idx), atol)
        imag_small = np.abs(vals.imag) <= RTOL * np.abs(vals.real) + atol
        vals = np.where(imag_small, vals.real + 0j, vals)
        mult = _group_sum(m[order], idx)
        if np.all(imag_small):
            self._values, self.mult = vals.real.copy(), mult
            self._merge_linear()  # real parts may now coincide
            return
        o = np.lexsort((vals.imag, vals.real))
        self._values, self.mult = vals[o], mult[o]

    def _merge_polar(self) -> None:
        la, t, m = self._logabs, np.mod(self._turns, 1.0), self.mult
        keep = m != 0
        la, t, m = la[keep], t[keep], m[keep]
        t = np.where(t > 1.0 - RTOL, 0.0, t)
        zero = np.isneginf(la)
        parts_l, parts_t, parts_m = [], [], []
        if np.any(zero):
            parts_l.append(np.array([-np.inf]))
            parts_t.append(np.array([0.0]))
            zm = m[zero]
            parts_m.append(np.array([sum(zm.tolist())], dtype=m.dtype))
        nz = ~zero
        la, t, m = la[nz], t[nz], m[nz]
        if la.size:
            ltol = RTOL * max(1.0, float(np.max(np.abs(la))))
            o2, idx = _cluster2(la, t, np.zeros_like(la), 0.0, ltol)
            lo, to = la[o2], t[o2]
            parts_l.append(_group_mean(lo, idx))
            tt = _group_mean(to, idx)
            for q in (0.0, 0.25, 0.5, 0.75):
                tt = np.where(np.abs(tt - q) <= RTOL, q, tt)
            parts_t.append(tt)
            parts_m.append(_group_sum(m[o2], idx))
        if parts_l:
            la = np.concatenate(parts_l)
            t = np.concatenate(parts_t)
            m = np.concatenate(parts_m) if m.dtype != object else _concat_obj(parts_m)
        else:
            la, t, m = np.zeros(0), np.zeros(0), m[:0]
        key = self._polar_sort_key(la, t)
        o = np.lexsort(key)
        self._logabs, self._turns, self.mult = la[o], t[o], m[o]

    @staticmethod
    def _polar_sort_key(la, t):
        c = np.cos(2 * np.pi * t)
        c = np.where(np.isin(t, (0.25, 0.75)), 0.0, c)
        c = np.where(t == 0.5, -1.0, np.where(t == 0.0, 1.0, c))
        s = np.sign(np.where(np.isneginf(la), 0.0, c))
        with np.errstate(divide="ignore"):
            mag = la + np.log(np.abs(c))
        sec = np.where(s > 0, mag, np.where(s < 0, -mag, 0.0))
        im = np.sin(2 * np.pi * t)
        with np.errstate(invalid="ignore"):
            imk = np.where(np.isneginf(la), 0.0, np.sign(im) * (la + np.log(np.abs(im) + 1e-300)))
        return (imk, sec, s)

    def _compute_real(self) -> bool:
        if self._values is not None:
            return self._values.dtype.kind != "c"
        return bool(np.all(np.isin(self._turns, (0.0, 0.5))))

    # ------------------------------------------------------------ accessors
    @property
    def order(self) -> int:
        """Sum of multiplicities (the vertex count), an exact Python int."""
        if self._order is None:
            self._order = int(sum(self.mult.tolist()))
        return self._order

    def __len__(self) -> int:
        return int(self.mult.shape[0])

    @property
    def is_real(self) -> bool:
        """True when every eigenvalue is real."""
        return self._real

    @property
    def is_polar(self) -> bool:
        """True when values are held as (log|v|, phase) because some |v| > LINEAR_MAX."""
        return self._values is None

    @property
    def values(self) -> np.ndarray:
        """Linear values (float64 or complex128); raises OverflowError in polar form."""
        if self._values is None:
            raise OverflowError("eigenvalues exceed the double range; use logabs/turns or atoms()")
        return self._values

    @property
    def logabs(self) -> np.ndarray:
        """log|v| for every atom (-inf for zero)."""
        if self._values is None:
            return self._logabs
        with np.errstate(divide="ignore"):
            return np.log(np.abs(self._values))

    @property
    def turns(self) -> np.ndarray:
        """arg(v) / 2pi in [0, 1) for every atom (0 for zero)."""
        if self._values is None:
            return self._turns
        if self._values.dtype.kind != "c":
            return np.where(self._values < 0, 0.5, 0.0)
        return _turns_of(self._values)

    def value(self, i: int) -> Any:
        """Atom i as float / complex, or as an mpmath number when it overflows a double."""
        if self._values is not None:
            v = self._values[i]
            return float(v) if self._real else complex(v)
        la, t = self._logabs[i], self._turns[i]
        if np.isneginf(la):
            return 0.0
        r = mpmath.exp(mpmath.mpf(la))
        if self._real:
            return r if t == 0.0 else -r
        return r * mpmath.expjpi(2 * mpmath.mpf(t))

    def atoms(self) -> list[tuple[Any, int]]:
        """List of (value, multiplicity) pairs in ascending order (real part, then imaginary).

        >>> Spectrum.from_values([3, 3, -1]).atoms()
        [(-1.0, 1), (3.0, 2)]
        """
        return [(self.value(i), int(self.mult[i])) for i in range(len(self))]

    def __iter__(self) -> Iterator[tuple[Any, int]]:
        return iter(self.atoms())

    def __repr__(self) -> str:
        shown = ", ".join(f"{_short(v)}^{m}" for v, m in self.atoms()[:6])
        more = "" if len(self) <= 6 else f", ... ({len(self)} atoms)"
        return f"Spectrum([{shown}{more}], order={self.order})"

    def max_log_abs(self) -> float:
        """log of the largest |eigenvalue| (-inf for the zero spectrum)."""
        la = self.logabs
        return float(np.max(la)) if la.size else -math.inf

    def to_polar(self) -> tuple[np.ndarray, np.ndarray]:
        """(logabs, turns) arrays of the atoms."""
        return self.logabs, self.turns

    def expand(self) -> np.ndarray:
        """Every eigenvalue repeated by multiplicity (linear form, small spectra only)."""
        if self.order > 50_000_000:
            raise OverflowError("spectrum too large to expand")
        return np.repeat(self.values, self.mult.astype(np.int64))

    def real_parts(self) -> np.ndarray:
        """Real parts as floats (polar atoms beyond the double range give +-inf)."""
        if self._values is not None:
            return self._values.real if self._values.dtype.kind == "c" else self._values
        with np.errstate(over="ignore"):
            r = np.exp(self._logabs) * np.cos(2 * np.pi * self._turns)
            return np.where(self._turns == 0.5, -np.exp(self._logabs), r)

    def affine(self, shift: complex, factor: complex = 1.0) -> Spectrum:
        """The spectrum of shift + factor * M (exact map, same multiplicities).

        >>> Spectrum.from_values([1, -1]).affine(2.0, -1.0).atoms()
        [(1.0, 1), (3.0, 1)]
        """
        if factor == 0:
            return Spectrum.from_values([shift], [self.order]) if len(self) else self
        top = np.max(np.abs(self._values), initial=0.0) if self._values is not None else np.inf
        if abs(factor) * max(1.0, top) + abs(shift) < LINEAR_MAX:
            return Spectrum(shift + factor * self._values, self.mult.copy(), order=self._order,
                            atol=abs(factor) * (self.atol or 0.0) + ATOL_REL * abs(shift))
        la, t = self.logabs, self.turns
        fl = math.log(abs(factor))
        ft = _turns_of(np.array([complex(factor)]))[0]
        la, t = polar_mul(la, t, fl, ft)
        if shift != 0:
            sl = math.log(abs(shift))
            st = _turns_of(np.array([complex(shift)]))[0]
            la, t = polar_add(la, t, np.full_like(la, sl), np.full_like(t, st))
        return Spectrum.polar(la, t, self.mult.copy(), order=self._order,
                              atol=abs(factor) * (self.atol or 0.0) + ATOL_REL * abs(shift))

    def equals(self, other: Spectrum, rtol: float = 1e-7) -> bool:
        """Same atoms (within rtol of the scale) and identical multiplicities."""
        if len(self) != len(other) or self.order != other.order:
            return False
        if self.is_polar or other.is_polar:
            return bool(
                np.allclose(self.logabs, other.logabs, rtol=0, atol=rtol)
                and np.allclose(self.turns, other.turns, atol=rtol)
                and self.mult.tolist() == other.mult.tolist()
            )
        scale = max(1.0, float(np.max(np.abs(self.values), initial=0.0)))
        return bool(
            np.allclose(self.values, other.values, rtol=0, atol=rtol * scale)
            and self.mult.tolist() == other.mult.tolist()
        )


def _snap(x: np.ndarray, atol: float) -> np.ndarray:
    """Cluster means within the merging tolerance of an integer become that integer."""
    r = np.round(x)
    return np.where(np.abs(x - r) <= RTOL * np.abs(x) + atol, r, x)


def _concat_obj(parts: list[np.ndarray]) -> np.ndarray:
    vals = [int(x) for p in parts for x in p.tolist()]
    out = np.empty(len(vals), dtype=object)
    out[:] = vals
    return out


def _short(v: Any) -> str:
    if isinstance(v, float):
        return f"{v:.6g}"
    if isinstance(v, complex):
        return f"({v.real:.6g}{v.imag:+.6g}j)"
    return mpmath.nstr(v, 8)


def concat(spectra: Sequence[Spectrum]) -> Spectrum:
    """Union (sum) of several spectra, merged.

    >>> concat([Spectrum.from_values([1]), Spectrum.from_values([1, 2])]).atoms()
    [(1.0, 2), (2.0, 1)]
    """
    spectra = [s for s in spectra if len(s)]
    if not spectra:
        return Spectrum.empty()
    total = sum(s.order for s in spectra)
    mult = mult_array([int(x) for s in spectra for x in s.mult.tolist()], total)
    if any(s.is_polar for s in spectra):
        la = np.concatenate([s.logabs for s in spectra])
        t = np.concatenate([s.turns for s in spectra])
        return Spectrum.polar(la, t, mult, order=total, atol=max(s.atol or 0.0 for s in spectra))
    vals = np.concatenate([s.values for s in spectra])
    return Spectrum(vals, mult, order=total, atol=max(s.atol or 0.0 for s in spectra))
