"""Never hang, never crash: one test per class of hostile input, with the inputs of the report.

Each input must be answered, or refused up front in one line with exit status
2, within the time budget that pytest-timeout enforces (``@pytest.mark.timeout``;
no timing assertions).  The command runs in-process (``main([...])``).  Inputs
whose hang or crash is not fixed yet are ``xfail`` with the module
and the root cause in the reason.
"""

from __future__ import annotations

import json
import math
import os
import signal
import stat
import time
from decimal import Decimal

import mpmath
import pytest
from flint import fmpz

from powerspec.interfaces import cli
from powerspec.interfaces.cli import main

# Budget of one refusal decided from cheap checks, and of an answer that needs real work.
QUICK = 10
WORK = 30


def run(argv, capsys):
    code = main(argv)
    out, err = capsys.readouterr()
    return code, out, err


def assert_refused(result, *phrases):
    code, out, err = result
    assert code == 2, err
    assert out == ""
    assert err.startswith("powerspec: error: ") and err.count("\n") == 1, err
    assert "Traceback" not in err
    assert len(err) < 500, err  # never a 10,000-digit echo
    for phrase in phrases:
        assert phrase in err, err


def assert_answered(result):
    code, out, err = result
    assert code == 0, err
    assert err == ""
    return out


# ------------------------------------------------------------------ exponents


@pytest.mark.timeout(QUICK)
@pytest.mark.parametrize("k", [10**18 + 1, 10**19, 10**65])
def test_exponent_beyond_the_range_is_refused_with_the_range(k, capsys):
    # 10^18 is the largest supported power; 10^65 is the report's 66-digit exponent
    for argv in (["top", f"cart(C(5)^{k})", "-m", "2"], ["cdf", f"cart(C(5)^{k})", "3"],
                 ["spectrum", f"direct(K(2)^{k})"]):
        assert_refused(run(argv, capsys), "between 1 and 10^18", "column")


@pytest.mark.timeout(QUICK)
def test_cdf_of_a_power_past_ten_to_the_nine_answers(capsys):
    out = assert_answered(run(["cdf", "cart(C(5)^10000000000)", "3", "--json"], capsys))
    data = json.loads(out)
    assert 0 <= data["lower"] <= data["estimate"] <= data["upper"] <= 1
    # source: central limit theorem -- mean k*tr(A)/n = 0, sd sqrt(2k) ~ 1.4e5 >> 3, so
    # F(3) = 1/2 + O(2e-5) + the Berry-Esseen distance (about 6e-6 here; Shevtsova 2011)
    assert abs(data["estimate"] - 0.5) < 1e-3


@pytest.mark.timeout(QUICK)
@pytest.mark.parametrize("k", [10**10, 10**18])
def test_top_of_a_power_past_ten_to_the_nine_answers(k, capsys):
    out = assert_answered(run(["top", f"cart(C(5)^{k})", "-m", "2", "--json"], capsys))
    # top lists the largest first (DESIGN section 4); both values round to the same double at
    # k = 10^18, so they are compared as the decimals printed
    (v1, m1), (v2, m2) = json.loads(out)["atoms"]
    # source: C(5) eigenvalues 2cos(2 pi j/5) (textbook); the top of the Cartesian power is 2k
    # (once), the next is 2(k-1) + 2cos(2 pi/5) with multiplicity 2k (two eigenvalues, k places);
    # the reference value in mpmath at 40 digits
    assert Decimal(str(v1)) == 2 * k and int(m1) == 1
    with mpmath.workdps(40):
        second = 2 * (k - 1) + 2 * mpmath.cos(2 * mpmath.pi / 5)
        assert abs(mpmath.mpf(str(v2)) - second) <= 1e-15 * second
    assert int(m2) == 2 * k


@pytest.mark.timeout(QUICK)
@pytest.mark.parametrize("expr,x", [("direct(K(3)^1000000000000000000)", "0"),
                                    ("strong(P(3)^1000000000000000000)", "1")])
def test_law_tier_answers_at_the_largest_supported_power(expr, x, capsys):
    data = json.loads(assert_answered(run(["cdf", expr, x, "--json"], capsys)))
    assert 0 <= data["lower"] <= data["estimate"] <= data["upper"] <= 1
    if expr.startswith("direct(K(3)"):
        # source: K(3) has eigenvalues 2, -1, -1 (textbook); a product is negative iff an odd
        # number j ~ Binomial(k, 2/3) of factors is -1, so P(lambda <= 0) = (1 - (-1/3)^k)/2,
        # which is 1/2 to far below double precision at k = 10^18
        assert data["lower"] <= 0.5 <= data["upper"]


