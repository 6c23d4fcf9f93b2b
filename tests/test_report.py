"""Text reports: counting words, exact zero lines, summaries of long spectra, --head, law lines."""

from __future__ import annotations

import json
import math

from powerspec.interfaces.cli import main
from powerspec.interfaces.report import SUMMARY_AT, SUMMARY_ENDS, answer_text, share_text, vertices
from powerspec.queries import planner
from powerspec.queries.moments import moment_answer


def test_counting_words():
    assert vertices(1) == "1 vertex" and vertices(16) == "16 vertices"
    text = answer_text(planner.spectrum("cart(K(2)^4)"))
    # source: the 4-cube's eigenvalues 4 - 2j with multiplicity C(4, j) (textbook): 5 distinct,
    # 16 in all; 0 has multiplicity C(4, 2) = 6, a share 3/8
    assert "5 distinct eigenvalues, 16 counted with multiplicity" in text
    assert "eigenvalue 0 is exact: nullity 6, share 3/8 (0.375) of the vertices" in text
    one = answer_text(planner.spectrum("cart(K(1)^1)"))
    assert "1 vertex" in one and "1 distinct eigenvalue, 1 counted" in one


def test_zero_excluded_when_every_ball_avoids_it():
    # source: C5's eigenvalues are 2, (sqrt 5 - 1)/2 (twice) and -(sqrt 5 + 1)/2 (twice)
    # (textbook); their pairwise sums 4, 2.618, 0.382, 1.236, -1, -3.236 are all non-zero
    text = answer_text(planner.spectrum("cart(C(5)^2)"))
    assert "not an eigenvalue (nullity 0)" in text


def _rows(text: str) -> list[str]:
    return [ln for ln in text.splitlines() if ln.startswith("  ") and ln.strip()[:1] in
            tuple("-0123456789")]


def test_summary_view_of_long_spectra_and_head():
    ans = planner.spectrum("cart(C(17)^3)")
    n = len(ans.atoms)
    assert n > SUMMARY_AT
    text = answer_text(ans)
    assert len(_rows(text)) == 2 * SUMMARY_ENDS
    assert f"({n - 2 * SUMMARY_ENDS} more distinct eigenvalues; --head N, --all" in text
    assert len(_rows(answer_text(ans, full=True))) == n
    head = answer_text(ans, head=3)
    assert "showing the first 3 rows (--head 3)" in head and len(_rows(head)) == 3


def test_cli_head_all_and_json_count(capsys):
    assert main(["spectrum", "cart(C(17)^3)", "--head", "4", "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert len(data["atoms"]) == 4 and data["distinct"] > 4 and len(data["radii"]) == 4
    assert main(["spectrum", "cart(C(17)^3)", "--all"]) == 0
    assert "more distinct eigenvalues" not in capsys.readouterr().out


def test_top_lists_in_the_query_order_in_text_and_json(capsys):
    # source: P3 has eigenvalues sqrt 2, 0, -sqrt 2; the direct 3rd power's are
    # +-2 sqrt 2 (4 times each) and 0 (19 times)
    for flag, first in (([], 2 * math.sqrt(2)), (["--bottom"], -2 * math.sqrt(2))):
        assert main(["top", "direct(P(3)^3)", "-m", "3", "--json", *flag]) == 0
        atoms = json.loads(capsys.readouterr().out)["atoms"]
        assert math.isclose(atoms[0][0], first, rel_tol=1e-15) and atoms[0][1] == 4
        assert atoms[1] == [0, 19]
        assert main(["top", "direct(P(3)^3)", "-m", "3", *flag]) == 0
        text = capsys.readouterr().out
        values = [float(ln.split()[0]) for ln in text.splitlines()[-3:]]
        assert values == sorted(values, reverse=not flag)
        side = "smallest" if flag else "largest"
        assert f"the 3 {side} distinct eigenvalues, 27 of the 27 eigenvalues" in text


def test_per_vertex_moments_header():
    ans = moment_answer("cart(K(2)^3)", order=2, per_vertex=True)
    text = answer_text(ans)
    # source: tr(A^2)/n is the average degree, 3 for the 3-cube (textbook)
    assert "tr(M^p)/n (n = order)" in text and text.rstrip().endswith("3")


def test_law_lines_of_distribution_answers(capsys):
    assert main(["cdf", "direct(K(3)^20)", "0", "--method", "law"]) == 0
    text = capsys.readouterr().out
    # source: K3's eigenvalues 2, -1, -1: log|λ| per factor has mean (log 2)/3, so the 20th
    # direct power's law of log|λ| has mean 20 (log 2)/3 = 4.62098 (6 digits)
    assert "log|λ| normal given λ != 0: mean 4.62098" in text
    assert "point mass at λ = 0: 0" in text
    assert main(["cdf", "cart(C(5)^1000000)", "10", "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    # source: C5's eigenvalues 2cos(2 pi j/5) have mean 0 and mean square 2 (sum of 4cos^2 over
    # the 5th roots is 10), so the variance of the millionth Cartesian power's law is 2 * 10^6
    assert math.isclose(data["law"]["sigma2"], 2e6, rel_tol=1e-9)


def test_share_text():
    assert share_text(6, 16) == "3/8 (0.375)" and share_text(1, 2) == "1/2"
    # source: 2^80 / 3^60 = 2.85183483727...e-5 (mpmath at 30 digits: 2.85183483727e-5)
    assert share_text(2**80, 3**60).startswith("0.0000285183483727")
