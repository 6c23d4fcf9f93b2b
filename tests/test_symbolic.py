"""The symbolic bridge against closed forms, the exact engine and numpy."""

from __future__ import annotations

import math
import time

import numpy as np
import pytest
import sympy

import powerspec.queries.planner as planner
from powerspec.algebra.symbolic_family import spectrum_family, symbolic_family
from powerspec.algebra.symbolic_forms import closed_forms, evaluate
from powerspec.algebra.symbolic_traces import traces
from powerspec.algebra.symbolic_tree import powers, symbolic_expression, symbolic_product
from powerspec.errors import ExpressionError, InputError, NotExactError, SymbolicError
from powerspec.factors.symbolic import MAX_SYMBOLIC_ORDER, SymbolicFactor, symbolic_factor
from powerspec.interfaces.symbolic_printing import symbolic_report, symbolic_text
from powerspec.numbers.symbolic import guarded
from tests.reference import fold


def engine_atoms(text, matrix="adjacency"):
    return planner.spectrum(text, matrix).atoms.atoms()


def as_complex_pairs(pairs):
    return sorted(((complex(sympy.N(v, 30)), int(m)) for v, m in pairs),
                  key=lambda t: (round(t[0].real, 9), round(t[0].imag, 9)))


def assert_same_multiset(symbolic_pairs, numeric_pairs, tol=1e-9):
    got = as_complex_pairs(symbolic_pairs)
    want = sorted(((complex(v), int(m)) for v, m in numeric_pairs),
                  key=lambda t: (round(t[0].real, 9), round(t[0].imag, 9)))
    assert len(got) == len(want)
    for (x, mx), (y, my) in zip(got, want, strict=True):
        assert mx == my
        assert abs(x - y) <= tol * max(1.0, abs(y))


def power_symbol(fam):
    (k,) = fam.symbols
    return k


# ---------------------------------------------------------------- hypercube
def test_hypercube_family_closed_form():
    # source: Q_k has eigenvalues k - 2j with multiplicity C(k, j)
    # (Brouwer & Haemers, Spectra of Graphs, §1.4.6 -- from memory)
    fam = symbolic_family("cart(K(2)^k)")
    k = power_symbol(fam)
    (j,) = fam.indices
    assert sympy.expand(fam.eigenvalue - (k - 2 * j)) == 0
    assert sympy.simplify(fam.multiplicity - sympy.binomial(k, j)) == 0
    assert fam.order == 2**k


@pytest.mark.parametrize("kk", range(1, 13))
def test_hypercube_expansion_matches_engine(kk):
    # source: the exact engine (powerspec.planner.spectrum) and the closed form k - 2j, C(k, j)
    fam = symbolic_family("cart(K(2)^k)")
    got = fam.expand(k=kk)
    assert got == [(sympy.Integer(kk - 2 * j), math.comb(kk, j)) for j in range(kk + 1)]
    assert_same_multiset(got, engine_atoms(f"cart(K(2)^{kk})"))


# ------------------------------------------------------------------ Hamming
@pytest.mark.parametrize("q", [3, 4, 5])
def test_hamming_family_closed_form_and_engine(q):
    # source: H(k, q) has eigenvalues (q-1)k - qj with multiplicity C(k, j)(q-1)^j
    # (Brouwer & Haemers, Spectra of Graphs, Hamming graphs -- from memory)
    fam = symbolic_family(f"cart(K({q})^k)")
    k = power_symbol(fam)
    (j,) = fam.indices
    assert sympy.expand(fam.eigenvalue - ((q - 1) * k - q * j)) == 0
    assert sympy.simplify(fam.multiplicity - sympy.binomial(k, j) * (q - 1) ** j) == 0
    for kk in (1, 2, 5):
        got = fam.expand(k=kk)
        want = [((q - 1) * kk - q * jj, math.comb(kk, jj) * (q - 1) ** jj) for jj in range(kk + 1)]
        assert got == [(sympy.Integer(v), m) for v, m in want]
        # source: the exact engine
        assert_same_multiset(got, engine_atoms(f"cart(K({q})^{kk})"))