# ---------------------------------------------------------------- large factors


@pytest.mark.timeout(QUICK)
def test_family_factor_over_the_entry_cap_is_refused_up_front(capsys):
    # P(10^7) stores 2(10^7 - 1) entries; K(5000) 5000 * 4999; the cap is 10^7 per factor
    assert_refused(run(["top", "cart(P(10000000)^2)"], capsys), "matrix entries", "10,000,000")
    assert_refused(run(["spectrum", "K(5000)"], capsys), "matrix entries")
    assert_refused(run(["spectrum", "J(4000)"], capsys), "matrix entries")


@pytest.mark.timeout(QUICK)
def test_top_of_a_large_path_power_answers(capsys):
    n = 10**6
    out = assert_answered(run(["top", f"cart(P({n})^2)", "-m", "2", "--json"], capsys))
    atoms = sorted(json.loads(out)["atoms"], key=lambda a: float(a[0]))
    l1, l2 = (2 * math.cos(math.pi * j / (n + 1)) for j in (1, 2))
    # source: P(n) eigenvalues 2cos(pi j/(n+1)) (textbook); Cartesian square: sums of two
    assert math.isclose(float(atoms[1][0]), 2 * l1, rel_tol=1e-15) and int(atoms[1][1]) == 1
    assert math.isclose(float(atoms[0][0]), l1 + l2, rel_tol=1e-15) and int(atoms[0][1]) == 2


@pytest.mark.timeout(QUICK)
def test_laplacian_of_a_large_star_answers(capsys):
    out = assert_answered(run(["spectrum", "K(1, 20000)", "--matrix", "laplacian", "--json"],
                              capsys))
    # source: Laplacian spectrum of the star K(1, n): 0, 1 (n-1 times), n+1 (textbook)
    assert [[float(v), int(m)] for v, m in json.loads(out)["atoms"]] == \
        [[0.0, 1], [1.0, 19999], [20001.0, 1]]


@pytest.mark.timeout(QUICK)
def test_moments_of_a_large_star_answer(capsys):
    out = assert_answered(run(["moments", "K(1, 3000)", "--order", "8", "--json"], capsys))
    moments = dict((p, int(v)) for p, v in json.loads(out)["moments"])
    # source: tr(A^p) of the star K(1, n) is 2 n^(p/2) for even p, 0 for odd p (eigenvalues
    # +-sqrt(n) and zeros; textbook)
    assert moments[8] == 2 * 3000**4 and moments[7] == 0


# ----------------------------------------------------------------- special files


@pytest.mark.timeout(QUICK)
def test_special_files_are_refused_without_reading(tmp_path, capsys):
    fifo = tmp_path / "fifo.mtx"
    os.mkfifo(fifo)
    assert_refused(run(["spectrum", f'cart(load("{fifo}")^2)'], capsys), "named pipe", "column")
    assert_refused(run(["spectrum", 'cart(load("/dev/zero")^2)'], capsys), "/dev")
    assert_refused(run(["spectrum", f'load("{tmp_path}")'], capsys), "folder")
    code, out, err = run(["spectrum", 'load("/proc/self/environ")'], capsys)
    assert_refused((code, out, err), "/proc")
    assert "PATH=" not in err


# -------------------------------------------------------------- option values


@pytest.mark.timeout(QUICK)
@pytest.mark.parametrize("argv,phrase", [
    (["cdf", "cart(C(5)^3)", "1", "--tol", "5e-324"], "1e-12 <= tol < 1"),
    (["cdf", "cart(C(5)^3)", "1", "--tol", "1"], "tol < 1"),
    (["cdf", "cart(C(5)^3)", "1", "--tol", "nan"], "not a number"),
    (["top", "cart(C(5)^3)", "-m", "1000000000"], "from 1 to 100,000"),
    (["spectrum", "cart(C(5)^3)", "--limit", "1" + "0" * 30], "positive whole number"),
    (["moments", "cart(C(5)^3)", "--order", "1000"], "from 1 to 40"),
    (["plot", "cart(C(5)^3)", "-o", "x.png", "--bins", "0"], "positive whole number"),
    (["invariants", "cart(C(5)^3)", "--time", "-1"], "0 <= t <= 1e6"),
    (["invariants", "cart(C(5)^3)", "--time", "inf"], "not a number"),
    (["quantile", "cart(C(5)^3)", "1"], "0 < q < 1"),
    (["quantile", "cart(C(5)^3)", "1e-320"], "0 < q < 1"),
    (["cdf", "cart(C(5)^3)", "1e400"], "out of range"),
])
def test_option_values_out_of_range_are_refused(argv, phrase, capsys):
    assert_refused(run(argv, capsys), phrase)


