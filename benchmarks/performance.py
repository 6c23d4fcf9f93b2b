"""Every row of the performance table, both sides timed alike (python benchmarks/performance.py).

Timing rules: the median of REPEATS runs on both sides of every ratio; "in-process" times a call
with time.perf_counter after one warm-up call; "process" times a fresh interpreter with
subprocess.run (start-up included).  Peak memory is the child's ru_maxrss.  Rows:

1. law-tier quantiles (direct(K(3)^k), strong(P(3)^k)) at k = 10^9 ... 10^18: time, peak memory
   and growth with k; the CLI against a bare ``python -c "import numpy, scipy.special, mpmath"``;
2. cdf / count / quantile from the CLI against the same bare start-up (the two alternating run by
   run), the bracket-tier queries also with a bytecode cache (this machine sets
   PYTHONDONTWRITEBYTECODE=1); ``auto`` against every tier that meets the default width (ratio
   of auto's time to the cheapest meeting one);
3. the bracket tier, cart(C(5)^k), tol 1e-3, k = 10^2 ... 10^4;
4. top 'direct(P(4)^1000000)' -m 5 and 5. invariants 'direct(motif()^1000000)', process memory;
6. the exact spectrum of cart(K(2)^k) against python-flint's (1 + x)^k (the binomial row: the
   multiplicities alone, the physical limit) and, where it can run, against an explicit build
   (scipy.sparse.kron in CSR with explicit zeros eliminated, then numpy eigvalsh);
7. / 8. the share of text output in the Q_10^5 run, the JSON output of Q_30000 against its text,
   and decimal conversion of large ints (str, python-flint, gmpy2) -- plus the measured gain of
   the formatting change proposed for answers/answer.py (a prototype defined here, not used by
   the package).

Dependencies beyond the package's own: none (gmpy2 is only measured, when installed).
"""

from __future__ import annotations

import math
import os
import statistics
import subprocess
import sys
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))  # run from a checkout

import timing  # noqa: E402  (benchmarks/timing.py, beside this script)

import powerspec as ps  # noqa: E402
from powerspec.queries.distribution import cdf, quantile  # noqa: E402

REPEATS = 5
PY = sys.executable
BARE = [PY, "-c", "import numpy, scipy.special, mpmath"]


def median_time(fn, repeats: int = REPEATS, warm: bool = True) -> float:
    """The shared timing (benchmarks/timing.py), warmed up by default in this script."""
    return timing.median_time(fn, repeats, warm)


def proc(args: list[str], repeats: int = REPEATS, env: dict | None = None) -> tuple[float, float]:
    """(median wall seconds, largest peak RSS in MiB) of a fresh interpreter running ``args``."""
    ts, rss = [], 0.0
    for _ in range(repeats):
        t, m = _one_proc(args, env)
        ts.append(t)
        rss = max(rss, m)
    return statistics.median(ts), rss


def _one_proc(args: list[str], env: dict | None = None) -> tuple[float, float]:
    """(wall seconds, peak RSS in MiB) of one fresh interpreter running ``args``."""
    code = ("import resource, subprocess, sys, time; t = time.perf_counter(); "
            f"subprocess.run({args!r}, check=True, capture_output=True); "
            "print(time.perf_counter() - t, "
            "resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss)")
    out = subprocess.run([PY, "-c", code], check=True, capture_output=True, text=True, env=env)
    t, m = out.stdout.split()
    return float(t), int(m) / 1024


def paired(args: list[str], repeats: int = REPEATS, env: dict | None = None):
    """(median command seconds, median bare seconds, peak MiB): the two alternate run by run.

    On a shared machine the load drifts; alternating the command with the bare start-up keeps
    both sides of the ratio under the same load.
    """
    tc, tb, rss = [], [], 0.0
    for _ in range(repeats):
        t, m = _one_proc(args, env)
        tc.append(t)
        rss = max(rss, m)
        tb.append(_one_proc(BARE, env)[0])
    return statistics.median(tc), statistics.median(tb), rss


