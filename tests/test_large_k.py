"""Top and bottom eigenvalues of Cartesian, direct and strong powers at k = 10^3, 10^6, 10^9.

The reference is an independent composition enumeration written here in mpmath
(60 significant digits, compared at 50): factor spectra from the textbook
closed forms (cycle C_n: 2 cos(2 pi j / n); path P_n: 2 cos(pi j / (n + 1));
star K_{1,n}: +-sqrt(n) and 0 (n - 1 times) -- Brouwer & Haemers, *Spectra of
Graphs*, 2012, section 1.4, from memory; each re-checked against numpy below),
and the product rules of DESIGN section 2: a Cartesian power's eigenvalues are
the sums c_1 v_1 + ... + c_r v_r over compositions c of k, with multiplicity
the multinomial k! / (c_1! ... c_r!) times prod m_i^c_i; a direct power's are
the products prod v_i^c_i, whose sign splits are counted in closed form per
magnitude class (|v| equal): with W = multinomial * prod (p_i + q_i)^c_i and
D = multinomial * prod (p_i - q_i)^c_i (p_i, q_i the positive and negative
members of class i), (W + D) / 2 products are positive and (W - D) / 2
negative; a strong power's are prod (1 + v_i)^c_i - 1.

Only compositions that move at most J copies away from the extreme value are
enumerated; every other composition is at least (J + 1) times the smallest
step away, so the distinct values closer than that are complete.

Multiplicities too large to expand (2^999999999 and the like) are compared
modulo three 61-bit primes and by their base-2 logarithm.
"""

from __future__ import annotations

import itertools
import math
import os

import mpmath
import numpy as np
import pytest
from flint import acb, arb, ctx, fmpq, fmpz

import powerspec as ps
from powerspec.numbers.counts import BigCount

DPS = 60
PRIMES = [2**61 - 1, 2**61 - 31, 2**60 - 93]
assert all(fmpz(p).is_prime() for p in PRIMES)


# ------------------------------------------------------------------ exact counts
class Count:
    """An exact non-negative integer known by its residues mod PRIMES, its log2 and, when small
    enough, its value."""

    def __init__(self, mods: list[int], log2: mpmath.mpf, exact: int | None):
        self.mods, self.log2, self.exact = mods, log2, exact

    @classmethod
    def of(cls, n: int) -> Count:
        return cls([n % p for p in PRIMES], mpmath.log(n, 2) if n else mpmath.mpf("-inf"), n)

    @classmethod
    def power(cls, base: int, e: int) -> Count:
        exact = base**e if e * max(base, 2).bit_length() <= 2_000_000 else None
        lg = e * mpmath.log(base, 2) if base else (mpmath.mpf(0) if e == 0 else mpmath.mpf("-inf"))
        return cls([pow(base, e, p) for p in PRIMES], lg, exact)

    def __mul__(self, o: Count) -> Count:
        ex = self.exact * o.exact if self.exact is not None and o.exact is not None else None
        return Count([a * b % p for a, b, p in zip(self.mods, o.mods, PRIMES, strict=True)],
                     self.log2 + o.log2, ex)

    def __add__(self, o: Count) -> Count:
        ex = self.exact + o.exact if self.exact is not None and o.exact is not None else None
        lg = _log2_sum(self.log2, o.log2, 1)
        return Count([(a + b) % p for a, b, p in zip(self.mods, o.mods, PRIMES, strict=True)], lg, ex)

    def half_sum(self, o: Count, sign: int) -> Count:
        """(self + sign * o) / 2, for o a signed count given as (Count, sign) -- exact."""
        ex = (self.exact + sign * o.exact) // 2 if self.exact is not None and o.exact is not None \
            else None
        mods = [(a + sign * b) * pow(2, -1, p) % p for a, b, p in zip(self.mods, o.mods, PRIMES,
                                                                        strict=True)]
        lg = _log2_sum(self.log2, o.log2, sign) - 1
        return Count(mods, lg, ex)

    def minus(self, o: Count) -> Count:
        """self - o, exact (o <= self)."""
        ex = self.exact - o.exact if self.exact is not None and o.exact is not None else None
        return Count([(a - b) % p for a, b, p in zip(self.mods, o.mods, PRIMES, strict=True)],
                     _log2_sum(self.log2, o.log2, -1), ex)

    def is_zero(self) -> bool:
        return self.exact == 0 if self.exact is not None else self.log2 == mpmath.mpf("-inf")


