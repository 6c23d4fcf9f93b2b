"""Exact tiers that do not list the whole spectrum: the ends tier and the window tier.

**Ends.**
The best-first search of :mod:`powerspec.algebra.extremes` lists the m
smallest (or largest) distinct eigenvalues with exact multiplicities, and
certifies that every other eigenvalue lies beyond the m-th.  An
:class:`EndsTier` is the exact tier over those m atoms plus one *tail ball*
that holds every other eigenvalue: from the far end of the m-th listed ball to
a certified bound on the far end of the whole spectrum.  Since an atom within
its radius of x counts in the upper bound only, a cdf, count or quantile
whose points lie on the listed side comes out exact, and any other is an
honest (wide) bracket that ``auto`` passes over.

**Window.**  A :class:`WindowTier` holds the exact counts of one window
[a, b] from :func:`powerspec.algebra.window.window_counts`, which certifies
only the compositions whose values may lie in it; it answers ``count`` only.

>>> import numpy as np
>>> from powerspec.queries.disttiers import Atoms
>>> listed = Atoms(np.array([0.0, 1.0]), [1, 6], np.zeros(2), 7, True)
>>> t = EndsTier(listed, 64, bottom=True, far=(0.0, 12.0))   # 57 more eigenvalues in [1, 12]
>>> t.counts(0.5, False), t.counts(1.0, False), t.counts(2.0, False)
((1, 1, 1), (7, 7, 64), (7, 7, 64))
"""

from __future__ import annotations

import math
from fractions import Fraction

import numpy as np

from powerspec.answers.notation import bound_text, count_text
from powerspec.queries.disttiers import Atoms, ExactTier, ball_end

EPS = float(np.finfo(float).eps)


def _ball_around(lo: float, hi: float) -> tuple[float, float]:
    """(midpoint, radius) floats whose ball mid -+ radius, as the tiers compute it in floats,
    covers [lo, hi]."""
    mid = lo / 2 + hi / 2
    r = (hi - lo) / 2 * (1 + 4 * EPS) + 1e-300
    while mid - r > lo or mid + r < hi:  # the float sums must cover the ends, not only the reals
        r = math.nextafter(r, math.inf)
    return mid, r


class EndsTier(ExactTier):
    """The exact tier over the atoms at one end of the spectrum and one tail ball for the rest.

    ``listed`` holds the m smallest (``bottom``) or largest distinct atoms with
    exact multiplicities, every other eigenvalue lying beyond the m-th; ``order``
    is the exact number of eigenvalues and ``far`` = (lo, hi) floats bounding
    every eigenvalue's real part.  Counts are exact for points on the listed
    side of the m-th atom; elsewhere the tail counts in the upper bound only.
    """

    def __init__(self, listed: Atoms, order: int, *, bottom: bool, far: tuple[float, float]):
        self.bottom = bottom
        self.listed = len(listed.mult)
        self.listed_mass = sum(listed.mult)
        self.tail_mass = order - self.listed_mass
        if self.tail_mass < 0:
            raise ValueError("the listed atoms hold more eigenvalues than the order")
        v, r = listed.values, listed.radius
        edge = int(np.argmax(v) if bottom else np.argmin(v))  # the m-th atom from the listed end
        self.edge = float(ball_end(v[edge], r[edge], -1 if bottom else 1))
        span = (self.edge, far[1]) if bottom else (far[0], self.edge)
        atoms = listed._replace(order=order)
        if self.tail_mass:
            mid, rad = _ball_around(*span)
            atoms = atoms._replace(values=np.append(v, mid), mult=[*listed.mult, self.tail_mass],
                                   radius=np.append(r, rad),
                                   rel=None if listed.rel is None else np.append(listed.rel, 0.0))
        super().__init__(atoms)
        end = "smallest" if bottom else "largest"
        side = ">=" if bottom else "<="
        self.method = (
            f"exact: the {self.listed} {end} distinct eigenvalues by best-first search (values at "
            f"160-bit precision, exact multiplicities), the other {count_text(self.tail_mass)} "
            f"certified {side} {bound_text(self.edge, -1 if bottom else 1)}; counted exactly on that "
            "side (atoms within their certified radius of x count in the upper bound only)")

    def quantile_width(self, q: Fraction) -> float:
        """0.0 when the q-quantile falls among the listed atoms (then exact), else inf."""
        need = math.ceil(q * self.order)
        inside = need <= self.listed_mass if self.bottom else need > self.tail_mass
        return 0.0 if inside else math.inf


class WindowTier:
    """Exact counts of the eigenvalues in one window [a, b] (``count`` only).

    ``counts`` is (estimate, certain, possible) as exact integers: compositions
    whose 160-bit ball straddles a or b count in ``possible`` only.
    """

    name = "exact"

    def __init__(self, counts: tuple, order, window: tuple[float, float], candidates: int,
                 total: int):
        self.counts3 = counts
        self.order = order
        self.window = window
        self.method = (
            f"exact: the {candidates} of {total} compositions whose double-precision values (with "
            "a rigorous error bound) may lie in the window, decided at 160-bit precision, with "
            "exact multiplicities; the rest of the spectrum is not built (values within their "
            "certified radius of an end count in the upper bound only)")


__all__ = ["EndsTier", "WindowTier"]
