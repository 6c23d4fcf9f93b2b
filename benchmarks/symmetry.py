"""Benchmark: reach of the symmetry tier, and the sorted-degree heuristic measured against it.

Run:  python benchmarks/symmetry.py [--workers N] [--quick] [--long] [--ends-only]

(a) Reach: the certified Laplacian spectrum of direct powers G^k of small irregular
    factors (paths, stars, weighted graphs), with and without the exact split of a
    factor by an involutive automorphism -- vertices n^k, blocks, largest block,
    wall time, CPU time (this process and its workers), peak memory (tracemalloc in
    this process; ru_maxrss of the worker processes so far), the largest radius
    relative to the spectral radius, and, where the
    explicit product fits (n^k <= 4096), the time of building it with scipy.sparse
    (CSR Kronecker products) plus numpy eigvalsh, timed the same way in the same run,
    with the agreement of both spectra.
(b) The sorted-degree approximation (pair the i-th smallest Laplacian eigenvalue with
    the i-th smallest degree) against the exact multiset: max and mean absolute error
    for direct and strong powers as k grows.
(c) Reach of the ends only (``laplacian_ends``: λ_max(L) or the second smallest a(L)):
    per product, the blocks in the plan and those built, the full certified spectrum's
    time (``laplacian_blocks``, its dense budget) against the ends with dense blocks only
    and with the Cholesky route for large blocks, the certified interval, and the largest
    k answered within 30 s.  (For direct powers of bipartite factors a(L) = 0 follows from
    the component count, so the a(L) rows are strong powers.)  Medians of 3 runs, one run
    for rows over 10 s.

Set OPENBLAS_NUM_THREADS=1 for a fair single-threaded explicit baseline on a shared
machine; the symmetry tier's pool workers always use one BLAS thread each.
"""

from __future__ import annotations

import argparse
import resource
import sys
import time
import tracemalloc
from pathlib import Path

import numpy as np
import scipy.sparse as sp

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

import timing  # noqa: E402  (benchmarks/timing.py, beside this script)

from powerspec.algebra.grammar import parse  # noqa: E402
from powerspec.tiers.invariant_blocks import laplacian_blocks, laplacian_ends  # noqa: E402
from powerspec.tiers.symmetry import PowerOperand, SymmetryError, blocks, plan  # noqa: E402
from powerspec.tiers.symmetry.heuristic import compare_sorted, sorted_degree_laplacian  # noqa: E402


def path(n: int) -> np.ndarray:
    a = np.zeros((n, n))
    for i in range(n - 1):
        a[i, i + 1] = a[i + 1, i] = 1.0
    return a


def star(leaves: int) -> np.ndarray:
    a = np.zeros((leaves + 1, leaves + 1))
    a[0, 1:] = a[1:, 0] = 1.0
    return a


def weighted(n: int, seed: int) -> np.ndarray:
    """A connected irregular weighted graph (weighted path plus random chords), fixed seed."""
    rng = np.random.default_rng(seed)
    a = np.zeros((n, n))
    for i in range(n - 1):
        a[i, i + 1] = rng.uniform(0.5, 2.0)
    chords = np.triu(rng.uniform(0.2, 1.5, (n, n)) * (rng.random((n, n)) < 0.4), 2)
    a = a + chords
    return a + a.T


def explicit_laplacian(adj: np.ndarray, k: int) -> np.ndarray:
    """D^(x)k - A^(x)k built with scipy.sparse CSR Kronecker products, then densified."""
    a = sp.csr_array(adj)
    d = sp.csr_array(np.diag(adj.sum(axis=1)))
    big_a, big_d = a, d
    for _ in range(k - 1):
        big_a = sp.kron(big_a, a, format="csr")
        big_d = sp.kron(big_d, d, format="csr")
    return (big_d - big_a).toarray()


def mib(nbytes: float) -> str:
    return f"{nbytes / 2**20:8.1f}"


def _cpu() -> float:
    own = resource.getrusage(resource.RUSAGE_SELF)
    kids = resource.getrusage(resource.RUSAGE_CHILDREN)
    return own.ru_utime + own.ru_stime + kids.ru_utime + kids.ru_stime