def _log2_sum(a, b, sign):
    with mpmath.workdps(DPS):
        if b == mpmath.mpf("-inf"):
            return a
        if a == mpmath.mpf("-inf"):
            return b
        hi, lo = max(a, b), min(a, b)
        t = 1 + sign * mpmath.power(2, lo - hi)
        return hi + mpmath.log(t, 2) if t > 0 else mpmath.mpf("-inf")


def multinomial(k: int, counts: list[int]) -> Count:
    """k! / ((k - s)! c_1! c_2! ...) for the small parts c (s = sum c): a falling factorial."""
    s = sum(counts)
    num = 1
    for j in range(s):
        num *= k - j
    den = math.prod(math.factorial(c) for c in counts)
    assert num % den == 0
    return Count.of(num // den)


def residues(m) -> list[int]:
    """powerspec's multiplicity (int or BigCount) modulo PRIMES, evaluated from its exact terms."""
    if not isinstance(m, BigCount):
        return [int(m) % p for p in PRIMES]
    out = []
    for p in PRIMES:
        tot = 0
        for key, c in m.terms.items():
            t = c.numerator * pow(c.denominator, -1, p)
            for base, e in key:
                t = t * pow(base, e, p)
            tot += t
        out.append(tot % p)
    return out


# ------------------------------------------------------------------ factor spectra (textbook)
def factor_values(name: str, weight: float = 1.0) -> list[tuple[mpmath.mpf, int]]:
    """Distinct eigenvalues (60 digits) and multiplicities, from the closed forms, of the factor
    with every edge weight multiplied by ``weight`` (the eigenvalues scale by it)."""
    with mpmath.workdps(DPS + 10):
        w = mpmath.mpf(weight)  # exact: mpmath reads a double exactly
        n = int(name[2:-1].split(", ")[-1])
        if name.startswith("C("):
            vals = [2 * mpmath.cos(2 * mpmath.pi * j / n) for j in range(n)]
        elif name.startswith("P("):
            vals = [2 * mpmath.cos(mpmath.pi * j / (n + 1)) for j in range(1, n + 1)]
        elif name.startswith("K(1, "):
            vals = [mpmath.sqrt(n), -mpmath.sqrt(n)] + [mpmath.mpf(0)] * (n - 1)
        else:
            raise ValueError(name)
        return group([w * v for v in vals], [1] * len(vals))


def group(vals, mults):
    """Merge values equal to 50 digits (exactly equal algebraic numbers at this size)."""
    out: list[list] = []
    for v, m in sorted(zip(vals, mults, strict=True), key=lambda t: -t[0]):
        if out and abs(out[-1][0] - v) <= mpmath.mpf(10) ** -50 * max(abs(v), abs(out[-1][0])):
            out[-1][1] += m
        else:
            out.append([v, m])
    return [(v, m) for v, m in out]


@pytest.mark.parametrize("name,build", [
    ("C(9)", lambda: np.roll(np.eye(9), 1, axis=1) + np.roll(np.eye(9), -1, axis=1)),
    ("C(7)", lambda: np.roll(np.eye(7), 1, axis=1) + np.roll(np.eye(7), -1, axis=1)),
    ("P(5)", lambda: np.eye(5, k=1) + np.eye(5, k=-1)),
    ("K(1, 3)", lambda: np.block([[np.zeros((1, 1)), np.ones((1, 3))],
                                  [np.ones((3, 1)), np.zeros((3, 3))]])),
])
def test_reference_factor_spectra_match_numpy(name, build):
    # the closed forms recalled from memory, checked against numpy's eigvalsh
    expect = np.sort([float(v) for v, m in factor_values(name) for _ in range(m)])
    assert np.allclose(expect, np.linalg.eigvalsh(build()), atol=1e-13)


# ------------------------------------------------------------------ composition enumeration
def _compositions(r: int, total: int):
    """All (c_2, ..., c_r) with sum <= total."""
    if r == 1:
        yield []
        return
    for s in range(total + 1):
        for cut in itertools.combinations(range(s + r - 2), r - 2):
            parts, prev = [], -1
            for c in cut:
                parts.append(c - prev - 1)
                prev = c
            parts.append(s + r - 2 - prev - 1)
            yield parts if r > 1 else []


def cartesian_extremes(name: str, k: int, m: int, bottom: bool, depth: int = 8,
                       weight: float = 1.0):
    """The m largest (smallest) distinct values of the k-th Cartesian power, with counts."""
    vals = factor_values(name, weight)
    if bottom:
        vals = vals[::-1]
    v1, m1 = vals[0]
    rest = vals[1:]
    with mpmath.workdps(DPS):
        steps = [abs(v1 - v) for v, _ in rest]
        found: list = []
        for cs in _compositions(len(vals), depth):
            s = sum(cs)
            if s > k:
                continue
            deficit = sum(c * d for c, d in zip(cs, steps, strict=True))
            value = k * v1 + (deficit if bottom else -deficit)
            cnt = multinomial(k, [c for c in cs if c]) * Count.power(m1, k - s)
            for c, (_, mm) in zip(cs, rest, strict=True):
                if c:
                    cnt = cnt * Count.power(mm, c)
            _add(found, value, cnt)
        limit = (depth + 1) * min(steps)
        return _first(found, m, limit, lambda v: abs(v - k * v1), descending=not bottom)


def _add(found: list, value, cnt: Count) -> None:
    found.append((value, cnt))


def _grouped(found: list, descending: bool) -> list:
    """Values equal to 50 digits merged (counts summed), sorted: one sort and one sweep of
    neighbours instead of comparing every pair."""
    out: list[list] = []
    with mpmath.workdps(DPS):
        for v, c in sorted(found, key=lambda t: t[0], reverse=descending):
            # relative: values of weighted factors may be far below 1 (2^-200 and less)
            if out and abs(out[-1][0] - v) <= mpmath.mpf(10) ** -50 * max(abs(v), abs(out[-1][0])):
                out[-1][1] = out[-1][1] + c
            else:
                out.append([v, c])
    return [(v, c) for v, c in out]


def _first(found: list, m: int, limit, distance, descending: bool):
    out = _grouped(found, descending)[:m]
    assert all(distance(v) < limit for v, _ in out), "enumerate deeper"
    return out


def multiplicative_extremes(name: str, k: int, m: int, bottom: bool, shift: int, depth: int = 16,
                           weight: float = 1.0):
    """The m largest (smallest) distinct values of prod (shift + v_i)^c_i - shift over
    compositions (direct power: shift 0; strong power: shift 1), with exact sign counts."""
    with mpmath.workdps(DPS + 10):
        svals = [(v + shift, mm) for v, mm in factor_values(name, weight)]
        classes: list[list] = []  # [|s|, positives, negatives]
        zeros = 0
        for s, mm in svals:
            if abs(s) <= mpmath.mpf(10) ** -50 * max(abs(t) for t, _ in svals):
                zeros += mm
                continue
            for cl in classes:
                if abs(cl[0] - abs(s)) <= mpmath.mpf(10) ** -50 * abs(s):
                    cl[1 if s > 0 else 2] += mm
                    break
            else:
                classes.append([abs(s), mm if s > 0 else 0, 0 if s > 0 else mm])
        classes.sort(key=lambda c: -c[0])
        # the wanted end: largest positive s (top) or most negative s (bottom) -- both sit in
        # the largest magnitudes for these factors (|s| > 1 at the top class)
        top = classes[0]
        rest = classes[1:]
        found: list = []
        logs = [mpmath.log(top[0]) - mpmath.log(c[0]) for c in rest]
        for cs in _compositions(len(classes), depth):
            s = sum(cs)
            if s > k:
                continue
            mult = multinomial(k, [c for c in cs if c])
            w = mult * Count.power(top[1] + top[2], k - s)
            d_sign = 1 if (top[1] - top[2]) >= 0 or (k - s) % 2 == 0 else -1
            d = mult * Count.power(abs(top[1] - top[2]), k - s)
            mag = mpmath.exp((k - s) * mpmath.log(top[0]))
            for c, cl in zip(cs, rest, strict=True):
                if c:
                    w = w * Count.power(cl[1] + cl[2], c)
                    d = d * Count.power(abs(cl[1] - cl[2]), c)
                    if cl[1] - cl[2] < 0 and c % 2:
                        d_sign = -d_sign
                    mag = mag * mpmath.power(cl[0], c)
            pos = w.half_sum(d, d_sign)
            neg = w.half_sum(d, -d_sign)
            if not pos.is_zero():
                _add(found, +mag - shift, pos)
            if not neg.is_zero():
                _add(found, -mag - shift, neg)
        n = sum(mm for _, mm in svals)
        if not rest:  # one magnitude class: every composition was enumerated; add the zeros
            if zeros:
                z = Count.power(n, k)
                nz = Count.power(n - zeros, k)
                # n^k - (n - zeros)^k products have a zero factor (may be odd: no halving)
                _add(found, mpmath.mpf(-shift), z.minus(nz))
            return _first_mul(found, m, mpmath.mpf(-1), shift, bottom)
        # every composition not enumerated has |s| below top^k * exp(-(depth + 1) * min log step)
        bound = mpmath.exp(k * mpmath.log(top[0]) - (depth + 1) * min(logs))
        return _first_mul(found, m, bound, shift, bottom)


def _first_mul(found: list, m: int, bound, shift: int, bottom: bool):
    out = _grouped(found, not bottom)[:m]
    # complete: each returned value's |s| exceeds every unenumerated |s|
    assert all(abs(v + shift) > bound for v, _ in out), "enumerate deeper"
    return out


# ------------------------------------------------------------------ comparing
def _mp(x):
    """(mid, rad) of a flint scalar as mpmath numbers (exact conversion)."""
    if isinstance(x, fmpq):
        return mpmath.mpf(int(x.p)) / int(x.q), mpmath.mpf(0)
    if isinstance(x, acb):
        assert x.imag.is_zero()
        x = x.real
    m, e = x.mid().man_exp()
    r, re_ = x.rad().man_exp()
    return mpmath.ldexp(mpmath.mpf(int(m)), int(e)), mpmath.ldexp(mpmath.mpf(int(r)), int(re_))


def compare(answer, expected, label: str, precision: bool = False) -> None:
    atoms = answer.listed_atoms()
    assert len(atoms) == len(expected), (label, len(atoms), len(expected))
    with mpmath.workdps(DPS):
        for i, ((ball, mult), (truth, cnt)) in enumerate(zip(atoms, expected, strict=True)):
            mid, rad = _mp(ball)
            # the truth (60 digits, compared at 50) lies in the certified ball
            assert abs(mid - truth) <= rad + abs(truth) * mpmath.mpf(10) ** -50, \
                (label, i, mpmath.nstr(mid, 30), mpmath.nstr(rad, 5), mpmath.nstr(truth, 30))
            # the precision the model claims: 160-bit extremes keep >= 30 significant digits
            assert not precision or rad <= abs(truth) * mpmath.mpf(10) ** -30, \
                (label, i, "radius", mpmath.nstr(rad, 5), "for", mpmath.nstr(truth, 20))
            # exact multiplicity: exact integers, or residues and log2 for factored counts
            if cnt.exact is not None and not isinstance(mult, BigCount):
                assert int(mult) == cnt.exact, (label, i, mult, cnt.exact)
            assert residues(mult) == cnt.mods, (label, i, str(mult)[:80])
            lg = mult.log2() if isinstance(mult, BigCount) else mpmath.log(int(mult), 2)
            assert abs(lg - cnt.log2) <= 1e-6 * (1 + abs(cnt.log2)), (label, i, lg, cnt.log2)


KS = [10**3, 10**6, 10**9]
FACTORS = ["C(9)", "C(7)", "P(5)", "K(1, 3)"]
if os.environ.get("LARGE_K_FULL"):  # the larger grid (about four times as long)
    KS = [10**2, 10**3, 10**6, 10**9, 10**12]
    FACTORS = FACTORS + ["C(5)", "P(3)", "K(1, 4)"]


@pytest.mark.parametrize("k", KS)
@pytest.mark.parametrize("name", FACTORS)
@pytest.mark.parametrize("bottom", [False, True])
@pytest.mark.timeout(60)
def test_cartesian_power_extremes(name, k, bottom):
    m = 4
    ans = ps.top(f"cart({name}^{k})", m, bottom=bottom)
    compare(ans, cartesian_extremes(name, k, m, bottom), f"cart({name}^{k}) bottom={bottom}")


@pytest.mark.parametrize("k", KS)
@pytest.mark.parametrize("name", FACTORS)
@pytest.mark.parametrize("bottom", [False, True])
@pytest.mark.parametrize("kind,shift", [("direct", 0), ("strong", 1)])
@pytest.mark.timeout(60)
def test_multiplicative_power_extremes(kind, shift, name, k, bottom):
    # direct: products of the eigenvalues; strong: products of 1 + eigenvalue, minus 1
    m = 3
    ans = ps.top(f"{kind}({name}^{k})", m, bottom=bottom)
    compare(ans, multiplicative_extremes(name, k, m, bottom, shift=shift),
            f"{kind}({name}^{k}) bottom={bottom}")


@pytest.mark.parametrize("k", KS)
@pytest.mark.timeout(60)
def test_gap_lambda1_minus_lambda3_of_the_c9_torus(k):
    # lambda_1 = 2k (all copies at 2), lambda_3 = 2k - 2 (2 - 2 cos(2 pi / 9)) (two copies one
    # step down): gap 4 - 4 cos(2 pi / 9) = 0.9358222275240876... (cycle spectrum, textbook)
    ans = ps.top(f"cart(C(9)^{k})", 3)
    (b1, _), _, (b3, _) = ans.listed_atoms()
    with ctx.workprec(256):
        gap = arb(b1) - arb(b3) if isinstance(b1, fmpq) else b1 - (arb(b3) if isinstance(b3, fmpq)
                                                                  else b3)
        truth = 4 - 4 * arb.cos_pi_fmpq(fmpq(2, 9))
        assert gap.overlaps(truth), (gap, truth)
        assert float(gap.rad()) <= 1e-30, gap.rad()  # far beyond full double precision
    with mpmath.workdps(30):
        assert mpmath.nstr(_mp(gap)[0], 10) == "0.9358222275"


def _gap(b1, b2):
    with ctx.workprec(256):
        x = arb(b1) if isinstance(b1, fmpq) else b1
        y = arb(b2) if isinstance(b2, fmpq) else b2
        return x - y


@pytest.mark.parametrize("k", KS)
@pytest.mark.parametrize("name", FACTORS)
@pytest.mark.parametrize("kind", ["cart", "direct", "strong"])
@pytest.mark.timeout(60)
def test_top_value_and_gap_to_full_double_precision(kind, name, k):
    # DESIGN section 3: a dominant eigenvalue of a power with k = 10^9 comes back to full
    # double precision of its value and of its distance to the next eigenvalue; issue 8:
    # precision relative to the spread of the spectrum, not to the magnitude.  Where the
    # method states 160-bit values, 30 significant digits of both.
    ans = ps.top(f"{kind}({name}^{k})", 2)
    (b1, _), (b2, _) = ans.listed_atoms()
    gap = _gap(b1, b2)
    with mpmath.workdps(DPS):
        v, rv = _mp(b1)
        g, rg = _mp(gap)
        want = mpmath.mpf(10) ** -30 if "160-bit" in ans.method else mpmath.mpf(2) ** -52
        assert rv <= want * abs(v), (ans.method, mpmath.nstr(rv / abs(v), 3))
        assert g > 0 and rg <= want * g, (ans.method, mpmath.nstr(g, 10), mpmath.nstr(rg / g, 3))
