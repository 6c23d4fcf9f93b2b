"""One result type for every query: values, bounds, method, size and inputs.

An :class:`Answer` prints as a readable table (:meth:`Answer.to_text`) and
serialises to the stable JSON layout of DESIGN §4 (:meth:`Answer.to_json`).

Number rules (text and JSON alike):

* every printed digit is covered: exact values print exactly (integers in
  full, doubles as their shortest round-trip decimal); balls print with as
  many significant digits as their certified radius allows, and the JSON
  ``radii`` list gives, per atom, a radius around the *printed* value;
* JSON integers with more than 4000 digits, and reals that a standard parser
  would read as 0 or infinity (beyond 1e-300..1e300 in magnitude), are JSON
  strings -- decimal digits, the exact factored form of a count such as
  ``"3^1000000000 - 1"``, or scientific notation that ``decimal.Decimal`` and
  ``mpmath.mpf`` read; never NaN or Infinity;
* ``atoms`` are listed in the query's order: ``top`` largest first,
  ``top --bottom`` smallest first, ``spectrum`` ascending; the text table
  uses the same order.
"""

from __future__ import annotations

import json
import math
from collections.abc import Iterable
from dataclasses import dataclass, field
from fractions import Fraction
from typing import Any

import mpmath
import numpy as np
from flint import acb, arb, fmpq

from powerspec.errors import InputError
from powerspec.numbers.balls import Balls
from powerspec.numbers.counts import BigCount, to_arb
from powerspec.numbers.digits import JSON_INT_DIGITS, ball_text, int_text, json_text, radius_text
from powerspec.numbers.hp import working
from powerspec.numbers.rationals import Rationals
from powerspec.spectra.spectrum import Spectrum

TEXT_DIGITS = 40
"""Integers longer than this are abbreviated in the text table (never in JSON)."""


