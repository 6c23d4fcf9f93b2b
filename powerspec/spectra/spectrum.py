"""Spectral measures: eigenvalue multisets with certified values and exact multiplicities.

A :class:`Spectrum` holds distinct eigenvalues ("atoms") in one number domain
and, for each, an exact multiplicity:

* **values** -- :class:`~powerspec.numbers.rationals.Rationals` (exact),
  :class:`~powerspec.numbers.balls.Balls` (scaled double balls, certified
  radius) or :class:`HPValues` (a short list of high-precision flint balls,
  for the extremes of enormous powers).  Every atom's value is a ball that
  contains the true eigenvalue(s) it stands for; an atom of radius 0 is exact.
* **mult** -- exact multiplicities: numpy int64 while the total fits,
  Python ints beyond, :class:`~powerspec.numbers.counts.BigCount` (exact,
  factored) when astronomically large.

Atoms are merged only when their balls overlap (see
:mod:`powerspec.spectra.merge`), and kept sorted ascending by real part,
then imaginary part, of the midpoints.

>>> s = Spectrum.from_values([1.0, -1.0, 1.0])
>>> s.atoms()
[(-1.0, 1), (1.0, 2)]
>>> s.order, s.is_exact
(3, True)
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from fractions import Fraction
from typing import Any

import mpmath
import numpy as np
from flint import acb, arb, fmpq

from powerspec.numbers.balls import Balls
from powerspec.numbers.convert import hp_list, hp_of, rationals_to_balls, rationals_to_hp, to_balls
from powerspec.numbers.counts import BigCount
from powerspec.numbers.hp import HP, as_acb, is_real, rational, real_part, to_mpmath, working
from powerspec.numbers.rationals import Rationals
from powerspec.spectra.merge import merge_balls, merge_rationals

_INT64_SAFE = 2**62
HP_KEEP = 4096
"""Factor spectra with at most this many atoms keep their high-precision values."""


class HPValues:
    """A short list of high-precision scalars (exact fmpq, arb or acb balls)."""

    __slots__ = ("items",)

    def __init__(self, items: Sequence[HP]):
        self.items = list(items)

    def __len__(self) -> int:
        return len(self.items)

    def take(self, idx) -> HPValues:
        """The entries at the given indices."""
        idx = np.arange(len(self))[idx] if not isinstance(idx, (list, np.ndarray)) else np.asarray(idx)
        if idx.dtype == bool:
            idx = np.flatnonzero(idx)
        return HPValues([self.items[int(i)] for i in idx])


Values = Rationals | Balls | HPValues


def mult_array(mult: Iterable, total: int | None = None) -> np.ndarray:
    """Multiplicities as int64 when their total fits in 62 bits, else an object array.

    >>> mult_array([1, 2]).dtype, mult_array([2**70]).dtype
    (dtype('int64'), dtype('O'))
    """
    seq = list(mult)
    if not any(isinstance(m, BigCount) for m in seq):
        seq = [int(m) for m in seq]
        if total is None:
            total = sum(seq)
        if isinstance(total, int) and total < _INT64_SAFE:
            return np.array(seq, dtype=np.int64)
    out = np.empty(len(seq), dtype=object)
    out[:] = seq
    return out


def _sum(mult: np.ndarray):
    if mult.dtype != object:
        return int(mult.sum())
    total: Any = 0
    for m in mult.tolist():
        total = total + m
    return total


def _real_key(r) -> tuple:
    """An exact sort key of a real midpoint of any size (exact rational or arb midpoint).

    (sign, sign * binary exponent E, sign * the mantissa scaled to a 256-bit integer, sign *
    the exact remainder): tuples compare exactly, so atoms closer than a double can resolve
    still sort in their true order.
    """
    if isinstance(r, fmpq):
        num, den = int(r.p), int(r.q)
        if num == 0:
            return (0, 0, 0, 0)
        n = abs(num)
        e = n.bit_length() - den.bit_length()
        if Fraction(n, den) >= Fraction(2) ** e:
            e += 1  # now 2**(e-1) <= |x| < 2**e
        shift = 256 - e
        top = (n << shift) // den if shift >= 0 else n // (den << -shift)
        rem = Fraction(n << shift, den) - top if shift >= 0 else Fraction(n, den << -shift) - top
    else:
        m, ex = r.mid().man_exp()
        num = int(m)
        if num == 0:
            return (0, 0, 0, 0)
        n = abs(num)
        e = int(ex) + n.bit_length()
        top = n << (256 - n.bit_length()) if n.bit_length() <= 256 else n >> (n.bit_length() - 256)
        rem = 0
    sg = 1 if num > 0 else -1
    return (sg, sg * e, sg * top, sg * rem)


def exact_sort_key(x: HP) -> tuple:
    """An exact sort key (real part, then imaginary part) of an exact or high-precision value."""
    return _sort_key_hp(x)


def _sort_key_hp(x: HP) -> tuple:
    if isinstance(x, acb):
        return _real_key(x.real) + _real_key(x.imag)
    return _real_key(x) + (0, 0, 0, 0)


def _overlap(x: HP, y: HP) -> bool:
    if isinstance(x, fmpq) and isinstance(y, fmpq):
        return x == y
    with working():
        return as_acb(x).overlaps(as_acb(y))


class Spectrum:
    """A finite multiset of eigenvalues: certified atoms with exact multiplicities."""

    __slots__ = ("values", "mult", "_order", "hp")

    def __init__(self, values: Values, mult, *, order=None, merged: bool = False, hp=None):
        mult = mult if isinstance(mult, np.ndarray) else mult_array(mult)
        if mult.dtype != object:
            mult = mult.astype(np.int64, copy=False)
        if len(values) != mult.shape[0]:
            raise ValueError("one multiplicity per value is needed")
        self.values = values
        self.mult = mult
        self._order = order
        self.hp = hp  # the atoms at high precision, when known (factor spectra)
        if not merged:
            self._merge()

    # ----------------------------------------------------------------- build
    @classmethod
    def from_values(cls, values, mult: Sequence[int] | None = None) -> Spectrum:
        """Spectrum of the given exact float / complex values (multiplicity 1 unless given).

        >>> Spectrum.from_values([2, 0, 0]).atoms()
        [(0.0, 2), (2.0, 1)]
        """
        vals = np.asarray(values)
        if vals.dtype == object:
            vals = vals.astype(complex)
        m = np.ones(vals.shape[0], dtype=np.int64) if mult is None else mult_array(mult)
        return cls(Balls.from_floats(vals).real_if_possible(), m)

    @classmethod
    def from_hp(cls, values: Sequence[HP], mult: Sequence[int], keep: int = HP_KEEP) -> Spectrum:
        """Spectrum from high-precision scalars: exact rationals when all are, else balls.

        Lists of at most ``keep`` values are merged at high precision and keep it in :attr:`hp`
        (used for precise powers and extremes).  Their values are double balls
        when those are disjoint; when distinct atoms lie closer than a double
        resolves, their double images overlap and the values stay at high
        precision (domain 'hp'), so that every atom's ball still holds exactly
        its multiplicity.  Products built from them merge the double images.

        >>> with working():                       # 160 bits: 1 + 2^-70 is not 1
        ...     x, y = arb(1) + arb(2) ** -70, arb(1) + arb(2) ** -69
        >>> sp = Spectrum.from_hp([x, y], [1, 1])
        >>> sp.domain, len(sp), sp.order
        ('hp', 2, 2)
        """
        if all(isinstance(v, fmpq) for v in values):
            return cls(Rationals.from_fractions(values), mult_array(mult))
        if len(values) <= keep:
            merged, m = _merge_hp(HPValues(values), mult_array(mult))
            balls = to_balls(merged.items).real_if_possible()
            if len(merge_balls(balls, m)[0]) == len(balls):
                return cls(balls, m, merged=True, hp=tuple(merged.items))
            # rounding each midpoint to 53 bits widens the balls until disjoint atoms overlap:
            # as doubles they would claim each other's eigenvalues
            return cls(merged, m, merged=True, hp=tuple(merged.items))
        return cls(to_balls(values).real_if_possible(), mult_array(mult))

    @classmethod
    def empty(cls) -> Spectrum:
        """The empty multiset."""
        return cls(Rationals(np.zeros(0, np.int64), 1), np.zeros(0, dtype=np.int64), merged=True)

    # -------------------------------------------------------------- merging
    def _merge(self) -> None:
        v, m = self.values, self.mult
        if m.dtype != object:
            keep = m != 0
        else:
            seq = m.tolist()
            # ``0 in seq`` is False when no entry equals 0 (ints compare exactly; a BigCount
            # never equals 0), and then every atom is kept: the scan below only runs otherwise
            keep = None if 0 not in seq else np.array(
                [not (isinstance(x, int) and x == 0) for x in seq], dtype=bool)
        if keep is not None and not np.all(keep):
            v, m = _take(v, keep), m[keep]
        if isinstance(v, Rationals):
            v, m = merge_rationals(v, m)
        elif isinstance(v, Balls):
            v, m = merge_balls(v, m)
        else:
            v, m = _merge_hp(v, m)
        self.values, self.mult = v, m

    # ------------------------------------------------------------ accessors
    @property
    def domain(self) -> str:
        """'exact', 'ball' or 'hp': the number domain of the values."""
        return {Rationals: "exact", Balls: "ball", HPValues: "hp"}[type(self.values)]

    @property
    def order(self):
        """Sum of multiplicities: an exact Python int or BigCount."""
        if self._order is None:
            self._order = _sum(self.mult)
        return self._order

    def __len__(self) -> int:
        return int(self.mult.shape[0])

    @property
    def is_real(self) -> bool:
        """True when every eigenvalue is (provably) real."""
        v = self.values
        if isinstance(v, Balls):
            return not v.is_complex
        if isinstance(v, HPValues):
            return all(is_real(x) for x in v.items)
        return True

    @property
    def is_exact(self) -> bool:
        """True when every atom is exact (radius zero)."""
        v = self.values
        if isinstance(v, Rationals):
            return True
        if isinstance(v, Balls):
            return bool(np.all(v.rad == 0))
        return all(isinstance(x, fmpq) or x.rad() == 0 for x in _reals(v.items))

    def ball(self, i: int) -> HP:
        """Atom i as an exact rational (fmpq) or a certified arb / acb ball."""
        v = self.values
        if isinstance(v, Rationals):
            return fmpq(int(v.num[i]), v.den)
        if isinstance(v, Balls):
            return hp_of(v, i)
        return v.items[i]

    def balls(self) -> list[HP]:
        """All atoms as exact rationals or certified balls (ascending)."""
        v = self.values
        if isinstance(v, Rationals):
            return rationals_to_hp(v)
        if isinstance(v, Balls):
            return hp_list(v)
        return list(v.items)

    def as_balls(self) -> Balls:
        """The atoms as scaled double balls (certified)."""
        v = self.values
        if isinstance(v, Balls):
            return v
        if isinstance(v, Rationals):
            return rationals_to_balls(v)
        return to_balls(v.items)

    def midpoints(self) -> np.ndarray:
        """Midpoints as float64 (complex128 for complex spectra); +-inf beyond the double range."""
        v = self.values
        if isinstance(v, Rationals):
            return v.to_floats()
        return self.as_balls().to_floats()

    def real_midpoints(self) -> np.ndarray:
        """Real parts of the midpoints as float64."""
        m = self.midpoints()
        return m.real if m.dtype.kind == "c" else m

    def radii(self) -> np.ndarray:
        """Certified absolute radii as floats rounded up (0 for exact atoms, inf beyond range)."""
        v = self.values
        if isinstance(v, Rationals):
            return np.zeros(len(v))
        return self.as_balls().radii()

    def value(self, i: int) -> Any:
        """Atom i's midpoint: float / complex, or an mpmath number beyond the double range."""
        v = self.values
        if isinstance(v, (Rationals, Balls)):
            f = self.midpoints()[i]
            if np.isfinite(f) and (f != 0 or self._is_zero(i)):
                return complex(f) if self.midpoints().dtype.kind == "c" else float(f)
        with mpmath.workprec(200):
            mid, _ = to_mpmath(self.ball(i))
        if isinstance(mid, mpmath.mpc):
            z = complex(mid)
            ok = all(abs(t) < 1e300 and (t != 0 or p == 0) for t, p in
                     ((z.real, mid.real), (z.imag, mid.imag)))
            return (z if z.imag else z.real) if ok else mid
        f = float(mid)
        return f if abs(f) < 1e300 and (f != 0 or mid == 0) and abs(f) > 1e-300 or mid == 0 else mid

    def _is_zero(self, i: int) -> bool:
        v = self.values
        if isinstance(v, Rationals):
            return int(v.num[i]) == 0
        return bool(v.mid[i] == 0)

    def atoms(self) -> list[tuple[Any, Any]]:
        """List of (midpoint, exact multiplicity), ascending (real part, then imaginary part).

        >>> Spectrum.from_values([3, 3, -1]).atoms()
        [(-1.0, 1), (3.0, 2)]
        """
        return [(self.value(i), _plain(self.mult[i])) for i in range(len(self))]

    def __iter__(self):
        return iter(self.atoms())

    def __repr__(self) -> str:
        shown = ", ".join(f"{_short(v)}^{m}" for v, m in self.atoms()[:6])
        more = "" if len(self) <= 6 else f", ... ({len(self)} atoms)"
        return f"Spectrum([{shown}{more}], order={self.order})"

    def take(self, idx) -> Spectrum:
        """The atoms at the given indices (no re-merging)."""
        idx = np.asarray(idx)
        return Spectrum(_take(self.values, idx), self.mult[idx], merged=True)

    def expand(self) -> np.ndarray:
        """Every midpoint repeated by its multiplicity (small spectra only)."""
        if not isinstance(self.order, int) or self.order > 50_000_000:
            raise OverflowError("spectrum too large to expand")
        return np.repeat(self.midpoints(), self.mult.astype(np.int64))

    def equals(self, other: Spectrum, rtol: float = 1e-7) -> bool:
        """Same number of atoms, identical multiplicities, midpoints within rtol of the scale."""
        if len(self) != len(other) or self.order != other.order:
            return False
        a, b = self.midpoints(), other.midpoints()
        scale = max(1.0, float(np.max(np.abs(a), initial=0.0)))
        return bool(np.allclose(a, b, rtol=0, atol=rtol * scale)
                    and [_plain(x) for x in self.mult] == [_plain(x) for x in other.mult])

    # ---------------------------------------------------------- comparisons
    def count_below(self, x: float | Fraction, strict: bool = False) -> tuple[Any, Any]:
        """(certain, possible) numbers of eigenvalues with real part <= x (< x when strict).

        Rigorous: an atom whose ball lies entirely on the wanted side counts in
        both; an atom whose ball contains x (or reaches it) only in ``possible``.

        >>> Spectrum.from_values([0.0, 1.0, 1.0]).count_below(1.0)
        (3, 3)
        """
        s = self.real_signs(x)
        certain = s == -1 if strict else (s == -1) | (s == 0)
        possible = certain | (s == 2)
        return _sum(self.mult[certain]), _sum(self.mult[possible])

    def real_signs(self, x: float | Fraction) -> np.ndarray:
        """Per atom: -1 / 0 / +1 for Re(value) < / = / > x when decided, 2 when the ball straddles x."""
        v = self.values
        xq = Fraction(x)
        if isinstance(v, Rationals):
            return v.compare(xq)
        if isinstance(v, Balls):
            xb = to_balls([rational(xq)])
            d = v.sub(xb)
            re = d.mid.real if d.is_complex else d.mid
            out = np.where(re > d.rad, 1, np.where(-re > d.rad, -1, 2))
            return np.where((re == 0) & (d.rad == 0), 0, out).astype(np.int64)
        out = np.empty(len(self), dtype=np.int64)
        xr = rational(xq)
        with working():
            xa = arb(xr)
            for i, b in enumerate(v.items):
                r = real_part(b)
                if isinstance(r, fmpq):
                    out[i] = (r > xr) - (r < xr)
                elif r.is_exact() and r.mid() == xa:
                    out[i] = 0
                else:
                    out[i] = 1 if r > xa else -1 if r < xa else 2
        return out


