"""The expression language: structure, echo, and errors that point at the column."""

from __future__ import annotations

from fractions import Fraction

import numpy as np
import pytest
from reference import eigenvalues, expand, fold, kron_product, multiset_distance

import powerspec as ps
from powerspec.algebra.grammar import parse, suggest
from powerspec.algebra.grammar_syntax import parse_syntax
from powerspec.algebra.limits import MAX_DEPTH, MAX_EXPRESSION_CHARS


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


# ------------------------------------------------------- textbook notation (issue 10 §2)

def spectrum_values(text):
    return expand(ps.spectrum(text).atoms)


@pytest.mark.parametrize("text,label", [
    ("cart(scale(1/2, C(4))^2)", "cart(scale(0.5, C(4))^2)"),
    ("loops(-3/4, K(3))", "loops(-0.75, K(3))"),
    ("cart(K(2, 3), K(1, 4))", "cart(K(2, 3), K(1, 4))"),
    ("direct(K(4), dicycle(4, w=[1, 1, 1/5, 1]))", "direct(K(4), dicycle(4, w=[1, 1, 0.2, 1]))"),
    ("dicycle(3, [2, 1, 1/2])", "dicycle(3, w=[2, 1, 0.5])"),
    ("K(n=4)", "K(4)"),
    ("K(m=1, n=3)", "K(1, 3)"),
    ("direct(P(3), J(2))", "direct(P(3), J(2))"),
    ("cart(C(5.0)^1e2)", "cart(C(5)^100)"),
])
def test_textbook_notation_and_fractions(text, label):
    assert parse(text).label() == label


def test_numbers_are_read_exactly():
    call = parse_syntax("mix(1/3, -3/4, P(2)^2)")
    assert call.args[0].value == Fraction(1, 3) and call.args[1].value == Fraction(-3, 4)
    assert parse_syntax("C(2.5e1)").args[0].value == 25
    assert parse_syntax("scale(0.1, P(2))").args[0].value == Fraction(1, 10)


def test_fraction_weights_reach_the_factor_as_the_nearest_double():
    got = spectrum_values("scale(1/50, K(2))")
    # source: K(2) has eigenvalues -1, 1 (textbook); scale multiplies by c = 1/50 -> 0.02
    assert multiset_distance(got, [-0.02, 0.02]) == 0.0


def test_weighted_dicycle_matches_numpy():
    got = spectrum_values("dicycle(4, w=[1, 1, 1/5, 1])")
    a = np.zeros((4, 4))
    for i, w in enumerate([1, 1, 0.2, 1]):
        a[i, (i + 1) % 4] = w
    # source: numpy eigvals of the weighted directed cycle built by hand
    assert multiset_distance(got, eigenvalues(a)) < 1e-12


def test_complete_bipartite_and_star():
    # source: K(m, n) has eigenvalues +-sqrt(mn) and m + n - 2 zeros (textbook)
    assert multiset_distance(spectrum_values("K(2, 3)"), [-6**0.5, 0, 0, 0, 6**0.5]) < 1e-12
    assert multiset_distance(spectrum_values("K(1, 4)"), [-2, 0, 0, 0, 2]) < 1e-12


@pytest.mark.parametrize("name,hint", [
    ("path", "P(n)"), ("cycle", "C(n)"), ("star", "K(1, n)"), ("complete_bipartite", "K(m, n)"),
    ("complete", "K(n)"), ("cartesian", "cart"), ("stong", "strong"), ("k", "K(n)"),
    ("Dicycle", "dicycle"), ("tensor", "direct"), ("moitf", "motif()"),
])
def test_unknown_names_suggest_the_closest_known_one(name, hint):
    assert hint in suggest(name)
    with pytest.raises(ps.ExpressionError) as info:
        parse(f"cart({name}(3)^2)")
    assert info.value.column == 6
    assert "unknown function" in str(info.value) and f"did you mean {hint}" in str(info.value)


@pytest.mark.parametrize("text,column,phrase", [
    ("dicycle(3, v=[1, 1, 1])", 12, "its arguments are n, w"),
    ("dicycle(3, ww=[1, 1, 1])", 12, "did you mean w="),
    ("dicycle(3, w=[1, 1, 1], w=[1, 1, 1])", 25, "twice"),
    ("dicycle(w=[1, 1, 1], 3)", 22, "positional argument cannot follow"),
    ("dicycle(3, w=2)", 14, "list of numbers"),
    ("dicycle(3, w=[1, x])", 18, "expected a number in the list"),
    ("dicycle(3, w=[1, 1])", 1, "3 weights"),
    ("dicycle(3, w=[1, 1, 1)", 22, "',' or ']'"),
    ("cart(C(4), w=3)", 12, "not keyword arguments"),
    ("mix(1, 1/0, P(2))", 8, "division by zero"),
    ("scale(3/-4, P(2))", 9, "positive denominator"),
    ("scale(1e999999999, P(2))", 7, "too large"),
    ("scale(" + "1" * 1200 + ", P(2))", 7, "too long"),
    ("scale(1e-101, P(2))", 7, "between 1e-100 and 1e100"),
    ("cart(C(5)^1000000000000000001)", 11, "between 1 and 10^18"),
    ("cart(C(5)^2/3)", 12, "',' or ')'"),
    ("motif(1)", 7, "at most 0 argument"),
    ("P()", 1, "needs n"),
    ("C(\u0663)", 3, "unexpected character"),
])
def test_grammar_errors_point_at_the_column(text, column, phrase):
    with pytest.raises(ps.ExpressionError) as info:
        parse(text)
    assert info.value.column == column, str(info.value)
    assert phrase in str(info.value)
    assert "\n" not in str(info.value) and len(str(info.value)) < 300


