"""The symbolic queries: closed forms in a symbolic power k for spectrum, top, moments, invariants.

:func:`symbolic_answer` parses the expression (grammar errors at once), checks
sizes (numeric powers, factor orders) before any sympy work, then computes the
closed forms inside the time guard (:func:`~powerspec.numbers.symbolic.guarded`:
a forked worker terminated after :data:`~powerspec.numbers.symbolic.TIME_GUARD`
seconds).  The answer holds sympy expressions; printing them (text, LaTeX,
JSON strings) is :mod:`powerspec.interfaces.symbolic_printing`'s job.

``moments`` needs no eigenvalue: its traces come from trace identities, so a
factor whose eigenvalues have no radical form (``motif()``) still answers.

>>> ans = symbolic_answer("moments", "cart(K(2)^k)", max_power=2)
>>> ans.order, ans.moments
(2**k, [(1, 0), (2, 2**k*k)])
"""

from __future__ import annotations

from dataclasses import dataclass, field

import sympy

from powerspec.algebra.symbolic_family import spectrum_family
from powerspec.algebra.symbolic_forms import closed_forms, moment_forms
from powerspec.algebra.symbolic_traces import MAX_TRACE_ORDER
from powerspec.algebra.symbolic_tree import (
    check_numeric_powers,
    factor_symbols,
    order_of,
    powers,
    symbolic_expression,
)
from powerspec.algebra.tree import Node
from powerspec.errors import InputError, SymbolicError
from powerspec.factors.symbolic import check_kind
from powerspec.numbers.symbolic import TIME_GUARD, guarded

COMMANDS = ("spectrum", "top", "moments", "invariants")
"""The commands that answer under ``--symbolic``."""

_TOP_KEYS = ("spectral_radius", "epidemic_threshold", "largest", "largest_multiplicity",
             "smallest", "smallest_multiplicity")


@dataclass
class SymbolicAnswer:
    """A symbolic answer: sympy expressions in the powers, with the method and the notes.

    ``forms`` maps names to expressions (``eigenvalue``, ``spectral_radius``, ...);
    ``moments`` is [(p, tr(M^p))] for the moments query, else None.
    """

    query: str
    expression: str
    matrix: str
    order: sympy.Expr
    method: str
    forms: dict = field(default_factory=dict)
    moments: list | None = None
    notes: list = field(default_factory=list)
    symbols: list = field(default_factory=list)


def _compute(command: str, node: Node, matrix: str, max_power: int) -> SymbolicAnswer:
    symbols = powers(node) | factor_symbols(node)
    names = sorted(s.name for s in symbols)
    if command == "moments":
        forms = moment_forms(node, matrix, max_power)
        moments = [(p, forms.pop(f"moment_{p}")) for p in range(1, max_power + 1)]
        return SymbolicAnswer(command, node.label(), matrix, order_of(node),
                              "exact symbolic: tr(M^p) from trace identities of the product (sympy)",
                              forms, moments, [], names)
    fam = spectrum_family(node, matrix)
    if command == "spectrum":
        forms = {"eigenvalue": fam.eigenvalue, "multiplicity": fam.multiplicity,
                 "constraint": fam.constraints, "count": fam.count}
        notes = []
        if fam.indices:
            notes.append("indices: " + ", ".join(s.name for s in fam.indices) + " (composition counts)")
        notes.append("count is the number of compositions, an upper bound on the distinct eigenvalues")
        method = ("exact symbolic: eigenvalue and multiplicity of each composition of the powers "
                  "over the factors' exact eigenvalues (sympy)")
        return SymbolicAnswer(command, node.label(), matrix, fam.order, method, forms, None, notes,
                              names)
    forms, notes = closed_forms(node, matrix, max_power)
    if command == "top":
        notes = [x for x in notes if x.startswith(("spectral radius", "largest"))]
        if "spectral_radius" not in forms:
            raise SymbolicError("no closed form for the spectral radius here: " + "; ".join(notes))
        forms = {k: forms[k] for k in _TOP_KEYS if k in forms}
        method = "exact symbolic: spectral radius as a closed form in the powers (sympy)"
    else:
        method = "exact symbolic: closed forms in the powers (sympy)"
    return SymbolicAnswer(command, node.label(), matrix, fam.order, method, forms, None, notes, names)


def symbolic_answer(command: str, expression_text: str, matrix: str = "adjacency",
                    max_power: int = 4, timeout: float | None = TIME_GUARD) -> SymbolicAnswer:
    """The :class:`SymbolicAnswer` of a query; sizes checked first, sympy under the time guard.

    ``max_power`` is the largest moment order (moments and invariants).  Raises
    InputError for a command or option that has no symbolic answer, ExpressionError
    for a bad expression, SizeLimitError / SymbolicError for what the guards refuse,
    NotExactError for a matrix kind whose spectrum does not follow from the factors.
    """
    if command not in COMMANDS:
        raise InputError(f"the symbolic bridge answers {', '.join(COMMANDS)}, not {command!r}")
    if not isinstance(max_power, int) or isinstance(max_power, bool) or not 1 <= max_power:
        raise InputError(f"the moment order must be a positive integer, got {max_power!r}")
    if max_power > MAX_TRACE_ORDER:
        raise InputError(f"the symbolic moment order is at most {MAX_TRACE_ORDER}, got {max_power}")
    check_kind(matrix)
    node = symbolic_expression(expression_text)
    check_numeric_powers(node)
    return guarded(_compute, (command, node, matrix, max_power), timeout,
                   f"the closed forms of {node.label()[:60]}")


__all__ = ["COMMANDS", "SymbolicAnswer", "symbolic_answer"]
