"""Transitional re-export of the symbolic bridge (remove once cli.py imports the printers).

The bridge is now a number domain plus printers on the one expression tree:

* :mod:`powerspec.numbers.symbolic` -- the sympy domain (``SYMPY``) and the time guard;
* :mod:`powerspec.factors.symbolic` -- :class:`SymbolicFactor` (exact / symbolic factors);
* :mod:`powerspec.factors.symbolic_families` -- family closed forms against a context;
* :mod:`powerspec.algebra.symbolic_tree` -- symbolic powers as tree nodes, the text adapter;
* :mod:`powerspec.algebra.symbolic_family` -- composition families from the rule table;
* :mod:`powerspec.algebra.symbolic_traces` -- tr(M^p) from trace identities;
* :mod:`powerspec.algebra.symbolic_forms` -- radius, extremes, moments, spanning trees;
* :mod:`powerspec.queries.symbolic` -- the symbolic queries, sizes checked first;
* :mod:`powerspec.interfaces.symbolic_printing` -- text, LaTeX and JSON reports.

>>> symbolic_family("cart(K(2)^k)").multiplicity
binomial(k, j)
"""

from __future__ import annotations

from powerspec.algebra.symbolic_family import (
    MAX_EXPAND,
    Block,
    SpectrumFamily,
    composition,
    finite_spectrum,
    regular_degree,
    spectrum_family,
    symbolic_family,
)
from powerspec.algebra.symbolic_forms import closed_forms, evaluate, moment_forms
from powerspec.algebra.symbolic_traces import traces
from powerspec.algebra.symbolic_tree import (
    SymbolicCopies,
    check_numeric_powers,
    powers,
    symbolic_expression,
    symbolic_product,
)
from powerspec.factors.symbolic import (
    MAX_EXACT_ORDER,
    MAX_RADICAL_DEGREE,
    MAX_SYMBOLIC_ORDER,
    SymbolicFactor,
    symbolic_factor,
)
from powerspec.interfaces.symbolic_printing import symbolic_report, symbolic_text
from powerspec.numbers.symbolic import TIME_GUARD, guarded

__all__ = ["MAX_EXACT_ORDER", "MAX_EXPAND", "MAX_RADICAL_DEGREE", "MAX_SYMBOLIC_ORDER", "TIME_GUARD",
           "Block", "SpectrumFamily", "SymbolicCopies", "SymbolicFactor", "check_numeric_powers",
           "closed_forms", "composition", "evaluate", "finite_spectrum", "guarded", "moment_forms",
           "powers", "regular_degree", "spectrum_family", "symbolic_expression", "symbolic_factor",
           "symbolic_family", "symbolic_product", "symbolic_report", "symbolic_text", "traces"]
