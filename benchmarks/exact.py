"""Benchmark: the exact tier against the explicit baseline, and how its cost grows with k.

Run:  python benchmarks/exact.py          (about a minute on 2 cores)

Part 1 builds each product explicitly (scipy.sparse.kron, then numpy eigvalsh /
eigvals on the dense matrix) and times powerspec on the same product; it checks
that both agree and prints the ratio.  Part 2 prints powerspec's time for the
hypercube Q_k (k = 10 ... 10^5), for a torus as its dimension grows, and for
`top` at huge k -- sizes no explicit method can touch.
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

import numpy as np
import scipy.sparse as sp

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

import powerspec as ps  # noqa: E402
from powerspec.algebra.engine import Engine  # noqa: E402


def best_of(fn, repeat=3):
    """Smallest wall time of `repeat` runs (seconds) and the last result."""
    best, out = float("inf"), None
    for _ in range(repeat):
        t = time.perf_counter()
        out = fn()
        best = min(best, time.perf_counter() - t)
    return best, out


def explicit(expr_factors, comb):
    """Dense product matrix from factor matrices by Kronecker formulas (left fold)."""
    acc = None
    for m in expr_factors:
        m = sp.csr_array(m)
        if acc is None:
            acc = m
            continue
        ia = sp.identity(acc.shape[0], format="csr")
        ib = sp.identity(m.shape[0], format="csr")
        acc = comb[0] * (sp.kron(acc, ib) + sp.kron(ia, m)) + comb[1] * sp.kron(acc, m)
    return acc.toarray()


def part1():
    print("Part 1: powerspec exact spectrum vs explicit build + numpy eigensolver")
    print(f"  {'product':<34} {'order':>6} {'baseline s':>11} {'powerspec s':>12} {'ratio':>8}  agree")
    k2 = ps.K(2).adjacency.toarray()
    c = {m: ps.C(m).adjacency.toarray() for m in (12, 16)}
    p3 = ps.P(3).adjacency.toarray()
    c5 = ps.C(5).adjacency.toarray()
    dc = ps.dicycle(6).adjacency.toarray()
    cases = [
        ("cart(K(2)^10)", [k2] * 10, (1, 0)),
        ("cart(K(2)^11)", [k2] * 11, (1, 0)),
        ("cart(K(2)^12)", [k2] * 12, (1, 0)),
        ("cart(C(12)^3)", [c[12]] * 3, (1, 0)),
        ("cart(C(16)^3)", [c[16]] * 3, (1, 0)),
        ("direct(P(3)^6, C(5))", [p3] * 6 + [c5], (0, 1)),
        ("strong(P(3)^5, C(5))", [p3] * 5 + [c5], (1, 1)),
        ("cart(dicycle(6)^4)", [dc] * 4, (1, 0)),
    ]
    for expr, mats, comb in cases:
        dense = explicit(mats, comb)
        sym = np.array_equal(dense, dense.T)
        t_base, ev = best_of(lambda d=dense, s=sym: np.linalg.eigvalsh(d) if s else np.linalg.eigvals(d),
                             repeat=1)
        t_ps, ans = best_of(lambda e=expr: ps.spectrum(e))
        got = np.sort_complex(np.repeat(ans.atoms.values.astype(complex),
                                        ans.atoms.mult.astype(np.int64)))
        ok = got.shape == ev.shape
        if ok:
            from scipy.optimize import linear_sum_assignment

            if sym:
                ok = np.max(np.abs(np.sort(got.real) - np.sort(ev))) < 1e-8
            else:
                d = np.abs(got[:, None] - ev[None, :])
                r, cc = linear_sum_assignment(d)
                ok = d[r, cc].max() < 1e-6
        print(f"  {expr:<34} {dense.shape[0]:>6} {t_base:>11.4f} {t_ps:>12.5f} "
              f"{t_base / t_ps:>8.0f}x  {'yes' if ok else 'NO'}")


def part2():
    print("\nPart 2: growth of powerspec's cost with k (no baseline can run at these sizes)")
    print(f"  {'expression':<34} {'distinct':>9} {'seconds':>10}")
    for k in (10, 100, 1000, 10_000, 100_000):
        expr = f"cart(K(2)^{k})"
        t, ans = best_of(lambda e=expr: Engine().spectrum(ps.parse(e)), repeat=1 if k > 1000 else 3)
        print(f"  {expr:<34} {len(ans):>9} {t:>10.4f}")
    for d in (2, 4, 6, 8, 12, 20):
        expr = f"cart(C(10)^{d})"
        t, ans = best_of(lambda e=expr: ps.spectrum(e).atoms, repeat=1)
        print(f"  {expr:<34} {len(ans):>9} {t:>10.4f}")
    for expr in ("cart(K(2)^1000000000)", "direct(P(3)^100000)",
                 "strong(K(3)^1000000000)", "cart(motif()^1000000)"):
        t, ans = best_of(lambda e=expr: ps.top(e, 3 if "strong" not in e else 1))
        print(f"  top {expr:<30} {len(ans.atoms):>9} {t:>10.4f}")


if __name__ == "__main__":
    part1()
    part2()
