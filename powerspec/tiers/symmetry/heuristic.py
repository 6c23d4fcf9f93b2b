"""The sorted-degree approximation of product Laplacians, Weyl brackets, and multiset comparison.

**The sorted-degree approximation.**  For a direct product,
A_G (x) A_H = (D_G - L_G) (x) (D_H - L_H), so

    L_{G x H} = D_G (x) D_H - A_G (x) A_H = D_G (x) L_H + L_G (x) D_H - L_G (x) L_H.

The approximation replaces each degree matrix D by Q diag(δ) Q^T, where Q holds
the Laplacian eigenvectors sorted by eigenvalue α_1 <= ... <= α_n and δ_1 <= ... <= δ_n
are the degrees sorted ascending (the i-th smallest Laplacian eigenvalue is paired with
the i-th smallest degree).  Then every term is diagonal in the Kronecker eigenbasis and,
writing β_j = δ_j - α_j for the implied adjacency eigenvalue,

    direct, K factors (indices j_1..j_K):   b^(K-1) (prod δ_jt - prod β_jt),
    mix(1, b) (strong for b = 1):           (prod (1 + b δ_jt) - prod (1 + b β_jt)) / b,
    Cartesian:                              sum α_jt (exact),

over all n^K index tuples (multisets with multinomial counts for powers).  It is exact
for regular factors (δ constant) and otherwise an uncontrolled estimate.

**Weyl brackets** (rigorous, for every sorted index i): with L = D_K - A_K and Weyl's
inequalities for the sum of symmetric matrices,
λ_i(L) ∈ [λ_i(D_K) - λ_max(A_K), λ_i(D_K) - λ_min(A_K)]
        ∩ [d_min - λ_{N+1-i}(A_K), d_max - λ_{N+1-i}(A_K)].
The factor adjacency eigenvalues come with certified radii
(:func:`~powerspec.tiers.symmetry.factor.factor_spectrum`); products carry their
propagated error and a rounding allowance of γ(2K + 8) relative.

>>> import numpy as np
>>> from powerspec.tiers.symmetry.plan import PowerOperand
>>> k3 = PowerOperand(np.ones((3, 3)) - np.eye(3), np.full(3, 2.0), 2)   # regular: exact
>>> [(round(v, 9), m) for v, m in sorted_degree_laplacian([k3], 0, 1)]
[(0.0, 1), (3.0, 4), (6.0, 4)]
"""

from __future__ import annotations

import math
from collections import Counter
from fractions import Fraction
from itertools import combinations_with_replacement

import numpy as np

from powerspec.tiers.symmetry.factor import factor_spectrum
from powerspec.tiers.symmetry.patterns import gamma
from powerspec.tiers.symmetry.plan import PowerOperand, rule_name, validate

Atoms = list[tuple[float, int]]


def _multisets(n: int, k: int) -> list[tuple[tuple[int, ...], int]]:
    """Index multisets of size k from range(n) with their multinomial counts (exact ints)."""
    out = []
    for combo in combinations_with_replacement(range(n), k):
        counts = Counter(combo).values()
        mult = math.factorial(k)
        for c in counts:
            mult //= math.factorial(c)
        out.append((combo, mult))
    return out


def _products(per_op: list[list[tuple[tuple[float, ...], int]]]) -> list[tuple[tuple[float, ...], int]]:
    """Combine per-operand (values, multiplicity) lists: values multiply componentwise."""
    acc = per_op[0]
    for nxt in per_op[1:]:
        acc = [(tuple(x * y for x, y in zip(v1, v2, strict=True)), m1 * m2)
               for v1, m1 in acc for v2, m2 in nxt]
    return acc


def _atoms(pairs: list[tuple[float, int]]) -> Atoms:
    merged: dict[float, int] = {}
    for v, m in pairs:
        v = float(v) + 0.0  # plain floats, and -0.0 merged with 0.0
        merged[v] = merged.get(v, 0) + m
    return sorted(merged.items())