@pytest.mark.timeout(QUICK)
def test_negative_points_are_numbers_not_options(capsys):
    out = assert_answered(run(["count", "cart(K(2)^4)", "-1/2", "1/2", "--json"], capsys))
    # source: Q_4 spectrum 4 - 2j with multiplicity C(4, j): C(4, 2) = 6 zeros (textbook)
    assert json.loads(out)["estimate"] == 6


@pytest.mark.timeout(QUICK)
def test_very_long_and_deeply_nested_expressions_are_refused(capsys):
    long_text = "cart(" + ", ".join(f"C({n})" for n in range(3, 20003)) + ")"
    assert len(long_text) > 100_000
    assert_refused(run(["spectrum", long_text], capsys), "characters", "over the cap")
    deep = "cart(" * 5000 + "C(5)" + ")" * 5000
    assert_refused(run(["top", deep], capsys), "nests more than 50")
    deep_list = "dicycle(3, w=" + "[" * 3000 + "1" + "]" * 3000 + ")"
    assert_refused(run(["top", f"cart({deep_list})"], capsys), "expected a number in the list")


@pytest.mark.timeout(QUICK)
def test_output_into_proc_sys_or_an_overlong_name_is_refused(tmp_path, capsys):
    base = ["spectrum", "cart(C(5)^2)", "--output"]
    assert_refused(run(base + ["/proc/self/powerspec.json"], capsys), "/proc")
    assert_refused(run(base + ["/sys/powerspec.json"], capsys), "/sys")
    assert_refused(run(base + [str(tmp_path / ("x" * 300))], capsys), "longer than 255")
    assert_refused(run(base + ["/" + "d/" * 3000 + "x"], capsys), "longer than 4095")
    assert_refused(run(base + [str(tmp_path / "no" / "such" / "dir.json")], capsys),
                   "does not exist")


# -------------------------------------------------------- degenerate weights at scale


@pytest.mark.timeout(QUICK)
def test_zero_weight_cartesian_power_answers(capsys):
    out = assert_answered(run(["spectrum", "cart(scale(0, K(2))^1000000)", "--json"], capsys))
    atoms = json.loads(out)["atoms"]
    # source: scale(0, G) is the zero matrix, so every product eigenvalue is 0 (definition)
    assert len(atoms) == 1 and float(atoms[0][0]) == 0.0


@pytest.mark.timeout(QUICK)
def test_zero_weight_direct_power_answers(capsys):
    out = assert_answered(run(["top", "direct(scale(0, K(2))^1000000000)", "--json"], capsys))
    atoms = json.loads(out)["atoms"]
    # source: scale(0, G) is the zero matrix, so every product eigenvalue is 0 (definition)
    assert len(atoms) == 1 and float(atoms[0][0]) == 0.0


@pytest.mark.timeout(QUICK)
def test_direct_power_of_k2_answers(capsys):
    out = assert_answered(run(["spectrum", "direct(K(2)^1000000000)", "--json"], capsys))
    values = sorted(float(a[0]) for a in json.loads(out)["atoms"])
    # source: K(2) has eigenvalues +-1, so the direct power has +-1, 2^(k-1) times each (parity)
    assert values == [-1.0, 1.0]


# -------------------------------------------------------------- huge numbers


HUGE = "9" * 400