@pytest.mark.parametrize("text,kk", [
    ("cart(C(5)^k)", 4),  # irrational eigenvalues (golden ratio), r = 3
    ("cart(P(3)^k)", 5),  # sqrt(2), and merging of equal sums
    ("direct(P(3)^k)", 4),  # multiplicative, zero eigenvalue
    ("strong(K(3)^k)", 6),
    ("mix(1, 0.5, K(1, 3)^k)", 3),
    ("mix(0, 2, C(4)^k)", 3),
    ("cart(K(2)^k, P(3)^n)", (3, 2)),  # two symbolic powers
    ("direct(C(3)^k, P(2))", 3),
])
def test_expansion_matches_engine(text, kk):
    # source: the exact engine on the same expression with the powers substituted
    fam = symbolic_family(text)
    if isinstance(kk, tuple):
        values = dict(zip([s.name for s in fam.symbols], kk, strict=True))
    else:
        values = {power_symbol(fam).name: kk}
    concrete = text
    for name, v in values.items():
        concrete = concrete.replace(f"^{name})", f"^{v})").replace(f"^{name},", f"^{v},")
    assert_same_multiset(fam.expand(**values), engine_atoms(concrete))


@pytest.mark.parametrize("text,kind,kk", [
    ("cart(C(4)^k)", "laplacian", 3),
    ("direct(P(3)^k)", "transition", 3),
    ("strong(C(4)^k)", "laplacian", 2),  # regular only: d - lambda with d = 3^k - 1
    ("direct(K(3)^k)", "normalized", 3),
])
def test_other_matrix_kinds_match_engine(text, kind, kk):
    # source: the exact engine for the same matrix kind
    fam = symbolic_family(text, kind)
    k = power_symbol(fam)
    assert_same_multiset(fam.expand(**{k.name: kk}), engine_atoms(text.replace("^k", f"^{kk}"), kind))


def test_cycle_eigenvalues_are_the_textbook_cosines():
    # source: C_n has eigenvalues 2 cos(2 pi j / n) (Brouwer & Haemers §1.4.3 -- from memory)
    for n in (5, 6, 8):
        got = symbolic_factor(planner.resolve(f"C({n})")).eigenvalues()
        want = [(2 * math.cos(2 * math.pi * j / n), 1) for j in range(n)]
        merged = {}
        for v, m in want:
            key = round(v, 9)
            merged[key] = merged.get(key, 0) + m
        assert_same_multiset(got, list(merged.items()))


# ----------------------------------------------------- weighted directed cycle
def weighted_dicycle(ws):
    t = len(ws)
    m = sympy.zeros(t, t)
    for i, w in enumerate(ws):
        m[i, (i + 1) % t] = w
    return m


@pytest.mark.parametrize("t", [2, 3, 4, 5, 6])
def test_weighted_directed_cycle(t):
    # Derivation: for the cycle u_1 -> u_2 -> ... -> u_T -> u_1 with weights w_i, A^T is
    # (prod w_i) I (every closed walk of length T goes once round), and the characteristic
    # polynomial is x^T - prod w_i (only the full cycle contributes to det(xI - A)), so the
    # eigenvalues are (prod w)^(1/T) omega^j, omega = exp(2 pi i / T), each simple.
    ws = sympy.symbols(f"w1:{t + 1}", positive=True)
    g = SymbolicFactor(weighted_dicycle(ws), "wcycle")
    vals = g.eigenvalues()
    assert [m for _, m in vals] == [1] * t
    prod = sympy.Mul(*ws)
    for v, _ in vals:
        assert sympy.simplify(sympy.expand(v**t) - prod) == 0
    rng = np.random.default_rng(t)
    for _ in range(2):
        w = rng.uniform(0.2, 3.0, size=t)
        subs = {s: sympy.Float(x, 30) for s, x in zip(ws, w, strict=True)}
        got = [complex(sympy.N(v.subs(subs), 20)) for v, _ in vals]
        dense = np.zeros((t, t))
        for i in range(t):
            dense[i, (i + 1) % t] = w[i]
        # source: numpy.linalg.eigvals on the explicit weighted cycle
        want = np.linalg.eigvals(dense)
        # source: the derived closed form (prod w)^(1/T) omega^j
        closed = np.prod(w) ** (1 / t) * np.exp(2j * np.pi * np.arange(t) / t)
        for ref in (want, closed):
            d = np.abs(np.array(got)[:, None] - np.asarray(ref)[None, :])
            assert np.all(d.min(axis=1) < 1e-9) and np.all(d.min(axis=0) < 1e-9)


