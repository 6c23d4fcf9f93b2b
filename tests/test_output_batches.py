"""Batch formatting of exact counts (text and JSON) against exact integer arithmetic.

The batch paths (one precision switch per table, equal counts converted once) must give
exactly the per-count texts, and both must agree with the decimal digits of the integer
itself: the reference below rounds str(n) half up at the 12th digit (exact integers).
"""

from __future__ import annotations

import json
import math
import sys

import mpmath
from hypothesis import given, settings
from hypothesis import strategies as st

from powerspec.answers.answer import (
    DigitText,
    count_text,
    count_texts,
    dump_json,
    json_count,
    json_counts,
)
from powerspec.numbers.counts import BigCount
from powerspec.queries import planner


def _exact_text(n: int) -> str:
    """Reference: 12 leading digits of |n| rounded half up, and the length, from str(n)."""
    sys.set_int_max_str_digits(0)
    sign, t = ("-", str(-n)) if n < 0 else ("", str(n))
    if abs(n).bit_length() <= 132:  # the text rule: in full up to 132 bits (about 40 digits)
        return sign + t
    e, q = len(t) - 1, (int(t[:13]) + 5) // 10
    digits = e + 1
    if q >= 10**12:
        q, e = q // 10, e + 1
    s = str(q)
    return f"{sign}{s[0]}.{s[1:]}e+{e} (an integer of {digits} digits)"


def _hard_cases() -> list[int]:
    """Counts next to the rounding and length boundaries, where a ball alone cannot decide."""
    out = []
    for e in (40, 41, 57, 300, 1000, 4500):
        ten = 10**e
        tie = 123456789012 * 10 ** (e - 11) + 5 * 10 ** (e - 12)  # 13th digit 5, then zeros
        nines = 10 ** (e + 1) - 1                                 # 99...9: rounds up, same length
        out += [ten - 1, ten, ten + 1, tie - 1, tie, tie + 1, nines, -tie]
    return out


def test_batch_equals_single_and_exact_digits_on_boundaries():
    ns = _hard_cases()
    got = count_texts(ns)
    assert got == [count_text(n) for n in ns]
    assert got == [_exact_text(n) for n in ns]        # source: exact integers (str)


@settings(max_examples=60, deadline=None)
@given(st.integers(min_value=130, max_value=40000), st.integers(min_value=0), st.data())
def test_counts_sharing_top_bits(bits, low, data):
    # two counts with the same length and top 192 bits share one memo entry; each text must
    # still be its own exact rounding (source: exact integers)
    top = data.draw(st.integers(min_value=2**191, max_value=2**192 - 1)) if bits > 192 else None
    if top is None:
        n = data.draw(st.integers(min_value=2 ** (bits - 1), max_value=2**bits - 1))
        ns = [n, n]
    else:
        s = bits - 192
        ns = [(top << s) + (low % (1 << s)), (top << s) + ((low * 7 + 3) % (1 << s))]
    assert count_texts(ns) == [_exact_text(n) for n in ns]


def test_factored_counts_in_batches():
    big = BigCount.power(3, 10**6) - BigCount.power(2, 10**6)
    assert count_texts([big, 5, big]) == [count_text(big), "5", count_text(big)]


def test_hypercube_rows_text_and_json_read_back():
    # source: the k-cube's spectrum is k - 2j with multiplicity C(k, j) (textbook)
    k = 14000                                        # C(14000, 7000) has 4213 digits > 4000
    ans = planner.spectrum(f"cart(K(2)^{k})")
    mults = [int(m) for m in ans.atoms.mult.tolist()]
    sample = sorted({*range(0, k + 1, 389), *range(6990, 7011), k})   # ends, middle, a spread
    assert [mults[j] for j in sample] == [math.comb(k, j) for j in sample]
    data = json.loads(ans.to_json())
    sys.set_int_max_str_digits(0)
    back = data["atoms"]
    assert len(back) == k + 1
    assert [int(back[j][1]) for j in sample] == [mults[j] for j in sample]
    assert [back[j][0] for j in sample] == [2 * j - k for j in sample]     # ascending order
    strings = [m for _, m in back if isinstance(m, str)]
    assert strings and all(len(m) > 4000 for m in strings)   # DESIGN: > 4000 digits as strings
    assert all(len(str(m)) <= 4000 for _, m in back if not isinstance(m, str))
    some = [mults[j] for j in sample] * 2                   # repeats hit the memo
    assert json_counts(some) == [json_count(m) for m in some]
    head = json.loads(dump_json(ans.to_dict(head=3)))
    assert head["distinct"] == k + 1 and [m for _, m in head["atoms"]] == mults[:3]