@pytest.mark.timeout(QUICK)
@pytest.mark.parametrize("argv,phrase", [
    (["spectrum", f"cart(scale({HUGE}, K(2))^2)"], "out of range"),
    (["spectrum", f"cart(dicycle(2, w=[{HUGE}, 1])^2)"], "out of range"),
    (["spectrum", f"mix({HUGE}, 1, K(2)^2)"], "out of range"),
    (["spectrum", "mix(1e400, 1, K(2)^2)"], "between 1e-100 and 1e100"),
    (["spectrum", "mix(0, 1e-320, K(2)^2)"], "between 1e-100 and 1e100"),
    (["spectrum", "cart(loops(1e999999999, K(2))^2)"], "too large"),
    (["spectrum", "cart(C(5)^1e400)"], "between 1 and 10^18"),
    (["spectrum", f"cart(C({HUGE})^2)"], "out of range"),
    (["cdf", "cart(C(5)^3)", HUGE], "out of range"),
    (["count", "cart(C(5)^3)", "0", HUGE], "out of range"),
    (["quantile", "cart(C(5)^3)", HUGE], "0 < q < 1"),
    (["cdf", "cart(C(5)^3)", "0", "--tol", HUGE], "tol < 1"),
    (["invariants", "cart(C(5)^3)", "--time", HUGE], "t <= 1e6"),
    (["spectrum", "cart(scale(" + "1" * 10_000 + ", K(2))^2)"], "too long"),
])
def test_huge_numbers_are_refused_with_a_short_echo(argv, phrase, capsys):
    assert_refused(run(argv, capsys), phrase)


# --------------------------------------------------- work that grows with the text


@pytest.mark.timeout(WORK)
def test_equal_operands_are_merged_into_powers(capsys):
    thousand = "cart(" + ", ".join(["C(5)"] * 1000) + ")"
    data = json.loads(assert_answered(run(["top", thousand, "-m", "1", "--json"], capsys)))
    assert data["expression"] == "cart(C(5)^1000)"
    # source: the top eigenvalue of cart(C(5)^k) is 2k (C(5) is 2-regular)
    assert float(data["atoms"][0][0]) == 2000.0


@pytest.mark.timeout(WORK)
def test_twelve_thousand_equal_operands_cost_what_one_power_costs(capsys):
    twelve_thousand = "cart(" + ", ".join(["C(5)"] * 12_000) + ")"
    assert_refused(run(["spectrum", twelve_thousand], capsys), "cart(C(5)^12000)", "limit")


@pytest.mark.timeout(QUICK)
@pytest.mark.parametrize("argv", [["top", "mix(2, 1, K(1)^9999999)"],
                                  ["invariants", "mix(2, 1, P(3)^1000000000)"],
                                  ["spectrum", "mix(2, 1, " + ", ".join(["P(2)"] * 10_001) + ")"]])
def test_long_left_folds_are_refused_up_front(argv, capsys):
    assert_refused(run(argv, capsys), "left fold", "10000")


@pytest.mark.timeout(QUICK)
def test_symbolic_numeric_huge_power_is_answered_or_refused_quickly(capsys):
    code, out, err = run(["spectrum", "cart(P(3)^1000000000)", "--symbolic"], capsys)
    assert code in (0, 2) and "Traceback" not in err


@pytest.mark.timeout(QUICK)
def test_symbolic_large_file_is_refused_quickly(tmp_path, capsys):
    f = tmp_path / "ring.txt"
    f.write_text("".join(f"{i} {(i + 1) % 5000}\n" for i in range(5000)))
    assert_refused(run(["spectrum", f'cart(load("{f}")^2)', "--symbolic"], capsys))


# ------------------------------------------------------------------------ files


@pytest.mark.timeout(QUICK)
def test_matrix_market_declared_size_is_checked_before_allocating(tmp_path, capsys):
    big = tmp_path / "big.mtx"
    big.write_text("%%MatrixMarket matrix coordinate real general\n"
                   "1000000000 1000000000 1\n1 1 1.0\n")
    assert_refused(run(["spectrum", f'load("{big}")'], capsys), "1000000000 vertices", "cap")
    many = tmp_path / "many.mtx"
    many.write_text("%%MatrixMarket matrix coordinate real general\n10 10 99999999999\n1 1 1\n")
    assert_refused(run(["spectrum", f'load("{many}")'], capsys), "99999999999 entries", "cap")
    dense = tmp_path / "dense.mtx"
    dense.write_text("%%MatrixMarket matrix array real general\n100000 100000\n1\n")
    assert_refused(run(["spectrum", f'load("{dense}")'], capsys), "entries", "cap")