def test_symbolic_loop_weight_power():
    # source: the exact engine with the loop weight substituted (c = 1/2), and
    # loops(c, K2) has eigenvalues c + 1, c - 1 (J - I shifted by c, from memory)
    c = sympy.Symbol("c")
    g = SymbolicFactor(sympy.Matrix([[c, 1], [1, c]]), "loops(c, K(2))")
    assert {v for v, _ in g.eigenvalues()} == {c + 1, c - 1}
    k = sympy.Symbol("k", integer=True, positive=True)
    fam = spectrum_family(symbolic_product("cart", (g, k)))
    got = [(v.subs(c, sympy.Rational(1, 2)), m) for v, m in fam.expand(k=3)]
    assert_same_multiset(got, engine_atoms("cart(loops(0.5, K(2))^3)"))


def test_numeric_factor_converts_exactly():
    # source: the decimal typed in the expression, 0.1 = 1/10 (exact rational arithmetic)
    g = symbolic_factor(planner.resolve("scale(0.1, K(2))"))
    assert set(g.matrix) == {0, sympy.Rational(1, 10)}
    assert g.eigenvalues() == [(sympy.Rational(1, 10), 1), (sympy.Rational(-1, 10), 1)]


# -------------------------------------------------------------------- moments
MOMENT_CASES = ["cart(C(4)^k)", "cart(P(3)^k)", "direct(P(3)^k)",
                "strong(K(3)^k)", "mix(1, 0.5, K(1, 3)^k)", "cart(K(3)^k, P(2))"]


@pytest.mark.parametrize("text", MOMENT_CASES)
def test_moment_polynomials_match_engine(text):
    node = symbolic_expression(text)
    tr = traces(node, "adjacency", 4)
    (k,) = powers(node)
    for kk in range(1, 21):
        atoms = engine_atoms(text.replace("^k", f"^{kk}"))
        for p in range(1, 5):
            # source: the exact engine's spectrum, sum of m * lambda^p
            want = sum(m * v**p for v, m in atoms)
            scale = sum(m * abs(v) ** p for v, m in atoms)
            got = float(tr[p].subs(k, kk))
            assert abs(got - want) <= 1e-9 * max(1.0, scale)


def test_cartesian_moments_are_n_power_k_times_polynomial():
    # source: the exponential formula sum_p tr(M^p) t^p/p! = (tr e^{tA})^k, so tr(M^p)/n^k is
    # a polynomial of degree <= p in k (Stanley, Enumerative Combinatorics 2, §5.1 -- from memory)
    node = symbolic_expression("cart(P(3)^k)")
    (k,) = powers(node)
    for p, t in enumerate(traces(node, "adjacency", 4)):
        poly = sympy.Poly(sympy.expand(sympy.powsimp(t / 3**k, force=True)), k)
        assert poly.degree() <= p


@pytest.mark.parametrize("text,kind,kk", [
    ("cart(P(3)^k, C(4))", "adjacency", 2),
    ("cart(P(3)^k, C(4))", "laplacian", 2),
    ("strong(P(3)^k)", "adjacency", 3),
    ("mix(2, 1, P(2)^3)", "adjacency", None),
])
def test_moments_match_numpy_traces(text, kind, kk):
    node = symbolic_expression(text)
    tr = traces(node, kind, 4)
    subs = {s: kk for s in powers(node)}
    p3 = np.array([[0, 1, 0], [1, 0, 1], [0, 1, 0]], float)
    c4 = np.roll(np.eye(4), 1, axis=1) + np.roll(np.eye(4), -1, axis=1)
    p2 = np.array([[0, 1], [1, 0]], float)
    if kind == "laplacian":
        p3, c4 = (np.diag(m.sum(axis=1)) - m for m in (p3, c4))
    if text.startswith("cart"):
        explicit = fold([p3] * kk + [c4], 1.0, 0.0)
    elif text.startswith("strong"):
        explicit = fold([p3] * kk, 1.0, 1.0)
    else:
        explicit = fold([p2] * 3, 2.0, 1.0)
    for p in range(1, 5):
        # source: numpy trace of the p-th power of the explicitly built product (scipy.sparse.kron)
        want = np.trace(np.linalg.matrix_power(explicit, p))
        assert float(tr[p].subs(subs)) == pytest.approx(want, rel=1e-12, abs=1e-9)


