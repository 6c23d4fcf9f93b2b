"""Product kinds and the table of which (matrix kind, product kind) pairs are exact.

Every product kind is a *combination rule* ``x o y = a(x + y) + b x y`` acting
on eigenvalues (DESIGN §2): Cartesian (1, 0), direct (0, 1), strong (1, 1) and
the generalized ``mix(a, b)``.  The same rule combines degrees (row sums), so
one :class:`Combination` describes both.  Coefficients are exact rationals.

A rule with ``a`` in {0, 1} is associative and has a *linearization* ``s``
turning it into plain addition (Cartesian: ``s = x``) or multiplication
(``s = 1 + b x`` for a = 1, ``s = b x`` for a = 0); the extremes search and
the limit laws use it.  Values themselves are always combined in x-space by
the rule (so 1 + x never cancels small eigenvalues of strong products).  A
rule with ``a`` outside {0, 1} is not associative and its powers are left
folds ``((x1 o x2) o x3) o ...``.

:data:`MATRIX_RULES` is the exactness table: for a matrix kind and a product's
combination it returns the combination that the matrix kind's eigenvalues obey
(exact), or ``None`` when the spectrum follows from the factors' only for
regular operands.  Adding a matrix kind is one entry here plus one entry in
:data:`REGULAR_FORM` (and its factor-level matrix in
:class:`~powerspec.factors.factor.Factor`).
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from fractions import Fraction


@dataclass(frozen=True)
class Combination:
    """The eigenvalue (and degree) rule ``x o y = a(x + y) + b x y``, a and b exact.

    >>> CARTESIAN(2, 3), DIRECT(2, 3), STRONG(2, 3)
    (Fraction(5, 1), Fraction(6, 1), Fraction(11, 1))
    """

    a: Fraction
    b: Fraction

    def __post_init__(self):
        object.__setattr__(self, "a", Fraction(self.a))
        object.__setattr__(self, "b", Fraction(self.b))

    def __call__(self, x, y):
        """Combine two scalars (ints, Fractions, floats, numpy arrays) by the rule."""
        return self.a * (x + y) + self.b * x * y

    @property
    def rounded_coefficients(self) -> int:
        """How many of a, b are not doubles exactly (each rounds once where the rule is applied in
        floating point: a third does, 0.375 does not).

        >>> eighths, third = Combination(1, Fraction(3, 8)), Combination(1, Fraction(1, 3))
        >>> eighths.rounded_coefficients, third.rounded_coefficients
        (0, 1)
        """
        return sum(Fraction(float(c)) != c for c in (self.a, self.b))

    @property
    def associative(self) -> bool:
        """True when a is 0 or 1 (every such rule is associative)."""
        return self.a in (0, 1)

    @property
    def mode(self) -> str | None:
        """'add', 'mul' (a = 0 or 1 with b != 0), 'zero' (a = b = 0) or None (left fold)."""
        if not self.associative:
            return None
        if self.b == 0:
            return "add" if self.a == 1 else "zero"
        return "mul"

    def to_s(self) -> tuple[Fraction, Fraction]:
        """(shift, factor) with s = shift + factor * x (the linearization)."""
        if self.mode == "add":
            return Fraction(0), Fraction(1)
        if self.a == 1:
            return Fraction(1), self.b
        return Fraction(0), self.b

    def from_s(self) -> tuple[Fraction, Fraction]:
        """(shift, factor) with x = shift + factor * s (inverse of :meth:`to_s`)."""
        shift, factor = self.to_s()
        return -shift / factor, 1 / factor

    def identity(self) -> Fraction | None:
        """The neutral value e with x o e = x (0 for a = 1, 1/b for a = 0), None if there is none."""
        if self.a == 1:
            return Fraction(0)
        if self.a == 0 and self.b != 0:
            return 1 / self.b
        return None

    def label(self) -> str:
        """Human name of the rule."""
        for name, c in PRODUCT_KINDS.items():
            if c == self:
                return name
        return f"mix({_num(self.a)}, {_num(self.b)})"


def _num(x: Fraction) -> str:
    if x.denominator == 1:
        return str(x.numerator)
    f = float(x)
    return repr(f) if Fraction(f) == x else f"{x.numerator}/{x.denominator}"


CARTESIAN = Combination(1, 0)
DIRECT = Combination(0, 1)
STRONG = Combination(1, 1)

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
    "normalized": _direct_only(Combination(1, -1)),
    "transition": _direct_only(DIRECT),
}
"""matrix kind -> (product combination -> combination its eigenvalues obey, or None)."""

NON_EXACT_REASON: dict[str, str] = {
    "laplacian": "D_G(x)D_H - A_G(x)A_H does not factor",
    "signless": "D_G(x)D_H + A_G(x)A_H does not factor",
    "normalized": "the degree normalisation does not split over a sum of Kronecker terms",
    "transition": "D^-1 A does not split over a sum of Kronecker terms",
}

REGULAR_FORM: dict[str, Callable[[Fraction], tuple[Fraction, Fraction]]] = {
    "adjacency": lambda d: (Fraction(0), Fraction(1)),
    "laplacian": lambda d: (d, Fraction(-1)),
    "signless": lambda d: (d, Fraction(1)),
    "normalized": lambda d: (Fraction(1), -1 / d),
    "transition": lambda d: (Fraction(0), 1 / d),
}
"""For a d-regular graph the matrix kind is shift + factor * A: (shift, factor), exact."""

MATRIX_KINDS = tuple(MATRIX_RULES)

__all__ = ["CARTESIAN", "DIRECT", "MATRIX_KINDS", "MATRIX_RULES", "NON_EXACT_REASON", "PRODUCT_KINDS",
           "REGULAR_FORM", "STRONG", "Combination"]
