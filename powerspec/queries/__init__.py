"""Stage 5 -- queries and the planner: pick the cheapest tier that meets the size limit and accuracy.

* :mod:`~powerspec.queries.planner` -- ``spectrum``, ``top``, ``cdf``, ``count``, ``quantile``;
* ``distribution``, ``disttiers``, ``distsolve`` -- the distribution queries and their tiers;
* :mod:`~powerspec.queries.frozen` -- a frozen spectral distribution (vectorised, with bounds);
* ``invariants*`` -- spectral invariants, each with its method and bounds;
* :mod:`~powerspec.queries.moments` -- exact moments;
* :mod:`~powerspec.queries.symbolic` -- closed forms in a symbolic power;
* :mod:`~powerspec.queries.common` -- resolving expressions, labels.
"""