@dataclass
class Answer:
    """The answer to one query.

    ``atoms`` holds a spectrum (for spectrum/top) and ``descending`` its
    listing order; ``estimate``/``lower``/``upper`` a bracketed number
    (cdf/count/quantile); ``moments`` a list of (p, value); ``invariants`` a
    mapping name -> dict(value, lower, upper, method).  ``inputs`` records
    the options that produced the answer.
    """

    query: str
    expression: str
    matrix: str
    order: Any
    method: str
    atoms: Spectrum | None = None
    estimate: Any = None
    lower: Any = None
    upper: Any = None
    moments: list | None = None
    invariants: dict | None = None
    inputs: dict = field(default_factory=dict)
    notes: list[str] = field(default_factory=list)
    descending: bool = False

    # ------------------------------------------------------------- atoms
    def listed_atoms(self, rows: slice | None = None) -> list[tuple[Any, Any]]:
        """(certified value, exact multiplicity) pairs in the listing order; ``rows`` (a slice of
        that order) converts only those atoms (a summary of 10^5 rows shows 20)."""
        sp = self.atoms
        if rows is not None:
            idx = np.arange(len(sp))
            idx = (idx[::-1] if self.descending else idx)[rows]
            sp = Spectrum(sp.values.take(idx), sp.mult[idx], order=sp.order, merged=True)
            return list(zip(sp.balls(), [_plain(m) for m in sp.mult.tolist()], strict=True))
        pairs = list(zip(sp.balls(), [_plain(m) for m in sp.mult.tolist()], strict=True))
        return pairs[::-1] if self.descending else pairs

    def zero_atoms(self) -> tuple[Any, bool]:
        """(multiplicity of an atom exactly 0 or None, True when some atom's ball may hold 0).

        Decided on the value arrays at once (a ball may hold 0 when 0 lies in its bounding box
        -- a superset, so "no atom holds 0" is never claimed wrongly).
        """
        sp = self.atoms
        v = sp.values
        if isinstance(v, Rationals):
            hit = np.flatnonzero(v.num == 0)
            return (_plain(sp.mult[hit[0]]) if hit.size else None), bool(hit.size)
        if isinstance(v, Balls):
            exact = np.flatnonzero((v.rad == 0) & (v.mid == 0))
            box = np.abs(v.mid.real) <= v.rad
            if v.is_complex:
                box &= np.abs(v.mid.imag) <= v.rad
            return (_plain(sp.mult[exact[0]]) if exact.size else None), bool(np.any(box))
        zero, maybe = None, False
        for x, m in zip(sp.balls(), sp.mult.tolist(), strict=True):
            if isinstance(x, fmpq):
                is_zero = holds = x == 0
            elif isinstance(x, acb):
                is_zero, holds = x.real.is_zero() and x.imag.is_zero(), x.contains(0)
            else:
                is_zero, holds = x.is_zero(), x.contains(0)
            zero = _plain(m) if is_zero else zero
            maybe = maybe or holds
        return zero, maybe

    # ------------------------------------------------------ conversions
    def values(self) -> np.ndarray:
        """The atoms' midpoints in listing order (float64 / complex128; +-inf beyond range)."""
        m = self.atoms.midpoints()
        return m[::-1] if self.descending else m

    def multiplicities(self) -> np.ndarray:
        """The atoms' exact multiplicities in listing order (object array of ints / BigCount)."""
        out = np.empty(len(self.atoms), dtype=object)
        out[:] = [_plain(m) for m in self.atoms.mult.tolist()]
        return out[::-1] if self.descending else out

    def radii(self) -> np.ndarray:
        """Certified radii of the atoms around their midpoints, in listing order."""
        r = self.atoms.radii()
        return r[::-1] if self.descending else r

    def as_dict(self) -> dict:
        """The answer as plain Python data: the JSON layout read back with the json module."""
        return json.loads(self.to_json())

    def __getitem__(self, key: str):
        """``answer["spectral_radius"]`` (an invariant) or any key of :meth:`as_dict`."""
        if self.invariants is not None and key in self.invariants:
            return self.invariants[key]
        return self.as_dict()[key]

    # ------------------------------------------------------------- JSON
    def to_dict(self, head: int | None = None) -> dict:
        """The JSON object as Python data (numbers that must stay verbatim as :class:`RawNumber`).

        ``head`` keeps the first rows of ``atoms`` / ``radii`` only (nothing past them is
        converted to digits).
        """
        out: dict[str, Any] = {
            "expression": self.expression,
            "matrix": self.matrix,
            "order": json_count(self.order),
            "method": self.method,
        }
        if self.atoms is not None:
            pairs = self.listed_atoms()
            if head is not None and len(pairs) > head:
                out["distinct"] = len(pairs)
                pairs = pairs[:head]
            atoms, radii = [], []
            for (v, _), jm in zip(pairs, json_counts(m for _, m in pairs), strict=True):
                jv, r = json_value(v)
                atoms.append([jv, jm])
                radii.append(_json_radius(r))
            out["atoms"] = atoms
            out["radii"] = radii
        if self.estimate is not None or self.lower is not None:
            for k in ("estimate", "lower", "upper"):
                out[k] = json_value(getattr(self, k))[0]
        if self.moments is not None:
            out["moments"] = [[p, json_value(v)[0]] for p, v in self.moments]
        if self.invariants is not None:
            out["invariants"] = {
                name: {k: (json_value(v)[0] if k != "method" else v) for k, v in d.items()}
                for name, d in self.invariants.items()}
        out["query"] = self.query
        if self.inputs:
            out["inputs"] = {k: (json_value(v)[0] if _is_number(v) else v)
                             for k, v in self.inputs.items()}
        if self.notes:
            out["notes"] = self.notes
        return out

    def to_json(self) -> str:
        """Serialise to JSON text (keys of DESIGN §4); Python's json.loads reads it back."""
        return dump_json(self.to_dict(), end="\n")

    # ------------------------------------------------------------- text
    def to_text(self, head: int | None = None) -> str:
        """A readable report: header lines, then the table (``head`` rows at most, if given)."""
        lines = [f"powerspec {self.query}"]
        for k, v in (("expression", self.expression), ("matrix", self.matrix),
                     ("order", _vertices(self.order)), ("method", self.method)):
            lines.append(f"  {k:<11} {v}")
        if self.atoms is not None:
            lines.extend(self._atom_table(head))
        if self.estimate is not None or self.lower is not None:
            lines.append("")
            for k in ("estimate", "lower", "upper"):
                lines.append(f"  {k:<11} {value_text(getattr(self, k))}")
        if self.moments is not None:
            lines.append("")
            lines.append(f"  {'p':>4}  tr(M^p)")
            for p, v in self.moments:
                lines.append(f"  {p:>4}  {value_text(v)}")
        if self.invariants is not None:
            lines.append("")
            for name, d in self.invariants.items():
                val = value_text(d.get("value"))
                lo, hi = d.get("lower"), d.get("upper")
                rng = f"  [{value_text(lo)}, {value_text(hi)}]" if lo is not None or hi is not None \
                    else ""
                lines.append(f"  {name:<24} {val}{rng}  ({d.get('method', '')})")
        for n in self.notes:
            lines.append(f"  note: {n}")
        return "\n".join(lines) + "\n"

    def _atom_table(self, head: int | None) -> list[str]:
        pairs = self.listed_atoms()
        n = len(pairs)
        shown = pairs if head is None or n <= head else pairs[:head]
        total = self.atoms.order
        lines = [f"  {'atoms':<11} {n} distinct ({_eigenvalues(total)})"]
        if len(shown) < n:
            lines.append(f"  {'':<11} showing the first {len(shown)}")
        rows, inexact = atom_rows(shown)
        lines.append("")
        w = max([len("eigenvalue")] + [len(a) for a, _, _ in rows])
        wr = max([len("radius")] + [len(b) for _, b, _ in rows])
        if inexact:
            lines.append(f"  {'eigenvalue':>{w}}  {'radius':>{wr}}  multiplicity")
            lines.extend(f"  {a:>{w}}  {b:>{wr}}  {c}" for a, b, c in rows)
        else:
            lines.append(f"  {'eigenvalue':>{w}}  multiplicity")
            lines.extend(f"  {a:>{w}}  {c}" for a, _, c in rows)
        return lines