@pytest.mark.timeout(QUICK)
def test_load_errors_name_the_line_never_its_content(tmp_path, capsys):
    secret = tmp_path / "passwd"
    secret.write_text("root:x:0:0:root:/root:/bin/bash\n")
    code, out, err = run(["spectrum", f'load("{secret}")'], capsys)
    assert_refused((code, out, err), "line 1")
    assert "root:x" not in err and "/bin/bash" not in err
    mtx = tmp_path / "leak.mtx"
    mtx.write_text("%%MatrixMarket matrix coordinate real general\n2 2 1\n1 2 hunter2\n")
    code, out, err = run(["spectrum", f'load("{mtx}")'], capsys)
    assert_refused((code, out, err), "line 3")
    assert "hunter2" not in err


# ------------------------------------------------------------------ writing output


@pytest.mark.timeout(QUICK)
def test_output_onto_special_files_and_links_is_refused_and_leaves_them_alone(tmp_path, capsys):
    base = ["spectrum", "cart(C(5)^2)", "--output"]
    fifo = tmp_path / "pipe"
    os.mkfifo(fifo)
    assert_refused(run(base + [str(fifo)], capsys), "named pipe")
    assert stat.S_ISFIFO(os.lstat(fifo).st_mode)
    assert_refused(run(base + ["/dev/null"], capsys), "device")
    assert stat.S_ISCHR(os.lstat("/dev/null").st_mode)
    target = tmp_path / "real.txt"
    target.write_text("keep")
    link = tmp_path / "link.txt"
    link.symlink_to(target)
    assert_refused(run(base + [str(link)], capsys), "symbolic link")
    assert link.is_symlink() and target.read_text() == "keep"
    assert_refused(run(base + [str(tmp_path)], capsys), "folder")
    assert sorted(p.name for p in tmp_path.iterdir()) == ["link.txt", "pipe", "real.txt"]


@pytest.mark.timeout(QUICK)
def test_output_keeps_the_mode_of_an_existing_file(tmp_path, capsys):
    target = tmp_path / "answer.json"
    target.write_text("old")
    os.chmod(target, 0o640)
    assert run(["spectrum", "cart(K(2)^3)", "--json", "--output", str(target)], capsys)[0] == 0
    assert stat.S_IMODE(os.stat(target).st_mode) == 0o640
    assert json.loads(target.read_text())["order"] == 8
    fresh = tmp_path / "fresh.json"
    assert run(["spectrum", "cart(K(2)^3)", "--output", str(fresh)], capsys)[0] == 0
    umask = os.umask(0)
    os.umask(umask)
    assert stat.S_IMODE(os.stat(fresh).st_mode) == 0o666 & ~umask


@pytest.mark.timeout(QUICK)
@pytest.mark.parametrize("interrupt,status", [(KeyboardInterrupt, 130), ("sigterm", 143),
                                              (OSError(28, "No space left on device"), 2)])
def test_interrupted_write_leaves_no_temporary_file(interrupt, status, tmp_path, capsys,
                                                    monkeypatch):
    target = tmp_path / "answer.txt"
    target.write_text("previous answer")

    def fail(fd):
        if interrupt == "sigterm":
            os.kill(os.getpid(), signal.SIGTERM)
            time.sleep(QUICK)  # the CLI's handler raises while this sleeps
        raise interrupt

    monkeypatch.setattr(os, "fsync", fail)
    code, out, err = run(["spectrum", "cart(K(2)^3)", "--output", str(target)], capsys)
    assert code == status and err.count("\n") == 1 and "Traceback" not in err
    assert [p.name for p in tmp_path.iterdir()] == ["answer.txt"]
    assert target.read_text() == "previous answer"
    assert signal.getsignal(signal.SIGTERM) is not cli._raise_terminated  # handler restored


# ------------------------------------------------------------------ noise on stderr


@pytest.mark.timeout(WORK)
@pytest.mark.parametrize("argv", [
    ["top", "direct(scale(1e100, K(3))^5)", "-m", "2"],
    ["cdf", "cart(C(5)^1000)", "1e308"],
    ["cdf", "cart(C(5)^1000000)", "-1e308"],
    ["spectrum", "direct(scale(1e-100, K(3))^4)"],
])
def test_no_warning_reaches_stderr(argv, capsys):
    assert_answered(run(argv, capsys))


