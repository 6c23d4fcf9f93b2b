"""Speed of the distribution tiers against their baselines (python benchmarks/distribution.py).

Everything is timed the same way in one run: the median of REPEATS runs, both
sides in-process (time.perf_counter around the call) and process-to-process
(subprocess.run of a fresh interpreter, which includes start-up).  Ratios are
printed next to each row.

* **law-tier quantile** at k = 10^3, 10^6, 10^9: powerspec now versus the
  previous implementation (the package as of commit BASELINE_COMMIT,
  unpacked with ``git archive`` into a temporary directory and run in its own
  interpreter), and versus the normal approximation by hand with
  scipy.stats.norm.ppf (no bounds) for the Cartesian case;
* **bracket tier** at k = 10^2, 10^3, 10^4 (cart(C(5)^k), non-lattice, tol
  1e-3): the one-FFT bracket versus the previous binary-powering bracket, and
  versus numpy eigvalsh on the explicitly built product where that can run;
* **CLI start-up**: ``powerspec cdf`` versus a bare
  ``python -c "import numpy, scipy.special, mpmath"``, and the heaviest
  imports of ``python -X importtime -c "import powerspec.queries.distribution"``;
* **auto cost model**: estimated versus measured seconds of each tier.
"""

from __future__ import annotations

import os
import re
import subprocess
import sys
import tempfile
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))  # run from a checkout

from timing import median_time  # noqa: E402  (benchmarks/timing.py, beside this script)

from powerspec.queries.distribution import _Query, cdf, quantile  # noqa: E402

REPEATS = 5
BASELINE_COMMIT = "7ea1e90"
PY = sys.executable


def proc_time(args: list[str], cwd: str | None = None, env=None, repeats: int = REPEATS) -> float:
    """Median wall time of a fresh interpreter running ``args`` (failures raise)."""
    def run():
        subprocess.run(args, check=True, capture_output=True, cwd=cwd, env=env)
    return median_time(run, repeats)


def old_tree() -> str | None:
    """The previous implementation unpacked into a temporary directory (None if git fails)."""
    tmp = tempfile.mkdtemp(prefix="powerspec-old-")
    try:
        arch = subprocess.run(["git", "-C", str(ROOT), "archive", BASELINE_COMMIT, "powerspec"],
                              check=True, capture_output=True).stdout
        subprocess.run(["tar", "-x", "-C", tmp], input=arch, check=True)
    except (subprocess.CalledProcessError, FileNotFoundError):
        return None
    return tmp


CHILD = """
import statistics, sys, time
sys.path.insert(0, {path!r})
from powerspec.queries.distribution import {fn}
args = {args!r}
kw = {kw!r}
{fn}(*args, **kw)   # warm-up (imports, caches)
ts = []
for _ in range({rep}):
    t = time.perf_counter(); {fn}(*args, **kw); ts.append(time.perf_counter() - t)
print(statistics.median(ts))
"""


def in_child(path: str, fn: str, args, kw) -> float:
    """Median in-process seconds of ``fn(*args, **kw)`` of the package at ``path`` (own process)."""
    code = CHILD.format(path=path, fn=fn, args=tuple(args), kw=kw, rep=REPEATS)
    out = subprocess.run([PY, "-c", code], check=True, capture_output=True, text=True, timeout=3600)
    return float(out.stdout.strip().splitlines()[-1])


def row(*cols, widths=(30, 12, 12, 12, 10)):
    print("  ".join(str(c).ljust(w) if i == 0 else str(c).rjust(w)
                    for i, (c, w) in enumerate(zip(cols, widths, strict=False))))


def fmt(t: float) -> str:
    return "-" if t != t else (f"{t * 1000:.1f} ms" if t < 1 else f"{t:.2f} s")


