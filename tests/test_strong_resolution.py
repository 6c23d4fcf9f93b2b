"""Strong powers keep distinct eigenvalues apart near -1 (no cancellation blow-up).

Source for every check: the strong product's eigenvalue rule.  With loops 1/2, P(3) has
eigenvalues 1/2 + {-sqrt 2, 0, sqrt 2} (P(3): textbook), so strong(loops(1/2, P(3))^k) has the
eigenvalues (3/2 - sqrt 2)^a (3/2)^b (3/2 + sqrt 2)^c - 1, a + b + c = k, each with the multinomial
multiplicity k!/(a! b! c!) -- all distinct (1 + sqrt 2 is a unit and 3 is not, so no power
products coincide).  The reference enumerates them in mpmath at 150 digits.
"""

from __future__ import annotations

import bisect
import math

import mpmath
import pytest
from flint import ctx, fmpq

from powerspec.queries import planner


def _reference(k: int) -> list[tuple[mpmath.mpf, int]]:
    with mpmath.workdps(150):
        lo, mid, hi = 1.5 - mpmath.sqrt(2), mpmath.mpf(1.5), 1.5 + mpmath.sqrt(2)
        out = []
        for a in range(k + 1):
            for b in range(k + 1 - a):
                c = k - a - b
                m = math.factorial(k) // (math.factorial(a) * math.factorial(b) * math.factorial(c))
                out.append((lo**a * mid**b * hi**c - 1, m))
    return sorted(out)


def _ends(v, digits: int) -> tuple[mpmath.mpf, mpmath.mpf]:
    """A value's ball ends as mpmath numbers read with ``digits`` digits (call inside a workdps
    and a flint precision that hold them); an exact rational gives both ends equal."""
    if isinstance(v, fmpq):
        x = mpmath.mpf(int(v.p)) / int(v.q)
        return x, x
    return tuple(mpmath.mpf(e.mid().str(digits, radius=False)) for e in (v.lower(), v.upper()))


@pytest.mark.parametrize("k", [40, 100])
def test_every_candidate_in_exactly_one_tight_atom(k):
    ref = _reference(k)
    ans = planner.spectrum(f"strong(loops(1/2, P(3))^{k})")
    atoms = []
    with mpmath.workdps(150), ctx.workprec(600):    # endpoints read exactly, not at 53 bits
        for v, m in ans.listed_atoms():
            lo, hi = _ends(v, 120)
            if lo != hi:
                lo, hi = lo - abs(lo) * mpmath.mpf(10) ** -115, hi + abs(hi) * mpmath.mpf(10) ** -115
            atoms.append((lo, hi, int(m)))
        lows = [a[0] for a in atoms]
        got = [0] * len(atoms)
        spread = [[None, None] for _ in atoms]
        for value, m in ref:
            i = bisect.bisect_right(lows, value) - 1
            assert i >= 0 and atoms[i][0] <= value <= atoms[i][1], value   # inside its atom
            got[i] += m
            s = spread[i]
            s[0] = value if s[0] is None else min(s[0], value)
            s[1] = value if s[1] is None else max(s[1], value)
    assert got == [a[2] for a in atoms]            # each atom counts exactly its candidates
    # distinct eigenvalues share an atom only when within 160-bit resolution of -1: values more
    # than 1e-44 apart are never merged (the double-ball chain once merged everything up to 9e21)
    assert all(s[1] - s[0] < mpmath.mpf("1e-44") for s in spread if s[0] is not None)
    assert len(atoms) > 0.75 * len(ref)


def test_mix_coefficients_written_as_fractions_are_exact():
    from fractions import Fraction

    from powerspec.algebra.grammar import parse

    # the rule's coefficient is the number written, not its nearest double
    assert parse("mix(1, 1/3, P(3)^2)").comb.b == Fraction(1, 3)
    # source: x o y = x + y + b x y with b = 1/3; P(3)'s eigenvalues are +-sqrt 2 and 0
    # (textbook), so the largest eigenvalue of mix(1, 1/3, P(3)^2) is 2 sqrt 2 + 2/3 (mpmath)
    ans = planner.spectrum("mix(1, 1/3, P(3)^2)")
    top = ans.listed_atoms()[-1][0]
    with mpmath.workdps(50), ctx.workprec(300):
        truth = 2 * mpmath.sqrt(2) + mpmath.mpf(2) / 3
        lo, hi = _ends(top, 60)
    assert lo <= truth <= hi
    assert ans.expression == "mix(1, 1/3, P(3)^2)"
    # at 160 bits (the strong-power chain) the third is kept: -3 + 3 (1 - sqrt 2 / 3)^80 is the
    # smallest eigenvalue of mix(1, 1/3, P(3)^80), about 2e-22 above -3
    low = planner.spectrum("mix(1, 1/3, P(3)^80)").listed_atoms()[0][0]
    with mpmath.workdps(60), ctx.workprec(400):
        truth = -3 + 3 * (1 - mpmath.sqrt(2) / 3) ** 80
        lo, hi = _ends(low, 80)
    assert lo <= truth <= hi and hi - lo < mpmath.mpf("1e-40")


