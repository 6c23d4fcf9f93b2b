"""`powerspec plot`: files are written atomically in the asked format; bad requests exit 2."""

from __future__ import annotations

import pytest

from powerspec.interfaces.cli import main

pytest.importorskip("matplotlib")


@pytest.mark.timeout(60)
@pytest.mark.parametrize("expr,suffix,magic,phrase", [
    ("cart(K(2)^40)", "png", b"\x89PNG", "41 exact atoms as stems"),
    ("cart(motif()^3)", "svg", b"<?xml", "histogram (60 bins, exact data)"),
    ("direct(P(3)^3)", "pdf", b"%PDF", "exact atoms as stems"),
])
def test_plot_writes_file(tmp_path, capsys, expr, suffix, magic, phrase):
    out = tmp_path / f"s.{suffix}"
    assert main(["plot", expr, "-o", str(out)]) == 0
    assert out.read_bytes().startswith(magic)
    assert [p.name for p in tmp_path.iterdir()] == [out.name]  # no temporary left behind
    assert phrase in capsys.readouterr().out


@pytest.mark.timeout(60)
def test_plot_beyond_enumeration_uses_a_certified_band(tmp_path, capsys):
    out = tmp_path / "big.png"
    assert main(["plot", "cart(motif()^200)", "-o", str(out)]) == 0
    assert out.read_bytes().startswith(b"\x89PNG")
    text = capsys.readouterr().out
    # 9^200 vertices: no enumeration; the histogram comes from the certified bracket tier
    assert "density histogram" in text and "bracket" in text and "normal law" in text


@pytest.mark.parametrize("argv,phrase", [
    (["plot", "cart(C(4)^2)", "-o", "x.gif"], ".png, .pdf or .svg"),
    (["plot", "cart(dicycle(4)^2)", "-o", "x.png"], "complex"),
    (["plot", "cart(C(4)^2)", "-o", "/no/such/dir/x.png"], "does not exist"),
])
def test_plot_errors(argv, phrase, capsys):
    assert main(argv) == 2
    err = capsys.readouterr().err
    assert phrase in err and err.count("\n") == 1
