"""Accuracy and cost of the distribution tiers (plain script: python benchmarks/accuracy.py).

For a few factors and powers k it evaluates cdf at a point in the bulk
(mean + 0.5 sd of the exact limit law) with each tier, and prints the time,
the certified bound width and -- where the truth is known (the exact tier, or
the hypercube's binomial sums) -- the actual error of the estimate, next to the
explicit baseline (numpy eigvalsh on the built product) where that can run.
"""

from __future__ import annotations

import math
import sys
import time
from fractions import Fraction
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))  # run from a checkout

import powerspec as ps  # noqa: E402
from powerspec.queries.distribution import _Query, cdf  # noqa: E402

FACTORS = ["K(2)", "C(5)", "motif()"]
POWERS = [3, 10, 100, 1000, 10**6]
EXPLICIT_MAX = 4096  # vertices of the largest product built for the numpy baseline


def bulk_point(expr: str) -> float:
    q = _Query(expr, "adjacency", "law", None, None, "out")
    law = q.law().law
    return law.mu + 0.5 * law.sd


def binomial_truth(k: int, x: float) -> float:
    # hypercube: eigenvalue k - 2j with multiplicity C(k, j)
    j0 = math.ceil((k - x) / 2)
    return float(Fraction(sum(math.comb(k, j) for j in range(max(j0, 0), k + 1)), 2**k))


def run(expr, x, method):
    t = time.perf_counter()
    try:
        a = cdf(expr, x, method=method)
    except ps.PowerspecError as exc:
        return None, time.perf_counter() - t, type(exc).__name__
    return a, time.perf_counter() - t, ""


def main() -> None:
    head = f"{'factor':<12} {'k':>8} {'tier':<8} {'time s':>8} {'width':>10} {'error':>10}  note"
    print(head)
    print("-" * len(head))
    for f in FACTORS:
        for k in POWERS:
            expr = f"cart({f}^{k})"
            x = bulk_point(expr)
            truth = None
            if f == "K(2)" and k <= 100_000:
                truth = binomial_truth(k, x)
            results = {}
            for method in ("exact", "bracket", "law"):
                if method == "exact" and not (f == "K(2)" or k <= 1000 and f == "C(5)"
                                              or k <= 10):
                    results[method] = (None, 0.0, "skipped (too large)")
                    continue
                results[method] = run(expr, x, method)
                if method == "exact" and results[method][0] is not None and truth is None:
                    truth = results[method][0].estimate
            for method, (a, dt, note) in results.items():
                if a is None:
                    print(f"{f:<12} {k:>8} {method:<8} {dt:>8.3f} {'-':>10} {'-':>10}  {note}")
                    continue
                width = a.upper - a.lower
                err = f"{abs(a.estimate - truth):.2e}" if truth is not None else "-"
                print(f"{f:<12} {k:>8} {method:<8} {dt:>8.3f} {width:>10.2e} {err:>10}")
            n = ps.parse(f).order
            if n**k <= EXPLICIT_MAX:
                from tests.reference import fold  # independent explicit builder
                t = time.perf_counter()
                a = ps.parse(f).factor.adjacency.toarray()
                eig = np.linalg.eigvalsh(fold([a] * k, 1.0, 0.0))
                frac = float(np.mean(eig <= x))
                dt = time.perf_counter() - t
                err = f"{abs(frac - truth):.2e}" if truth is not None else "-"
                print(f"{f:<12} {k:>8} {'numpy':<8} {dt:>8.3f} {'0':>10} {err:>10}  explicit eigvalsh")
            else:
                print(f"{f:<12} {k:>8} {'numpy':<8} {'-':>8} {'-':>10} {'-':>10}  "
                      f"explicit product has {n}^{k} vertices: not built")


if __name__ == "__main__":
    main()
