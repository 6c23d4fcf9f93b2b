"""Benchmark: the invariants query against scipy eigsh on the explicitly built product.

Part 1 -- products small enough to build: powerspec answers *all* invariants of
the expression (spectral radius, gaps, connectivity, spanning trees, energy,
Estrada, heat trace, ...); the reference builds the product as a scipy CSR matrix
(``scipy.sparse.kron`` formulas) and calls ``eigsh`` for the spectral radius
alone.  Both are timed the same way: a fresh call from the expression text, the
median of REPEAT runs (time.perf_counter); the spectral radii must agree.

Part 2 -- growth with k, where no build can run: the median time of the whole
invariants query for k = 10 .. 10^9.

Plain script: ``python benchmarks/invariants.py`` (a few minutes on 2 cores).
"""

from __future__ import annotations

import statistics
import sys
import time
from pathlib import Path

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as sla

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from powerspec.algebra.grammar import parse  # noqa: E402
from powerspec.numbers.counts import log2 as count_log2  # noqa: E402
from powerspec.queries.invariants import invariants  # noqa: E402

REPEAT = 5

BUILDABLE = [
    ("cart(C(10)^5)", (1, 0)),
    ("cart(K(2)^16)", (1, 0)),
    ("cart(C(47)^3)", (1, 0)),
    ("direct(P(3)^10)", (0, 1)),
    ("strong(C(5)^6)", (1, 1)),
    ("direct(K(1, 3)^7)", (0, 1)),
    ("cart(C(10)^6)", (1, 0)),
    ("direct(P(3)^12)", (0, 1)),
]

GROWTH = ["cart(C(9)^{k})", "direct(motif()^{k})", "strong(K(3)^{k})", "direct(P(3)^{k})"]
KS = [10, 1000, 10**6, 10**9]


def median_time(fn) -> tuple[float, object]:
    """(median seconds over REPEAT fresh calls, last result)."""
    times, out = [], None
    for _ in range(REPEAT):
        t0 = time.perf_counter()
        out = fn()
        times.append(time.perf_counter() - t0)
    return statistics.median(times), out


def build_csr(expr: str, comb) -> sp.csr_array:
    """The product's adjacency as CSR from the kron formula a(X(+)Y) + b X(x)Y."""
    node = parse(expr)
    f = sp.csr_array(node.operands[0][0].factor.adjacency)
    a, b = comb
    m = f
    for _ in range(node.operands[0][1] - 1):
        i1, i2 = sp.identity(m.shape[0], format="csr"), sp.identity(f.shape[0], format="csr")
        m = sp.csr_array(a * (sp.kron(m, i2) + sp.kron(i1, f)) + b * sp.kron(m, f))
    return m


def eigsh_radius(expr: str, comb) -> float:
    """Spectral radius by building the CSR product and calling eigsh (largest magnitude)."""
    m = build_csr(expr, comb)
    v0 = np.ones(m.shape[0])
    return float(abs(sla.eigsh(m, k=1, which="LM", v0=v0, return_eigenvectors=False)[0]))


def counted(inv: dict) -> str:
    exact = sum(1 for d in inv.values() if d["value"] is not None and d["lower"] == d["upper"])
    ball = sum(1 for d in inv.values() if d["value"] is not None and d["lower"] != d["upper"])
    brk = sum(1 for d in inv.values() if d["value"] is None and (d["lower"] is not None
                                                                 or d["upper"] is not None))
    return f"{exact}/{ball}/{brk}"


def main() -> None:
    print(f"Part 1: all invariants (powerspec) vs eigsh spectral radius only, medians of {REPEAT}")
    print(f"{'expression':<22} {'vertices':>9} {'powerspec s':>12} {'eigsh s':>9} {'ratio':>8} "
          f"{'radius':>18} {'exact/ball/bracket':>19}")
    for expr, comb in BUILDABLE:
        tp, ans = median_time(lambda e=expr: invariants(e))
        te, lam = median_time(lambda e=expr, c=comb: eigsh_radius(e, c))
        rho = float(ans.invariants["spectral_radius"]["value"])
        assert abs(rho - lam) <= 1e-8 * rho, (expr, rho, lam)
        print(f"{expr:<22} {ans.order:>9} {tp:>12.4f} {te:>9.3f} {te / tp:>7.0f}x {rho:>18.10f} "
              f"{counted(ans.invariants):>19}")
    print()
    print(f"Part 2: growth with k (whole invariants query, median of {REPEAT}; no build can run)")
    print(f"{'expression':<24} " + " ".join(f"{'k=' + format(k, '.0e'):>10}" for k in KS)
          + "   log10 order at the largest k")
    for pattern in GROWTH:
        row = []
        for k in KS:
            t, ans = median_time(lambda p=pattern, k=k: invariants(p.format(k=k)))
            row.append(f"{t:>10.4f}")
        digits = count_log2(ans.order) * 0.30103
        print(f"{pattern.format(k='k'):<24} " + " ".join(row) + f"   {digits:.3e}")


if __name__ == "__main__":
    main()
