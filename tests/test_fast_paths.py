"""The fast paths give the answers of the general ones: reused factors, Pascal-row compositions,
pre-sorted exact merges, the bracket's transforms and the quantile multisection.

Every numeric check names an independent source: closed forms (the hypercube), exact integer
convolutions of the factor multisets (Python ints and Fractions), numpy eigensolvers on explicit
Kronecker builds (tests/reference.py), or numpy's FFT within the bracket's stated error bound.
"""

from __future__ import annotations

import math
import subprocess
import sys
from collections import Counter
from fractions import Fraction

import numpy as np
import pytest

import powerspec as ps
from powerspec.algebra.kinds import CARTESIAN
from powerspec.algebra.powers import _compositions
from powerspec.errors import InputError
from powerspec.factors import families
from powerspec.numbers.rationals import Rationals
from powerspec.queries.distribution import _Query, cdf, count, quantile
from powerspec.spectra.merge import merge_rationals
from powerspec.spectra.spectrum import Spectrum
from powerspec.tiers import bracket
from tests.reference import eigenvalues, kron_product


def convolve(base: dict, k: int) -> dict:
    """The k-fold Cartesian power of an exact eigenvalue multiset {value: multiplicity} (Python ints)."""
    out = {0: 1}
    for _ in range(k):
        nxt: Counter = Counter()
        for x, m in out.items():
            for y, n in base.items():
                nxt[x + y] += m * n
        out = dict(nxt)
    return out


def hypercube_atoms(k: int) -> list[tuple[float, int]]:
    # source: Q_k has eigenvalues k - 2j with multiplicity C(k, j) (Brouwer & Haemers, Spectra of
    # Graphs, 2012, ch. 1 -- from memory); math.comb gives the exact binomials
    return [(float(k - 2 * j), math.comb(k, j)) for j in range(k, -1, -1)]


# ------------------------------------------------------------------ exact spectra (B)
@pytest.mark.parametrize("k", [1, 2, 10, 61, 62, 1000])
def test_hypercube_atoms_order_and_method(k):
    a = ps.spectrum(f"cart(K(2)^{k})")
    got = a.atoms.atoms()
    assert got == hypercube_atoms(k)  # values, exact multiplicities and ascending order
    assert all(type(m) is int for _, m in got)
    assert a.order == 2**k  # source: Q_k has 2^k vertices
    assert a.method == "exact: eigenvalues combined from the factors' spectra"


@pytest.mark.parametrize("factor, base, k", [
    # C(4): 2, 0 (twice), -2 -- a multiplicity 2 (a power of two) in int64 and in big ints
    ("C(4)", {2: 1, 0: 2, -2: 1}, 25),
    ("C(4)", {2: 1, 0: 2, -2: 1}, 40),
    # C(6): 2, 1 (twice), -1 (twice), -2: four atoms, so middle parts of the compositions
    ("C(6)", {2: 1, 1: 2, -1: 2, -2: 1}, 35),
    # K(4): 3, -1 (three times): a multiplicity that is not a power of two
    ("K(4)", {3: 1, -1: 3}, 50),
    # K(1, 4): 2, 0 (three times), -2
    ("K(1, 4)", {2: 1, 0: 3, -2: 1}, 33),
])
def test_compositions_against_integer_convolution(factor, base, k):
    # source: the factor spectra are textbook closed forms (cycle 2cos(2 pi j/n), complete graph,
    # star +-sqrt(n) -- Brouwer & Haemers ch. 1, from memory); the power's multiset is their k-fold
    # convolution with Python integers, independent of the composition enumeration
    want = sorted(convolve(base, k).items())
    got = ps.spectrum(f"cart({factor}^{k})").atoms.atoms()
    assert [(float(v), m) for v, m in want] == got


def test_compositions_with_irrational_atoms_against_numpy():
    # source: numpy eigvalsh of the explicit Kronecker sum (tests/reference.py), 625 vertices
    c5 = np.roll(np.eye(5), 1, axis=1) + np.roll(np.eye(5), -1, axis=1)
    m = c5
    for _ in range(3):
        m = kron_product(m, c5, 1.0, 0.0)
    truth = np.sort(eigenvalues(m))
    sp = ps.spectrum("cart(C(5)^4)").atoms
    mids = np.repeat(sp.real_midpoints(), sp.mult.astype(np.int64))
    assert mids.size == truth.size
    assert np.max(np.abs(mids - truth)) < 1e-9
    # every atom's certified ball holds its eigenvalues (radius plus numpy's own 1e-12 error)
    rad = np.repeat(sp.radii(), sp.mult.astype(np.int64))
    assert np.all(np.abs(mids - truth) <= rad + 1e-12)


def test_compositions_object_weights_are_python_ints():
    # source: the 70-fold integer convolution of C(4)'s spectrum (order 4^70 > 2^62, so the
    # multiplicities are Python ints and the doubled atom 0 takes the shift path)
    sp = _compositions(families.C(4).spectrum(), 70, CARTESIAN)
    want = convolve({2: 1, 0: 2, -2: 1}, 70)
    got = dict(zip((int(v) for v in sp.real_midpoints()), sp.mult.tolist(), strict=True))
    assert got == want
    assert all(type(m) is int for m in sp.mult.tolist())


