"""Product kinds and the table of which (matrix kind, product kind) pairs are exact.

Every product kind is a *combination rule* ``x o y = a(x + y) + b x y`` acting
on eigenvalues (DESIGN §2): Cartesian (1, 0), direct (0, 1), strong (1, 1) and
the generalized ``mix(a, b)``.  The same rule combines degrees (row sums), so
one :class:`Combination` describes both.

A rule with ``a`` in {0, 1} is associative and has a *linearization* ``s``
turning it into plain addition (Cartesian: ``s = x``) or multiplication
(``s = 1 + b x`` for a = 1, ``s = b x`` for a = 0).  Powers of such rules are
computed in s-space; a rule with ``a`` outside {0, 1} is not associative and
its powers are left folds ``((x1 o x2) o x3) o ...``.

:data:`MATRIX_RULES` is the exactness table: for a matrix kind and a product's
combination it returns the combination that the matrix kind's eigenvalues obey
(exact), or ``None`` when the spectrum is exact only for regular operands.
Adding a matrix kind is one entry here plus one entry in :data:`REGULAR_FORM`.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True)
class Combination:
    """The eigenvalue (and degree) rule ``x o y = a(x + y) + b x y``.

    >>> CARTESIAN(2.0, 3.0), DIRECT(2.0, 3.0), STRONG(2.0, 3.0)
    (5.0, 6.0, 11.0)
    """

    a: float
    b: float

    def __call__(self, x, y):
        """Combine values elementwise (numpy broadcasting); exact up to float rounding."""
        return self.a * (x + y) + self.b * x * y

    @property
    def associative(self) -> bool:
        """True when a is 0 or 1 (and the rule is not the constant zero)."""
        return self.a in (0.0, 1.0) and not (self.a == 0 and self.b == 0)

    @property
    def mode(self) -> str | None:
        """'add' or 'mul' -- how the linearization combines -- or None (left fold)."""
        if not self.associative:
            return None
        return "add" if (self.a == 1 and self.b == 0) else "mul"

    def to_s(self) -> tuple[float, float]:
        """(shift, factor) with s = shift + factor * x."""
        if self.mode == "add":
            return 0.0, 1.0
        if self.a == 1:
            return 1.0, self.b
        return 0.0, self.b

    def from_s(self) -> tuple[float, float]:
        """(shift, factor) with x = shift + factor * s (inverse of :meth:`to_s`)."""
        shift, factor = self.to_s()
        return -shift / factor, 1.0 / factor

    def identity(self) -> float:
        """The s-space neutral element (0 for 'add', 1 for 'mul')."""
        return 0.0 if self.mode == "add" else 1.0

    def label(self) -> str:
        """Human name of the rule."""
        for name, c in PRODUCT_KINDS.items():
            if c == self:
                return name
        return f"mix({_num(self.a)}, {_num(self.b)})"


def _num(x: float) -> str:
    return str(int(x)) if float(x).is_integer() else repr(float(x))


CARTESIAN = Combination(1.0, 0.0)
DIRECT = Combination(0.0, 1.0)
STRONG = Combination(1.0, 1.0)

PRODUCT_KINDS: dict[str, Combination] = {
    "cart": CARTESIAN,
    "direct": DIRECT,
    "strong": STRONG,
}
"""Named product kinds of the expression language (``mix`` takes its own a, b)."""


def _additive_only(c: Combination) -> Combination | None:
    # D - A and D + A of a(A(+)B) + b(A(x)B) split into factor terms only when b = 0.
    return c if c.b == 0 else None


def _direct_only(target: Combination) -> Callable[[Combination], Combination | None]:
    # D^-1 A and D^-1/2 A D^-1/2 factor over A(x)B (any scalar b cancels), not over sums.
    return lambda c: target if (c.a == 0 and c.b != 0) else None


MATRIX_RULES: dict[str, Callable[[Combination], Combination | None]] = {
    "adjacency": lambda c: c,
    "laplacian": _additive_only,
    "signless": _additive_only,
    # normalized Laplacian: 1 - (1 - x)(1 - y) = x + y - xy
    "normalized": _direct_only(Combination(1.0, -1.0)),
    "transition": _direct_only(DIRECT),
}
"""matrix kind -> (product combination -> combination its eigenvalues obey, or None)."""

NON_EXACT_REASON: dict[str, str] = {
    "laplacian": "D_G(x)D_H - A_G(x)A_H does not factor",
    "signless": "D_G(x)D_H + A_G(x)A_H does not factor",
    "normalized": "the degree normalisation does not split over a sum of Kronecker terms",
    "transition": "D^-1 A does not split over a sum of Kronecker terms",
}

REGULAR_FORM: dict[str, Callable[[float], tuple[float, float]]] = {
    "adjacency": lambda d: (0.0, 1.0),
    "laplacian": lambda d: (d, -1.0),
    "signless": lambda d: (d, 1.0),
    "normalized": lambda d: (1.0, -1.0 / d),
    "transition": lambda d: (0.0, 1.0 / d),
}
"""For a d-regular graph the matrix kind is shift + factor * A: (shift, factor)."""

MATRIX_KINDS = tuple(MATRIX_RULES)


def combine_values(c: Combination, x: np.ndarray, y: np.ndarray) -> np.ndarray:
    """All pairwise combinations x_i o y_j, flattened row-major.

    >>> combine_values(CARTESIAN, np.array([0.0, 1.0]), np.array([10.0])).tolist()
    [10.0, 11.0]
    """
    return c(x[:, None], y[None, :]).ravel()
