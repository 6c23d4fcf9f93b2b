"""Stage 3 -- product algebra: one expression tree, the rules, and the exact engine.

* :mod:`~powerspec.algebra.tree` -- ``Leaf`` / ``Product`` nodes (the only tree);
* :mod:`~powerspec.algebra.kinds` -- product kinds as combination rules, the exactness table;
* :mod:`~powerspec.algebra.rules` -- a rule applied to value vectors of any number domain;
* :mod:`~powerspec.algebra.powers` -- pairwise products, k-th powers, left folds;
* :mod:`~powerspec.algebra.engine` -- certified spectra of nodes for every matrix kind;
* :mod:`~powerspec.algebra.extremes` -- certified extremes of any power (additive search,
  selection); ``extremes_mul`` -- the multiplicative search over magnitude classes;
  ``compositions`` -- the search states and their exact multiplicities;
* :mod:`~powerspec.algebra.grammar`, ``grammar_syntax``, ``limits`` -- the expression language;
* :mod:`~powerspec.algebra.build` -- the API's product functions;
* ``moments``, ``moment_*``, ``words`` -- exact traces tr(M^p) of any product;
* ``symbolic_*`` -- closed forms in a symbolic power k on the same tree and rules.
"""