# ------------------------------------------------------------------ reused factors
def test_small_family_members_are_reused_and_immutable():
    a, b = families.K(2), families.K(2)
    assert a is b
    with pytest.raises(AttributeError):
        a._name = "changed"
    # source: K_2 has eigenvalues -1, 1 (closed form); the reused factor still answers it
    assert a.eigenvalues().tolist() == [-1.0, 1.0]
    # validation still runs on every call of a reused factor
    with pytest.raises(InputError):
        a.eigenvalues("adjacency", "OUT")
    with pytest.raises(InputError):
        families.K(0)
    # large members are built afresh (not kept), keyword calls too
    assert families.K(100) is not families.K(100)
    assert families.C(7) is families.C(7)
    assert families.dicycle(3, w=[1, 2, 3]) is not families.dicycle(3, w=[1, 2, 3])


def test_reused_factor_gives_the_same_answers_twice():
    # source: the hypercube closed form (see hypercube_atoms)
    first = ps.spectrum("cart(K(2)^12)").atoms.atoms()
    second = ps.spectrum("cart(K(2)^12)").atoms.atoms()
    assert first == second == hypercube_atoms(12)
    # source: C(4) is 2-regular, so its Laplacian eigenvalues are 2 - lambda and those of the
    # Cartesian cube are 6 - (lambda_1 + lambda_2 + lambda_3): the integer convolution, mapped
    lap = ps.spectrum("cart(C(4)^3)", "laplacian").atoms.atoms()
    want = sorted((6 - v, m) for v, m in convolve({2: 1, 0: 2, -2: 1}, 3).items())
    assert lap == [(float(v), m) for v, m in want]


# ------------------------------------------------------------------ exact merges
@pytest.mark.parametrize("seed", range(6))
def test_merge_rationals_against_fraction_counter(seed):
    # source: sorting and adding multiplicities of equal Fractions with Python's Counter
    rng = np.random.default_rng(seed)
    n = int(rng.integers(1, 30))
    shape = seed % 3  # ascending, descending, unordered with repeats
    if shape == 0:
        num = np.sort(rng.choice(200, n, replace=False)) - 100
    elif shape == 1:
        num = -np.sort(rng.choice(200, n, replace=False))
    else:
        num = rng.integers(-4, 4, n)
    den = int(rng.choice([1, 3, 4]))
    big = seed % 2 == 1
    nums = np.array([int(v) * 2**70 for v in num], dtype=object) if big else num.astype(np.int64)
    mult = np.array([int(m) for m in rng.integers(1, 9, n)], dtype=object)
    vals, m = merge_rationals(Rationals(nums, den), mult)
    want: Counter = Counter()
    for v, c in zip(nums.tolist(), mult.tolist(), strict=True):
        want[Fraction(int(v), den)] += c
    assert list(zip(vals.to_fractions(), m.tolist(), strict=True)) == sorted(want.items())


def test_spectrum_drops_zero_multiplicities_only():
    # source: exact integers -- atoms with multiplicity 0 vanish, the others keep theirs
    big = np.array([0, 2**70, 3, 0], dtype=object)
    sp = Spectrum(Rationals(np.array([1, 2, 3, 4], dtype=np.int64)), big)
    assert sp.atoms() == [(2.0, 2**70), (3.0, 3)]


# ------------------------------------------------------------------ bracket transforms (A)
@pytest.mark.parametrize("n, support", [(64, [0, 5, 9]), (1 << 12, [0, 7, 1000, 4095]),
                                        (1 << 16, [0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11])])
def test_direct_forward_transform_within_its_bound(n, support):
    # source: numpy.fft.rfft of the same vector; the direct sums (with the zero-index shortcut and
    # the power-of-two mask) must lie within their own stated 2-norm error bound of it
    rng = np.random.default_rng(n)
    a = np.zeros(max(support) + 1)
    a[support] = rng.dirichlet(np.ones(len(support)))
    x, e = bracket._forward(a, n)
    ref = np.fft.rfft(a, n)
    assert np.linalg.norm(x - ref) <= e + bracket._c_fft(n) * math.sqrt(n) * np.linalg.norm(a)


def test_power_spectrum_within_its_bound():
    # source: numpy.fft.rfft(a, n) ** k computed directly in complex arithmetic
    b = bracket._Block([-1.618, 0.618, 2.0], [Fraction(2, 5), Fraction(2, 5), Fraction(1, 5)], 40,
                       0.0, 0.25, Fraction(0.25))
    n = 1 << 12
    spec, err, _ = bracket._power_spectrum([b], n)
    a = np.bincount(b.idx, weights=b.p, minlength=b.width + 1)
    ref = np.fft.rfft(a, n) ** 40
    assert np.linalg.norm(spec - ref) <= err + 1e-12


def c4_cdf(k: int, x: float) -> Fraction:
    # source: the k-fold integer convolution of C(4)'s spectrum {2, 0, 0, -2}
    d = convolve({2: 1, 0: 2, -2: 1}, k)
    return Fraction(sum(m for v, m in d.items() if v <= x), 4**k)


