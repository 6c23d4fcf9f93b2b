"""Stage 1 -- factors: build, read and validate factor graphs; their matrices and spectra.

* :mod:`~powerspec.factors.matrix` -- any matrix-like input to a validated canonical CSR array;
* :mod:`~powerspec.factors.factor` -- :class:`Factor`, its matrices of each kind and their spectra;
* :mod:`~powerspec.factors.families` -- P(n), C(n), K(n), K(m, n), J(n), dicycle, scale, loops, motif;
* :mod:`~powerspec.factors.readers` -- Matrix Market files and edge lists;
* :mod:`~powerspec.factors.certify` -- certified eigenvalues of one factor's matrix (closed forms,
  exact characteristic polynomials, rigorous balls);
* :mod:`~powerspec.factors.symbolic_families` -- the families' closed-form spectra written once
  against a number context;
* :mod:`~powerspec.factors.symbolic` -- :class:`SymbolicFactor`, factors in the sympy domain.
"""

from powerspec.factors.factor import DIRECTIONS, MATRIX_KINDS, Factor, from_matrix
from powerspec.factors.families import C, J, K, P, dicycle, loops, motif, scale
from powerspec.factors.readers import load

__all__ = ["C", "DIRECTIONS", "J", "K", "MATRIX_KINDS", "P", "Factor", "dicycle", "from_matrix",
           "load", "loops", "motif", "scale"]
