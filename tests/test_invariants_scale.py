"""Invariants at scale: the inputs that crashed or hung, huge k, and JSON that parses back.

Each regression test runs under a pytest-timeout budget (not a timing assertion).
"""

from __future__ import annotations

import json
import math

import pytest

from powerspec.algebra.engine import Leaf, Product
from powerspec.algebra.grammar import parse
from powerspec.algebra.kinds import Combination
from powerspec.errors import InputError
from powerspec.factors import P
from powerspec.queries.invariants import invariants

NAMES = ["spectral_radius", "log_spectral_radius", "epidemic_threshold", "spectral_gap",
         "spectral_gap_distinct", "algebraic_connectivity", "laplacian_spectral_radius", "nullity",
         "components", "spanning_trees", "log_spanning_trees", "kirchhoff_index", "energy",
         "estrada_index", "log_estrada_index", "heat_trace", "log_heat_trace"]


def _no_constant(name):
    raise AssertionError(f"non-finite JSON constant {name}")


def _roundtrip(ans) -> dict:
    """JSON read back by the default parser, refusing NaN/Infinity (DESIGN §4)."""
    data = json.loads(ans.to_json(), parse_constant=_no_constant)
    assert set(data["invariants"]) == set(NAMES)
    for entry in data["invariants"].values():
        assert set(entry) == {"value", "lower", "upper", "method"} and entry["method"]
    ans.to_text()
    return data["invariants"]


@pytest.mark.timeout(30)
def test_strong_motif_power_no_digit_limit_traceback():
    # issue 8: invariants 'strong(motif()^10000)' ended in the integer-to-string digit limit
    inv = _roundtrip(invariants("strong(motif()^10000)"))
    assert inv["components"]["value"] == 1
    # source: log rho = k log(rho of 1 + A) up to the shift by one, i.e. close to 10^4 log(rho(I+A))
    assert inv["log_spectral_radius"]["value"] > 10000 * math.log(4.4)


@pytest.mark.timeout(30)
def test_disconnected_product_not_enumerated():
    # issue 8: a disconnected product that is not enumerated ended in ZeroDivisionError.
    # source: K(2) is connected and bipartite, so direct(K(2)^60) has 2^59 components (Weichsel 1962)
    inv = invariants("direct(K(2)^60)", limit=10).invariants
    assert inv["components"]["value"] == 2**59
    assert inv["spanning_trees"]["value"] == 0
    assert inv["kirchhoff_index"]["value"] is None and "components" in inv["kirchhoff_index"]["method"]
    assert inv["algebraic_connectivity"]["value"] == 0


@pytest.mark.timeout(30)
def test_direct_motif_million_no_hang():
    # issue 8: invariants 'direct(motif()^1000000)' ran > 20 minutes in an mpmath exp bounding the
    # Estrada index.  source: log EE >= lambda_max (one term of the sum) and log EE <= lambda_max +
    # log N (every term at most e^lambda_max): the bracket must sit inside, with lambda_max the
    # certified spectral radius (a Perron root of a non-negative matrix)
    ans = invariants("direct(motif()^1000000)")
    inv = ans.invariants
    _roundtrip(ans)
    est = inv["log_estrada_index"]
    rho = inv["spectral_radius"]["value"]
    assert est["value"] is not None
    assert abs(float(est["value"].log()) - float(rho.log())) < 1e-9


@pytest.mark.timeout(30)
def test_long_left_fold_decided_up_front():
    # issue 13: invariants 'mix(2, 1, P(3)^1000000000)' built a list of 10^9 degrees.  The grammar
    # refuses it; built directly, every spectral source is refused from the expression alone and the
    # structure (the strong product's edge set: P(3) is connected, so one component) still answers
    with pytest.raises(InputError):
        invariants("mix(2, 1, P(3)^1000000000)")
    node = Product(Combination(2, 1), ((Leaf(P(3)), 10**9),))
    inv = invariants(node).invariants
    assert "left fold" in inv["spectral_radius"]["method"]
    assert inv["components"]["value"] == 1


@pytest.mark.timeout(60)
@pytest.mark.parametrize("kind", ["cart", "direct", "strong", "mix(1, 0.5", "mix(0, 2"])
@pytest.mark.parametrize("factor", ["C(5)", "K(1, 3)", "motif()", "scale(0.000000000001, K(2))",
                                    "scale(1000000, C(4))", "dicycle(4)"])
@pytest.mark.parametrize("k", [1, 1000, 1000000000])
def test_scale_sweep_answers_and_parses(kind, factor, k):
    # issue 8's scale sweep, sampled: every combination answers (values or reasons) and its JSON reads
    # back with the default parser; every numeric bound comes with its method
    expr = f"{kind}({factor}^{k})" if not kind.startswith("mix") else f"{kind}, {factor}^{k})"
    inv = _roundtrip(invariants(expr))
    for name, entry in inv.items():
        if entry["lower"] is not None and entry["upper"] is not None:
            lo, hi = entry["lower"], entry["upper"]
            if isinstance(lo, (int, float)) and isinstance(hi, (int, float)):
                assert lo <= hi, (name, entry)


@pytest.mark.parametrize("k", [1000, 1000000, 1000000000])
def test_torus_invariants_at_scale(k):
    # source: cart(C(9)^k): spectral radius 2k (closed form), algebraic connectivity 2 - 2cos(2 pi/9)
    # (the cycle's), log Estrada = k log(sum_j e^(2cos(2 pi j/9))) (multiplicative over Cartesian
    # products), one component
    inv = invariants(f"cart(C(9)^{k})").invariants
    assert inv["spectral_radius"]["value"] == 2 * k
    c = 2 - 2 * math.cos(2 * math.pi / 9)
    ac = inv["algebraic_connectivity"]
    assert ac["lower"] <= c + 1e-15 and c - 1e-15 <= ac["upper"]
    ee = sum(math.exp(2 * math.cos(2 * math.pi * j / 9)) for j in range(9))
    le = inv["log_estrada_index"]
    want = k * math.log(ee)
    assert le["lower"] <= want * (1 + 1e-12) and want * (1 - 1e-12) <= le["upper"]
    assert inv["components"]["value"] == 1


def test_heat_time_and_limit_checks():
    with pytest.raises(InputError):
        invariants("cart(K(2)^3)", t=float("nan"))
    with pytest.raises(InputError):
        invariants("cart(K(2)^3)", t=-1)
    with pytest.raises(InputError):
        invariants("cart(K(2)^3)", degrees="sideways")
    with pytest.raises(InputError):
        invariants("cart(K(2)^3)", limit=0)


def test_directed_and_signed_products_say_why():
    # directed factors: only the Perron root (non-negative weights) and the nullity apply
    inv = invariants("direct(dicycle(4)^5)").invariants
    assert inv["spectral_radius"]["value"] == 1  # source: dicycle eigenvalues are 4th roots of unity
    assert inv["algebraic_connectivity"]["value"] is None
    assert "undirected" in inv["algebraic_connectivity"]["method"]
    signed = invariants("cart(scale(-1, C(5))^3)").invariants
    assert "non-negative" in signed["epidemic_threshold"]["method"]
    assert parse("cart(scale(-1, C(5))^3)").order == 125