def reach_row(name: str, adj: np.ndarray, k: int, workers: int, split: bool) -> None:
    op = PowerOperand(adj, adj.sum(axis=1), k)
    p = plan([op], 0, 1, "laplacian", automorphisms=split)
    tracemalloc.start()
    t0, c0 = time.perf_counter(), _cpu()
    values, radii, mults = [], [], []
    for blk in blocks([op], 0, 1, "laplacian", workers=workers, automorphisms=split):
        values.append(blk.values)
        radii.append(blk.radius)
        mults.append(blk.multiplicity)
    elapsed, cpu = time.perf_counter() - t0, _cpu() - c0
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    total = sum(m * v.size for m, v in zip(mults, values, strict=True))
    assert total == p.order, "multiplicities do not add up to n^k"
    scale = max(float(np.max(np.abs(v))) for v in values)
    rel = max(float(np.max(r)) for r in radii) / scale
    child = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss * 1024
    line = (f"{name:>6} {adj.shape[0]:>2} {k:>3} {'yes' if split else 'no':>5} {p.order:>22.4g} "
            f"{p.blocks:>6} {p.largest:>6} {elapsed:8.2f} {cpu:8.2f} {mib(peak)} {mib(child)} "
            f"{rel:9.1e}")
    if p.order <= 4096:
        t1 = time.perf_counter()
        ref = np.linalg.eigvalsh(explicit_laplacian(adj, k))
        t_exp = time.perf_counter() - t1
        mine = np.sort(np.concatenate([np.repeat(v, m) for v, m in zip(values, mults, strict=True)]))
        agree = float(np.max(np.abs(mine - ref)))
        line += f" {t_exp:9.2f} {t_exp / elapsed:7.2f} {agree:9.1e}"
    else:
        line += f" {'-':>9} {'-':>7} {'-':>9}"
    print(line, flush=True)


def reach_table(workers: int, quick: bool, long: bool) -> None:
    print("(a) reach: Laplacian of the direct power G^k, certified, "
          f"{workers} worker(s); explicit = scipy.sparse CSR kron + numpy eigvalsh")
    print(f"{'factor':>6} {'n':>2} {'k':>3} {'split':>5} {'vertices n^k':>22} {'blocks':>6} "
          f"{'max d':>6} "
          f"{'wall s':>8} {'cpu s':>8} {'peak MiB':>8} {'wkr MiB':>8} {'rad/rho':>9} {'explicit':>9} "
          f"{'ratio':>7} {'|diff|':>9}")
    p3, k13, w5, w9 = path(3), star(3), weighted(5, 1), weighted(9, 2)
    rows = [("P3", p3, 7, False), ("P3", p3, 7, True), ("P3", p3, 20, False), ("P3", p3, 30, True),
            ("K1,3", k13, 6, False), ("K1,3", k13, 6, True), ("K1,3", k13, 9, False),
            ("K1,3", k13, 13, True), ("W5", w5, 5, True), ("W9", w9, 3, True)]
    if not quick:
        rows += [("P3", p3, 25, False), ("P3", p3, 29, False), ("P3", p3, 30, False),
                 ("P3", p3, 60, True), ("P3", p3, 100, True), ("K1,3", k13, 11, False),
                 ("K1,3", k13, 13, False),
                 ("K1,3", k13, 20, True), ("W5", w5, 8, True), ("W9", w9, 4, True)]
    if long:
        rows += [("P3", p3, 35, False), ("K1,3", k13, 14, False), ("W9", w9, 5, True)]
    for name, adj, k, split in rows:
        reach_row(name, adj, k, workers, split)


def heuristic_table(workers: int, quick: bool) -> None:
    print()
    print("(b) the sorted-degree approximation against the exact (certified) Laplacian spectrum")
    print(f"{'factor':>10} {'product':>8} {'k':>3} {'max |err|':>11} {'mean |err|':>11} "
          f"{'max/rho':>9} {'exact rho':>12}")
    graphs = [("P3", path(3)), ("P4", path(4)), ("K1,3", star(3)), ("K1,4", star(4)),
              ("W4", weighted(4, 3)), ("W5", weighted(5, 1))]
    ks = (1, 2, 3, 4, 6) if quick else (1, 2, 3, 4, 6, 8)
    for name, adj in graphs:
        for prod, (a, b) in (("direct", (0, 1)), ("strong", (1, 1))):
            for k in ks:
                op = PowerOperand(adj, adj.sum(axis=1), k)
                if plan([op], a, b, "laplacian").work > 3e10:
                    continue
                exact = [(float(v), blk.multiplicity)
                         for blk in blocks([op], a, b, "laplacian", workers=workers) for v in blk.values]
                worst, mean = compare_sorted(sorted_degree_laplacian([op], a, b), exact)
                rho = max(abs(v) for v, _ in exact)
                print(f"{name:>10} {prod:>8} {k:>3} {worst:11.4g} {mean:11.4g} {worst / rho:9.3g} "
                      f"{rho:12.6g}", flush=True)