def bytecode_env() -> dict:
    """The environment with Python's bytecode cache on, in a private directory (warm it first).

    This machine sets PYTHONDONTWRITEBYTECODE=1, so every start compiles the package's sources
    again; an installed package has its bytecode compiled once.  Both sides of a ratio are
    measured in the same environment.
    """
    import tempfile
    env = dict(os.environ)
    env.pop("PYTHONDONTWRITEBYTECODE", None)
    env["PYTHONPYCACHEPREFIX"] = tempfile.mkdtemp(prefix="powerspec-bench-pyc-")
    return env


def cli(*args: str) -> list[str]:
    return [PY, "-m", "powerspec", *args]


def fmt(t: float) -> str:
    return "-" if t != t else (f"{t * 1e3:.1f} ms" if t < 1 else f"{t:.2f} s")


def row(*cols, widths=(44, 12, 12, 12, 22)):
    print("  " + "  ".join(str(c).ljust(w) if i == 0 else str(c).rjust(w)
                           for i, (c, w) in enumerate(zip(cols, widths, strict=False))))


# ------------------------------------------------------------------ 1. law tier
def law_tier(bare: float) -> None:
    print("\n1. law-tier quantile (in-process median of 5; memory: peak RSS of a fresh process)")
    row("expression, level", "in-process", "peak MiB", "target", "")
    for base in ("direct(K(3)^{k})", "strong(P(3)^{k})"):
        growth = []
        for k in (10**9, 10**12, 10**18):
            e = base.format(k=k)
            for lv in (0.3, 0.5):
                t = median_time(lambda e=e, lv=lv: quantile(e, lv, method="law"))
                if lv == 0.3:
                    growth.append(t)
                code = ("import resource; from powerspec.queries.distribution import quantile; "
                        f"quantile({e!r}, {lv}, method='law'); "
                        "print(resource.getrusage(resource.RUSAGE_SELF).ru_maxrss)")
                out = subprocess.run([PY, "-c", code], capture_output=True, text=True, cwd=ROOT)
                mem = int(out.stdout.split()[-1]) / 1024 if out.returncode == 0 else float("nan")
                row(f"{e} q={lv}", fmt(t), f"{mem:.0f}", "< 50 ms" if k == 10**9 else "")
        print(f"    growth {base.format(k='k')}, q=0.3: k = 10^9 -> 10^18 x{growth[-1] / growth[0]:.2f}")
    for e in ("direct(K(3)^1000000000)", "strong(P(3)^1000000000)"):
        t, _ = proc(cli("quantile", e, "0.5"))
        row(f"CLI quantile {e} 0.5", fmt(t), "", f"{t / bare:.2f}x bare", "target <= 2.5x")


