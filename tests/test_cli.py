"""The command line: JSON contract, text output, and one-line errors with exit status 2."""

from __future__ import annotations

import json
import math
import subprocess
import sys

import pytest

from powerspec.interfaces.cli import main


def run(argv, capsys):
    code = main(argv)
    out, err = capsys.readouterr()
    return code, out, err


def test_spectrum_json_keys_and_exact_multiplicities(capsys):
    code, out, err = run(["spectrum", "cart(K(2)^100)", "--json"], capsys)
    assert code == 0 and err == ""
    data = json.loads(out)
    for key in ("expression", "matrix", "order", "method", "atoms"):
        assert key in data
    assert data["order"] == 2**100
    # source: Q_k closed form k - 2j with multiplicity C(k, j) (textbook)
    assert data["atoms"][0] == [-100.0, 1]
    assert data["atoms"][50] == [0.0, math.comb(100, 50)]


def test_top_json_complex_values(capsys):
    code, out, _ = run(["top", "cart(dicycle(4)^2)", "-m", "2", "--json"], capsys)
    assert code == 0
    data = json.loads(out)
    # source: dicycle(4) eigenvalues are the 4th roots of unity; sums of two: top 2 (once),
    # then 1+i and 1-i (twice each); a conjugate pair is never split by the cut at m = 2
    def as_complex(value):
        return complex(*value) if isinstance(value, list) else complex(value)

    def key(atom):
        return atom[0].real, atom[0].imag

    got = sorted(((as_complex(v), int(m)) for v, m in data["atoms"]), key=key)
    assert got == sorted([(2 + 0j, 1), (1 + 1j, 2), (1 - 1j, 2)], key=key)


def test_huge_values_written_as_json_numbers(capsys):
    code, out, _ = run(["top", "direct(K(3)^2000)", "-m", "1", "--json"], capsys)
    assert code == 0
    # json.loads turns out-of-range literals into inf, so read them exactly with Decimal.
    from decimal import Decimal

    data = json.loads(out, parse_float=Decimal)
    v = data["atoms"][0][0]
    # source: 2^2000 by Python integer arithmetic.  Polar values carry log|v| in a double,
    # so their relative precision is about |log v| * 2.2e-16 (here ~3e-13).
    assert abs(v / Decimal(2**2000) - 1) < Decimal("1e-12")


def test_text_output_readable(capsys):
    code, out, _ = run(["spectrum", "cart(C(4)^2)"], capsys)
    assert code == 0
    assert "eigenvalue" in out and "multiplicity" in out and "16 vertices" in out


def test_output_file_atomic(tmp_path, capsys):
    target = tmp_path / "q.json"
    code, out, _ = run(["spectrum", "cart(K(2)^3)", "--json", "--output", str(target)],
                       capsys)
    assert code == 0 and out == ""
    assert json.loads(target.read_text())["order"] == 8
    assert [p.name for p in tmp_path.iterdir()] == ["q.json"]


@pytest.mark.parametrize(
    "argv,phrase",
    [
        (["spectrum", "cart(C(5)"], "column 10"),
        (["spectrum", "C(5)^3"], "only meaningful inside a product"),
        (["spectrum", "cart(C(5)^-2)"], "at least 1"),
        (["spectrum", "cart(C(5)^2.5)"], "whole number"),
        (["spectrum", "cart(hexagon(5)^2)"], "unknown function"),
        (["spectrum", "cart(C(2)^2)"], "C(n)"),
        (["spectrum", "cart(C(5) C(4))"], "column"),
        (["spectrum", 'cart(load("/no/such/file.mtx")^2)'], "/no/such/file.mtx"),
        (["spectrum", "cart(motif()^200)"], "limit"),
        (["spectrum", "direct(P(3)^30, K(1, 3)^30)", "--matrix", "laplacian"], "not exact"),
        (["spectrum", "cart(dicycle(3)^2)", "--matrix", "normalized"], "undirected"),
        (["spectrum", "cart(C(5)^2)", "--limit", "0"], "positive"),
        (["spectrum", "cart(C(5)^2)", "--matrix", "weird"], "invalid choice"),
        (["top", "cart(C(5)^2)", "-m", "x"], "positive whole number"),
        (["frobnicate"], "invalid choice"),
        (["spectrum", ""], "empty"),
        (["spectrum", "cart(C(5)^2) extra"], "unexpected"),
    ],
)
def test_user_errors_one_line_exit_2(argv, phrase, capsys):
    code, out, err = run(argv, capsys)
    assert code == 2
    assert out == ""
    assert err.count("\n") == 1 and err.startswith("powerspec: error: ")
    assert phrase in err
    assert "Traceback" not in err


def test_bad_matrix_market_file(tmp_path, capsys):
    bad = tmp_path / "bad.mtx"
    bad.write_text("%%MatrixMarket matrix coordinate real general\n2 3 1\n1 1 1.0\n")
    code, _, err = run(["spectrum", f'cart(load("{bad}")^2)'], capsys)
    assert code == 2 and "square" in err and err.count("\n") == 1