def _timed(fn) -> tuple[object, float]:
    """(result or the refusal text, median seconds): one run for calls over 10 s, else 3."""
    t0 = time.perf_counter()
    try:
        out = fn()
    except SymmetryError as exc:
        return str(exc), time.perf_counter() - t0
    first = time.perf_counter() - t0
    return out, (first if first > 10 else timing.median_time(fn, repeats=3))


def ends_row(template: str, k: int, top: bool) -> float | None:
    """Print one row of table (c); return the ends time when certified, else None."""
    node = parse(template % k)

    def full():
        bs = laplacian_blocks(node)
        return bs.largest_bounds() if top else bs.kth_smallest(2)

    got_full, t_full = _timed(full)
    got, t_ends = _timed(lambda: laplacian_ends(node, top=top, bottom=not top))
    if isinstance(got, str):
        print(f"{template % k:>22} {'max' if top else 'a(L)':>5}  ends refused: {got}", flush=True)
        return None
    pair = got.largest if top else got.second
    t_dense = "-"
    if got.large and got.largest_dim <= 2600:  # '-': not run (a dense solve of a larger block)
        dense, t = _timed(lambda: laplacian_ends(node, top=top, bottom=not top, large_from=10**9))
        t_dense = "refused" if isinstance(dense, str) else f"{t:.2f}"
    elif not got.large:
        t_dense = f"{t_ends:.2f}"
    full_text = "refused" if isinstance(got_full, str) else f"{t_full:.2f}"
    print(f"{template % k:>22} {'max' if top else 'a(L)':>5} {float(node.order):>9.3g} {got.blocks:>6} "
          f"{got.computed:>5} {got.largest_dim:>5} {got.large:>5} {full_text:>8} {t_dense:>8} "
          f"{t_ends:>8.2f}  [{pair[0]:.12g}, {pair[1]:.12g}]", flush=True)
    return t_ends if pair[0] > 0 else None


def ends_table(quick: bool, long: bool) -> None:
    print()
    print("(c) ends only: lambda_max(L) ('max') or the 2nd smallest eigenvalue ('a(L)'); times in s: "
          "'full' = whole certified spectrum (dense budget), 'dense' = ends with dense blocks only, "
          "'ends' = ends with the Cholesky route from d = 320")
    print(f"{'product':>22} {'end':>5} {'vertices':>9} {'blocks':>6} {'built':>5} {'max d':>5} "
          f"{'chol':>5} {'full':>8} {'dense':>8} {'ends':>8}  certified interval")
    families = [("direct(P(3)^%d)", True, [100, 101, 102, 200] + ([] if quick else [300, 398])),
                ("direct(K(1, 3)^%d)", True, [15, 16, 30] + ([] if quick else [50, 70, 80, 86])),
                ("strong(K(1, 3)^%d)", False, [14, 16, 20] + ([] if quick else [24, 26])),
                ("strong(P(3)^%d)", False, [30, 60] + ([] if quick else [64, 70, 104]))]
    for template, top, ks in families:
        best = None
        for k in ks:
            t = ends_row(template, k, top)
            if t is not None and t <= 30:
                best = k
        print(f"{'':>22} reach within 30 s on these rows: k = {best}", flush=True)


def main(argv: list[str] | None = None) -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--workers", type=int, default=2)
    parser.add_argument("--quick", action="store_true", help="small rows only (about a minute)")
    parser.add_argument("--long", action="store_true", help="add the largest rows (P3 at k = 35, ...)")
    parser.add_argument("--ends-only", action="store_true", help="only table (c)")
    args = parser.parse_args(argv)
    if not args.ends_only:
        reach_table(args.workers, args.quick, args.long)
        heuristic_table(args.workers, args.quick)
    ends_table(args.quick, args.long)


if __name__ == "__main__":
    main()
