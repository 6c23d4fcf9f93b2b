"""The sympy domain on the one tree: family closed forms, trace identities, size checks, JSON."""

from __future__ import annotations

import json
import subprocess
import sys
from fractions import Fraction

import numpy as np
import pytest
import sympy

import powerspec.queries.planner as planner
from powerspec.algebra.kinds import CARTESIAN, DIRECT, STRONG, Combination
from powerspec.algebra.symbolic_family import (
    composition,
    leaf_spectrum,
    regular_degree,
    symbolic_family,
)
from powerspec.algebra.symbolic_traces import traces
from powerspec.algebra.symbolic_tree import powers, symbolic_expression
from powerspec.algebra.tree import Leaf
from powerspec.errors import SizeLimitError, SymbolicError
from powerspec.factors import families
from powerspec.factors.factor import Factor
from powerspec.factors.symbolic import symbolic_factor
from powerspec.factors.symbolic_families import unit_spectrum
from powerspec.interfaces.cli import main
from powerspec.interfaces.symbolic_printing import symbolic_report
from powerspec.numbers import hp
from tests.reference import fold

K_SYM = sympy.Symbol("k", integer=True, positive=True)


def numeric_pairs(pairs):
    return sorted(((complex(sympy.N(v, 30)), int(m)) for v, m in pairs),
                  key=lambda t: (round(t[0].real, 9), round(t[0].imag, 9)))


def assert_matches_eigvals(pairs, matrix, tol=1e-9):
    got = np.array([v for v, m in numeric_pairs(pairs) for _ in range(m)])
    want = np.linalg.eigvals(np.asarray(matrix, dtype=float))
    assert got.size == want.size
    d = np.abs(got[:, None] - want[None, :])
    assert np.all(d.min(axis=1) < tol) and np.all(d.min(axis=0) < tol)


def kind_matrix(adj, kind):
    deg = adj.sum(axis=1)
    if kind == "adjacency":
        return adj
    if kind == "laplacian":
        return np.diag(deg) - adj
    if kind == "signless":
        return np.diag(deg) + adj
    if kind == "transition":
        return adj / deg[:, None]
    h = np.diag(1 / np.sqrt(deg))
    return np.eye(len(adj)) - h @ adj @ h


# ------------------------------------------------------------ family closed forms
@pytest.mark.parametrize("n", [11, 13, 20, 60])
def test_cycles_past_the_degree_guard_use_their_closed_form(n):
    # The characteristic polynomial of C_n has irreducible factors of degree phi(d)/2 >= 5 for
    # n >= 11, which the radical guard refuses; the family's closed form needs none.
    vals = symbolic_factor(families.C(n)).eigenvalues()
    # source: numpy.linalg.eigvals on the explicit cycle, and C_n's eigenvalues 2 cos(2 pi j / n)
    # (Brouwer & Haemers, Spectra of Graphs, §1.4.3 -- from memory)
    adj = np.roll(np.eye(n), 1, axis=1) + np.roll(np.eye(n), -1, axis=1)
    assert_matches_eigvals(vals, adj)
    closed = sorted(2 * np.cos(2 * np.pi * np.arange(n) / n))
    assert np.allclose(sorted(v.real for v, m in numeric_pairs(vals) for _ in range(m)), closed)


def test_cycle_power_family_matches_numpy():
    fam = symbolic_family("cart(C(11)^k)")
    got = fam.expand(k=2)
    c11 = np.roll(np.eye(11), 1, axis=1) + np.roll(np.eye(11), -1, axis=1)
    # source: numpy.linalg.eigvals on C11 x C11 built with scipy.sparse.kron
    assert_matches_eigvals(got, fold([c11, c11], 1.0, 0.0))
    assert fam.order == 11**K_SYM


@pytest.mark.parametrize("text,kind", [
    ("scale(0.5, C(12))", "adjacency"), ("scale(0.5, C(12))", "laplacian"),
    ("loops(2, P(5))", "adjacency"), ("loops(2, P(5))", "signless"), ("P(6)", "transition"),
    ("P(6)", "normalized"), ("K(2, 3)", "laplacian"), ("K(1, 4)", "adjacency"), ("J(4)", "adjacency"),
    ("dicycle(5, w=[1, 2, 1, 1, 0.5])", "adjacency"), ("dicycle(4, w=[1, -2, 1, 1])", "adjacency"),
])
def test_weighted_family_members(text, kind):
    factor = planner.resolve(text).factor
    got = leaf_spectrum(Leaf(symbolic_factor(factor)), kind)
    # source: numpy.linalg.eigvals on the factor's own float matrix of that kind
    assert_matches_eigvals(got, kind_matrix(factor.adjacency.toarray(), kind), 1e-8)


