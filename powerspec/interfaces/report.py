"""The command line's text reports: an Answer as a table a reader can take in.

This is the terminal layout of :class:`~powerspec.answers.answer.Answer`
(the JSON layout stays the answer's own).  Beyond the plain table it gives

* a **summary view** for long spectra: past :data:`SUMMARY_AT` distinct
  eigenvalues only the :data:`SUMMARY_ENDS` smallest and largest rows are
  printed, with a line saying how many are left out (``--head N`` prints the
  first N rows, ``--all`` every row; ``--json`` is always complete);
* the **zero eigenvalue** where it is an exact atom: its nullity and exact
  share of the vertices (and "nullity 0" when every atom provably avoids 0);
* the **law's parameters** for distribution answers from a limit law;
* wording that counts right: "1 vertex", "5 distinct eigenvalues, 16 counted
  with multiplicity", "the 2 largest distinct eigenvalues (1 + 12 = 13 of 10^6
  eigenvalues)", and the ``tr(M^p)/n`` header of per-vertex moments.

>>> from powerspec.queries import planner
>>> print(answer_text(planner.spectrum("cart(K(2)^2)")), end="")
powerspec spectrum
  expression  cart(K(2)^2)
  matrix      adjacency
  order       4 vertices
  method      exact: eigenvalues combined from the factors' spectra
  atoms       3 distinct eigenvalues, 4 counted with multiplicity
  zero        eigenvalue 0 is exact: nullity 2, share 1/2 of the vertices
<BLANKLINE>
  eigenvalue  multiplicity
          -2  1
           0  2
           2  1
"""

from __future__ import annotations

import math
from fractions import Fraction
from typing import Any

from flint import arb

from powerspec.answers.answer import Answer, atom_rows, bound_text, count_text, value_text
from powerspec.numbers.counts import BigCount, fraction_of
from powerspec.numbers.digits import ball_text, mean_text

SUMMARY_AT = 60
"""Spectra with more distinct eigenvalues than this print a summary by default."""

SUMMARY_ENDS = 10
"""Rows printed at each end of the summary view."""


def vertices(n: Any) -> str:
    """'1 vertex', '16 vertices', '3^1000000000 vertices'.

    >>> vertices(1), vertices(16)
    ('1 vertex', '16 vertices')
    """
    return f"{count_text(n)} vertex" if n == 1 else f"{count_text(n)} vertices"


def _plural(n: Any, word: str) -> str:
    return f"{count_text(n)} {word}" if n == 1 else f"{count_text(n)} {word}s"


def share_text(part: Any, whole: Any) -> str:
    """An exact share: '1/2', '3/8 (0.375)', or a certified decimal when the fraction is long.

    >>> share_text(6, 16), share_text(1, 2), share_text(2**80, 3**60)
    ('3/8 (0.375)', '1/2', '0.0000285183483727')
    >>> share_text(3**60 - 2**70, 3**60)                # 2^70 / 3^60 = 2.78...e-8
    '1 - 2.78499495827e-8'
    """
    # reduced first: 2^(k-1) / 2^k is 1/2 at any k; digits are counted only when short
    f = Fraction(part, whole) if isinstance(part, int) and isinstance(whole, int) else None
    if f is not None and f.numerator.bit_length() + f.denominator.bit_length() <= 90:
        digits = len(str(f.numerator)) + len(str(f.denominator))
        if f.denominator == 1 or (digits <= 12 and f.denominator in (2, 4, 5, 10)):
            return str(f)
        if digits <= 24:
            return f"{f} ({float(f):.6g})"
    ball = fraction_of(part, whole)
    if ball > 0.5 and ball.mid() > 1 - 1e-6:
        # a share next to 1 would print as 1.000...: write its distance to 1 instead
        return "1 - " + share_text(whole - part, whole)
    return ball_text(arb(ball.mid(), max(float(ball.rad()), abs(float(ball.mid())) * 1e-12)))[0]


def _zero_line(ans: Answer) -> str | None:
    m, maybe = ans.zero_atoms()
    if m is not None:
        return (f"  {'zero':<11} eigenvalue 0 is exact: nullity {count_text(m)}, share "
                f"{share_text(m, ans.order)} of the vertices")
    if ans.query == "spectrum" and not maybe:
        return f"  {'zero':<11} not an eigenvalue (nullity 0): every atom's ball excludes 0"
    return None


def _atoms_line(ans: Answer, n: int) -> str:
    total = ans.atoms.order
    if ans.query == "top":
        side = "largest" if ans.descending else "smallest"
        what = "the largest distinct eigenvalue" if n == 1 and ans.descending else \
            "the smallest distinct eigenvalue" if n == 1 else f"the {n} {side} distinct eigenvalues"
        return (f"  {'atoms':<11} {what}, {count_text(total)} of the {count_text(ans.order)} "
                "eigenvalues counted with multiplicity")
    counted = "counted" if total == 1 else "counted with multiplicity"
    return f"  {'atoms':<11} {_plural(n, 'distinct eigenvalue')}, {count_text(total)} {counted}"


def _table(rows, inexact: bool, gap_after: int | None, left_out: int) -> list[str]:
    w = max([len("eigenvalue")] + [len(a) for a, _, _ in rows])
    wr = max([len("radius")] + [len(b) for _, b, _ in rows])
    out = [f"  {'eigenvalue':>{w}}  {'radius':>{wr}}  multiplicity" if inexact
           else f"  {'eigenvalue':>{w}}  multiplicity"]
    for i, (a, b, c) in enumerate(rows):
        out.append(f"  {a:>{w}}  {b:>{wr}}  {c}" if inexact else f"  {a:>{w}}  {c}")
        if gap_after is not None and i == gap_after:
            out.append(f"  {'...':>{w}}  ({left_out} more distinct eigenvalues; --head N, --all or "
                       "--json for every row)")
    return out