def atom_rows(pairs) -> tuple[list[tuple[str, str, str]], bool]:
    """(rows of (eigenvalue, radius, multiplicity) texts, True when any radius is not 0).

    An exact integer atom is written like an exact count (rounded leading digits and its
    length past 40 digits, no digit search); a ball keeps every digit its radius covers.

    >>> atom_rows([(fmpq(4), 1), (fmpq(1, 2), 6)])
    ([('4', 'exact', '1'), ('0.5', 'exact', '6')], False)
    """
    rows, inexact = [], False
    whole = [isinstance(v, fmpq) and v.q == 1 for v, _ in pairs]
    # one batch for the integer atoms and one for the multiplicities: one precision switch
    # each, and equal long counts (palindromic rows) formatted once
    ints = iter(count_texts(int(v.p) for (v, _), w in zip(pairs, whole, strict=True) if w))
    mults = count_texts(m for _, m in pairs)
    for (v, _), w, mt in zip(pairs, whole, mults, strict=True):
        t, r = (next(ints), 0) if w else offset_text(v)
        inexact = inexact or r != 0
        rows.append((t, radius_text(r) if r else "exact", mt))
    return rows, inexact


def offset_text(v: Any) -> tuple[str, Any]:
    """(text, radius) of a value: :func:`ball_text`, except that a ball that prints as an
    integer n but provably is not n is written ``n + d`` / ``n - d`` with d's own certified
    digits (values such as -1 + 10^-32, which the 20-digit cap would print as -1.000...).

    >>> with working():
    ...     x = arb(-1) + arb(10) ** -32 + arb(0, 1e-45)
    >>> offset_text(x)[0], offset_text(arb(2.5))[0]
    ('-1 + 1.000000000000e-32', '2.5')
    """
    t, r = ball_text(v)
    if not r or not isinstance(v, arb):
        return t, r
    mant = t.partition("e")[0].lstrip("-")
    if "e" in t or mant.rstrip("0").rstrip(".") != mant.partition(".")[0]:
        return t, r                 # not printed as an integer: its digits already tell it apart
    n = int(t.partition(".")[0])
    with working():
        d = v - n                   # exact shift: d's ball has v's radius
    if d.contains(0):
        return t, r                 # the ball holds n itself: nothing more to say
    dt, dr = ball_text(d)
    sign, body = ("- ", dt[1:]) if dt.startswith("-") else ("+ ", dt)
    return f"{n} {sign}{body}", dr


