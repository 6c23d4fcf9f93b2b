"""Stage 4 -- tiers: each answers with rigorous bounds.

* :mod:`~powerspec.tiers.exact` -- the whole spectrum by the cheapest exact route;
* :mod:`~powerspec.tiers.explicit` -- small products built and solved with certified radii;
* :mod:`~powerspec.tiers.symmetry` -- Schur--Weyl blocks for matrices that do not factor;
* :mod:`~powerspec.tiers.bracket` -- certified FFT brackets of the eigenvalue distribution;
* ``laws``, ``lawproduct``, ``lawparity``, ``lawsolve`` -- limit laws with Berry--Esseen and
  Chernoff bounds (``lawparity``: the sign parity of huge direct powers, bounded in closed form);
* :mod:`~powerspec.tiers.momentbounds` -- Chebyshev--Markov--Stieltjes bounds from exact moments;
* ``invariant_*`` -- invariants from certified blocks and bounds.
"""
