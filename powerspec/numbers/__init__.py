"""Number domains: the values every other stage computes with.

* :mod:`~powerspec.numbers.rationals` -- exact rational vectors (one common denominator);
* :mod:`~powerspec.numbers.balls` -- certified scaled double balls (mid +- rad) * 2**exp,
  with midpoint rounding measured exactly by error-free transformations;
* :mod:`~powerspec.numbers.hp` -- exact flint rationals and Arb balls at 160 bits, closed-form
  helpers (cos2pi, sqrt_int, root_of_unity, nth_root);
* :mod:`~powerspec.numbers.convert` -- certified conversions between the domains;
* :mod:`~powerspec.numbers.counts` -- exact counts kept factored when astronomically large;
* :mod:`~powerspec.numbers.digits` -- decimal text of which every digit is covered;
* :mod:`~powerspec.numbers.symbolic` -- the sympy domain (loaded only for ``--symbolic``).
"""