def atom_lines(ans: Answer, head: int | None = None, full: bool = False) -> list[str]:
    """The atoms section: count line, zero line, then the (possibly shortened) table."""
    n = len(ans.atoms)
    lines = [_atoms_line(ans, n)]
    zero = _zero_line(ans)
    if zero:
        lines.append(zero)
    gap, left = None, 0
    if head is not None and head < n:
        shown = ans.listed_atoms(slice(0, head))  # only the rows shown are converted
        lines.append(f"  {'':<11} showing the first {head} rows (--head {head})")
    elif head is None and not full and n > SUMMARY_AT:
        shown = ans.listed_atoms(slice(0, SUMMARY_ENDS)) + ans.listed_atoms(slice(-SUMMARY_ENDS, None))
        gap, left = SUMMARY_ENDS - 1, n - 2 * SUMMARY_ENDS
        order = "smallest and largest" if not ans.descending else "largest and smallest"
        lines.append(f"  {'':<11} summary: the {SUMMARY_ENDS} {order} of {n} rows")
    else:
        shown = ans.listed_atoms()
    rows, inexact = atom_rows(shown)
    lines.append("")
    lines.extend(_table(rows, inexact, gap, left))
    return lines


def law_lines(params: dict, s_text: str | None = None) -> list[str]:
    """The limit law's parameters (as :attr:`SpectralDistribution.params` names them), to six
    digits: they describe the reference law; the bounds below are the certified numbers.

    >>> law_lines({"mu": -5.6e-11, "sigma2": 40.0})
    ['  law         normal, mean mu = 0, variance sigma^2 = 40 (6 digits)']
    """
    if not params:
        return []
    if "mu" in params:
        sd = math.sqrt(max(params["sigma2"], 0.0))
        return [f"  {'law':<11} normal, mean mu = {mean_text(params['mu'], sd)}, variance "
                f"sigma^2 = {params['sigma2']:.6g} (6 digits)"]
    s = s_text or "s"
    sd = math.sqrt(max(params["log_sigma2"], 0.0))
    return [
        f"  {'law':<11} log|{s}| normal given {s} != 0: mean {mean_text(params['log_mu'], sd)}, "
        f"variance {params['log_sigma2']:.6g} (6 digits)",
        f"  {'':<11} point mass at {s} = 0: {params['zero_mass']:.6g}; shares {s} > 0: "
        f"{params['positive_share']:.6g}, {s} < 0: {params['negative_share']:.6g}"]


def answer_text(ans: Answer, *, head: int | None = None, full: bool = False,
                law: dict | None = None, s_text: str | None = None) -> str:
    """The terminal report of an answer (see the module docstring)."""
    lines = [f"powerspec {ans.query}"]
    for k, v in (("expression", ans.expression), ("matrix", ans.matrix),
                 ("order", vertices(ans.order)), ("method", ans.method)):
        lines.append(f"  {k:<11} {v}")
    if ans.atoms is not None:
        lines.extend(atom_lines(ans, head, full))
    if ans.estimate is not None or ans.lower is not None:
        tier = ans.inputs.get("tier")
        if tier:
            lines.append(f"  {'tier':<11} {tier}")
        lines.extend(law_lines(law or {}, s_text))
        lines.append("")
        lines.append(f"  {'estimate':<11} {value_text(ans.estimate)}")
        lines.append(f"  {'lower':<11} {bound_text(ans.lower, -1)}")  # rounded down: still a bound
        lines.append(f"  {'upper':<11} {bound_text(ans.upper, 1)}")
    if ans.moments is not None:
        per_vertex = bool(ans.inputs.get("per_vertex"))
        lines.append("")
        lines.append(f"  {'p':>4}  {'tr(M^p)/n (n = order)' if per_vertex else 'tr(M^p)'}")
        lines.extend(f"  {p:>4}  {value_text(v)}" for p, v in ans.moments)
    if ans.invariants is not None:
        lines.append("")
        w = max([24] + [len(name) for name in ans.invariants])
        for name, d in ans.invariants.items():
            lo, hi = d.get("lower"), d.get("upper")
            rng = f"  [{bound_text(lo, -1)}, {bound_text(hi, 1)}]" if lo is not None or hi is not None \
                else ""
            lines.append(f"  {name:<{w}} {value_text(d.get('value'))}{rng}  ({d.get('method', '')})")
    lines.extend(f"  note: {n}" for n in ans.notes)
    return "\n".join(lines) + "\n"


def truncated_json(ans: Answer, head: int | None, law: dict | None = None) -> dict:
    """The answer's JSON object, with ``atoms``/``radii`` cut to ``head`` rows and the law's
    parameters under ``law`` (keys as the frozen distribution names them).

    A cut list says so: ``distinct`` gives the full number of distinct eigenvalues.
    """
    out = ans.to_dict(head)
    if law:
        out["law"] = dict(law)
    return out


def plain_share(m: int | BigCount, order: int | BigCount) -> float:
    """m / order as a float (0.0 below the double range)."""
    return float(fraction_of(m, order).mid())


__all__ = ["SUMMARY_AT", "SUMMARY_ENDS", "answer_text", "atom_lines", "law_lines",
           "plain_share", "share_text", "truncated_json", "vertices"]
