"""One result type for every query: values, bounds, method, size and inputs.

An :class:`Answer` prints as a readable table (:meth:`Answer.to_text`) and
serialises to the stable JSON layout of DESIGN §4 (:meth:`Answer.to_json`).
Numbers that overflow a double are written as exact-width JSON number
literals from mpmath (valid JSON; read them with an arbitrary-precision
parser), never as ``inf``; multiplicities are written as exact integers.
"""

from __future__ import annotations

import math
import sys
from dataclasses import dataclass, field
from typing import Any

import mpmath

from powerspec.errors import InputError
from powerspec.numbers.counts import BigCount
from powerspec.spectra.measures import Spectrum

MAX_JSON_DIGITS = 400_000
"""Integers with more decimal digits are written as a string of their leading digits."""

TEXT_DIGITS = 40
"""Multiplicities longer than this are abbreviated in the text table (never in JSON)."""


@dataclass
class Answer:
    """The answer to one query.

    ``atoms`` holds a spectrum (for spectrum/top); ``estimate``/``lower``/
    ``upper`` a bracketed number (cdf/count/quantile); ``moments`` a list of
    (p, value); ``invariants`` a mapping name -> dict(value, lower, upper,
    method).  ``inputs`` records the options that produced the answer.
    """

    query: str
    expression: str
    matrix: str
    order: int
    method: str
    atoms: Spectrum | None = None
    estimate: Any = None
    lower: Any = None
    upper: Any = None
    moments: list | None = None
    invariants: dict | None = None
    inputs: dict = field(default_factory=dict)
    notes: list[str] = field(default_factory=list)

    # ------------------------------------------------------------- JSON
    def to_dict(self) -> dict:
        """The JSON object as Python data (huge numbers as :class:`RawNumber`)."""
        out: dict[str, Any] = {
            "expression": self.expression,
            "matrix": self.matrix,
            "order": self.order,
            "method": self.method,
        }
        if self.atoms is not None:
            out["atoms"] = [[_json_value(v), m] for v, m in self.atoms.atoms()]
        if self.estimate is not None or self.lower is not None:
            out["estimate"] = _json_value(self.estimate)
            out["lower"] = _json_value(self.lower)
            out["upper"] = _json_value(self.upper)
        if self.moments is not None:
            out["moments"] = [[p, _json_value(v)] for p, v in self.moments]
        if self.invariants is not None:
            out["invariants"] = {
                k: {kk: (_json_value(vv) if kk != "method" else vv) for kk, vv in d.items()}
                for k, d in self.invariants.items()
            }
        out["query"] = self.query
        if self.inputs:
            out["inputs"] = self.inputs
        if self.notes:
            out["notes"] = self.notes
        return out

    def to_json(self) -> str:
        """Serialise to JSON text (keys of DESIGN §4)."""
        return dump_json(self.to_dict()) + "\n"

    # ------------------------------------------------------------- text
    def to_text(self) -> str:
        """A readable report: header lines, then the table of the answer."""
        lines = [f"powerspec {self.query}"]
        head = [
            ("expression", self.expression),
            ("matrix", self.matrix),
            ("order", f"{_text_int(self.order)} vertices"),
            ("method", self.method),
        ]
        for k, v in head:
            lines.append(f"  {k:<11} {v}")
        if self.atoms is not None:
            lines.append(f"  {'atoms':<11} {len(self.atoms)} distinct shown, "
                         f"{_text_int(self.atoms.order)} eigenvalues counted")
            lines.append("")
            rows = [(_text_value(v), _text_int(m)) for v, m in reversed(self.atoms.atoms())]
            w = max([len("eigenvalue")] + [len(a) for a, _ in rows])
            lines.append(f"  {'eigenvalue':>{w}}  multiplicity")
            for a, b in rows:
                lines.append(f"  {a:>{w}}  {b}")
        if self.estimate is not None or self.lower is not None:
            lines.append("")
            for k in ("estimate", "lower", "upper"):
                lines.append(f"  {k:<11} {_text_value(getattr(self, k))}")
        if self.moments is not None:
            lines.append("")
            lines.append(f"  {'p':>4}  tr(M^p)")
            for p, v in self.moments:
                lines.append(f"  {p:>4}  {_text_value(v)}")
        if self.invariants is not None:
            lines.append("")
            for name, d in self.invariants.items():
                val = _text_value(d.get("value"))
                lo, hi = d.get("lower"), d.get("upper")
                rng = f"  [{_text_value(lo)}, {_text_value(hi)}]" if lo is not None else ""
                lines.append(f"  {name:<24} {val}{rng}  ({d.get('method', '')})")
        for n in self.notes:
            lines.append(f"  note: {n}")
        return "\n".join(lines) + "\n"


