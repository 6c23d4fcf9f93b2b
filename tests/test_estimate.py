"""``--method estimate``: the sorted-degree Laplacian estimate, labelled, with rigorous Weyl brackets."""

from __future__ import annotations

import json

import numpy as np
import pytest

from powerspec.errors import InputError
from powerspec.interfaces.cli import main
from powerspec.interfaces.estimate import estimate
from tests.reference import kron_product

P3 = np.array([[0, 1, 0], [1, 0, 1], [0, 1, 0]], dtype=float)
STAR3 = np.array([[0, 1, 1, 1], [1, 0, 0, 0], [1, 0, 0, 0], [1, 0, 0, 0]], dtype=float)


def _laplacian(a: np.ndarray) -> np.ndarray:
    return np.diag(a.sum(axis=1)) - a


def test_estimate_values_are_the_sorted_degree_formula():
    e = estimate("direct(P(3)^2)")
    # source: by hand from the formula delta_i delta_j - beta_i beta_j with P3's Laplacian
    # eigenvalues 0, 1, 3 (textbook), its degrees sorted 1, 1, 2, and beta = delta - alpha
    # = 1, 0, -1: the nine index pairs give 0 (once), 1 (3 times), 2 (twice), 3 (3 times)
    assert [(round(v, 12), m) for v, m in e.atoms] == [(0.0, 1), (1.0, 3), (2.0, 2), (3.0, 3)]
    assert "estimate" in e.method and "not certified" in e.method


@pytest.mark.parametrize("expr,matrix", [
    ("direct(P(3)^2)", kron_product(P3, P3, 0, 1)),
    ("strong(K(1, 3)^2)", kron_product(STAR3, STAR3, 1, 1)),
    ("direct(P(3), K(1, 3))", kron_product(P3, STAR3, 0, 1)),
])
def test_weyl_brackets_contain_the_true_eigenvalues(expr, matrix):
    e = estimate(expr)
    # source: numpy eigvalsh of the Laplacian D - A of the explicitly built product
    true = np.sort(np.linalg.eigvalsh(_laplacian(matrix)))
    pos = 0
    for (_, m), (lo, hi) in zip(e.atoms, e.brackets, strict=True):
        seg = true[pos:pos + m]
        assert np.all(seg >= lo - 1e-9) and np.all(seg <= hi + 1e-9), expr
        pos += m
    assert pos == true.size == e.order


def test_top_keeps_the_query_order():
    e = estimate("direct(P(3)^2)", m=2)
    assert [round(v, 12) for v, _ in e.atoms] == [3.0, 2.0]
    b = estimate("direct(P(3)^2)", m=2, bottom=True)
    assert [round(v, 12) for v, _ in b.atoms] == [0.0, 1.0]


@pytest.mark.parametrize("expr,matrix,phrase", [
    ("direct(P(3)^2)", "adjacency", "--matrix laplacian"),
    ("cart(P(3)^2)", "laplacian", "Cartesian Laplacians are exact"),
])
def test_refusals(expr, matrix, phrase):
    with pytest.raises(InputError, match=phrase):
        estimate(expr, matrix)


def test_cli_text_and_json(capsys):
    assert main(["spectrum", "direct(P(3)^2)", "--matrix", "laplacian", "--method", "estimate"]) == 0
    text = capsys.readouterr().out
    assert text.startswith("powerspec spectrum (estimate)") and "Weyl bracket" in text
    assert main(["top", "direct(P(3)^2)", "--matrix", "laplacian", "--method", "estimate", "-m", "1",
                 "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert data["estimate"] is True and data["atoms"][0][1] == 3 and len(data["brackets"]) == 1
    assert main(["spectrum", "direct(P(3)^2)", "--matrix", "laplacian", "--method", "estimate",
                 "--head", "2"]) == 0
    assert "showing the first 2 rows" in capsys.readouterr().out
    assert main(["spectrum", "direct(P(3)^2)", "--method", "estimate", "--symbolic"]) == 2
    assert "no symbolic form" in capsys.readouterr().err
