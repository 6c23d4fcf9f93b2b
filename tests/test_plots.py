"""Plots: every product kind and view, at exact sizes and at k = 10^9, files in each format.

matplotlib draws through its object interface onto the file-only Agg canvas (no display).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from powerspec.interfaces.cli import main

pytest.importorskip("matplotlib")

from powerspec.interfaces.plot_source import gather  # noqa: E402  (needs matplotlib's extra)
from powerspec.interfaces.plot_views import lattice_edges  # noqa: E402
from powerspec.interfaces.plots import plot  # noqa: E402

KINDS = {
    # product kind: (expression at k = 10^9, the reference law's name in the summary)
    "cart": ("cart(C(5)^1000000000)", "normal law, μ = "),
    "direct": ("direct(motif()^1000000000)", "normal law of log|λ| given λ ≠ 0"),
    "strong": ("strong(P(3)^1000000000)", "normal law of log|1 + λ| given 1 + λ ≠ 0"),
    "mix": ("mix(1, 1/2, P(3)^1000000000)", "normal law of log|1 + 0.5λ| given 1 + 0.5λ ≠ 0"),
}
VIEWS = ("auto", "density", "log", "cdf", "standard")


@pytest.mark.timeout(120)
@pytest.mark.parametrize("kind", KINDS)
@pytest.mark.parametrize("view", VIEWS)
def test_every_kind_and_view_at_k_1e9(kind, view, tmp_path):
    expr, law = KINDS[kind]
    out = tmp_path / "f.png"
    if view == "log" and kind == "cart":
        with pytest.raises(Exception, match="log-magnitude view"):
            plot(expr, out, view=view)
        assert not out.exists()
        return
    summary = plot(expr, out, view=view, size=(4, 3), dpi=40)
    assert out.read_bytes().startswith(b"\x89PNG")
    if view == "standard":
        assert "N(0, 1)" in summary
    else:
        assert law in summary, summary
    if kind != "cart" and view in ("auto", "density"):
        # λ itself spans e^(±10^4 σ) at this size: drawn on the log-magnitude axis
        assert summary.split(": ", 1)[1].startswith("log view")


@pytest.mark.timeout(60)
@pytest.mark.parametrize("expr,mode,law", [
    ("cart(K(2)^12)", "add", "normal law, μ = 0, σ² = 12"),
    ("direct(K(3)^6)", "mul", "normal law of log|λ| given λ ≠ 0"),
    ("strong(P(3)^5)", "mul", "normal law of log|1 + λ| given 1 + λ ≠ 0"),
    ("mix(1, 1/2, K(1, 4)^8)", "mul", "normal law of log|1 + 0.5λ| given 1 + 0.5λ ≠ 0"),
])
def test_exact_sizes_draw_atoms_as_stems(expr, mode, law, tmp_path):
    src = gather(expr)
    assert src.mode == mode and src.atoms is not None
    # every exact share adds up to the whole spectrum
    assert math.isclose(float(np.sum(src.atoms.share)), 1.0, rel_tol=1e-12)
    summary = plot(expr, tmp_path / "a.svg", dpi=40)
    assert "exact atoms as stems" in summary and law in summary


def test_reference_law_parameters_are_the_textbook_ones():
    # source: K2 has eigenvalues +-1 (mean 0, variance 1), so the Cartesian 12th power's
    # eigenvalue distribution has mean 0 and variance 12 (sums of independent copies)
    p = gather("cart(K(2)^12)").params
    assert abs(p["mu"]) < 1e-12 and p["sigma2"] == pytest.approx(12.0, rel=1e-12)
    # source: K3 has eigenvalues 2, -1, -1, so log|λ| of one factor is log 2 w.p. 1/3 and 0
    # w.p. 2/3: mean (log 2)/3, variance (log 2)^2 * 2/9, times k for the direct power; no zero
    # eigenvalue; the sign is negative w.p. (1 - (1 - 2*2/3)^k)/2 (parity of the -1 factors)
    p = gather("direct(K(3)^6)").params
    assert p["log_mu"] == pytest.approx(6 * math.log(2) / 3, rel=1e-12)
    assert p["log_sigma2"] == pytest.approx(6 * math.log(2) ** 2 * 2 / 9, rel=1e-12)
    assert p["zero_mass"] == 0.0
    assert p["negative_share"] == pytest.approx((1 - (1 / 3) ** 6 * (1 if 6 % 2 == 0 else -1)) / 2,
                                                rel=1e-12)


def test_exact_zero_atom_and_its_nullity():
    src = gather("direct(P(3)^3)")
    # source: P3 has eigenvalues sqrt 2, 0, -sqrt 2; a product of three is non-zero only when
    # every factor is, 2^3 = 8 of 27 index triples: nullity 27 - 8 = 19 (exact)
    assert src.atoms.zero == 19
    # |λ| = 2 sqrt 2 for every non-zero eigenvalue: one stem on the log axis carries both signs
    summary = plot("direct(P(3)^3)", _tmp("z.png"), view="log")
    assert "1 exact atom as a stem" in summary


def _tmp(name: str) -> str:
    import tempfile

    return f"{tempfile.mkdtemp()}/{name}"


def test_lattice_aware_bins_hold_whole_lattice_points():
    # the hypercube's eigenvalues k - 2j lie on the lattice 2Z + k: each bin holds whole points
    edges, on = lattice_edges(-40.0, 40.0, 60, (-40.0, 2.0))
    assert on
    centres = np.arange(-40, 41, 2)
    counts = np.histogram(centres, edges)[0]
    assert counts.sum() == centres.size and len(set(counts[1:-1].tolist())) == 1
    assert not np.any(np.isin(edges, centres))  # no lattice point on an edge


@pytest.mark.timeout(60)
def test_band_is_certified_and_contains_the_exact_cdf():
    # source: the exact CDF of the 12-cube from the binomial counts C(12, j) (textbook spectrum
    # 12 - 2j), computed with Python integers
    src = gather("cart(K(2)^12)")
    xs = np.array([-5.0, -1.0, 0.0, 3.0])
    est, lo, hi = src.cdf(xs)
    exact = [sum(math.comb(12, j) for j in range(13) if 12 - 2 * j <= x) / 2**12 for x in xs]
    assert np.all(lo <= np.array(exact) + 1e-15) and np.all(np.array(exact) <= hi + 1e-15)


@pytest.mark.timeout(60)
@pytest.mark.parametrize("expr,suffix,magic", [
    ("cart(K(2)^40)", "png", b"\x89PNG"),
    ("cart(motif()^3)", "svg", b"<?xml"),
    ("direct(P(3)^3)", "pdf", b"%PDF"),
])
def test_cli_writes_each_format_atomically(tmp_path, capsys, expr, suffix, magic):
    out = tmp_path / f"s.{suffix}"
    assert main(["plot", expr, "-o", str(out)]) == 0
    assert out.read_bytes().startswith(magic)
    assert [p.name for p in tmp_path.iterdir()] == [out.name]  # no temporary left behind
    assert capsys.readouterr().out.startswith(f"wrote {out}: ")


@pytest.mark.timeout(60)
def test_cli_plot_options(tmp_path, capsys):
    out = tmp_path / "o.png"
    argv = ["plot", "cart(motif()^200)", "-o", str(out), "--view", "cdf", "--size", "3", "2",
            "--dpi", "50", "--title", "nine to the 200", "--xlim", "-50", "100", "--ylim", "0", "1",
            "--yscale", "linear", "--bins", "30", "--matrix", "adjacency", "--limit", "1000",
            "--workers", "1", "--quiet"]
    assert main(argv) == 0
    text = capsys.readouterr().out
    assert "cdf view: CDF band (bracket tier" in text
    from PIL import Image  # matplotlib's own dependency

    with Image.open(out) as im:
        # 3 x 2 inches at 50 dpi, cropped tight to the drawn content (the legend below the
        # axes may add a little), far below the default 7 x 4.2 inches at 150 dpi
        assert im.size[0] <= 1.2 * 3 * 50 and im.size[1] <= 2 * 2 * 50


@pytest.mark.timeout(60)
def test_cli_plot_histogram_with_log_scale(tmp_path, capsys):
    out = tmp_path / "h.png"
    assert main(["plot", "cart(motif()^3)", "-o", str(out), "--yscale", "log", "--bins", "20"]) == 0
    assert "(log scale)" in capsys.readouterr().out


@pytest.mark.parametrize("argv,phrase", [
    (["plot", "cart(C(4)^2)", "-o", "x.gif"], ".png, .pdf or .svg"),
    (["plot", "cart(dicycle(4)^2)", "-o", "x.png"], "complex"),
    (["plot", "cart(C(4)^2)", "-o", "/no/such/dir/x.png"], "does not exist"),
    (["plot", "cart(C(4)^2)", "-o", "x.png", "--view", "log"], "log-magnitude view"),
    (["plot", "cart(C(4)^2)", "-o", "x.png", "--size", "0.1", "3"], "0.5 to 40"),
    (["plot", "cart(C(4)^2)", "-o", "x.png", "--dpi", "5000"], "20 to 1,200"),
    (["plot", "cart(C(4)^2)", "-o", "x.png", "--xlim", "3", "1"], "A < B"),
    (["plot", "cart(C(4)^2)", "-o", "x.png", "--view", "sideways"], "invalid choice"),
    (["plot", "cart(C(4)^2)", "-o", "x.png", "--scheduler", "nowhere"], "scheduler address"),
])
def test_plot_errors(argv, phrase, capsys, tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    assert main(argv) == 2
    err = capsys.readouterr().err
    assert phrase in err and err.count("\n") == 1
    assert not (tmp_path / "x.png").exists()