# ------------------------------------------------------- 2. CLI start-up and auto
def startup_and_auto(bare: float) -> None:
    print(f"\n2. CLI against bare start-up ({fmt(bare)}: python -c 'import numpy, scipy.special, "
          "mpmath'; median of 5 process wall times, command and bare start-up alternating)")
    cached = bytecode_env()
    for args in (("cdf", "cart(C(5)^1000000)", "10"), ("count", "cart(C(5)^1000000)", "0", "10"),
                 ("cdf", "cart(C(5)^100)", "0", "--tol", "0.01")):
        t, tb, mem = paired(cli(*args))
        row("powerspec " + " ".join(args), fmt(t), f"{mem:.0f} MiB", f"{t / tb:.2f}x",
            "target <= 2.5x")
    # the bracket-tier queries, also with a bytecode cache (see bytecode_env)
    _one_proc(cli("quantile", "cart(C(5)^1000)", "0.3"), cached)  # fills the cache
    row("bracket tier", "time", "peak", "ratio", "bytecode cached: ratio")
    for args in (("quantile", "cart(C(5)^1000)", "0.3"), ("cdf", "cart(C(5)^1000)", "1.0"),
                 ("count", "cart(C(5)^1000)", "0.5", "2.5"), ("cdf", "cart(C(7)^200)", "1.0"),
                 ("quantile", "cart(C(7)^200)", "0.3")):
        t, tb, mem = paired(cli(*args))
        tc, tbc, _ = paired(cli(*args), env=cached)
        row("powerspec " + " ".join(args), fmt(t), f"{mem:.0f} MiB", f"{t / tb:.2f}x",
            f"{fmt(tc)} {tc / tbc:.2f}x (target <= 2.5x)")
    # an endpoint on an atom (0 = 2*200 + 400*(0.618...) + 400*(-1.618...)): only an exact count
    # meets the width -- the window tier (402 of 501501 compositions certified; the full
    # spectrum took 2.0-2.9 s); then counts near the ends of the spectrum (the ends tier)
    for args in (("count", "cart(C(5)^1000)", "0", "2"),
                 ("count", "cart(C(5)^1000)", "1995.5", "2000"),
                 ("count", "cart(C(5)^1000000)", "0", "2", "--matrix", "laplacian", "--method",
                  "exact")):
        t, tb, mem = paired(cli(*args), 3)
        row("powerspec " + " ".join(args), fmt(t), f"{mem:.0f} MiB", f"{t / tb:.2f}x",
            "target <= 2.5x (exact count)")
    t_in = median_time(lambda: quantile("cart(C(5)^1000)", 0.3))
    t_imp, t_bare, _ = paired([PY, "-c", "import powerspec.interfaces.cli"])
    t_impc, t_barec, _ = paired([PY, "-c", "import powerspec.interfaces.cli"], env=cached)
    print(f"    quantile 'cart(C(5)^1000)' 0.3 in-process: {fmt(t_in)}; import of the command line "
          f"over the bare start-up: {fmt(t_imp - t_bare)} ({fmt(t_impc - t_barec)} with bytecode)")
    row("import powerspec.interfaces.cli", fmt(t_imp), "", f"{t_imp / t_bare:.2f}x",
        f"{fmt(t_impc)} {t_impc / t_barec:.2f}x with bytecode")
    out = subprocess.run([PY, "-X", "importtime", "-c", "import powerspec.interfaces.cli"],
                         capture_output=True, text=True).stderr
    rows = []
    for line in out.splitlines():
        parts = line[len("import time:"):].split("|") if line.startswith("import time:") else []
        if len(parts) == 3 and parts[1].strip().isdigit():
            rows.append((int(parts[1]), int(parts[0]), parts[2].strip()))
    print("    heaviest imports of the CLI (cumulative ms, self ms):")
    for cum, own, name in sorted(rows, reverse=True)[:10]:
        print(f"      {cum / 1e3:8.1f} {own / 1e3:8.1f}  {name}")
    print("\n   auto against every tier meeting the default width 1e-3 (in-process, median of 3)")
    row("query", "auto", "cheapest", "auto/cheap", "auto picked")
    for fn, e, pt in ((quantile, "cart(C(5)^1000)", (0.3,)), (quantile, "cart(C(5)^300)", (0.3,)),
                      (cdf, "cart(C(7)^200)", (1.0,)), (cdf, "cart(K(2)^10000)", (0.0,)),
                      (quantile, "strong(P(3)^300)", (0.3,)), (cdf, "cart(C(5)^30)", (1.0,))):
        times = {}
        for m in ("exact", "bracket", "law"):
            try:
                fn(e, *pt, method=m)
            except ps.PowerspecError:
                continue
            w = 0.0 if m == "exact" else _cdf_width(fn, e, pt, m)
            if w <= 1e-3:
                times[m] = median_time(lambda m=m, fn=fn, e=e, pt=pt: fn(e, *pt, method=m), 3,
                                       warm=False)
        ta = median_time(lambda fn=fn, e=e, pt=pt: fn(e, *pt), 3, warm=False)
        picked = fn(e, *pt).method.split(":")[0]
        cheap = min(times.values()) if times else float("nan")
        row(f"{fn.__name__} {e} {pt[0]}", fmt(ta), fmt(cheap), f"{ta / cheap:.1f}x", picked)