def test_digit_text_is_written_without_escaping():
    assert dump_json([DigitText("0123"), "a\"b"], end="\n") == '["0123", "a\\"b"]\n'
    assert json.loads(dump_json({"x": DigitText("9" * 5000)}))["x"] == "9" * 5000


def test_values_next_to_an_integer_print_their_offset(capsys):
    import mpmath

    from powerspec.interfaces.cli import main

    # source: P3 has eigenvalues -sqrt 2, 0, sqrt 2 (textbook); with loops 1/2 the strong
    # power's eigenvalues are prod(3/2 + mu_i) - 1, so the smallest are -1 + d with
    # d = (3/2 - sqrt 2)^30, (3/2 - sqrt 2)^29 * 3/2, (3/2 - sqrt 2)^29 (3/2 + sqrt 2); checked
    # with mpmath at 60 digits
    assert main(["top", "strong(loops(1/2, P(3))^30)", "--bottom", "-m", "3"]) == 0
    rows = [ln.split() for ln in capsys.readouterr().out.splitlines()[-3:]]
    with mpmath.workdps(60):
        lo, mid, hi = 1.5 - mpmath.sqrt(2), mpmath.mpf(1.5), 1.5 + mpmath.sqrt(2)
        truth = [lo**30, lo**29 * mid, lo**29 * hi]
    texts = []
    for row, d, mult in zip(rows, truth, (1, 30, 30), strict=True):
        n, sign, dtext, radius, m = row
        assert n == "-1" and sign == "+" and int(m) == mult
        assert abs(mpmath.mpf(dtext) - d) <= mpmath.mpf(radius)   # every printed digit covered
        texts.append(dtext)
    assert len(set(texts)) == 3                                     # distinct atoms, distinct text


def _scan_zero(pairs):
    """Reference: the exact-zero atom and 'some ball may hold 0', one pair at a time."""
    from flint import acb, arb, fmpq
    zero, maybe = None, False
    for v, m in pairs:
        if isinstance(v, fmpq):
            z = h = v == 0
        elif isinstance(v, acb):
            z, h = v.real.is_zero() and v.imag.is_zero(), v.contains(0)
        else:
            assert isinstance(v, arb)
            z, h = v.is_zero(), v.contains(0)
        zero = m if z else zero
        maybe = maybe or h
    return zero, maybe


def test_zero_atoms_and_row_slices_match_the_full_listing():
    # sources: the 4-cube has 0 with multiplicity C(4, 2) = 6 and direct(P(3)^3) has 0 with
    # multiplicity 27 - 8 = 19 (textbook); C5's pairwise sums exclude 0 (see test_report)
    cases = {"cart(K(2)^4)": 6, "direct(P(3)^3)": 19, "cart(C(5)^2)": None,
             "strong(loops(1/2, P(3))^100)": None, "cart(dicycle(3)^2)": None}
    for e, nullity in cases.items():
        ans = planner.spectrum(e)
        pairs = ans.listed_atoms()
        assert ans.zero_atoms() == _scan_zero(pairs), e
        assert ans.zero_atoms()[0] == nullity, e
        n = len(pairs)
        for rows in (slice(0, 3), slice(-3, None), slice(0, n)):
            assert [str(v) for v, _ in ans.listed_atoms(rows)] == [str(v) for v, _ in pairs[rows]]
    top = planner.top("direct(P(3)^3)", 3)                    # listed largest first
    assert top.listed_atoms(slice(0, 2)) == top.listed_atoms()[:2]


@settings(max_examples=200, deadline=None)
@given(st.one_of(st.floats(allow_nan=False, allow_infinity=False, width=64),
                 st.fractions(max_denominator=10**30),
                 st.integers(min_value=-10**60, max_value=10**60)))
def test_bound_texts_are_bounds(x):
    # source: exact rational arithmetic (Fraction) on the printed text and the value
    from fractions import Fraction

    from powerspec.answers.answer import bound_text
    exact = Fraction(x)
    lo, hi = bound_text(x, -1), bound_text(x, 1)
    assert Fraction(lo) <= exact <= Fraction(hi)
    for t in (lo, hi):      # a rounded bound keeps at most 12 (13 after a carry) digits
        assert Fraction(t) == exact or len(t.lstrip("-").replace(".", "").split("e")[0].strip("0")) <= 13