# --------------------------------------------------------------- closed forms
@pytest.mark.parametrize("text", ["cart(C(5)^k)", "cart(K(1, 3)^k)", "direct(P(3)^k)",
                                  "direct(C(3)^k)", "strong(P(3)^k)", "mix(1, 0.5, K(1, 3)^k)",
                                  "mix(0, 2, P(4)^k)", "cart(K(2)^k, K(1, 3)^n)",
                                  "direct(dicycle(3)^k)"])
def test_spectral_radius_matches_engine(text):
    forms, _ = closed_forms(symbolic_expression(text))
    rho = forms["spectral_radius"]
    for kk in (1, 2, 3, 5):
        concrete = text.replace("^k", f"^{kk}").replace("^n", f"^{kk + 1}")
        subs = {s: (kk if s.name == "k" else kk + 1) for s in rho.free_symbols}
        # source: the exact engine's spectrum, max |lambda|
        want = max(abs(complex(v)) for v, _ in engine_atoms(concrete))
        assert float(sympy.N(rho.subs(subs), 30)) == pytest.approx(want, rel=1e-12)


@pytest.mark.parametrize("text", ["cart(C(5)^k)", "cart(P(4)^k)", "strong(P(3)^k)",
                                  "mix(1, 0.5, K(1, 3)^k)", "cart(K(3)^k, P(3))"])
def test_largest_and_smallest_match_engine(text):
    forms, _ = closed_forms(symbolic_expression(text))
    for kk in (1, 2, 4):
        concrete = text.replace("^k", f"^{kk}")
        top = planner.top(concrete, m=1).atoms.atoms()[0]
        # source: the exact engine's extremes (powerspec.planner.top), values and multiplicities
        assert float(sympy.N(evaluate(forms["largest"], k=kk), 30)) == pytest.approx(top[0], rel=1e-12)
        assert int(evaluate(forms["largest_multiplicity"], k=kk)) == top[1]
        if "smallest" in forms:
            bottom = planner.top(concrete, m=1, bottom=True).atoms.atoms()[0]
            assert float(sympy.N(evaluate(forms["smallest"], k=kk), 30)) == pytest.approx(
                bottom[0], rel=1e-12)
            assert int(evaluate(forms["smallest_multiplicity"], k=kk)) == bottom[1]


def test_mean_variance_estrada_heat_trace():
    node = symbolic_expression("cart(P(3)^k)")
    forms, _ = closed_forms(node)
    k = next(iter(powers(node)))
    # source: the CLT scaling in DESIGN §2 -- the Cartesian power's eigenvalue distribution is the
    # k-fold convolution, so the variance is k times P(3)'s (eigenvalues 0, +-sqrt 2: 4/3)
    assert sympy.simplify(forms["variance"] - sympy.Rational(4, 3) * k) == 0
    assert forms["mean"] == 0
    lap, _ = closed_forms(node, "laplacian")
    t = next(s for s in lap["heat_trace"].free_symbols if s.name == "t")
    for kk in (1, 3, 6):
        atoms = engine_atoms(f"cart(P(3)^{kk})")
        # source: the exact engine's spectrum, sum of m e^lambda
        want = sum(m * math.exp(v) for v, m in atoms)
        assert float(forms["estrada_index"].subs(k, kk)) == pytest.approx(want, rel=1e-12)
        latoms = engine_atoms(f"cart(P(3)^{kk})", "laplacian")
        want = sum(m * math.exp(-0.3 * v) for v, m in latoms)
        assert float(lap["heat_trace"].subs({k: kk, t: 0.3})) == pytest.approx(want, rel=1e-12)