# ------------------------------------------------------------------ numbers
class RawNumber(str):
    """A JSON number literal written verbatim (certified digits, read back by any parser)."""


class DigitText(str):
    """A long exact count's decimal digits: a JSON string that needs no escaping pass."""


def _plain(m):
    return m if isinstance(m, BigCount) else int(m)


def _is_number(v) -> bool:
    return isinstance(v, (int, float, Fraction, mpmath.mpf, BigCount)) and not isinstance(v, bool)


def json_count(n: Any) -> Any:
    """An exact count for JSON: a number up to 4000 digits, else a string (digits or factored)."""
    if isinstance(n, BigCount):
        return str(n)
    t = int_text(int(n))  # one conversion; its length decides number or string
    return RawNumber(t) if len(t.lstrip("-")) <= JSON_INT_DIGITS else DigitText(t)


def json_counts(ns: Iterable[Any]) -> list[Any]:
    """:func:`json_count` of each count, converting each distinct long integer once.

    Multiplicity rows of powers are often palindromic (binomial rows), so half of the
    decimal conversions -- the dominant cost of a large ``--json`` -- are repeats.

    >>> json_counts([3, 2**13300, 2**13300])[0], len(json_counts([2**13300] * 2)[1])
    ('3', 4004)
    """
    memo: dict[int, Any] = {}
    out = []
    for n in ns:
        if isinstance(n, BigCount):
            out.append(str(n))
            continue
        n = int(n)
        if n.bit_length() < 3000:  # under 904 digits: no conversion worth remembering
            out.append(RawNumber(str(n)))
            continue
        t = memo.get(n)
        if t is None:
            t = memo[n] = json_count(n)
        out.append(t)
    return out


def json_value(v: Any) -> tuple[Any, Any]:
    """(JSON value, radius) of any number powerspec produces; never NaN or Infinity."""
    if v is None or isinstance(v, (bool, str)):
        return v, 0
    if isinstance(v, (int, BigCount)):
        return json_count(v), 0
    if isinstance(v, (fmpq, arb, acb)):
        if isinstance(v, acb) and not v.imag.is_zero():
            (a, ra), (b, rb) = json_value(v.real), json_value(v.imag)
            return [a, b], ra + rb
        x = v.real if isinstance(v, acb) else v
        if isinstance(x, fmpq) and x.q == 1:
            return json_count(int(x.p)), 0
        text, r = ball_text(x)
        t, is_num = json_text(text)
        return (RawNumber(t) if is_num else t), r
    if isinstance(v, complex) or isinstance(v, mpmath.mpc):
        return [json_value(v.real)[0], json_value(v.imag)[0]], 0
    if isinstance(v, Fraction):
        return json_value(fmpq(v.numerator, v.denominator))
    if isinstance(v, float):
        if not math.isfinite(v):
            raise InputError("internal: a non-finite number reached the output")
        return v, 0
    if isinstance(v, mpmath.mpf):
        if not mpmath.isfinite(v):
            raise InputError("internal: a non-finite number reached the output")
        return json_value(_mpf_exact(v))
    if hasattr(v, "__float__"):
        return json_value(float(v))
    return str(v), 0


def _mpf_exact(v: mpmath.mpf) -> fmpq | arb:
    man, exp = v.man_exp
    man, exp = int(man), int(exp)
    if abs(exp) < 4096:
        return fmpq(man * 2 ** max(exp, 0), 2 ** max(-exp, 0))
    with working():
        return arb(man) * arb(2) ** exp


