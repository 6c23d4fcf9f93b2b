"""powerspec: spectra of graph products and very high graph powers, from the factors.

The pipeline (DESIGN §3): :mod:`~powerspec.factors` build and validate factor
graphs; :mod:`~powerspec.measures` hold eigenvalue multisets with exact
multiplicities; :mod:`~powerspec.products` and :mod:`~powerspec.algebra`
combine them over expression trees (:mod:`~powerspec.powers` and
:mod:`~powerspec.extremes` do the heavy lifting); :mod:`~powerspec.planner`
answers queries as :class:`~powerspec.answers.Answer` objects; the
:mod:`~powerspec.cli` and :mod:`~powerspec.demo` only translate.

>>> import powerspec
>>> powerspec.spectrum("cart(K(2)^2)").atoms.atoms()
[(-2.0, 1), (0.0, 2), (2.0, 1)]
"""

__version__ = "0.1.0"

from powerspec.algebra.engine import Engine, Leaf, Product  # noqa: E402
from powerspec.algebra.grammar import parse  # noqa: E402
from powerspec.answers.answer import Answer  # noqa: E402
from powerspec.errors import (  # noqa: E402
    ExpressionError,
    FactorFileError,
    InputError,
    NotExactError,
    PowerspecError,
    SizeLimitError,
    SymbolicError,
)
from powerspec.factors import C, Factor, J, K, P, dicycle, from_matrix, load, loops, motif, scale  # noqa: E402
from powerspec.queries.planner import cdf, count, quantile, spectrum, top  # noqa: E402
from powerspec.spectra.measures import Spectrum  # noqa: E402

__all__ = [
    "Answer", "Engine", "ExpressionError", "Factor", "FactorFileError", "InputError", "Leaf",
    "NotExactError", "PowerspecError", "Product", "SizeLimitError", "Spectrum", "SymbolicError",
    "C", "J", "K", "P", "dicycle", "from_matrix", "load", "loops",
    "motif", "parse", "scale", "spectrum", "top", "cdf", "count", "quantile",
]
