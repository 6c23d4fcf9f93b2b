"""Certified grid brackets against binomial sums and exact spectra."""

from __future__ import annotations

import math

import numpy as np
import pytest

import powerspec as ps
from powerspec.errors import SizeLimitError
from powerspec.tiers.bracket import AddBracket, MulBracket, choose_spacing


@pytest.mark.parametrize("k", [1, 7, 300, 2000])
def test_hypercube_bracket_is_exact_on_its_lattice(k):
    # source: Q_k spectrum k - 2j with multiplicity C(k, j) (textbook closed form, from memory)
    h = choose_spacing([([-1.0, 1.0], [0.5, 0.5], k)], 1e-3)
    assert h == 2.0  # the lattice span of {-1, 1}
    b = AddBracket([([-1.0, 1.0], [0.5, 0.5], k, 0.0)], h=h)
    for x in (-k - 1, -k, 0, 1, k // 3, k):
        exact = sum(math.comb(k, j) for j in range(k + 1) if k - 2 * j <= x) / 2**k
        est, lo, hi = b.evaluate(float(x))
        assert lo <= exact <= hi
        assert hi - lo < 1e-8  # lattice grid: only the FFT error bound remains


def test_non_lattice_bracket_contains_exact_and_shrinks():
    # source: exact spectrum of cart(C(5)^8) from the engine (checked against numpy in
    # tests/test_engine.py); torus eigenvalues sum 2cos(2 pi j / 5)
    sp = ps.spectrum("cart(C(5)^8)").atoms
    vals = np.repeat(sp.values, sp.mult.astype(np.int64))
    v = 2 * np.cos(2 * np.pi * np.arange(5) / 5)
    widths = []
    for tol in (1e-1, 1e-2, 1e-3):
        h = choose_spacing([(v, np.full(5, 0.2), 8)], tol)
        b = AddBracket([(v, np.full(5, 0.2), 8, 2e-12)], h)
        w = 0.0
        for x in np.linspace(-13, 16, 37):
            truth = np.mean(vals <= x)
            _, lo, hi = b.evaluate(float(x))
            assert lo <= truth <= hi, (tol, x)
            w = max(w, hi - lo)
        widths.append(w)
    assert widths[-1] < widths[0]


def test_direct_bracket_signs_and_zero_mass():
    # source: numpy eigvalsh of the explicit Kronecker product P(3) (x) P(3) (x) K(3)
    p3 = ps.P(3).adjacency.toarray()
    k3 = ps.K(3).adjacency.toarray()
    eig = np.linalg.eigvalsh(np.kron(np.kron(p3, p3), k3))
    vp = np.array([-math.sqrt(2), 0.0, math.sqrt(2)])
    vk = np.array([-1.0, 2.0])
    blocks = [(vp, np.full(3, 1 / 3), 2, 1e-15), (vk, np.array([2 / 3, 1 / 3]), 1, 0.0)]
    b = MulBracket(blocks, h=1e-3)
    assert b.zero == pytest.approx(1 - (2 / 3) ** 2)  # source: 1 - (1 - p0)^k
    for x in (-4.5, -2.0, -1e-9, 0.0, 1.0, 3.0, 4.5):
        truth = np.mean(eig <= x + 1e-9 * (x == 0))
        sign = 0 if x == 0 else (1 if x > 0 else -1)
        _, lo, hi = b.evaluate(sign, math.log(abs(x)) if x else 0.0)
        assert lo <= truth <= hi, x


def test_grid_limit_refused_before_work():
    v = np.array([0.0, 1.0, math.sqrt(2)])
    with pytest.raises(SizeLimitError):
        AddBracket([(v, np.full(3, 1 / 3), 10**7, 0.0)], h=1e-6)