def sorted_degree_laplacian(operands: list[PowerOperand], a: float, b: float) -> Atoms:
    """The sorted-degree estimate of the Laplacian spectrum as sorted (value, multiplicity) atoms.

    >>> from powerspec.tiers.symmetry.plan import PowerOperand
    >>> p3 = PowerOperand(np.array([[0., 1, 0], [1, 0, 1], [0, 1, 0]]), np.array([1., 2, 1]), 1)
    >>> [(round(v, 9), m) for v, m in sorted_degree_laplacian([p3], 0, 1)]
    [(0.0, 1), (1.0, 1), (3.0, 1)]
    """
    operands = validate(operands, a, b, "laplacian")
    rule = rule_name(a, b)
    per_op = []
    for op in operands:
        lap = np.diag(op.degrees) - op.adjacency
        alpha = np.linalg.eigvalsh(lap)
        delta = np.sort(op.degrees)
        beta = delta - alpha
        if rule == "cartesian":
            base = [(float(d), float(be)) for d, be in zip(delta, beta, strict=True)]
        elif rule == "multiplicative":
            base = [(float(d), float(be)) for d, be in zip(delta, beta, strict=True)]
        else:
            base = [(1.0 + b * float(d), 1.0 + b * float(be)) for d, be in zip(delta, beta, strict=True)]
        rows = []
        for combo, mult in _multisets(len(base), op.copies):
            if rule == "cartesian":
                rows.append(((sum(base[j][0] for j in combo), sum(base[j][1] for j in combo)), mult))
            else:
                pd = math.prod(base[j][0] for j in combo)
                rows.append(((pd, math.prod(base[j][1] for j in combo)), mult))
        per_op.append(rows)
    if rule == "cartesian":
        acc = per_op[0]
        for nxt in per_op[1:]:
            acc = [((v1[0] + v2[0], v1[1] + v2[1]), m1 * m2) for v1, m1 in acc for v2, m2 in nxt]
        return _atoms([(pd - pb, m) for (pd, pb), m in acc])
    prods = _products(per_op)
    total = sum(op.copies for op in operands)
    if rule == "multiplicative":
        scale = b ** (total - 1)
        return _atoms([(scale * (pd - pb), m) for (pd, pb), m in prods])
    return _atoms([((pd - pb) / b, m) for (pd, pb), m in prods])


def _value_lists(operands: list[PowerOperand], rule: str, b: float):
    """Per operand: ((degree, adjacency value, adjacency error), multiplicity) per index multiset."""
    per_op = []
    for op in operands:
        fs = factor_spectrum(op.adjacency)
        phi = fs.phi
        if rule == "shifted":
            dvals = 1.0 + b * op.degrees
            avals, aerr = 1.0 + b * fs.values, abs(b) * phi + gamma(2) * np.abs(1.0 + b * fs.values)
        else:
            dvals, avals, aerr = op.degrees, fs.values, np.full(len(fs.values), phi)
        rows = []
        for combo, mult in _multisets(len(dvals), op.copies):
            if rule == "cartesian":
                dv = sum(dvals[j] for j in combo)
                dabs = sum(abs(dvals[j]) for j in combo)  # the scale of the sum's rounding
                av = sum(avals[j] for j in combo)
                ae = sum(aerr[j] for j in combo)
                ae += gamma(op.copies + 1) * sum(abs(avals[j]) for j in combo)
            else:
                dv = math.prod(dvals[j] for j in combo)
                dabs = abs(dv)
                av = math.prod(avals[j] for j in combo)
                ae = math.prod(abs(avals[j]) + aerr[j] for j in combo)
                ae -= math.prod(abs(avals[j]) for j in combo)
                ae += gamma(2 * op.copies + 2) * abs(av)
            rows.append(((dv, dabs, av, ae), mult))
        per_op.append(rows)
    return per_op


Segments = list[tuple[int, float, float]]