def test_python_dash_m_and_demo():
    proc = subprocess.run([sys.executable, "-m", "powerspec", "demo"], capture_output=True,
                          text=True, timeout=300)
    assert proc.returncode == 0, proc.stderr
    assert "22-cube" in proc.stdout and "motif" in proc.stdout
    proc = subprocess.run([sys.executable, "-m", "powerspec", "spectrum", "cart(C(5)"],
                          capture_output=True, text=True, timeout=60)
    assert proc.returncode == 2 and proc.stderr.count("\n") == 1


def test_symbolic_flag_round_trips_through_sympy(capsys):
    import sympy

    code, out, _ = run(["spectrum", "cart(K(2)^k)", "--symbolic", "--json"], capsys)
    assert code == 0
    data = json.loads(out)
    k, j = sympy.symbols("k j")
    # source: Q_k closed form, eigenvalue k - 2j with multiplicity C(k, j) (textbook)
    assert sympy.simplify(sympy.sympify(data["symbolic"]["eigenvalue"]) - (k - 2 * j)) == 0
    assert sympy.sympify(data["order"]) == 2**k
    code, out, _ = run(["moments", "cart(K(2)^k)", "--symbolic", "--order", "2",
                        "--latex"], capsys)
    assert code == 0 and "k" in out


def test_latex_needs_symbolic(capsys):
    code, _, err = run(["spectrum", "cart(K(2)^3)", "--latex"], capsys)
    assert code == 2 and "--symbolic" in err


# ------------------------------------------------------------------------ --help


COMMANDS = ("spectrum", "top", "cdf", "count", "quantile", "moments", "invariants", "plot", "sweep")


@pytest.mark.timeout(20)
@pytest.mark.parametrize("command", COMMANDS)
def test_help_documents_positionals_grammar_and_examples(command, capsys):
    assert main([command, "--help"]) == 0
    out = capsys.readouterr().out
    positionals = {"cdf": ["X"], "count": ["A", "B"], "quantile": ["Q"],
                   "sweep": ["QUANTITY", "OVER"]}.get(command, [])
    for name in ["EXPR", *positionals]:
        # every positional is listed with a help line of its own
        assert any(line.strip().startswith(name + " ") for line in out.splitlines()), name
    for phrase in ("P(n)", "C(n)", "K(m, n)", "J(n)", "dicycle(n, w=[", "motif()", 'load("file")',
                   "scale(c, G)", "loops(c, G)", "mix(a, b, G, ...)", "1/50", "10^18",
                   "examples:", f"powerspec {command} "):
        assert phrase in out, phrase


def test_top_level_help_lists_commands_and_examples(capsys):
    assert main(["--help"]) == 0
    out = capsys.readouterr().out
    assert all(c in out for c in COMMANDS) and "examples:" in out and "cart(G, ...)" in out


def _examples():
    from powerspec.interfaces.cli import EXAMPLES

    for command, examples in EXAMPLES.items():
        for example in examples:
            if command == "demo":
                continue  # run by test_python_dash_m_and_demo
            yield pytest.param(example, id=example.split("'")[0].strip())


@pytest.mark.timeout(60)
@pytest.mark.parametrize("example", list(_examples()))
def test_every_help_example_runs(example, tmp_path, monkeypatch, capsys):
    import shlex

    monkeypatch.chdir(tmp_path)  # the plot example writes spectrum.png here
    code = main(shlex.split(example)[1:])
    _, err = capsys.readouterr()
    assert code == 0, (example, err)


# ------------------------------------------------------------ every option


def test_version(capsys):
    assert main(["--version"]) == 0
    assert capsys.readouterr().out.startswith("powerspec ")


def test_json_integers_are_numbers_up_to_4000_digits_then_strings(capsys):
    code, out, _ = run(["top", "cart(K(2)^14000)", "-m", "2", "--json"], capsys)
    assert code == 0
    data = json.loads(out)  # Python's default parser reads every number back
    # source: the 14000-cube has 2^14000 vertices (4215 digits, beyond 4000: a string) and its
    # largest eigenvalues 14000 and 13998 have multiplicities C(14000, 0) = 1 and
    # C(14000, 1) = 14000 (textbook), small integers: JSON numbers
    assert data["order"] == str(2**14000)
    assert data["atoms"] == [[14000, 1], [13998, 14000]]


def test_symbolic_json_keeps_the_contract_keys(capsys):
    import sympy

    k = sympy.Symbol("k")
    for argv, side in ((["top", "cart(K(2)^k)"], k), (["top", "cart(K(2)^k)", "--bottom"], -k)):
        code, out, _ = run([*argv, "--symbolic", "--json"], capsys)
        data = json.loads(out)
        # source: the k-cube's extreme eigenvalues are +-k, each once (textbook)
        assert code == 0 and sympy.sympify(data["atoms"][0][0]) == side
        assert sympy.sympify(data["atoms"][0][1]) == 1
    code, out, _ = run(["invariants", "cart(K(2)^k)", "--symbolic", "--json"], capsys)
    inv = json.loads(out)["invariants"]
    assert sympy.sympify(inv["spectral_radius"]["value"]) == k
    assert inv["spectral_radius"]["lower"] == inv["spectral_radius"]["upper"]
    code, out, _ = run(["spectrum", "cart(K(2)^k)", "--symbolic", "--json"], capsys)
    atom = json.loads(out)["atoms"][0]
    # source: eigenvalue k - 2j with multiplicity C(k, j) (textbook)
    j = sympy.Symbol("j")
    assert sympy.simplify(sympy.sympify(atom[0]) - (k - 2 * j)) == 0
    assert sympy.sympify(atom[1]) == sympy.binomial(k, j)


