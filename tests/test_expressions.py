"""The expression language: structure, echo, and errors that point at the column."""

from __future__ import annotations

import numpy as np
import pytest

import powerspec as ps
from powerspec.algebra.grammar import parse


@pytest.mark.parametrize("text", [
    "cart(C(10)^6)", "cart(K(2)^1000)", "direct(P(3)^40, C(5))",
    "strong(K(3)^12)", "mix(1, 0.5, K(1, 4)^30)", "cart(scale(2, C(4))^3, loops(1, P(2)))",
    "cart(direct(P(3)^2, C(4))^3)",
])
def test_labels_echo_the_expression(text):
    assert parse(text).label() == text


def test_order_is_exact():
    # source: |V(G^k)| = |V(G)|^k (definition of the product's vertex set)
    assert parse("cart(C(10)^6)").order == 10**6
    assert parse("direct(P(3)^40, C(5))").order == 3**40 * 5
    assert str(parse("cart(K(3)^1000000000)").order) == "3^1000000000"


@pytest.mark.parametrize("text,column,phrase", [
    ("cart(C(5)", 10, "expected"),
    ("cart(C(5)^0)", 11, "at least 1"),
    ("cart(C(5)^x)", 11, "symbolic"),
    ("C(5)^2", 5, "only meaningful inside a product"),
    ("cart(C(5)) + 1", 12, "unexpected"),
    ("cart(C($))", 8, "unexpected character"),
    ("scale(2, cart(C(4)^2))", 10, "takes a factor"),
    ("mix(1, C(3))", 1, "two coefficients"),
    ("C(3.5)", 3, "whole number"),
    ("cart()", 1, "at least one graph"),
    ('load(C(3))', 1, "quoted file name"),
    ("cart(C(4), 'x')", 12, "expected a graph"),
    ("nope(3)", 1, "unknown function"),
])
def test_errors_point_at_the_column(text, column, phrase):
    with pytest.raises(ps.ExpressionError) as info:
        parse(text)
    assert info.value.column == column
    assert phrase in str(info.value)
    assert "\n" not in str(info.value)


def test_load_edge_list_directed_option(tmp_path):
    f = tmp_path / "g.txt"
    f.write_text("a b 2\nb c\n")
    und = parse(f'cart(load("{f}")^2)')
    dire = parse(f'cart(load("{f}", "directed")^2)')
    assert not und.directed and dire.directed
    # source: numpy eigvals of the 3-vertex weighted path (edge list read by hand)
    a = np.array([[0, 2, 0], [2, 0, 1], [0, 1, 0]], float)
    got = sorted(v for v, m in ps.spectrum(f'load("{f}")').atoms.atoms() for _ in range(m))
    assert np.allclose(got, np.sort(np.linalg.eigvalsh(a)))


def test_relative_load_uses_base_dir(tmp_path):
    (tmp_path / "m.txt").write_text("1 2\n2 3\n3 1\n")
    node = parse('cart(load("m.txt")^2)', base_dir=tmp_path)
    # source: the triangle K_3; cart(K_3^2) has 9 vertices (definition)
    assert node.order == 9