def _json_radius(r) -> Any:
    if not r:
        return 0
    t = radius_text(r)
    t2, is_num = json_text(t)
    return RawNumber(t2) if is_num else t2


def dump_json(obj: Any, end: str = "") -> str:
    """JSON text for dicts, lists, str, int, float, bool, None and RawNumber (then ``end``).

    The text is assembled from a flat list of pieces joined once, so the long digit
    strings of exact counts are copied once, not once per nesting level.

    >>> dump_json({"a": [1, 2.5, RawNumber("1.25")], "b": DigitText("12")})
    '{"a": [1, 2.5, 1.25], "b": "12"}'
    """
    parts: list[str] = []
    _emit(obj, parts)
    parts.append(end)  # here, not by the caller: a str of hundreds of MB is not copied again
    return "".join(parts)


def _emit(obj: Any, out: list[str]) -> None:
    """Append the JSON pieces of ``obj`` to ``out``."""
    if isinstance(obj, RawNumber):
        out.append(obj)
    elif isinstance(obj, DigitText):  # digits only: nothing to escape, so no pass over them
        out += ('"', obj, '"')
    elif isinstance(obj, BigCount):
        out.append(json.dumps(str(obj)))
    elif isinstance(obj, bool) or obj is None:
        out.append(json.dumps(obj))
    elif isinstance(obj, int):
        _emit(json_count(obj), out)
    elif isinstance(obj, float):
        if not math.isfinite(obj):
            raise InputError("internal: a non-finite number reached the output")
        out.append(json.dumps(obj))
    elif isinstance(obj, str):
        out.append(json.dumps(obj))
    elif isinstance(obj, dict):
        out.append("{")
        for i, (k, v) in enumerate(obj.items()):
            out += (", " if i else "", json.dumps(str(k)), ": ")
            _emit(v, out)
        out.append("}")
    elif isinstance(obj, (list, tuple)):
        out.append("[")
        for i, v in enumerate(obj):
            if i:
                out.append(", ")
            _emit(v, out)
        out.append("]")
    else:
        _emit(json_value(obj)[0], out)


def count_text(n: Any) -> str:
    """An exact count for text: in full up to 40 digits, else 12 leading digits and the length.

    The leading digits are the count rounded to 12 significant digits (decided in
    ball arithmetic on the top 192 bits, exactly when a ball cannot decide them);
    the digit count is exact.  A factored count (BigCount) prints its exact form
    while that is short (``--json`` always keeps the exact form).

    >>> count_text(2**64), count_text(10**50 - 1)
    ('18446744073709551616', '1.00000000000e+50 (an integer of 50 digits)')
    >>> count_text(BigCount.power(3, 10**6) - BigCount.power(2, 10**6))
    '3^1000000 - 2^1000000'
    >>> count_text(BigCount.power(3, 10**6) - 2**(10**6))    # 3^k - 2^k, 2^k written out
    '1.79771011668e+477121 (an integer of 477122 digits)'
    """
    with working():
        return _count_text(n, None)


def count_texts(ns: Iterable[Any]) -> list[str]:
    """:func:`count_text` of each count, in one pass: one precision switch for all, and the
    leading digits of equal long counts decided once (the same text, by the same rule).

    >>> count_texts([7, 10**50 - 1, 10**50 - 1])[1:] == [count_text(10**50 - 1)] * 2
    True
    """
    memo: dict[tuple[int, int], str] = {}
    short = int(3.32 * TEXT_DIGITS)
    with working():
        # short ints (most rows' values) skip the call: this loop runs once per table row
        return [str(n) if type(n) is int and n.bit_length() <= short else _count_text(n, memo)
                for n in ns]


with working():
    _LN10 = arb(10).log()
    _INV_LN10 = 1 / _LN10
    _LOG10_2 = arb(2).log() * _INV_LN10
_UNIT = arb("0.5", "0.5")  # [0, 1]: what the dropped low bits add to the top bits
_HALF = arb("0.5")