def law_quantiles(old: str | None) -> None:
    print("\nlaw-tier quantile q = 0.3 (median of 5, in-process; 'old' = commit "
          f"{BASELINE_COMMIT} in its own interpreter)")
    row("expression", "now", "old", "old / now", "")
    growth = {}
    for base in ("direct(K(3)^{k})", "strong(P(3)^{k})", "cart(C(5)^{k})"):
        for k in (10**3, 10**6, 10**9):
            e = base.format(k=k)
            quantile(e, 0.3, method="law")  # warm-up
            now = median_time(lambda e=e: quantile(e, 0.3, method="law"))
            growth.setdefault(base, []).append(now)
            try:
                was = in_child(old, "quantile", (e, 0.3), {"method": "law"}) if old else float("nan")
            except (subprocess.SubprocessError, ValueError):
                was = float("nan")
            row(e, fmt(now), fmt(was), f"{was / now:.1f}x" if was == was else "-")
    for base, ts in growth.items():
        print(f"  growth {base.format(k='k')}: k=10^3 -> 10^9 x{ts[-1] / ts[0]:.2f}")
    # the Cartesian case against the normal approximation by hand (scipy.stats, no bounds)
    from scipy import stats
    eig = 2 * np.cos(2 * np.pi * np.arange(5) / 5)
    for k in (10**3, 10**6, 10**9):
        by_hand = median_time(lambda k=k: stats.norm(k * eig.mean(), np.sqrt(k * eig.var())).ppf(0.3))
        now = median_time(lambda k=k: quantile(f"cart(C(5)^{k})", 0.3, method="law"))
        row(f"cart(C(5)^{k}) vs norm.ppf", fmt(now), fmt(by_hand), f"{now / by_hand:.1f}x slower")


def cli_quantile(old: str | None) -> None:
    print("\nCLI, process to process (median of 5 wall times, includes start-up)")
    row("command", "now", "old", "old / now", "")
    for e in ("direct(K(3)^1000000000)", "strong(P(3)^1000000000)"):
        now = proc_time([PY, "-m", "powerspec", "quantile", e, "0.3", "--method", "law"])
        was = float("nan")
        if old:
            env = {**os.environ, "PYTHONPATH": old}
            try:
                was = proc_time([PY, "-m", "powerspec", "quantile", e, "0.3", "--method", "law"],
                                cwd=old, env=env)
            except subprocess.CalledProcessError:
                pass
        row(f"quantile {e}", fmt(now), fmt(was), f"{was / now:.1f}x" if was == was else "-")


def brackets(old: str | None) -> None:
    print("\nbracket tier, cart(C(5)^k) (non-lattice), cdf at x = 1, tol 1e-3 (median of 5, in-process)")
    row("k", "now", "old", "width now", "grid")
    growth = []
    for k in (10, 100, 1000, 10**4):
        e = f"cart(C(5)^{k})"
        a = cdf(e, 1.0, method="bracket", tol=1e-3)
        now = median_time(lambda e=e: cdf(e, 1.0, method="bracket", tol=1e-3))
        growth.append(now)
        try:
            kw = {"method": "bracket", "tol": 1e-3}
            was = in_child(old, "cdf", (e, 1.0), kw) if old else float("nan")
        except (subprocess.SubprocessError, ValueError):
            was = float("nan")  # refused by the previous implementation (grid over its limit)
        m = re.search(r"FFT of (\d+) points", a.method)
        row(k, fmt(now), fmt(was) if was == was else "refused", f"{a.upper - a.lower:.2e}",
            m.group(1) if m else "?")
    print(f"  growth k=100 -> 10^4: x{growth[-1] / growth[1]:.1f} (grid ~ sqrt(k))")
    # the explicit baseline where it can run: numpy eigvalsh on the built product
    import powerspec as ps
    from tests.reference import fold
    a5 = ps.C(5).adjacency.toarray()
    for k in (4, 5):
        t_np = median_time(lambda k=k: np.mean(np.linalg.eigvalsh(fold([a5] * k, 1.0, 0.0)) <= 1.0))
        t_ps = median_time(lambda k=k: cdf(f"cart(C(5)^{k})", 1.0, method="bracket", tol=1e-3))
        row(f"k={k} ({5**k} vertices)", fmt(t_ps), f"numpy {fmt(t_np)}", f"{t_np / t_ps:.1f}x", "")