@pytest.mark.timeout(QUICK)
def test_long_negative_moment_prints_as_text(capsys):
    out = assert_answered(run(["moments", "mix(-1, 10000000000, P(1), C(3)^3)", "--order", "3"],
                              capsys))
    assert "tr(M^p)" in out


@pytest.mark.timeout(QUICK)
def test_internal_errors_are_one_line_with_status_1(capsys, monkeypatch):
    def broken(*args, **kwargs):
        raise ZeroDivisionError("x" * 10_000)

    monkeypatch.setattr(cli.planner, "top", broken)
    code, out, err = run(["top", "cart(C(5)^3)"], capsys)
    assert code == 1 and out == "" and err.count("\n") == 1
    assert "bug" in err and "POWERSPEC_DEBUG=1" in err and "Traceback" not in err
    assert len(err) < 500
    monkeypatch.setenv("POWERSPEC_DEBUG", "1")
    with pytest.raises(ZeroDivisionError):
        main(["top", "cart(C(5)^3)"])


@pytest.mark.timeout(QUICK)
def test_out_of_memory_does_not_blame_the_limit(capsys, monkeypatch):
    def exhausted(*args, **kwargs):
        raise MemoryError

    monkeypatch.setattr(cli.planner, "spectrum", exhausted)
    result = run(["spectrum", "cart(C(5)^3)"], capsys)
    assert_refused(result, "out of memory")
    assert "--limit" not in result[2]


@pytest.mark.timeout(QUICK)
def test_forked_workers_die_quietly_on_sigterm(capfd):
    # The symbolic bridge runs sympy in a forked worker and terminates it on timeout; the
    # worker inherits the CLI's SIGTERM handler, which must then just let it die.
    import multiprocessing

    ctx = multiprocessing.get_context("fork")
    with cli._sigterm_raises():
        proc = ctx.Process(target=time.sleep, args=(QUICK,), daemon=True)
        proc.start()
        time.sleep(0.5)
        proc.terminate()
        proc.join()
    assert proc.exitcode == -signal.SIGTERM
    assert "Traceback" not in capfd.readouterr().err


@pytest.mark.timeout(WORK)
def test_direct_power_with_a_huge_zero_count_answers(capsys):
    k = 10**6
    out = assert_answered(run(["top", f"direct(P(3)^{k})", "-m", "3", "--json"], capsys))
    atoms = json.loads(out)["atoms"]
    # source: P(3) has eigenvalues sqrt 2, 0, -sqrt 2 (textbook 2cos(pi j/4)); the direct power's
    # non-zero eigenvalues are +-2^(k/2), 2^(k-1) each (sign parity), and 0 has multiplicity
    # 3^k - 2^k (every product with a zero factor); the zero count written out with exact ints
    assert [a[0] for a in atoms][1] == 0
    half = str(fmpz(2) ** (k - 1))  # FLINT writes the digits (Python caps str(int) at 4300)
    assert atoms[0][1] == half == atoms[2][1]
    assert atoms[1][1] == "3^1000000 - " + str(fmpz(2) ** k)
    code, text, err = run(["top", f"direct(P(3)^{k})", "-m", "3"], capsys)
    assert code == 0 and "(an integer of 477122 digits)" in text  # 3^k has 477122 digits


@pytest.mark.timeout(WORK)
def test_text_of_a_spectrum_with_counts_past_python_digit_cap(capsys):
    k = 100_000
    code, out, err = run(["spectrum", f"cart(K(2)^{k})"], capsys)
    assert code == 0 and err == ""
    # source: Q_k has eigenvalues k - 2j with multiplicity C(k, j) (textbook); the nullity is
    # C(k, k/2), here with 30101 digits (exact integers, written by FLINT), and its share
    # C(k, k/2) / 2^k ~ sqrt(2 / (pi k)) = 0.002523... (Stirling; checked against mpmath)
    digits = str(fmpz(math.comb(k, k // 2)))
    share = mpmath.binomial(k, k // 2) / mpmath.mpf(2) ** k
    zero = next(line for line in out.splitlines() if line.strip().startswith("zero"))
    lead = round(int(digits[:13]) / 10)  # the 12 leading digits, rounded
    assert f"nullity {str(lead)[0]}.{str(lead)[1:]}e+{len(digits) - 1} (an integer of " \
           f"{len(digits)} digits)" in zero
    printed = mpmath.mpf(zero.split("share ")[1].split()[0])
    assert abs(printed - share) < 1e-13