def _count_text(n: Any, memo: dict | None) -> str:
    """count_text inside :func:`working`; ``memo`` keeps texts keyed by the bits that decide them."""
    if isinstance(n, BigCount):
        exact = str(n)
        if len(exact) <= TEXT_DIGITS:
            return exact
        return _leading_text(to_arb(n).log() * _INV_LN10, None)[0]
    n = int(n)
    if n.bit_length() <= 3.32 * TEXT_DIGITS:
        return str(n)
    sign = "-" if n < 0 else ""
    n = abs(n)
    bits = n.bit_length()
    shift = max(0, bits - 192)  # the top 192 bits decide 12 digits by far
    top = n >> shift
    # the ball below is a function of (bits, top) alone, so a text it decided is the text
    # of every count with the same key
    key = (bits, top)
    if memo is not None and key in memo:
        return sign + memo[key]
    # n / 2^shift lies in [top, top + 1]
    lg = ((arb(top) + _UNIT).log() * _INV_LN10 + shift * _LOG10_2 if shift
          else arb(n).log() * _INV_LN10)
    text, decided = _leading_text(lg, n)
    if memo is not None and decided:
        memo[key] = text
    return sign + text


def _leading_text(lg: arb, exact: int | None) -> tuple[str, bool]:
    """('d.ddddddddddde+E (an integer of D digits)', decided by the ball) from a ball around
    log10 of a count (call inside :func:`working`).

    ``exact`` is the count itself when known: used when the ball cannot decide the
    digit count or the rounding of the 12th digit.
    """
    q = None
    e = lg.floor().unique_fmpz()
    if e is not None:  # 10^(frac + 11) = exp((lg - e + 11) ln 10): the 12 digits before rounding
        q = (((lg - int(e) + 11) * _LN10).exp() + _HALF).floor().unique_fmpz()
    decided = e is not None and q is not None
    if not decided:
        if exact is None:  # no exact form at hand: the length range, which the ball decides
            lo, hi = (int(b.floor().unique_fmpz()) for b in (lg.lower(), lg.upper()))
            return f"an integer of {lo + 1} to {hi + 1} digits (exact form in --json)", False
        t = int_text(exact)
        e, q = len(t) - 1, (int(t[:13]) + 5) // 10  # round half up at the 12th digit
    e, q = int(e), int(q)
    digits = e + 1
    if q >= 10**12:  # 9.99...95 rounds up to 10.0...: the exponent moves, the length does not
        q, e = q // 10, e + 1
    t = str(q)
    return f"{t[0]}.{t[1:]}e+{e} (an integer of {digits} digits)", decided


def value_text(v: Any) -> str:
    """Any number powerspec produces as certified text ("-" for None)."""
    if v is None:
        return "-"
    if isinstance(v, (int, BigCount)) and not isinstance(v, bool):
        return count_text(v)
    if isinstance(v, (fmpq, arb, acb)):
        return ball_text(v)[0]
    if isinstance(v, Fraction):
        return ball_text(fmpq(v.numerator, v.denominator))[0]
    if isinstance(v, float):
        return f"{v:.12g}"
    if isinstance(v, complex):
        return f"{v.real:.12g}{v.imag:+.12g}i"
    if isinstance(v, mpmath.mpf):
        return ball_text(_mpf_exact(v))[0]
    if isinstance(v, mpmath.mpc):
        return mpmath.nstr(v, 12)
    return str(v)


def _vertices(n) -> str:
    return f"{count_text(n)} vertex" if n == 1 else f"{count_text(n)} vertices"


def _eigenvalues(n) -> str:
    return f"{count_text(n)} eigenvalue" if n == 1 else f"{count_text(n)} eigenvalues counted"


# Older spellings kept for the interfaces that import them.
_text_int = count_text
_text_value = value_text

__all__ = ["Answer", "DigitText", "RawNumber", "count_text", "count_texts", "dump_json", "json_count",
           "json_counts", "json_value", "offset_text", "value_text"]
