"""Numbers as text and as JSON: exact counts, certified values, bounds, atom table rows.

Printers apart from the mathematics: every function here turns a number powerspec
produced (exact int, factored count, exact rational, certified ball, float, mpmath
number) into text whose every digit is covered -- by exactness, by the value's
certified radius (reported beside it), or by outward rounding for bounds -- or into
JSON that a standard parser reads back exactly (DESIGN §4).

>>> count_text(2**64), bound_text(2 * 2**0.5, -1), dump_json([RawNumber("1.5"), DigitText("12")])
('18446744073709551616', '2.82842712474', '[1.5, "12"]')
"""

from __future__ import annotations

import json
import math
from collections.abc import Iterable
from decimal import Decimal
from fractions import Fraction
from typing import Any

import mpmath
from flint import acb, arb, fmpq

from powerspec.errors import InputError
from powerspec.numbers.counts import BigCount, to_arb
from powerspec.numbers.digits import JSON_INT_DIGITS, ball_text, int_text, json_text, radius_text
from powerspec.numbers.hp import working

TEXT_DIGITS = 40
"""Counts with up to this many digits (about 132 bits) print in full."""

_SHORT_BITS = int(3.32 * TEXT_DIGITS)  # counts of at most this many bits print in full


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
    """(text, radius) of a value: :func:`ball_text`, except that a ball within 10^-12 (relative)
    of a non-zero integer n of at most 15 digits that provably is not n is written ``n + d`` /
    ``n - d`` with d's own certified digits: -1 + 10^-32 and -1 + 5e-21, which the 20-digit
    cap prints as -1.000... and -0.999..., stay apart from their neighbours.

    >>> with working():
    ...     x = arb(-1) + arb(10) ** -32 + arb(0, 1e-45)
    ...     y = arb(-1) + arb(5) * arb(10) ** -21 + arb(0, 1e-40)
    >>> offset_text(x)[0], offset_text(y)[0], offset_text(arb(2.5))[0]
    ('-1 + 1.000000000000e-32', '-1 + 5.000000000000000000e-21', '2.5')
    """
    t, r = ball_text(v)
    if not r or not isinstance(v, arb) or not v.is_finite():
        return t, r
    with working():
        n = (v.mid() + arb("0.5")).floor().unique_fmpz()  # the integer nearest the midpoint
        if n is None or int(n) == 0 or abs(int(n)) >= 10**15:
            return t, r             # next to 0 the value's own digits already show it
        n = int(n)
        d = v - n                   # exact shift: d's ball has v's radius
        near = bool(abs(d) < arb(10) ** -12 * max(1, abs(n)))
    if not near or d.contains(0):
        return t, r                 # far from n (its digits tell it apart), or may be n itself
    dt, dr = ball_text(d)
    sign, body = ("- ", dt[1:]) if dt.startswith("-") else ("+ ", dt)
    return f"{n} {sign}{body}", dr


# ------------------------------------------------------------------ numbers
class RawNumber(str):
    """A JSON number literal written verbatim (certified digits, read back by any parser)."""


class DigitText(str):
    """A long exact count's decimal digits: a JSON string that needs no escaping pass."""


def plain_count(m: Any) -> int | BigCount:
    """A multiplicity as a Python int, or the factored BigCount it already is."""
    return m if isinstance(m, BigCount) else int(m)


def is_number(v: Any) -> bool:
    """True for the real numbers the JSON writer converts (not bools)."""
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
        if isinstance(n, BigCount) or int(n).bit_length() < 3000:
            out.append(json_count(n))  # factored, or under 904 digits: nothing worth remembering
            continue
        n = int(n)
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


def json_radius(r: Any) -> Any:
    """A radius for JSON: 0, a number rounded up to two digits, or a string beyond the doubles."""
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
    with working():
        # short ints (most rows' values) skip the call: this loop runs once per table row
        return [str(n) if type(n) is int and n.bit_length() <= _SHORT_BITS
                else _count_text(n, memo) for n in ns]


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
    if n.bit_length() <= _SHORT_BITS:
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


def bound_text(v: Any, side: int) -> str:
    """A lower (``side`` -1) or upper (+1) bound as text that is itself a bound: the value's own
    text when that is exact, else at most 12 significant digits rounded outward (down for a
    lower bound, up for an upper one), from the exact value or its ball's end.

    >>> bound_text(2 * 2**0.5, -1), bound_text(2 * 2**0.5, 1), bound_text(0.5, -1)
    ('2.82842712474', '2.82842712475', '0.5')
    >>> bound_text(10**50 + 1, 1), bound_text(None, 1)
    ('1.00000000001e+50', '-')
    """
    if v is None:
        return "-"
    text = value_text(v)
    exact = _as_fraction(v)
    if exact is not None:
        try:
            if Fraction(text) == exact:
                return text
        except ValueError:
            pass  # abbreviated counts ("... (an integer of N digits)") are not numbers
    with working(256):
        if isinstance(v, BigCount):
            x = to_arb(v)
        elif exact is not None:
            x = arb(fmpq(exact.numerator, exact.denominator))
        elif isinstance(v, (arb, fmpq)):
            x = arb(v)
        elif isinstance(v, mpmath.mpf):
            x = arb(_mpf_exact(v))
        else:
            return text  # complex and other values: no order, no directed rounding
        end = x.lower() if side < 0 else x.upper()
        if end == 0:
            return "0"
        e = int((abs(end).log() / _LN10).mid().floor().unique_fmpz())
        y = end * arb(10) ** (11 - e)  # a ball around end * 10^(11 - e)
        q = int((y.lower().floor() if side < 0 else y.upper().ceil()).unique_fmpz())
    # q 10^(e - 11) <= end (lower) or >= end (upper): the printed number is a bound
    digits = str(abs(q))
    lead = e - 11 + len(digits) - 1            # the exponent of q 10^(e - 11)'s leading digit
    sign = "-" if q < 0 else ""
    if -5 <= lead < 12:                        # fixed point, as value_text writes such numbers
        return f"{Decimal(q).scaleb(e - 11).normalize():f}"
    frac = digits[1:].rstrip("0")              # scientific, exponent of any size (no Decimal context)
    return f"{sign}{digits[0]}{'.' + frac if frac else ''}e{lead:+d}"


def _as_fraction(v: Any) -> Fraction | None:
    """The exact value of an int, float, Fraction or flint rational (None for balls, counts)."""
    if isinstance(v, bool) or isinstance(v, BigCount):
        return None
    if isinstance(v, int):
        return Fraction(v) if v.bit_length() <= 4000 else None
    if isinstance(v, float):
        return Fraction(v) if math.isfinite(v) else None
    if isinstance(v, Fraction):
        return v
    if isinstance(v, fmpq):
        return Fraction(int(v.p), int(v.q))
    return None


__all__ = ["TEXT_DIGITS", "DigitText", "RawNumber", "atom_rows", "bound_text", "count_text",
           "count_texts", "dump_json", "is_number", "json_count", "json_counts", "json_radius",
           "json_value", "offset_text", "plain_count", "value_text"]