def test_non_text_is_an_expression_error():
    with pytest.raises(ps.ExpressionError):
        parse(b"cart(C(4))")


# ------------------------------------------------------------------ caps on the text


def test_nesting_depth_cap():
    ok = "cart(" * (MAX_DEPTH - 1) + "C(5)" + ")" * (MAX_DEPTH - 1)
    assert parse(ok).label() == "C(5)"  # single-operand products collapse to the operand
    deep = "cart(" * MAX_DEPTH + "C(5)" + ")" * MAX_DEPTH
    with pytest.raises(ps.SizeLimitError) as info:
        parse(deep)
    assert "nests more than" in str(info.value)


def test_length_cap():
    padded = "cart(C(5)" + " " * (MAX_EXPRESSION_CHARS - 10) + ")"
    assert len(padded) == MAX_EXPRESSION_CHARS and parse(padded).label() == "C(5)"
    with pytest.raises(ps.ExpressionError) as info:
        parse(padded + " ")
    assert info.value.column == MAX_EXPRESSION_CHARS + 1


# ---------------------------------------------------------- merging equal operands


@pytest.mark.parametrize("text,label", [
    ("cart(C(5), C(5))", "cart(C(5)^2)"),
    ("cart(C(5), P(3), C( 5 )^2)", "cart(C(5)^3, P(3))"),
    ("strong(K(3), K(3)^2, K(3))", "strong(K(3)^4)"),
    ("mix(1, 1/2, P(2), P(3), P(2))", "mix(1, 0.5, P(2)^2, P(3))"),
    ("mix(2, 1, P(2), P(2), P(3), P(2))", "mix(2, 1, P(2)^2, P(3), P(2))"),
    ("cart(C(5)^1000000000000000000)", "cart(C(5)^1000000000000000000)"),
    ("cart(cart(C(4))^2, C(4))", "cart(C(4)^3)"),
    ("direct(K(2), cart(C(3), C(3)), cart(C(3)^2))", "direct(K(2), cart(C(3)^2)^2)"),
])
def test_equal_operands_merge_into_powers(text, label):
    assert parse(text).label() == label


def test_merged_cartesian_operands_keep_the_spectrum():
    c4 = np.roll(np.eye(4), 1, axis=1) + np.roll(np.eye(4), -1, axis=1)
    p3 = np.array([[0, 1, 0], [1, 0, 1], [0, 1, 0]], float)
    # source: numpy on the explicit Kronecker sum in the written order C4, P3, C4
    explicit = kron_product(kron_product(c4, p3, 1, 0), c4, 1, 0)
    got = spectrum_values("cart(C(4), P(3), C(4))")
    assert multiset_distance(got, eigenvalues(explicit)) < 1e-9


def test_left_fold_merges_only_adjacent_operands():
    p2 = np.array([[0, 1], [1, 0]], float)
    p3 = np.array([[0, 1, 0], [1, 0, 1], [0, 1, 0]], float)
    # source: numpy on the explicit left fold ((P2 o P2) o P3) o P2, a = 2, b = 1
    explicit = fold([p2, p2, p3, p2], 2.0, 1.0)
    got = spectrum_values("mix(2, 1, P(2), P(2), P(3), P(2))")
    assert multiset_distance(got, eigenvalues(explicit)) < 1e-9
    # the same operands grouped differently give another multiset (the rule is not associative)
    regrouped = eigenvalues(fold([p2, p2, p2, p3], 2.0, 1.0))
    assert multiset_distance(np.sort(got.real), np.sort(regrouped)) > 1e-3


def test_left_fold_cap():
    # source: K(1) has the single eigenvalue 0, and 2(0 + 0) + 0 * 0 = 0 (the mix rule)
    assert ps.spectrum("mix(2, 1, K(1)^10000)").atoms.atoms() == [(0.0, 1)]
    with pytest.raises(ps.SizeLimitError) as info:
        parse("mix(2, 1, K(1)^5000, P(2), K(1)^5000)")
    assert "left fold" in str(info.value) and "10001 copies" in str(info.value)
