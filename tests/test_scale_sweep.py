"""Scale sweep: one product at edge weights 1e-12, 1 and 1e12 and powers k = 1 .. 10^9.

For cart, direct and strong powers of scale(w, C(7)), the three largest and the three
smallest distinct eigenvalues come back with certified balls that contain the truth and
exact multiplicities, and are never merged: each returned atom is one distinct true value
(so no two distinct eigenvalues share an atom) and the balls are pairwise disjoint.

Truth: the composition enumeration of tests/test_large_k.py in mpmath at 60 digits, from
the cycle's closed form 2 w cos(2 pi j / 7) (Brouwer & Haemers, *Spectra of Graphs*,
section 1.4.3, from memory; checked against numpy there) with w's exact double value, and
the product rules of DESIGN section 2 (sums, products, (1 + x)(1 + y) - 1).

The default grid is sampled (weights x kinds x k in {1, 5, 10^3, 10^9}, about 10 s);
SCALE_SWEEP_FULL=1 adds k = 2, 10^2, 10^6 and the path P(5).
"""

from __future__ import annotations

import os

import pytest
from flint import acb, ctx, fmpq

import powerspec as ps
from tests.test_large_k import cartesian_extremes, compare, multiplicative_extremes

WEIGHTS = [1e-12, 1.0, 1e12]
KS = [1, 5, 10**3, 10**9]
FACTORS = ["C(7)"]
if os.environ.get("SCALE_SWEEP_FULL"):
    KS = sorted(KS + [2, 10**2, 10**6])
    FACTORS = FACTORS + ["P(5)"]

BUILD = {"C(7)": lambda: ps.C(7), "P(5)": lambda: ps.P(5)}
PRODUCT = {"cart": ps.cart, "direct": ps.direct, "strong": ps.strong}


def _truth(kind: str, name: str, k: int, m: int, bottom: bool, w: float):
    if kind == "cart":
        return cartesian_extremes(name, k, m, bottom, weight=w)
    return multiplicative_extremes(name, k, m, bottom, shift=0 if kind == "direct" else 1,
                                   weight=w)


def _disjoint(balls) -> bool:
    def meet(x, y):
        if isinstance(x, fmpq) and isinstance(y, fmpq):
            return x == y
        with ctx.workprec(400):
            return acb(x).overlaps(acb(y))
    return not any(meet(balls[i], balls[j]) for i in range(len(balls))
                   for j in range(i + 1, len(balls)))


@pytest.mark.timeout(120)
@pytest.mark.parametrize("bottom", [False, True])
@pytest.mark.parametrize("k", KS)
@pytest.mark.parametrize("w", WEIGHTS)
@pytest.mark.parametrize("kind", ["cart", "direct", "strong"])
@pytest.mark.parametrize("name", FACTORS)
def test_extremes_across_weights_and_powers(name, kind, w, k, bottom):
    if kind == "strong" and bottom and w < 1:
        # every 1 + w lambda is positive and near 1: the smallest eigenvalues are the products of
        # the smallest factors, which neither the magnitude-ordered search (it refuses past its
        # state budget) nor the reference enumeration (largest magnitudes first) reaches
        pytest.skip("bottom of a strong power whose shifted factor values are all positive")
    m = 3
    node = PRODUCT[kind]((ps.scale(w, BUILD[name]()), k))
    ans = ps.top(node, m, bottom=bottom)
    label = f"{kind}(scale({w!r}, {name})^{k}) bottom={bottom}"
    # the truth lies in each certified ball, one atom per distinct true value, exact counts
    compare(ans, _truth(kind, name, k, m, bottom, w), label)
    assert _disjoint([b for b, _ in ans.listed_atoms()]), label