def weyl_laplacian_brackets(operands: list[PowerOperand], a: float, b: float) -> Segments:
    """Rigorous brackets of the sorted product Laplacian spectrum: (count, lower, upper) segments.

    The first ``count`` sorted eigenvalues lie in [lower, upper], the next segment's in its
    bracket, and so on (counts are exact integers summing to the product's order).

    >>> from powerspec.tiers.symmetry.plan import PowerOperand
    >>> k2 = PowerOperand(np.array([[0., 1], [1, 0]]), np.array([1., 1]), 2)
    >>> br = weyl_laplacian_brackets([k2], 0, 1)
    >>> [(c, round(lo, 9) + 0.0, round(hi, 9) + 0.0) for c, lo, hi in br]
    [(2, 0.0, 0.0), (2, 2.0, 2.0)]
    """
    operands = validate(operands, a, b, "laplacian")
    rule = rule_name(a, b)
    per_op = _value_lists(operands, rule, b)
    acc = per_op[0]
    for nxt in per_op[1:]:
        comb = []
        for (d1, s1, a1, e1), m1 in acc:
            for (d2, s2, a2, e2), m2 in nxt:
                if rule == "cartesian":
                    err = e1 + e2 + gamma(2) * abs(a1 + a2)
                    comb.append(((d1 + d2, s1 + s2, a1 + a2, err), m1 * m2))
                else:
                    err = (abs(a1) + e1) * (abs(a2) + e2) - abs(a1) * abs(a2) + gamma(2) * abs(a1 * a2)
                    comb.append(((d1 * d2, s1 * s2, a1 * a2, err), m1 * m2))
        acc = comb
    total = sum(op.copies for op in operands)
    rel = gamma(2 * total + 8)
    deg, adj_lo, adj_hi = [], [], []
    for (dv, dabs, av, ae), m in acc:
        # rounding allowances are taken on the magnitudes *before* the final subtraction
        de, ae = rel * dabs, ae + rel * abs(av)
        if rule == "multiplicative":
            s = b ** (total - 1)
            dv, av, de, ae = s * dv, s * av, abs(s) * de, abs(s) * ae
        elif rule == "shifted":
            dv, av, de, ae = (dv - 1.0) / b, (av - 1.0) / b, de / abs(b), ae / abs(b)
        de += 2 * rel * abs(dv)
        ae += 2 * rel * abs(av)
        deg.append((dv, de, m))
        adj_lo.append((av - ae, m))
        adj_hi.append((av + ae, m))
    deg.sort()
    dmin = min(dv - de for dv, de, _ in deg)
    dmax = max(dv + de for dv, de, _ in deg)
    amax = max(v for v, _ in adj_hi)
    amin = min(v for v, _ in adj_lo)
    # bracket 1 follows the sorted degrees; bracket 2 follows -A_K sorted ascending.  Sorting the
    # degree midpoints and widening each by its allowance keeps every sorted exact degree inside
    wide = max(de for _, de, _ in deg)
    first = [(m, dv - wide - amax, dv + wide - amin) for dv, _, m in deg]
    neg_hi = sorted(((-v, m) for v, m in adj_lo), key=lambda t: t[0])  # upper ends of -A's eigenvalues
    neg_lo = sorted(((-v, m) for v, m in adj_hi), key=lambda t: t[0])  # lower ends, same order
    second = [(m, lo + dmin, hi + dmax) for (lo, m), (hi, _) in zip(neg_lo, neg_hi, strict=True)]
    out = _intersect(first, second)
    if a >= 0 and b >= 0 and all(_dominant(op) for op in operands):
        # each factor's D - A is weakly diagonally dominant with non-negative weights, and so is
        # the product's (its degrees and row sums combine by the same monotone rule): it is
        # positive semidefinite (Gershgorin), so no eigenvalue lies below 0
        out = [(c, max(lo, 0.0), max(hi, 0.0)) for c, lo, hi in out]
    return out


def _dominant(op: PowerOperand) -> bool:
    """True when the adjacency is non-negative and every degree is at least its row sum (exact).

    The comparison is in exact rationals of the stored doubles (factors here are small).
    """
    adj = np.asarray(op.adjacency, dtype=float)
    if (adj < 0).any():
        return False
    return all(Fraction(float(d)) >= sum(map(Fraction, row.tolist()), Fraction(0))
               for d, row in zip(np.asarray(op.degrees, dtype=float), adj, strict=True))


def _intersect(s1: Segments, s2: Segments) -> Segments:
    out: Segments = []
    i = j = 0
    r1 = s1[0][0] if s1 else 0
    r2 = s2[0][0] if s2 else 0
    while i < len(s1) and j < len(s2):
        take = min(r1, r2)
        lo = float(max(s1[i][1], s2[j][1])) + 0.0
        hi = float(min(s1[i][2], s2[j][2])) + 0.0
        if out and out[-1][1] == lo and out[-1][2] == hi:
            out[-1] = (out[-1][0] + take, lo, hi)
        else:
            out.append((take, lo, hi))
        r1 -= take
        r2 -= take
        if r1 == 0:
            i += 1
            r1 = s1[i][0] if i < len(s1) else 0
        if r2 == 0:
            j += 1
            r2 = s2[j][0] if j < len(s2) else 0
    return out


def compare_sorted(estimate: Atoms, exact: Atoms) -> tuple[float, float]:
    """(max, mean) absolute difference between two multisets of equal size, paired in sorted order.

    >>> compare_sorted([(0.0, 2), (1.0, 1)], [(0.0, 1), (0.5, 2)])
    (0.5, 0.3333333333333333)
    """
    est = sorted(estimate)
    ex = sorted(exact)
    if sum(m for _, m in est) != sum(m for _, m in ex):
        raise ValueError("the multisets have different sizes")
    i = j = 0
    r1, r2 = est[0][1], ex[0][1]
    worst, acc, total = 0.0, 0.0, 0
    while i < len(est) and j < len(ex):
        take = min(r1, r2)
        diff = abs(est[i][0] - ex[j][0])
        worst = max(worst, diff)
        acc += diff * take
        total += take
        r1 -= take
        r2 -= take
        if r1 == 0:
            i += 1
            r1 = est[i][1] if i < len(est) else 0
        if r2 == 0:
            j += 1
            r2 = ex[j][1] if j < len(ex) else 0
    return worst, acc / total
