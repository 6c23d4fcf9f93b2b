"""The one way the benchmarks time a call: the median of ``repeats`` runs (perf_counter).

Shared by the benchmark scripts so both sides of every ratio are timed alike.
"""

from __future__ import annotations

import statistics
import time

REPEATS = 5


def median_time(fn, repeats: int = REPEATS, warm: bool = False) -> float:
    """Median wall time of ``fn()`` over ``repeats`` runs, after one untimed call if ``warm``."""
    if warm:
        fn()
    ts = []
    for _ in range(repeats):
        t = time.perf_counter()
        fn()
        ts.append(time.perf_counter() - t)
    return statistics.median(ts)
