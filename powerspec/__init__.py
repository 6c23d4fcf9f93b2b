"""powerspec: spectra of graph products and very high graph powers, from the factors.

The pipeline (DESIGN §3), one subpackage per stage:
:mod:`~powerspec.factors` (build, read, validate factors; certified factor
spectra) -> :mod:`~powerspec.spectra` (eigenvalue multisets: certified atoms,
exact multiplicities) -> :mod:`~powerspec.algebra` (expression tree, grammar,
product rules, powers, extremes, moments) -> :mod:`~powerspec.tiers` (exact,
symmetry, bracket, law, moment bounds) -> :mod:`~powerspec.queries` (the
planner and the queries) -> :mod:`~powerspec.answers` (one result type) ->
:mod:`~powerspec.interfaces` (command line, plots, demo).  The number domains
live in :mod:`~powerspec.numbers`.

Names are loaded on first use, so ``import powerspec`` stays cheap.

>>> import powerspec
>>> powerspec.spectrum("cart(K(2)^2)").atoms.atoms()
[(-2.0, 1), (0.0, 2), (2.0, 1)]
"""

from __future__ import annotations

import importlib

__version__ = "0.2.0"

_EXPORTS = {
    "Answer": "powerspec.answers.answer",
    "Engine": "powerspec.algebra.engine",
    "Leaf": "powerspec.algebra.engine",
    "Product": "powerspec.algebra.engine",
    "parse": "powerspec.algebra.grammar",
    "ExpressionError": "powerspec.errors",
    "FactorFileError": "powerspec.errors",
    "InputError": "powerspec.errors",
    "NotExactError": "powerspec.errors",
    "PowerspecError": "powerspec.errors",
    "SizeLimitError": "powerspec.errors",
    "SymbolicError": "powerspec.errors",
    "C": "powerspec.factors",
    "Factor": "powerspec.factors",
    "J": "powerspec.factors",
    "K": "powerspec.factors",
    "P": "powerspec.factors",
    "dicycle": "powerspec.factors",
    "from_matrix": "powerspec.factors",
    "load": "powerspec.factors",
    "loops": "powerspec.factors",
    "motif": "powerspec.factors",
    "scale": "powerspec.factors",
    "Spectrum": "powerspec.spectra.spectrum",
    "factor": "powerspec.algebra.build",
    "cart": "powerspec.algebra.build",
    "direct": "powerspec.algebra.build",
    "strong": "powerspec.algebra.build",
    "mix": "powerspec.algebra.build",
    "moments": "powerspec.queries.moments:moment_answer",
    "invariants": "powerspec.queries.invariants",
    "distribution": "powerspec.queries.frozen",
    "plot": "powerspec.interfaces.plots",
    "spectrum": "powerspec.queries.planner",
    "top": "powerspec.queries.planner",
    "cdf": "powerspec.queries.planner",
    "count": "powerspec.queries.planner",
    "quantile": "powerspec.queries.planner",
}

__all__ = sorted(_EXPORTS)


def __getattr__(name: str):
    mod = _EXPORTS.get(name)
    if mod is None:
        try:
            return importlib.import_module(f"powerspec.{name}")
        except ImportError:
            raise AttributeError(f"module 'powerspec' has no attribute {name!r}") from None
    mod, _, attr = mod.partition(":")
    value = getattr(importlib.import_module(mod), attr or name)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(_EXPORTS))