def _cdf_width(fn, e, pt, m) -> float:
    if fn is cdf:
        a = cdf(e, *pt, method=m)
        return float(a.upper) - float(a.lower)
    x = float(quantile(e, *pt, method=m).estimate)
    a = cdf(e, x, method=m)
    return float(a.upper) - float(a.lower)


# --------------------------------------------------------------------- 3. bracket
def bracket_tier() -> None:
    print("\n3. bracket tier, cart(C(5)^k) non-lattice, cdf at 1, tol 1e-3 (in-process, median of 3)")
    row("k", "time", "width", "", "target: 10^4 within 60 s")
    for k in (100, 1000, 10**4):
        e = f"cart(C(5)^{k})"
        a = cdf(e, 1.0, method="bracket", tol=1e-3)
        t = median_time(lambda e=e: cdf(e, 1.0, method="bracket", tol=1e-3), 3, warm=False)
        row(k, fmt(t), f"{a.upper - a.lower:.2e}")


# ------------------------------------------------------------ 4. / 5. top, invariants
def extremes() -> None:
    print("\n4./5. process wall time and peak memory (median of 3; target < 1 s in-process, < 400 MiB)")
    from powerspec.queries.invariants import invariants
    from powerspec.queries.planner import top
    t1 = median_time(lambda: top("direct(P(4)^1000000)", 5), 3)
    t2 = median_time(lambda: invariants("direct(motif()^1000000)"), 3)
    for label, args, t in (("top 'direct(P(4)^1000000)' -m 5", ("top", "direct(P(4)^1000000)", "-m",
                                                                 "5"), t1),
                           ("invariants 'direct(motif()^1000000)'",
                            ("invariants", "direct(motif()^1000000)"), t2)):
        tp, mem = proc(cli(*args), 3)
        row(label, f"{fmt(t)} in", f"{fmt(tp)} proc", f"{mem:.0f} MiB")


# ------------------------------------------------------------------ 6. Q_k exact
def hypercube() -> None:
    import scipy.sparse as sp
    from flint import fmpz_poly
    print("\n6. exact spectrum of cart(K(2)^k) against python-flint (1 + x)^k (in-process, median of "
          "201 up to k = 1000, of 5 beyond)")
    row("k", "powerspec", "flint row", "ratio", "target <= 1.5x (k >= 10^3)")
    prev = None
    for k in (10, 100, 1000, 10**4, 10**5):
        e = f"cart(K(2)^{k})"
        # sub-millisecond calls: many repeats, so that the median is not one scheduling hiccup
        r = 201 if k <= 1000 else REPEATS if k < 10**5 else 3
        t = median_time(lambda e=e: ps.spectrum(e), r)
        f = median_time(lambda k=k: fmpz_poly([1, 1]) ** k, r)
        grow = f"  x{t / prev:.1f} per 10x k" if prev else ""
        prev = t
        row(k, fmt(t), fmt(f), f"{t / f:.1f}x", grow)
    # the explicit baseline in CSR: kron sums with explicit zeros eliminated, then eigvalsh
    a = sp.csr_array(np.array([[0.0, 1.0], [1.0, 0.0]]))

    def explicit(k):
        m = a
        for _ in range(k - 1):
            i1 = sp.identity(m.shape[0], format="csr")
            m = (sp.kron(m, sp.identity(2, format="csr"), format="csr")
                 + sp.kron(i1, a, format="csr")).tocsr()
            m.eliminate_zeros()
        return np.linalg.eigvalsh(m.toarray())

    for k in (8, 10, 12):
        te = median_time(lambda k=k: explicit(k), 3)
        tp = median_time(lambda k=k: ps.spectrum(f"cart(K(2)^{k})"), 3)
        row(f"k={k} explicit CSR + eigvalsh", fmt(tp), fmt(te), f"{te / tp:.0f}x faster", "")


