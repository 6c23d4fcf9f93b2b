"""Printers of symbolic answers: sympy-readable text, LaTeX, and the JSON report.

The mathematics is in :mod:`powerspec.queries.symbolic` (and below); this module
only turns its sympy expressions into strings, as sympy keeps its printers apart
from its expression trees.

* :func:`symbolic_report` -- the JSON-able dict of DESIGN §4: ``expression``,
  ``matrix``, ``order``, ``method``, then ``moments`` as a list of ``[p, value]``
  (moments query) and ``symbolic`` (name -> expression); every expression is a
  string that ``sympy.sympify`` reads back (symbols lose their assumptions);
  ``latex`` (when asked) holds the same in LaTeX; ``notes`` lists assumptions.
* :func:`symbolic_text` -- the readable print of a report, text or LaTeX.

>>> r = symbolic_report("spectrum", "cart(K(2)^k)")
>>> r["order"], r["symbolic"]["eigenvalue"], r["symbolic"]["multiplicity"]
('2**k', 'k - 2*j', 'binomial(k, j)')
>>> symbolic_report("moments", "cart(K(2)^k)", max_power=2)["moments"]
[[1, '0'], [2, '2**k*k']]
"""

from __future__ import annotations

from typing import Any

import sympy

from powerspec.queries.symbolic import SymbolicAnswer, symbolic_answer


def as_text(e: Any) -> str:
    """A sympy-readable string of an expression (reverse-lexicographic term order).

    >>> as_text(sympy.Symbol("k") - 2 * sympy.Symbol("j"))
    'k - 2*j'
    """
    return sympy.sstr(e, order="rev-lex")


def as_latex(e: Any) -> str:
    """LaTeX of an expression.

    >>> as_latex(sympy.binomial(sympy.Symbol("k"), 2))
    '{\\\\binom{k}{2}}'
    """
    return sympy.latex(e)


def report_of(ans: SymbolicAnswer, latex: bool = False) -> dict:
    """The JSON-able report of a :class:`~powerspec.queries.symbolic.SymbolicAnswer`."""
    report: dict[str, Any] = {
        "expression": ans.expression,
        "matrix": ans.matrix,
        "order": as_text(ans.order),
        "method": ans.method,
    }
    if ans.moments is not None:
        report["moments"] = [[p, as_text(v)] for p, v in ans.moments]
    report["symbolic"] = {k: as_text(v) for k, v in ans.forms.items()}
    report["query"] = ans.query
    report["symbols"] = list(ans.symbols)
    if ans.notes:
        report["notes"] = list(ans.notes)
    if latex:
        tex: dict[str, Any] = {}
        if ans.moments is not None:
            tex["moments"] = [[p, as_latex(v)] for p, v in ans.moments]
        tex.update({k: as_latex(v) for k, v in ans.forms.items()})
        report["latex"] = tex
    return report


def symbolic_report(command: str, expression_text: str, *, matrix: str = "adjacency",
                    latex: bool = False, max_power: int = 4) -> dict:
    """The symbolic answer of a command as a JSON-able dict (see the module docstring).

    ``max_power`` is the largest moment order (moments, invariants).
    """
    return report_of(symbolic_answer(command, expression_text, matrix, max_power), latex)


def symbolic_text(report: dict, latex: bool = False) -> str:
    """Readable print of :func:`symbolic_report`: sympy-readable text, or LaTeX with latex=True.

    >>> print(symbolic_text(symbolic_report("spectrum", "cart(K(2)^k)")).splitlines()[6])
      eigenvalue   = k - 2*j
    """
    lines = [f"powerspec {report.get('query', '')} (symbolic)".replace("  ", " ")]
    for key in ("expression", "matrix", "order", "method"):
        lines.append(f"  {key:<11} {report[key]}")
    lines.append("")
    tex = report.get("latex") or {}
    rows: list[tuple[str, str]] = []
    if "moments" in report:
        tex_moments = dict((p, v) for p, v in tex.get("moments", []))
        for p, v in report["moments"]:
            shown = (tex_moments.get(p) or as_latex(sympy.sympify(v))) if latex else v
            rows.append((f"tr(M^{p})", shown))
    for k, v in report["symbolic"].items():
        shown = (tex.get(k) or as_latex(sympy.sympify(v))) if latex else v
        rows.append((k, shown))
    w = max([len(k) for k, _ in rows] + [1])
    lines += [f"  {k:<{w}} = {v}" for k, v in rows]
    lines += [f"  note: {note}" for note in report.get("notes", [])]
    return "\n".join(lines) + "\n"


__all__ = ["as_latex", "as_text", "report_of", "symbolic_report", "symbolic_text"]
