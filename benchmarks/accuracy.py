"""Accuracy and cost of the distribution tiers (plain script: python benchmarks/accuracy.py).

For a few factors and powers k it evaluates cdf at a point in the bulk (mean
+ 0.5 sd of the exact limit law) with each tier and prints the median time of
REPEATS runs, the certified bound width and -- where the truth is known (the
exact tier, or the hypercube's binomial sums) -- the actual error of the
estimate, next to the explicit baseline (numpy eigvalsh on the built
product, timed the same way) where that can run.
"""

from __future__ import annotations

import math
import statistics
import sys
import time
from fractions import Fraction
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))  # run from a checkout

import powerspec as ps  # noqa: E402
from powerspec.queries.distribution import _Query, cdf  # noqa: E402

FACTORS = ["K(2)", "C(5)", "motif()"]
POWERS = [3, 10, 100, 1000, 10**4, 10**6]
EXPLICIT_MAX = 4096  # vertices of the largest product built for the numpy baseline
REPEATS = 5


def bulk_point(expr: str) -> float:
    q = _Query(expr, "adjacency", "law", None, None, "out")
    law = q.law().law
    return law.mu + 0.5 * law.sd


def binomial_truth(k: int, x: float) -> float:
    # hypercube: eigenvalue k - 2j with multiplicity C(k, j); row by C(k, j+1) = C(k, j)(k-j)/(j+1)
    j0 = max(0, math.ceil((k - x) / 2))  # smallest j with k - 2j <= x
    tot, c = 0, 1
    for j in range(k + 1):
        if j >= j0:
            tot += c
        c = c * (k - j) // (j + 1)
    return float(Fraction(tot, 2**k))


def timed(fn):
    """(result or exception, median seconds of REPEATS runs)."""
    ts, res = [], None
    for _ in range(REPEATS):
        t = time.perf_counter()
        try:
            res = fn()
        except ps.PowerspecError as exc:
            return exc, time.perf_counter() - t
        ts.append(time.perf_counter() - t)
    return res, statistics.median(ts)


def main() -> None:
    head = f"{'factor':<10} {'k':>8} {'tier':<8} {'median s':>9} {'width':>10} {'error':>10}  note"
    print(head)
    print("-" * len(head))
    for f in FACTORS:
        for k in POWERS:
            expr = f"cart({f}^{k})"
            x = bulk_point(expr)
            truth = binomial_truth(k, x) if f == "K(2)" and k <= 10**4 else None
            results = {}
            for method in ("exact", "bracket", "law"):
                if method == "exact" and not (f == "K(2)" and k <= 10**4 or f == "C(5)" and k <= 300
                                              or k <= 10):
                    results[method] = (None, 0.0, "skipped (too large)")
                    continue
                if method == "bracket" and k > 10**4:
                    results[method] = (None, 0.0, "skipped (grid beyond the limit at tol 1e-3)")
                    continue
                res, dt = timed(lambda m=method, e=expr, x=x: cdf(e, x, method=m, tol=1e-3))
                if isinstance(res, Exception):
                    results[method] = (None, dt, type(res).__name__)
                    continue
                results[method] = (res, dt, "")
                if method == "exact" and truth is None:
                    truth = float(res.estimate)
            for method, (a, dt, note) in results.items():
                if a is None:
                    print(f"{f:<10} {k:>8} {method:<8} {dt:>9.4f} {'-':>10} {'-':>10}  {note}")
                    continue
                width = float(a.upper) - float(a.lower)
                err = f"{abs(a.estimate - truth):.2e}" if truth is not None else "-"
                print(f"{f:<10} {k:>8} {method:<8} {dt:>9.4f} {width:>10.2e} {err:>10}")
            n = ps.parse(f).order
            if n**k <= EXPLICIT_MAX:
                from tests.reference import fold  # independent explicit builder
                a = ps.parse(f).factor.adjacency.toarray()
                res, dt = timed(lambda a=a, k=k, x=x: float(np.mean(
                    np.linalg.eigvalsh(fold([a] * k, 1.0, 0.0)) <= x)))
                err = f"{abs(res - truth):.2e}" if truth is not None else "-"
                print(f"{f:<10} {k:>8} {'numpy':<8} {dt:>9.4f} {'0':>10} {err:>10}  explicit eigvalsh "
                      f"(ratio to law {dt / results['law'][1]:.0f}x)")
            else:
                print(f"{f:<10} {k:>8} {'numpy':<8} {'-':>9} {'-':>10} {'-':>10}  "
                      f"explicit product has {n}^{k} vertices: not built")


if __name__ == "__main__":
    main()