# ------------------------------------------------------------- 7. / 8. output
def output() -> None:
    from powerspec.answers.answer import count_text, count_texts, dump_json
    from powerspec.interfaces.report import answer_text, truncated_json
    from powerspec.queries import planner
    print("\n7./8. output formatting of the hypercube's exact spectrum (in-process, median of 3)")
    row("run", "compute", "output", "share", "target")
    for k in (30000, 100000):
        e = f"cart(K(2)^{k})"
        tc = median_time(lambda e=e: planner.spectrum(e), 3)
        ans = planner.spectrum(e)
        td = median_time(lambda a=ans: answer_text(a), 3)
        ta = median_time(lambda a=ans: answer_text(a, full=True), 3)
        row(f"Q_{k} text (summary rows)", fmt(tc), fmt(td), f"{td / (tc + td):.0%}", "<= 20%")
        row(f"Q_{k} text --all ({k + 1} rows)", fmt(tc), fmt(ta), f"{ta / (tc + ta):.0%}",
            "<= 20%")
        mults = [int(m) for m in ans.atoms.mult.tolist()]
        t1 = median_time(lambda ms=mults: [count_text(m) for m in ms], 3)
        tb = median_time(lambda ms=mults: count_texts(ms), 3)
        row("  leading digits: per count / batch", fmt(t1), fmt(tb), f"{t1 / tb:.1f}x faster", "")
        if k == 30000:
            tj = median_time(lambda a=ans: dump_json(truncated_json(a, None), end="\n"), 3)
            size = len(dump_json(truncated_json(ans, None))) / 1e6
            row(f"Q_{k} JSON ({size:.0f} MB of exact digits)", fmt(tc), fmt(tj),
                f"{tj / ta:.1f}x the --all text", "")
    print("   the same from the command line (process to process, median of 3; output to a pipe)")
    row("command", "wall", "peak MiB", "ratio", "target")
    e = "cart(K(2)^30000)"
    base, _ = proc(cli("spectrum", e), 3)
    row("spectrum Q_30000 (text, summary)", fmt(base), "", "1.0x", "")
    for extra in (["--all"], ["--json"]):
        t, m = proc(cli("spectrum", e, *extra), 3)
        row(f"spectrum Q_30000 {extra[0]}", fmt(t), f"{m:.0f}", f"{t / base:.1f}x the text",
            "<= 2x (--json)" if extra == ["--json"] else "")
    import flint
    sys.set_int_max_str_digits(0)
    try:
        import gmpy2
    except ImportError:
        gmpy2 = None
    print("   int -> decimal (median of 5 per int)")
    row("bits", "str(int)", "flint", "gmpy2", "")
    for bits in (10**4, 10**5, 10**6):
        n = 3 ** int(bits / math.log2(3))
        ts = [median_time(lambda n=n: str(n)), median_time(lambda n=n: str(flint.fmpz(n)))]
        ts.append(median_time(lambda n=n: gmpy2.mpz(n).digits()) if gmpy2 else float("nan"))
        row(bits, *(fmt(t) for t in ts))


SECTIONS = {"1": "law_tier", "2": "startup_and_auto", "3": "bracket_tier", "4": "extremes",
            "6": "hypercube", "7": "output"}
"""Section numbers to functions: ``python benchmarks/performance.py 2 6`` runs only those."""


def main(argv: list[str] | None = None) -> None:
    wanted = argv if argv else list(SECTIONS)
    unknown = [w for w in wanted if w not in SECTIONS]
    if unknown:
        raise SystemExit(f"unknown section(s) {', '.join(unknown)}; choose from {', '.join(SECTIONS)}")
    print(f"python {sys.version.split()[0]}, numpy {np.__version__}; {os.cpu_count()} cores; "
          f"load average {os.getloadavg()[0]:.2f}")
    bare = proc(BARE)[0] if {"1", "2"} & set(wanted) else float("nan")
    for w in wanted:
        fn = globals()[SECTIONS[w]]
        fn(bare) if w in ("1", "2") else fn()
    print(f"load average at the end {os.getloadavg()[0]:.2f}")


if __name__ == "__main__":
    main(sys.argv[1:])