def test_bound_texts_of_balls_and_reports(capsys):
    from fractions import Fraction

    from flint import arb
    from flint import ctx as fctx

    from powerspec.answers.answer import bound_text
    from powerspec.interfaces.cli import main
    from powerspec.numbers.hp import working

    with working():
        x = arb(2).sqrt() * 2 + arb(0, 1e-30)
    with fctx.workprec(300):
        lo_end, hi_end = (Fraction(str(e.mid().str(90, radius=False))) for e in (x.lower(), x.upper()))
    assert Fraction(bound_text(x, -1)) <= lo_end and Fraction(bound_text(x, 1)) >= hi_end
    # source: 2 sqrt 2 is the spectral radius of cart(P(3)^2) (P(3): +-sqrt 2, 0, textbook);
    # the printed bracket must contain it (it once printed a lower bound above the value)
    assert main(["invariants", "cart(P(3)^2)"]) == 0
    line = next(ln for ln in capsys.readouterr().out.splitlines() if "spectral_radius " in ln)
    lo, hi = line.split("[")[1].split("]")[0].split(", ")
    with mpmath.workdps(40):
        r = 2 * mpmath.sqrt(2)
        assert mpmath.mpf(lo) <= r <= mpmath.mpf(hi)
    # source: the 0.99-quantile of cart(P(3)^3) is its largest eigenvalue 3 sqrt 2 (textbook);
    # the exact tier's bounds once rounded back to one double below it
    assert main(["quantile", "cart(P(3)^3)", "0.99", "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    with mpmath.workdps(40):
        t = 3 * mpmath.sqrt(2)
        assert mpmath.mpf(data["lower"]) <= t <= mpmath.mpf(data["upper"])
    assert main(["quantile", "cart(P(3)^3)", "0.99"]) == 0
    rows = dict(ln.split(None, 1) for ln in capsys.readouterr().out.splitlines()
                if ln.strip().startswith(("lower", "upper")))
    with mpmath.workdps(40):
        assert mpmath.mpf(rows["lower"]) <= t <= mpmath.mpf(rows["upper"])


@settings(max_examples=150, deadline=None)
@given(st.integers(min_value=-10**6, max_value=10**6).filter(bool),
       st.integers(min_value=13, max_value=40), st.integers(min_value=1, max_value=9), st.booleans())
def test_offset_texts_next_to_integers(n, e, digit, below):
    # source: exact rationals (Fraction) on the printed "n +- d" text: it must lie within the
    # stated radius of the ball, and name the integer n it sits next to
    from fractions import Fraction

    from flint import arb
    from flint import ctx as fctx

    from powerspec.answers.answer import offset_text
    from powerspec.numbers.hp import working

    delta = Fraction(digit, 10**e) * (-1 if below else 1)
    with working():
        x = arb(n) + arb(delta.numerator) / arb(delta.denominator) + arb(0, 10.0 ** -(e + 8))
    text, r = offset_text(x)
    if x.contains(n):           # 160 bits cannot separate x from n: the plain text is kept
        return
    head, sign, d = text.split(" ")
    assert int(head) == n and sign == ("-" if below else "+")
    printed = n + (Fraction(d) if sign == "+" else -Fraction(d))
    with fctx.workprec(600):
        lo, hi = (Fraction(str(t.mid().str(200, radius=False))) for t in (x.lower(), x.upper()))
    man, ex = mpmath.mpf(r).man_exp
    rad = Fraction(int(man)) * Fraction(2) ** int(ex)
    assert printed - rad <= lo and hi <= printed + rad


def test_bound_texts_beyond_every_decimal_context():
    # source: Arb ball arithmetic (python-flint): the printed bound, rebuilt as a ball from its
    # digits, must lie on the right side of the value's ball
    from fractions import Fraction

    from flint import arb, fmpq

    from powerspec.answers.answer import bound_text
    from powerspec.numbers.hp import working

    with working(256):
        for x in (arb(10) ** (10**9) * 3, arb(2) ** (-(10**8)), -(arb(7) ** 123456789)):
            for side in (-1, 1):
                mant, _, exp = bound_text(x, side).partition("e")
                f = Fraction(mant)
                t = arb(fmpq(f.numerator, f.denominator)) * arb(10) ** int(exp)
                assert (t.upper() <= x.lower()) if side < 0 else (t.lower() >= x.upper())
