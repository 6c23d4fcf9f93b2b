"""``powerspec sweep``: parameter values, substitution, certified points, text, JSON and the curve."""

from __future__ import annotations

import json
import math
from fractions import Fraction

import pytest

from powerspec.errors import InputError
from powerspec.interfaces.cli import main
from powerspec.interfaces.sweep import parse_over, substitute, sweep

W12 = "dicycle(12, w=[1, 1, t, 1, 1, 1, 1, 1, 1, 1, 1, 1])"


def test_parse_over_forms():
    assert [v for v, _ in parse_over("k=1..5")[1]] == [1, 2, 3, 4, 5]
    assert [v for v, _ in parse_over("t=0..1:1/3")[1]] == [0, Fraction(1, 3), Fraction(2, 3), 1]
    assert [v for v, _ in parse_over("k=10..100000*10")[1]] == [10, 100, 1000, 10000, 100000]
    assert parse_over("b=1/2, 0.25")[1] == [(Fraction(1, 2), "1/2"), (Fraction(1, 4), "0.25")]


@pytest.mark.parametrize("spec,phrase", [
    ("k", "NAME=VALUES"), ("C=1..3", "function of the expression language"),
    ("k=5..1", "below the start"), ("k=1..3:0", "positive"), ("k=1..5000", "at most 1000"),
    ("k=0..10*2", "A > 0"), ("k=", "no values"), ("k=1,x", "value"),
])
def test_parse_over_errors(spec, phrase):
    with pytest.raises(InputError, match=phrase):
        parse_over(spec)


def test_substitute_only_bare_names():
    assert substitute("cart(C(5)^k, K(2))", "k", "7") == "cart(C(5)^7, K(2))"
    # a name inside a string (a file name) or a keyword is left alone
    assert substitute('cart(load("k.mtx")^k)', "k", "3") == 'cart(load("k.mtx")^3)'
    assert substitute(W12, "w", "2") == W12


def test_largest_of_a_cartesian_power_is_k_times_the_factor_s():
    sw = sweep("cart(C(4)^k)", "largest", "k=1..6")
    # source: C4 has eigenvalues 2, 0, 0, -2 (textbook), so the Cartesian k-th power's largest
    # eigenvalue is 2k; the order is 4^k
    assert [p.value for p in sw.points] == [2 * k for k in range(1, 7)]
    assert [p.order for p in sw.points] == [4**k for k in range(1, 7)]


def test_spectral_radius_of_a_space_time_product_as_one_weight_varies():
    sw = sweep(f"direct(K(4), {W12})", "spectral_radius", "t=1/5, 1/2, 1, 2")
    for p in sw.points:
        # source: a weighted directed n-cycle has characteristic polynomial x^n - prod(w), so
        # its spectral radius is prod(w)^(1/n) (from memory); K4's is 3 and the direct product
        # multiplies them (Kronecker product eigenvalues)
        want = 3 * float(p.at) ** (1 / 12)
        assert float(p.lower) - 1e-12 <= want <= float(p.upper) + 1e-12
        assert math.isclose(float(p.value), want, rel_tol=1e-12)


def test_refused_points_are_kept_with_their_reason():
    # C(2) is not a cycle (the grammar refuses it); the other points go on
    sw = sweep("cart(C(n)^2)", "smallest", "n=2, 5")
    assert "C(n) needs n >= 3" in sw.points[0].error and sw.points[1].error is None
    # source: C5's smallest eigenvalue is 2 cos(4 pi / 5) = -(1 + sqrt 5)/2 (textbook), twice
    # that for the Cartesian square
    assert float(sw.points[1].value) == pytest.approx(-(1 + math.sqrt(5)), rel=1e-15)
    assert "refused: C(n) needs" in sw.to_text()
    assert json.loads(sw.to_json())["points"][0]["error"].startswith("C(n) needs")


def test_every_point_refused_is_an_error():
    with pytest.raises(InputError, match="no point of the sweep"):
        sweep("cart(C(n)^2)", "smallest", "n=1, 2")


def test_quantile_and_cdf_quantities_are_bracketed():
    sw = sweep("cart(K(2)^k)", "cdf=0", "k=2, 4")
    # source: the k-cube's eigenvalues k - 2j with multiplicity C(k, j) (textbook): the share
    # <= 0 is sum_{j >= k/2} C(k, j) / 2^k, by Python integers
    for p in sw.points:
        k = p.at
        want = sum(math.comb(k, j) for j in range(k + 1) if k - 2 * j <= 0) / 2**k
        assert p.lower <= want <= p.upper
    with pytest.raises(InputError, match="strictly between"):
        sweep("cart(K(2)^k)", "quantile=2", "k=2")
    with pytest.raises(InputError, match="unknown sweep quantity"):
        sweep("cart(K(2)^k)", "wobble", "k=2")


def test_cli_text_json_and_plot(tmp_path, capsys):
    out = tmp_path / "curve.png"
    data_file = tmp_path / "sweep.json"
    argv = ["sweep", "cart(K(2)^k)", "largest", "k=1..4", "--json", "--plot", str(out),
            "--output", str(data_file), "--quiet", "--workers", "1", "--time", "1",
            "--limit", "1000", "--matrix", "adjacency", "--degrees", "out"]
    assert main(argv) == 0
    assert capsys.readouterr().out == ""
    data = json.loads(data_file.read_text())
    # source: the k-cube's largest eigenvalue is k (textbook)
    assert [pt["value"] for pt in data["points"]] == [1, 2, 3, 4]
    assert data["parameter"] == "k" and data["quantity"] == "largest" and data["plot"] == str(out)
    assert out.read_bytes().startswith(b"\x89PNG")
    assert main(["sweep", "cart(K(2)^k)", "largest", "k=1..3"]) == 0
    text = capsys.readouterr().out
    assert "powerspec sweep" in text and "lower" in text and "upper" in text and "[1]" in text


@pytest.mark.parametrize("argv,phrase", [
    (["sweep", "cart(K(2)^3)", "largest", "k=1..3"], "does not mention"),
    (["sweep", "cart(K(2)^k)", "largest", "k=1..3", "--plot", "x.gif"], ".png, .pdf or .svg"),
    (["sweep", "cart(K(2)^k)", "bogus", "k=1..3"], "unknown sweep quantity"),
    (["sweep", "cart(K(2)^k)", "largest"], "required"),
])
def test_cli_errors(argv, phrase, capsys, tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    assert main(argv) == 2
    err = capsys.readouterr().err
    assert phrase in err and err.count("\n") == 1