def startup() -> None:
    print("\nstart-up, process to process (median of 5 wall times)")
    # With PYTHONDONTWRITEBYTECODE set (as in some sandboxes) every powerspec module is compiled
    # from source at each start; an installed package has byte code.  Both are measured: the
    # second run keeps byte code in a private cache directory (PYTHONPYCACHEPREFIX), never in
    # the checkout.
    cache = tempfile.mkdtemp(prefix="powerspec-pyc-")
    envs = {"as configured": dict(os.environ),
            "with byte code": {**{k: v for k, v in os.environ.items()
                                  if k != "PYTHONDONTWRITEBYTECODE"}, "PYTHONPYCACHEPREFIX": cache}}
    cmds = {"bare numpy+scipy.special+mpmath": [PY, "-c", "import numpy, scipy.special, mpmath"],
            "import powerspec.queries.distribution": [PY, "-c", "import powerspec.queries.distribution"],
            "powerspec cdf 'cart(C(5)^1000000)' 0": [PY, "-m", "powerspec", "cdf", "cart(C(5)^1000000)",
                                                      "0"],
            "powerspec quantile 'direct(K(3)^1e9)' 0.3": [PY, "-m", "powerspec", "quantile",
                                                           "direct(K(3)^1000000000)", "0.3"]}
    for label, env in envs.items():
        subprocess.run(cmds["powerspec cdf 'cart(C(5)^1000000)' 0"], env=env, capture_output=True)
        times = {name: proc_time(cmd, env=env) for name, cmd in cmds.items()}
        bare = times["bare numpy+scipy.special+mpmath"]
        print(f"  {label}:")
        for name, t in times.items():
            note = "  (target <= 2.5x)" if name.startswith("powerspec cdf") else ""
            row("    " + name, fmt(t), "", f"{t / bare:.2f}x{note}", widths=(44, 10, 2, 24))
    env = envs["with byte code"]
    out = subprocess.run([PY, "-X", "importtime", "-c", "import powerspec.queries.distribution"],
                         capture_output=True, text=True, env=env).stderr
    rows = []
    for line in out.splitlines():
        if not line.startswith("import time:") or "|" not in line:
            continue
        parts = line[len("import time:"):].split("|")
        try:
            rows.append((int(parts[1]), int(parts[0]), parts[2].rstrip()))
        except ValueError:
            continue  # the header line
    print("  heaviest imports (cumulative ms, self ms):")
    for cum_us, self_us, name in sorted(rows, reverse=True)[:14]:
        print(f"    {cum_us / 1000:8.1f} {self_us / 1000:8.1f}  {name.strip()}")


def _tier_runner(e: str, name: str):
    """(estimated seconds, a function building the tier and evaluating once) for one tier."""
    q = _Query(e, "adjacency", "auto", None, None, "out")
    q._flat()
    if name == "exact":
        if not q.eng.fits(q.node, "adjacency"):
            raise ValueError("over the limit")
        return q.exact_cost(1), lambda: q.x_eval(
            _Query(e, "adjacency", "exact", None, None, "out").exact(), np.array([1.0]))
    if name == "bracket":
        return q.bracket(1e-3, plan_only=True).cost(1), lambda: q.x_eval(q.bracket(1e-3),
                                                                          np.array([1.0]))
    return q.law().cost(1), lambda: q.x_eval(q.law(), np.array([1.0]))


def cost_model() -> None:
    print("\nauto cost model: estimated / measured seconds (build + one evaluation, median of 3)")
    row("expression", "exact", "bracket", "law", widths=(30, 22, 22, 22))
    for e in ("cart(K(2)^1000)", "cart(C(5)^300)", "cart(motif()^6)", "strong(P(3)^300)",
              "direct(K(3)^1000000000)"):
        cells = []
        for name in ("exact", "bracket", "law"):
            try:
                est, run = _tier_runner(e, name)
                cells.append(f"{fmt(est)} / {fmt(median_time(run, 3))}")
            except Exception:  # noqa: BLE001 - a tier that cannot run is shown as '-'
                cells.append("-")
        row(e, *cells, widths=(30, 22, 22, 22))


def main() -> None:
    print(f"python {sys.version.split()[0]}, numpy {np.__version__}; {os.cpu_count()} cores; "
          f"load average {os.getloadavg()[0]:.2f}")
    old = old_tree()
    law_quantiles(old)
    cli_quantile(old)
    brackets(old)
    startup()
    cost_model()


if __name__ == "__main__":
    main()
