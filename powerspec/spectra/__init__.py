"""Stage 2 -- spectra: eigenvalue multisets with certified values and exact multiplicities.

* :mod:`~powerspec.spectra.spectrum` -- :class:`Spectrum`: atoms in one number domain
  (exact rationals, scaled double balls, or high-precision balls) with exact multiplicities;
* :mod:`~powerspec.spectra.merge` -- sorting and merging atoms: exact values merge when
  equal, balls when they overlap, never otherwise.
"""