def _plain(m):
    return int(m) if not isinstance(m, BigCount) else m


def _reals(items):
    for x in items:
        if isinstance(x, acb):
            yield x.real
            yield x.imag
        else:
            yield x


def _take(v: Values, idx) -> Values:
    return v.take(idx)


def _merge_hp(v: HPValues, m: np.ndarray) -> tuple[HPValues, np.ndarray]:
    """Sort by midpoint and merge overlapping high-precision balls.

    Real lists: one sweep in order of lower endpoints with the running maximum
    of upper endpoints (a midpoint order breaks the sweep when radii differ;
    see :mod:`powerspec.spectra.merge`); the disjoint results are then in
    midpoint order too.  Complex lists: pairwise, until no two overlap.
    """
    real = all(is_real(x) for x in v.items)
    key = _lower_key if real else _sort_key_hp
    with working():  # lower endpoints at the precision the sweep compares them
        order = sorted(range(len(v)), key=lambda i: key(v.items[i]))
    items = [v.items[i] for i in order]
    mults = [m[i] for i in order]
    out_i: list[HP] = []
    out_m: list = []
    if real:
        with working():
            run = None
            for x, k in zip(items, mults, strict=True):
                r = real_part(x)
                lo, hi = (r, r) if isinstance(r, fmpq) else (r.lower(), r.upper())
                if run is not None and not (lo > run):
                    last = out_i[-1]
                    out_i[-1] = last if (isinstance(last, fmpq) and isinstance(r, fmpq) and last == r) \
                        else _real_union(last, r)
                    out_m[-1] = out_m[-1] + k
                    run = hi if hi > run else run
                else:
                    out_i.append(r)
                    out_m.append(k)
                    run = hi
        # a union is a ball: its midpoint rounding can reach below the lower endpoints of its
        # parts and so overlap an atom the sweep already closed; sweep again until none does
        if len(out_i) < len(items) and any(
                _overlap(out_i[i], out_i[i + 1]) for i in range(len(out_i) - 1)):
            return _merge_hp(HPValues(out_i), mult_array(out_m))
        return HPValues(out_i), mult_array(out_m)
    for x, k in zip(items, mults, strict=True):
        # the union of x with an atom may reach further atoms: absorb them until none overlaps
        while (hit := next((j for j in range(len(out_i)) if _overlap(out_i[j], x)), None)) is not None:
            with working():
                x = as_acb(out_i.pop(hit)).union(as_acb(x))
            k = out_m.pop(hit) + k
        out_i.append(x)
        out_m.append(k)
    order = sorted(range(len(out_i)), key=lambda i: _sort_key_hp(out_i[i]))
    return HPValues([out_i[i] for i in order]), mult_array([out_m[i] for i in order])