def kirchhoff(adj):
    lap = np.diag(adj.sum(axis=1)) - adj
    return np.linalg.det(lap[1:, 1:])


@pytest.mark.parametrize("kk", [1, 2, 3, 4])
def test_hypercube_spanning_trees(kk):
    forms, _ = closed_forms(symbolic_expression("cart(K(2)^k)"))
    tau = forms["spanning_trees"]
    (k,) = [s for s in tau.free_symbols if s.name == "k"]
    j = sympy.Symbol("j", integer=True, nonnegative=True)
    # source: the form asked for, Product over j of (2j)^C(k,j) / 2^k
    assert sympy.simplify(tau - sympy.Product((2 * j) ** sympy.binomial(k, j), (j, 1, k)) / 2**k) == 0
    got = int(evaluate(tau, k=kk))
    # source: Q_k has 2^(2^k - k - 1) prod_j j^C(k,j) spanning trees (from memory)
    assert got == 2 ** (2**kk - kk - 1) * math.prod(jj ** math.comb(kk, jj) for jj in range(1, kk + 1))
    # source: matrix-tree theorem via numpy.linalg.det on the explicit hypercube
    q = fold([np.array([[0.0, 1.0], [1.0, 0.0]])] * kk, 1.0, 0.0)
    assert got == round(kirchhoff(q))
    log_tau = forms["log_spanning_trees"]
    assert float(evaluate(log_tau, k=kk)) == pytest.approx(math.log(got), rel=1e-12)


def test_torus_spanning_trees_three_indices():
    # source: matrix-tree theorem via numpy.linalg.det on C4 x C4 and C4^3 built with kron
    forms, _ = closed_forms(symbolic_expression("cart(C(4)^k)"))
    tau = forms["spanning_trees"]
    (k,) = [s for s in tau.free_symbols if s.name == "k"]
    c4 = np.roll(np.eye(4), 1, axis=1) + np.roll(np.eye(4), -1, axis=1)
    for kk in (1, 2, 3):
        want = kirchhoff(fold([c4] * kk, 1.0, 0.0))
        assert int(evaluate(tau, k=kk)) == pytest.approx(want, rel=1e-9)


# ----------------------------------------------------------------- refusals
def companion(coeffs):
    """Companion matrix of x^n + c_{n-1} x^{n-1} + ... + c_0 (coeffs = [c_0, ..., c_{n-1}])."""
    n = len(coeffs)
    m = sympy.zeros(n, n)
    for i in range(1, n):
        m[i, i - 1] = 1
    for i, c in enumerate(coeffs):
        m[i, n - 1] = -c
    return m


def test_irreducible_quintic_is_refused():
    # x^5 - x - 1 is irreducible with Galois group S5, so not solvable in radicals
    # (the standard Abel-Ruffini example -- from memory); its companion matrix has it as
    # characteristic polynomial (checked here with sympy).
    m = companion([-1, -1, 0, 0, 0])
    lam = sympy.Symbol("lam")
    assert sympy.expand(m.charpoly(lam).as_expr() - (lam**5 - lam - 1)) == 0
    g = SymbolicFactor(m, "quintic")
    with pytest.raises(SymbolicError, match="degree 5"):
        g.eigenvalues()
    with pytest.raises(SymbolicError, match="degree 5"):
        g.eigenvalues(timeout=None)  # the degree guard alone, inline
    with pytest.raises(SymbolicError):
        spectrum_family(symbolic_product("cart", (g, sympy.Symbol("k"))))


def _sleeper(seconds, name):
    time.sleep(seconds)
    return []


def test_time_guard_terminates_the_worker():
    # a worker that would take 60 s is terminated after 0.3 s with a SymbolicError
    with pytest.raises(SymbolicError, match="within 0.3 s"):
        guarded(_sleeper, (60, "slow"), 0.3)


