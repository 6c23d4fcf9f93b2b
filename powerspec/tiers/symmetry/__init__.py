"""Symmetry tier: exact spectra of powers (and products of powers) of one factor by Schur--Weyl duality.

A power G^k commutes with the symmetric group S_k permuting the copies, so
V^(x)k = (+)_λ S_λ(V) (x) Specht_λ splits every matrix built from X^(x)k (and
Kronecker sums) into one small block per partition λ of k with at most n parts,
of size d_λ (Weyl) and multiplicity f^λ (hook lengths).  The blocks are
computed in the Gelfand--Tsetlin basis with rigorous error radii, which makes the
non-factoring Laplacian, signless, normalized and transition spectra of direct,
strong, generalized (a in {0, 1}) and Cartesian powers exact to certified
precision.

Before that, a factor with an involutive automorphism (a reflection of a path, a
swap of two leaves of a star, ...) is split exactly into its ±1 parts, which turns
G^k into binomially weighted products G_+^(k-m) ∘ G_-^m with far smaller blocks
(:mod:`~powerspec.tiers.symmetry.reduction`).

Public API: :class:`PowerOperand`, :func:`plan` (cheap size check),
:func:`blocks` (the certified blocks; local, process-pool or Dask),
:class:`Block`, :class:`SymmetryPlan`, :class:`SymmetryError`, and the
sorted-degree heuristic in :mod:`~powerspec.tiers.symmetry.heuristic`.
:mod:`~powerspec.tiers.symmetry.extremes` certifies only the ends of a block
(Cholesky inertia tests around LAPACK candidates) and encloses every block's
spectrum from its diagonals before it is built (Weyl's inequalities).
Module map (dependencies point down): extremes -> parallel -> block -> plan ->
reduction -> factor -> rotations -> rigor -> patterns -> combinatorics; represent
and heuristic are leaves used by tests and benchmarks.

>>> import numpy as np
>>> p3 = PowerOperand(np.array([[0., 1, 0], [1, 0, 1], [0, 1, 0]]), np.array([1., 2, 1]), 3)
>>> sum(blk.multiplicity * blk.values.size for blk in blocks([p3], 0, 1, "laplacian"))
27
"""

from powerspec.tiers.symmetry.block import Block
from powerspec.tiers.symmetry.errors import SymmetryError
from powerspec.tiers.symmetry.parallel import blocks
from powerspec.tiers.symmetry.plan import KINDS, PowerOperand, SymmetryPlan, plan

__all__ = ["KINDS", "Block", "PowerOperand", "SymmetryError", "SymmetryPlan", "blocks", "plan"]