def _lower_key(x: HP) -> tuple:
    """Exact sort key of a real value's lower endpoint (the value itself when exact)."""
    r = real_part(x)
    if isinstance(r, fmpq):
        return _real_key(r) + (0,)
    # an arb's lower endpoint is exact (radius 0); ties with an exact value sort after it
    return _real_key(r.lower()) + (1,)


def _real_union(a: HP, b: HP) -> arb:
    ra, rb = real_part(a), real_part(b)
    return (arb(ra) if isinstance(ra, fmpq) else ra).union(arb(rb) if isinstance(rb, fmpq) else rb)


def _short(v: Any) -> str:
    if isinstance(v, float):
        return f"{v:.6g}"
    if isinstance(v, complex):
        return f"({v.real:.6g}{v.imag:+.6g}j)"
    return mpmath.nstr(v, 8)


def concat(spectra: Sequence[Spectrum]) -> Spectrum:
    """Union (sum) of several spectra, merged; the domain is the coarsest among them.

    >>> concat([Spectrum.from_values([1]), Spectrum.from_values([1, 2])]).atoms()
    [(1.0, 2), (2.0, 1)]
    """
    spectra = [s for s in spectra if len(s)]
    if not spectra:
        return Spectrum.empty()
    mult = mult_array([x for s in spectra for x in s.mult.tolist()])
    doms = {s.domain for s in spectra}
    if doms == {"exact"}:
        return Spectrum(Rationals.concat([s.values for s in spectra]), mult)
    if "hp" in doms and all(len(s) < 5000 for s in spectra):
        return Spectrum(HPValues([b for s in spectra for b in s.balls()]), mult)
    return Spectrum(Balls.concat([s.as_balls() for s in spectra]), mult)


__all__ = ["HPValues", "Spectrum", "Values", "concat", "exact_sort_key", "mult_array"]