def test_a_family_name_is_verified_against_the_matrix():
    # A path adjacency that calls itself C(3) gets no cycle closed form.
    path = families.P(3).adjacency.toarray()
    got = symbolic_factor(Factor(path, "C(3)")).eigenvalues()
    # source: numpy.linalg.eigvals on the path P3 (eigenvalues 0, +-sqrt 2)
    assert_matches_eigvals(got, path)


# ---------------------------------------------------------- the rule, written once
@pytest.mark.parametrize("comb", [CARTESIAN, DIRECT, STRONG, Combination(1, Fraction(1, 2)),
                                  Combination(0, 3)])
def test_composition_is_the_rule_folded(comb):
    # source: the definition x o y = a(x + y) + b x y (DESIGN §2), folded copy by copy
    xs, cs = [Fraction(2), Fraction(-1, 3)], [3, 2]
    want = None
    for x, c in zip(xs, cs, strict=True):
        for _ in range(c):
            want = x if want is None else comb.a * (want + x) + comb.b * want * x
    got = composition(comb, [sympy.Rational(2), sympy.Rational(-1, 3)], cs)
    assert got == sympy.Rational(want.numerator, want.denominator)


def test_regular_degree_by_the_product_rule():
    d = regular_degree(symbolic_expression("strong(K(3)^k)"))
    # source: strong-product degrees d + e + de, so (1 + 2)^k - 1 for K3^k (DESIGN §2)
    assert sympy.expand(d - (3**K_SYM - 1)) == 0
    k3 = np.ones((3, 3)) - np.eye(3)
    # source: numpy row sums of the explicit strong square
    assert set(fold([k3, k3], 1.0, 1.0).sum(axis=1)) == {float(d.subs(K_SYM, 2))}


def test_mix_coefficients_stay_as_written():
    fam = symbolic_family("mix(1, 0.1, K(2)^k)")
    assert fam.comb.b == Fraction(1, 10)
    k2 = np.array([[0.0, 1.0], [1.0, 0.0]])
    # source: numpy.linalg.eigvals on the explicit mix(1, 0.1) cube (scipy.sparse.kron)
    assert_matches_eigvals(fam.expand(k=3), fold([k2] * 3, 1.0, 0.1))


# ------------------------------------------------------------- trace identities
MOTIF = families.motif().adjacency.toarray()


@pytest.mark.parametrize("text,ca,cb", [("cart(motif()^k)", 1.0, 0.0),
                                        ("direct(motif()^k)", 0.0, 1.0),
                                        ("strong(motif()^k)", 1.0, 1.0)])
def test_motif_moments_need_no_eigenvalues(text, ca, cb):
    with pytest.raises(SymbolicError, match="radicals"):
        symbolic_family(text)  # its characteristic polynomial has an irreducible nonic factor
    tr = traces(symbolic_expression(text), "adjacency", 4)
    for kk in (1, 2):
        explicit = fold([MOTIF] * kk, ca, cb)
        for p in range(5):
            # source: numpy trace of the p-th power of the explicit product (scipy.sparse.kron)
            want = np.trace(np.linalg.matrix_power(explicit, p))
            assert float(tr[p].subs(K_SYM, kk)) == pytest.approx(want, rel=1e-12, abs=1e-9)


@pytest.mark.parametrize("text,ca,cb,kind", [
    ("direct(motif()^k)", 0.0, 1.0, "laplacian"),
    ("strong(motif()^k)", 1.0, 1.0, "signless"),
    ("mix(1, 1/2, K(1, 3)^k)", 1.0, 0.5, "laplacian"),
    ("direct(P(3)^k, K(1, 2))", 0.0, 1.0, "signless"),
])
def test_non_factoring_laplacians_by_word_traces(text, ca, cb, kind):
    # D (x) D - A (x) A does not factor, but the trace of every word in D and A does.
    node = symbolic_expression(text)
    tr = traces(node, kind, 4)
    for kk in (1, 2):
        mats = []
        for child, k in node.operands:
            m = planner.resolve(child.label()).factor.adjacency.toarray()
            mats += [m] * (kk if powers(node) and k in powers(node) else k)
        m = kind_matrix(fold(mats, ca, cb), kind)
        for p in range(5):
            # source: numpy trace of the p-th power of the explicitly built Laplacian
            want = np.trace(np.linalg.matrix_power(m, p))
            assert float(tr[p].subs(K_SYM, kk)) == pytest.approx(want, rel=1e-11, abs=1e-8)