def test_tol_and_method_bound_the_binomial_cdf(capsys):
    import math as m

    code, out, _ = run(["cdf", "cart(K(2)^100)", "0.5", "--tol", "0.01", "--method", "bracket",
                        "--json"], capsys)
    data = json.loads(out)
    # source: the 100-cube's eigenvalues 100 - 2j with multiplicity C(100, j) (textbook); the
    # share <= 0.5 is sum_{j >= 50} C(100, j) / 2^100, by Python integers
    truth = sum(m.comb(100, j) for j in range(50, 101)) / 2**100
    assert code == 0 and data["lower"] <= truth <= data["upper"]
    assert data["upper"] - data["lower"] <= 0.01 and data["inputs"]["tier"] == "bracket"


@pytest.mark.parametrize("command,extra", [("count", ["-1", "1"]), ("quantile", ["0.5"])])
def test_count_and_quantile_options(command, extra, capsys):
    code, out, _ = run([command, "cart(K(2)^6)", *extra, "--method", "exact", "--matrix",
                        "laplacian", "--degrees", "out", "--limit", "100", "--json"], capsys)
    data = json.loads(out)
    assert code == 0 and data["matrix"].startswith("laplacian")
    # source: the 6-cube's Laplacian eigenvalues 2j with multiplicity C(6, j) (textbook): one
    # eigenvalue (0) lies in [-1, 1]; the median (inf{x: F(x) >= 1/2}) is 6, since
    # F(4) = 22/64 < 1/2 <= F(6) = 42/64
    assert data["estimate"] == (1 if command == "count" else 6)


def test_degrees_in_for_directed_factors(capsys):
    code, out, _ = run(["spectrum", "cart(dicycle(3)^2)", "--matrix", "laplacian", "--degrees", "in",
                        "--json"], capsys)
    data = json.loads(out)
    # source: the directed 3-cycle has in- and out-degree 1, so L = I - A with eigenvalues
    # 1 - omega^j; sums over the Cartesian square: 0 once (a connected in-regular graph)
    assert code == 0 and data["inputs"]["degrees"] == "in"
    assert [0, 1] in data["atoms"]


def test_per_vertex_moments_and_heat_time(capsys):
    code, out, _ = run(["moments", "cart(K(2)^3)", "--order", "2", "--per-vertex", "--json"], capsys)
    # source: tr(A)/n = 0 and tr(A^2)/n = average degree = 3 for the 3-cube (textbook)
    assert code == 0 and json.loads(out)["moments"] == [[1, 0], [2, 3]]
    code, out, _ = run(["invariants", "cart(K(2)^3)", "--time", "2", "--degrees", "out", "--json"],
                       capsys)
    heat = json.loads(out)["invariants"]["heat_trace"]
    # source: Laplacian eigenvalues 2j with multiplicity C(3, j), so sum e^(-t 2j) C(3, j) =
    # (1 + e^(-2t))^3 by the binomial theorem; at t = 2 that is (1 + e^-4)^3
    want = (1 + math.exp(-4)) ** 3
    assert heat["lower"] <= want * (1 + 1e-15) and want * (1 - 1e-15) <= heat["upper"]


@pytest.mark.timeout(60)
def test_scheduler_unreachable_is_a_user_error(capsys):
    # port 1 on this machine's loopback: nothing listens there
    code, _, err = run(["spectrum", "direct(P(3)^6)", "--matrix", "laplacian", "--scheduler",
                        "tcp://127.0.0.1:1", "--quiet"], capsys)
    assert code == 2 and "cannot reach the Dask scheduler" in err and err.count("\n") == 1


@pytest.mark.parametrize("argv,phrase", [
    (["top", "cart(C(5)^2)", "--workers", "0"], "worker processes"),
    (["spectrum", "cart(C(5)^2)", "--scheduler", "127.0.0.1"], "scheduler address"),
    (["spectrum", "cart(C(5)^2)", "--head", "0"], "rows printed"),
    (["top", "cart(C(5)^2)", "--method", "estimate"], "--matrix laplacian"),
    (["cdf", "cart(C(5)^2)", "0", "--tol", "2"], "out of range"),
])
def test_option_ranges(argv, phrase, capsys):
    code, out, err = run(argv, capsys)
    assert code == 2 and out == "" and phrase in err and err.count("\n") == 1


def test_demo_output_file(tmp_path, capsys):
    target = tmp_path / "demo.txt"
    code, out, _ = run(["demo", "--output", str(target)], capsys)
    assert code == 0 and out == "" and "22-cube" in target.read_text()