def test_tiny_weights_keep_their_digits():
    # source: as above, strong(scale(e, P(3))^4) has the eigenvalues
    # (1 + e sqrt 2)^a (1 - e sqrt 2)^c - 1, a + b + c = 4, multiplicity 4!/(a! b! c!), here with
    # e = 1e-60 (mpmath at 300 digits).  At a fixed 160 bits 1 + e sqrt 2 is 1 and every digit
    # was lost (one atom 0 +- 6e-48 holding all 81); the 9 first-order values e sqrt 2 (a - c)
    # must come apart, each atom holding exactly its candidates
    k = 4
    ans = planner.spectrum(f"strong(scale(1e-60, P(3))^{k})")
    with mpmath.workdps(300):
        e = mpmath.mpf("1e-60")
        ref = []
        for a in range(k + 1):
            for c in range(k + 1 - a):
                m = math.factorial(k) // (math.factorial(a) * math.factorial(k - a - c)
                                          * math.factorial(c))
                ref.append(((1 + e * mpmath.sqrt(2)) ** a * (1 - e * mpmath.sqrt(2)) ** c - 1, m))
    atoms = []
    with mpmath.workdps(300), ctx.workprec(1000):
        for v, m in ans.listed_atoms():
            lo, hi = _ends(v, 250)
            if lo != hi:
                lo, hi = lo - abs(lo) * mpmath.mpf(10) ** -240, hi + abs(hi) * mpmath.mpf(10) ** -240
            atoms.append([lo, hi, int(m), 0])
        for value, m in ref:
            hits = [a for a in atoms if a[0] <= value <= a[1]]
            assert len(hits) == 1, value
            hits[0][3] += m
    assert [a[2] for a in atoms] == [a[3] for a in atoms]
    assert len(atoms) == 9


def test_a_third_as_mix_coefficient_in_the_laplacian():
    # source: mpmath (50 digits) on the explicitly built Laplacian of mix(1, 1/3, K(1,3)^2):
    # A = A1 (x) I + I (x) A1 + (1/3) A1 (x) A1 with the third exact, L = diag(A 1) - A.  The
    # symmetry tier takes its coefficients as doubles and must decline a third
    ans = planner.spectrum("mix(1, 1/3, K(1, 3)^2)", "laplacian")
    assert "symmetry" not in ans.method
    with mpmath.workdps(50):
        a1 = mpmath.matrix(4, 4)
        for j in (1, 2, 3):
            a1[0, j] = a1[j, 0] = 1
        n = 16
        a = mpmath.matrix(n, n)
        for i in range(n):
            for j in range(n):
                i1, i2, j1, j2 = divmod(i, 4) + divmod(j, 4)
                a[i, j] = (a1[i1, j1] * (i2 == j2) + (i1 == j1) * a1[i2, j2]
                           + mpmath.mpf(1) / 3 * a1[i1, j1] * a1[i2, j2])
        lap = mpmath.matrix(n, n)
        for i in range(n):
            lap[i, i] = sum(a[i, j] for j in range(n))
            for j in range(n):
                lap[i, j] -= a[i, j]
        ev = mpmath.eigsy(lap, eigvals_only=True)
        counts = []
        with ctx.workprec(300):
            for v, m in ans.listed_atoms():
                lo, hi = _ends(v, 60)
                counts.append((sum(1 for e in ev if lo - mpmath.mpf(10) ** -40 <= e
                                   <= hi + mpmath.mpf(10) ** -40), int(m)))
    assert all(c >= m for c, m in counts) and sum(m for _, m in counts) == 16


def test_api_and_expression_read_a_decimal_coefficient_alike():
    from fractions import Fraction

    import powerspec as ps
    # the written 0.1 is 1/10 in both (its shortest repr), as quantile levels are read
    node = ps.mix(1, 0.1, (ps.P(3), 20))
    assert node.comb.b == Fraction(1, 10)
    a = ps.top(node, 2).listed_atoms()
    b = ps.top("mix(1, 0.1, P(3)^20)", 2).listed_atoms()
    assert [(str(x), m) for x, m in a] == [(str(x), m) for x, m in b]
    # source: the largest eigenvalue is 20 o-fold of sqrt 2 under x o y = x + y + xy/10, i.e.
    # 10 ((1 + sqrt 2 / 10)^20 - 1) (mpmath, 80 digits)
    with mpmath.workdps(80), ctx.workprec(400):
        t = 10 * ((1 + mpmath.sqrt(2) / 10) ** 20 - 1)
        lo, hi = _ends(a[0][0], 90)
    assert lo <= t <= hi