# -------------------------------------------------------- JSON and the CLI contract
def test_symbolic_moments_json_is_a_list_of_p_value(capsys):
    code = main(["moments", "cart(motif()^k)", "--symbolic", "--order", "3", "--json"])
    out, err = capsys.readouterr()
    assert code == 0, err
    data = json.loads(out)
    assert [p for p, _ in data["moments"]] == [1, 2, 3]
    assert "moment_1" not in data["symbolic"]
    k = sympy.Symbol("k")
    for p, text in data["moments"]:
        # source: numpy trace of the p-th power of the explicit motif square (k = 2)
        want = np.trace(np.linalg.matrix_power(fold([MOTIF, MOTIF], 1.0, 0.0), p))
        assert float(sympy.sympify(text).subs(k, 2)) == pytest.approx(want, rel=1e-12)


@pytest.mark.timeout(20)
def test_huge_numeric_power_is_refused_in_one_line(capsys):
    code = main(["spectrum", "cart(P(3)^1000000000)", "--symbolic"])
    out, err = capsys.readouterr()
    assert code == 2 and out == "" and err.count("\n") == 1
    assert "digits" in err and "G^k" in err
    with pytest.raises(SizeLimitError):
        symbolic_report("moments", "strong(K(3)^100000)")


@pytest.mark.timeout(20)
def test_large_file_is_refused_before_conversion(tmp_path, capsys):
    f = tmp_path / "ring.txt"
    f.write_text("".join(f"{i} {(i + 1) % 5000}\n" for i in range(5000)))
    code = main(["spectrum", f'cart(load("{f}")^k)', "--symbolic"])
    _, err = capsys.readouterr()
    assert code == 2 and err.count("\n") == 1 and "5000 vertices" in err


def test_numeric_commands_never_import_sympy():
    script = ("import sys, powerspec\n"
              "from powerspec.interfaces.cli import main\n"
              "main(['spectrum', 'cart(C(5)^3)'])\n"
              "main(['moments', 'cart(C(5)^3)', '--order', '2'])\n"
              "sys.exit(3 if 'sympy' in sys.modules else 0)\n")
    proc = subprocess.run([sys.executable, "-c", script], capture_output=True, text=True, timeout=120)
    assert proc.returncode == 0, proc.stderr


@pytest.mark.parametrize("family,args,kinds", [
    ("P", (7,), ("adjacency", "laplacian", "signless", "transition", "normalized")),
    ("C", (9,), ("adjacency",)), ("K", (5,), ("adjacency",)),
    ("K", (2, 3), ("adjacency", "laplacian", "signless", "transition", "normalized")),
])
def test_context_closed_forms_agree_with_the_families(family, args, kinds):
    # The closed forms written against a context give, in the certified context, exactly the
    # families' own values (themselves checked against numpy in test_factors.py).
    factor = families.K(*args) if family == "K" else getattr(families, family)(*args)
    for kind in kinds:
        mine = unit_spectrum(family, args, kind, hp)
        theirs = [(v, m) for v, m in factor.closed_form(kind, factor.adjacency) if m]
        assert sorted(map(str, mine)) == sorted(map(str, theirs))


def test_top_of_a_large_cycle_power_needs_no_matrix():
    # C(60) is past the exact-matrix size, but its closed form gives the extremes.
    report = symbolic_report("top", "cart(C(60)^k)")
    k = sympy.Symbol("k")
    # source: C_n's largest and smallest eigenvalues 2 and 2 cos(2 pi 30/60) = -2 (from memory),
    # summed over k copies (DESIGN §2, Cartesian rule)
    assert sympy.sympify(report["symbolic"]["spectral_radius"]) == 2 * k
    assert sympy.sympify(report["symbolic"]["smallest"]) == -2 * k