class RawNumber(str):
    """A JSON number literal written verbatim (for values beyond the double range)."""


def _json_value(v: Any) -> Any:
    if v is None or isinstance(v, bool):
        return v
    if isinstance(v, (int, BigCount)):
        return v
    if isinstance(v, float):
        if math.isfinite(v):
            return v
        raise InputError("internal: a non-finite number reached the output")  # never inf
    if isinstance(v, complex):
        return [_json_value(v.real), _json_value(v.imag)]
    if isinstance(v, mpmath.mpc):
        return [_json_value(v.real), _json_value(v.imag)]
    if isinstance(v, mpmath.mpf):
        f = float(v)
        if math.isfinite(f) and abs(f) < 1e300 and (f != 0.0 or v == 0) and (abs(f) > 1e-300 or f == 0):
            return f
        return RawNumber(mpmath.nstr(v, 17, min_fixed=1, max_fixed=0).replace("e+", "e"))
    if hasattr(v, "__float__"):
        return _json_value(float(v))
    return str(v)


def _int_text(n: int) -> str:
    if n.bit_length() < 13000:
        return str(n)
    digits = int(n.bit_length() * math.log10(2)) + 1
    if digits > MAX_JSON_DIGITS:
        return '"' + _approx_int(n) + '"'
    old = sys.get_int_max_str_digits()
    sys.set_int_max_str_digits(0)
    try:
        return str(n)
    finally:
        sys.set_int_max_str_digits(old)


def _approx_int(n: int) -> str:
    lg = mpmath.log10(mpmath.mpf(n))
    e = int(mpmath.floor(lg))
    mant = mpmath.power(10, lg - e)
    return f"~{mpmath.nstr(mant, 12)}e{e} (an integer of {e + 1} digits)"


def dump_json(obj: Any) -> str:
    """JSON text for dicts, lists, str, int, float, bool, None and RawNumber.

    >>> dump_json({"a": [1, 2.5, RawNumber("1e400")]})
    '{"a": [1, 2.5, 1e400]}'
    """
    import json

    if isinstance(obj, RawNumber):
        return str(obj)
    if isinstance(obj, BigCount):
        return json.dumps(str(obj))
    if isinstance(obj, bool) or obj is None:
        return json.dumps(obj)
    if isinstance(obj, int):
        return _int_text(obj)
    if isinstance(obj, (float, str)):
        return json.dumps(obj)
    if isinstance(obj, dict):
        return "{" + ", ".join(f"{json.dumps(str(k))}: {dump_json(v)}" for k, v in obj.items()) + "}"
    if isinstance(obj, (list, tuple)):
        return "[" + ", ".join(dump_json(v) for v in obj) + "]"
    raise TypeError(f"cannot serialise {type(obj).__name__}")


def _text_int(n) -> str:
    if isinstance(n, BigCount):
        return str(n)
    if n.bit_length() <= 3.33 * TEXT_DIGITS:
        return str(n)
    return _approx_int(n)


def _text_value(v: Any) -> str:
    if v is None:
        return "-"
    if isinstance(v, int):
        return _text_int(v)
    if isinstance(v, float):
        return f"{v:.12g}"
    if isinstance(v, complex):
        return f"{v.real:.12g}{v.imag:+.12g}i"
    if isinstance(v, (mpmath.mpf, mpmath.mpc)):
        return mpmath.nstr(v, 12)
    return str(v)
