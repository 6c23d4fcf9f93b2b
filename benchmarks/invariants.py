"""Benchmark: the invariants query on products of 10^6 to 10^300 vertices.

Prints one row per product: vertex count, time per query, the spectral radius,
and -- where an explicit computation can run (scipy eigsh on the built sparse
product, up to about 10^6 vertices) -- its time and the speed ratio.
Plain script: ``python benchmarks/invariants.py`` (about a minute).
"""

from __future__ import annotations

import math
import sys  # noqa: E402
import time
from pathlib import Path  # noqa: E402

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as sla

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from powerspec.algebra.grammar import parse
from powerspec.numbers.counts import log2 as count_log2
from powerspec.queries.invariants import invariants

CASES = [
    ("cart(C(10)^6)", (1, 0), True),
    ("cart(K(2)^20)", (1, 0), True),
    ("direct(P(3)^12)", (0, 1), True),
    ("strong(C(5)^6)", (1, 1), True),
    ("cart(C(10)^50)", (1, 0), False),
    ("cart(K(2)^1000)", (1, 0), False),
    ("direct(P(3)^300)", (0, 1), False),
    ("strong(K(3)^600)", (1, 1), False),
    ("cart(K(10)^300)", (1, 0), False),
]


def explicit_radius(expr: str, comb) -> tuple[float, float]:
    """(lambda_max, seconds) from scipy eigsh on the explicitly built sparse product."""
    node = parse(expr)
    f = sp.csr_array(node.operands[0][0].factor.adjacency)
    a, b = comb
    t0 = time.perf_counter()
    m = f
    for _ in range(node.operands[0][1] - 1):
        i1, i2 = sp.identity(m.shape[0], format="csr"), sp.identity(f.shape[0], format="csr")
        m = sp.csr_array(a * (sp.kron(m, i2) + sp.kron(i1, f)) + b * sp.kron(m, f))
    v0 = np.ones(m.shape[0])
    lam = sla.eigsh(m, k=1, which="LA", v0=v0, return_eigenvectors=False)[0]
    return float(lam), time.perf_counter() - t0


def main() -> None:
    print(f"{'expression':<26} {'log10 order':>11} {'query s':>9} {'spectral radius':>22} "
          f"{'exact/bracketed':>15} {'eigsh s':>8} {'ratio':>8}")
    for expr, comb, explicit in CASES:
        t0 = time.perf_counter()
        ans = invariants(expr)
        dt = time.perf_counter() - t0
        inv = ans.invariants
        rho = inv["spectral_radius"]["value"]
        exact = sum(1 for d in inv.values() if d["value"] is not None)
        brk = sum(1 for d in inv.values() if d["value"] is None and d["lower"] is not None)
        digits = count_log2(ans.order) * math.log10(2)
        row = f"{expr:<26} {digits:>11.1f} {dt:>9.3f} {str(rho)[:22]:>22} {f'{exact}/{brk}':>15}"
        if explicit:
            lam, te = explicit_radius(expr, comb)
            assert math.isclose(lam, float(rho), rel_tol=1e-8), (lam, rho)
            row += f" {te:>8.2f} {te / dt:>8.1f}"
        print(row)


if __name__ == "__main__":
    main()