def test_size_guard():
    w = sympy.Symbol("w")
    big = sympy.eye(MAX_SYMBOLIC_ORDER + 1) * w
    with pytest.raises(SymbolicError, match="vertices"):
        SymbolicFactor(big, "big").eigenvalues()


@pytest.mark.parametrize("text,exc", [
    ("cart(K(2)^j)", ExpressionError),  # index name is reserved
    ("cart(K(2)^pi)", ExpressionError),  # a sympy constant, would not round-trip
    ("scale(2, K(2)^k)", ExpressionError),
    ("cart(direct(P(2)^k)^2)", SymbolicError),  # nested symbolic power
    ("mix(2, 1, P(2)^k)", SymbolicError),  # left fold
    ("cart(K(2)", ExpressionError),
])
def test_bad_expressions(text, exc):
    with pytest.raises(exc):
        symbolic_family(text)


def test_not_exact_kind_is_refused():
    with pytest.raises(NotExactError, match="not exact"):
        symbolic_family("direct(P(3)^k)", "laplacian")
    with pytest.raises(InputError):
        symbolic_report("cdf", "cart(K(2)^k)")


def test_expand_needs_the_power():
    fam = symbolic_family("cart(K(2)^k)")
    with pytest.raises(InputError, match="needs a value"):
        fam.expand()
    with pytest.raises(InputError):
        fam.expand(k=0)


# ------------------------------------------------------------------- output
@pytest.mark.parametrize("command", ["spectrum", "top", "moments", "invariants"])
@pytest.mark.parametrize("text", ["cart(K(2)^k)", "cart(C(5)^k)", "strong(K(3)^k)"])
def test_report_strings_round_trip(command, text):
    report = symbolic_report(command, text, latex=True)
    assert {"expression", "matrix", "order", "method", "symbolic"} <= set(report)
    node = symbolic_expression(text)
    fam = spectrum_family(node)
    forms, _ = closed_forms(node) if command != "spectrum" else ({}, [])
    originals = {"eigenvalue": fam.eigenvalue, "multiplicity": fam.multiplicity,
                 "constraint": fam.constraints, "count": fam.count, **forms}
    values = {"k": 3, "j": 1, "j1": 1, "j2": 1, "t": sympy.Rational(1, 3)}
    assert sympy.sympify(report["order"]).subs({sympy.Symbol("k"): 3}) == fam.order.subs(
        power_symbol(fam), 3)
    for name, text_form in report["symbolic"].items():
        back = sympy.sympify(text_form)
        orig = originals[name]
        a = evaluate(back, **values)
        b = evaluate(orig, **values)
        if isinstance(a, sympy.logic.boolalg.Boolean):
            assert bool(a) == bool(b)
        else:
            # source: sympy evaluating the original expression at the same point
            assert complex(sympy.N(a, 30)) == pytest.approx(complex(sympy.N(b, 30)))
    if command == "moments":
        # DESIGN §4: moments stay a list of [p, value], also under --symbolic
        assert [p for p, _ in report["moments"]] == [1, 2, 3, 4]
        assert not any(name.startswith("moment_") for name in report["symbolic"])
        for p, text_form in report["moments"]:
            # source: sympy evaluating the original expression at the same point
            want = evaluate(forms[f"moment_{p}"], **values)
            assert complex(sympy.N(evaluate(sympy.sympify(text_form), **values), 30)) == pytest.approx(
                complex(sympy.N(want, 30)))
    text_out = symbolic_text(report)
    assert report["expression"] in text_out and "=" in text_out
    assert "\\" in symbolic_text(report, latex=True) or command in ("spectrum", "top")


def test_report_hypercube_keys():
    r = symbolic_report("spectrum", "cart(K(2)^k)")
    assert r["order"] == "2**k"
    assert r["symbolic"]["eigenvalue"] == "k - 2*j"
    assert r["symbolic"]["multiplicity"] == "binomial(k, j)"
    inv = symbolic_report("invariants", "cart(K(2)^k)")["symbolic"]
    assert sympy.sympify(inv["spectral_radius"]) == sympy.Symbol("k")