@pytest.mark.parametrize("k", [3, 40, 200])
def test_bracket_contains_exact_lattice_cdf(k):
    for x in (-2.0 * k, -3.0, -1.0, 0.0, 0.5, 7.0, 2.0 * k):
        a = cdf(f"cart(C(4)^{k})", x, method="bracket")
        truth = c4_cdf(k, x)
        assert a.lower <= truth <= a.upper, (k, x)
        assert a.upper - a.lower < 1e-8  # a lattice grid: only the FFT and summation bounds


@pytest.mark.parametrize("expr, factors, kind", [
    ("cart(C(5)^4)", ["C5"] * 4, "cart"),
    ("cart(C(7)^3)", ["C7"] * 3, "cart"),
    ("direct(P(3)^3, C(5)^2)", ["P3"] * 3 + ["C5"] * 2, "direct"),
])
def test_bracket_cdf_and_quantiles_contain_numpy_truth(expr, factors, kind):
    # source: numpy eigvalsh of the explicit Kronecker build (tests/reference.py)
    mats = {"C5": np.roll(np.eye(5), 1, 1) + np.roll(np.eye(5), -1, 1),
            "C7": np.roll(np.eye(7), 1, 1) + np.roll(np.eye(7), -1, 1),
            "P3": np.diag([1.0, 1.0], 1) + np.diag([1.0, 1.0], -1)}
    m = mats[factors[0]]
    for f in factors[1:]:
        m = kron_product(m, mats[f], *((1.0, 0.0) if kind == "cart" else (0.0, 1.0)))
    ev = np.sort(eigenvalues(m).real)
    n = ev.size
    for x in np.linspace(ev[0] - 0.5, ev[-1] + 0.5, 9):
        a = cdf(expr, float(x), method="bracket")
        near = np.abs(ev - x) < 1e-9  # an eigenvalue at x: numpy cannot place it on one side
        lo, hi = np.sum(ev < x - 1e-9) / n, np.sum(ev <= x + 1e-9) / n
        assert a.lower <= hi and lo <= a.upper, (expr, x, near.any())
    for q in (0.001, 0.1, 0.3, 0.5, 0.77, 0.999):
        a = quantile(expr, q, method="bracket")
        truth = ev[math.ceil(Fraction(str(q)) * n) - 1]  # inf{x : F(x) >= q}
        assert a.lower - 1e-9 <= truth <= a.upper + 1e-9, (expr, q)


@pytest.mark.parametrize("k", [10, 301])
def test_hypercube_bracket_quantiles_contain_the_binomial_quantile(k):
    # source: Q_k's spectrum k - 2j with multiplicity C(k, j) (closed form, from memory);
    # the quantile is the smallest k - 2j whose cumulative binomial sum reaches q 2^k
    row = [math.comb(k, j) for j in range(k, -1, -1)]  # ascending values k - 2j
    vals = [k - 2 * j for j in range(k, -1, -1)]
    for q in (Fraction(1, 1000), Fraction(3, 10), Fraction(1, 2), Fraction(9, 10)):
        acc, truth = 0, None
        for v, c in zip(vals, row, strict=True):
            acc += c
            if acc >= q * 2**k:
                truth = v
                break
        a = quantile(f"cart(K(2)^{k})", q, method="bracket")
        assert a.lower <= truth <= a.upper, (k, q)


def test_bracket_quantile_search_evaluates_the_tier_a_few_times():
    # the multisection's own guarantee: each round shrinks a bracket 257-fold, so a 1e-12
    # relative tolerance takes a handful of vectorised evaluations (formerly about fifty)
    q = _Query("cart(C(5)^300)", "adjacency", "bracket", None, None, "out")
    tier = q.choose(lambda t: 0.0)
    calls = []
    inner = tier.evaluate
    tier.evaluate = lambda *a, **kw: calls.append(1) or inner(*a, **kw)
    from powerspec.queries.distsolve import quantiles
    est, lo, hi = quantiles(q, tier, [Fraction(3, 10)])
    assert lo[0] <= est[0] <= hi[0]
    assert len(calls) <= 12


def test_exact_count_views_against_integer_convolution():
    # source: the k-fold integer convolution of C(4)'s spectrum; eigenvalues in [a, b]
    k = 60
    d = convolve({2: 1, 0: 2, -2: 1}, k)
    for a, b in ((-4.0, 4.0), (0.0, 0.0), (-200.0, -10.0), (1.0, 1.5)):
        want = sum(m for v, m in d.items() if a <= v <= b)
        c = count(f"cart(C(4)^{k})", a, b, method="exact")
        assert c.estimate == c.lower == c.upper == want


# ------------------------------------------------------------------ start-up imports
def test_command_line_import_leaves_heavy_modules_out():
    code = ("import sys, powerspec.interfaces.cli; "
            "print(sorted(m for m in ('scipy.io', 'powerspec.algebra.extremes', "
            "'powerspec.tiers.momentbounds', 'sympy', 'matplotlib') if m in sys.modules))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "[]"
