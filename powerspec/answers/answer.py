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
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from flint import acb, fmpq

from powerspec.answers.notation import (
    DigitText,
    RawNumber,
    atom_rows,
    bound_text,
    count_text,
    count_texts,
    dump_json,
    is_number,
    json_count,
    json_counts,
    json_radius,
    json_value,
    offset_text,
    plain_count,
    value_text,
)
from powerspec.numbers.balls import Balls
from powerspec.numbers.rationals import Rationals
from powerspec.spectra.spectrum import Spectrum


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
        if rows is not None:  # the chosen atoms, already in listing order
            idx = np.arange(len(sp))
            idx = (idx[::-1] if self.descending else idx)[rows]
            sp = Spectrum(sp.values.take(idx), sp.mult[idx], order=sp.order, merged=True)
        pairs = list(zip(sp.balls(), [plain_count(m) for m in sp.mult.tolist()], strict=True))
        return pairs[::-1] if self.descending and rows is None else pairs

    def zero_atoms(self) -> tuple[Any, bool]:
        """(multiplicity of an atom exactly 0 or None, True when some atom's ball may hold 0).

        Decided on the value arrays at once (a ball may hold 0 when 0 lies in its bounding box
        -- a superset, so "no atom holds 0" is never claimed wrongly).
        """
        sp = self.atoms
        v = sp.values
        if isinstance(v, Rationals):
            hit = np.flatnonzero(v.num == 0)
            return (plain_count(sp.mult[hit[0]]) if hit.size else None), bool(hit.size)
        if isinstance(v, Balls):
            exact = np.flatnonzero((v.rad == 0) & (v.mid == 0))
            box = ~(np.abs(v.mid.real) > v.rad)  # written so that a NaN counts as "may hold 0"
            if v.is_complex:
                box &= ~(np.abs(v.mid.imag) > v.rad)
            return (plain_count(sp.mult[exact[0]]) if exact.size else None), bool(np.any(box))
        zero, maybe = None, False
        for x, m in zip(sp.balls(), sp.mult.tolist(), strict=True):
            if isinstance(x, fmpq):
                is_zero = holds = x == 0
            elif isinstance(x, acb):
                is_zero, holds = x.real.is_zero() and x.imag.is_zero(), x.contains(0)
            else:
                is_zero, holds = x.is_zero(), x.contains(0)
            zero = plain_count(m) if is_zero else zero
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
        out[:] = [plain_count(m) for m in self.atoms.mult.tolist()]
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
            n = len(self.atoms)
            cut = head is not None and n > head
            if cut:
                out["distinct"] = n
            pairs = self.listed_atoms(slice(0, head) if cut else None)
            atoms, radii = [], []
            for (v, _), jm in zip(pairs, json_counts(m for _, m in pairs), strict=True):
                jv, r = json_value(v)
                atoms.append([jv, jm])
                radii.append(json_radius(r))
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
            out["inputs"] = {k: (json_value(v)[0] if is_number(v) else v)
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
            lines.append(f"  {'estimate':<11} {value_text(self.estimate)}")
            lines.append(f"  {'lower':<11} {bound_text(self.lower, -1)}")
            lines.append(f"  {'upper':<11} {bound_text(self.upper, 1)}")
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
                rng = f"  [{bound_text(lo, -1)}, {bound_text(hi, 1)}]" \
                    if lo is not None or hi is not None else ""
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


def _vertices(n) -> str:
    return f"{count_text(n)} vertex" if n == 1 else f"{count_text(n)} vertices"


def _eigenvalues(n) -> str:
    return f"{count_text(n)} eigenvalue" if n == 1 else f"{count_text(n)} eigenvalues counted"


# Older spellings kept for the interfaces that import them.
_text_int = count_text
_text_value = value_text

__all__ = ["Answer", "DigitText", "RawNumber", "atom_rows", "bound_text", "count_text", "count_texts",
           "dump_json", "json_count", "json_counts", "json_value", "offset_text", "value_text"]
