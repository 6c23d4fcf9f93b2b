"""Invariants that sum over the whole spectrum: spanning trees, Kirchhoff index, energy, Estrada, heat.

Sources, tightest first (each entry's method names the one that answered;
brackets from several sources are intersected):

* closed forms -- e^(X(+)Y) = e^X (x) e^Y makes the Estrada index and the
  heat trace multiplicative over Cartesian products; |lambda mu| makes the
  energy multiplicative over direct products;
* the exact spectrum (small products) or the symmetry tier's certified
  blocks (Laplacians that do not factor): certified sums with exact
  multiplicities; the matrix-tree theorem tau = prod(non-zero alpha) / N
  (Kirchhoff), exact as an integer when the spectrum is;
* the extremes: the m largest (smallest) atoms exactly plus the rest of the
  spectrum bounded by the last atom and the other end (exponential sums);
* two exact moments and the spectrum's ends (:mod:`~powerspec.tiers.invariant_bounds`):
  Hermite / two-point bounds and Jensen.

Huge sums are carried as natural logs in certified ball arithmetic; the
plain value is given only when it can be written (log below 10^15).
"""

from __future__ import annotations

from fractions import Fraction

from flint import arb, fmpq, fmpz

from powerspec.algebra.kinds import MATRIX_RULES
from powerspec.algebra.tree import Leaf, Node
from powerspec.answers.answer import count_text
from powerspec.numbers.counts import BigCount, power_product, to_arb
from powerspec.numbers.hp import as_ball, real_part, working
from powerspec.queries.invariants_context import Context
from powerspec.queries.invariants_entries import bracket, certified, entry, unavailable
from powerspec.queries.invariants_structure import Count, order_count
from powerspec.tiers.invariant_blocks import plan_text
from powerspec.tiers.invariant_bounds import log_mean_exp_bounds, log_sum_exp, mean_bounds

LOG_WRITABLE = 1e15
"""A sum is also given as a plain number when its natural log is below this."""

TAIL_ATOMS = 4
"""Extreme atoms taken exactly in the tail bounds of exponential sums."""

EXACT_COUNT_BITS = 1 << 20
"""An exact spanning-tree count is expanded to an int up to this many bits (else kept factored)."""


def _ball(x) -> arb:
    with working():
        return as_ball(real_part(x))


def _atoms(sp):
    """(ball, multiplicity) pairs, from the 160-bit atoms when the spectrum keeps them."""
    balls = list(sp.hp) if getattr(sp, "hp", None) is not None else sp.balls()
    return list(zip(balls, sp.mult.tolist(), strict=True))


def _log_count(m) -> arb:
    with working():
        return to_arb(m).log()


def _pair(lo_list, hi_list):
    """(largest lower end, smallest upper end) over the finite balls given (None when none)."""
    lo = hi = None
    with working():
        for x in lo_list:
            if x is not None and x.is_finite():
                lo = x.lower() if lo is None else lo.max(x.lower())
        for x in hi_list:
            if x is not None and x.is_finite():
                hi = x.upper() if hi is None else hi.min(x.upper())
    return lo, hi


# ------------------------------------------------------------------ Laplacian atoms
def _nonzero_laplacian(cx: Context):
    """([(ball, mult)] of the non-zero Laplacian eigenvalues, method) for a connected graph, or None."""
    comps = cx.shape.c if cx.shape is not None else None
    if comps != 1:
        return None
    atoms, how = None, ""
    sp = cx.full("laplacian")
    how = "the exact Laplacian spectrum"
    if sp is None and cx.exact_kind("laplacian"):
        sp = cx.covering("laplacian")
        how = "the extreme Laplacian atoms, which hold the whole spectrum"
    if sp is not None:
        atoms = [(b, m) for b, m in _atoms(sp)]
    elif not cx.exact_kind("laplacian"):
        bs = cx.blocks()
        if bs is not None:
            atoms = bs.balls(nonzero=False)
            how = "the " + plan_text(bs)
    if atoms is None:
        return None
    zero, rest = [], []
    with working():
        for b, m in atoms:
            ball = b if not isinstance(b, fmpq) else arb(b)
            (zero if ball.contains(0) else rest).append((b, m))
    if sum(m for _, m in zero) != 1:
        return None  # the zero eigenvalue cannot be told apart at this precision
    return rest, how


def _exact_tree_count(rest, node):
    """prod alpha^m / N as an exact integer (int or factored BigCount) when every alpha is an integer."""
    if not all(isinstance(b, fmpq) and b.q == 1 and b.p > 0 for b, _ in rest):
        return None
    if not all(isinstance(m, int) for _, m in rest):
        return None
    exps: dict[int, int] = {}
    if any(int(b.p).bit_length() > 96 for b, _ in rest):
        return None
    for b, m in rest:
        for p, e in _factor(int(b.p)).items():
            exps[p] = exps.get(p, 0) + e * m
    n_terms = order_count(node).terms
    if len(n_terms) != 1:
        return None
    (key, coeff), = n_terms.items()
    if coeff.denominator != 1 or coeff.numerator.bit_length() > 96:
        return None
    n_fac = _factor(coeff.numerator) if coeff != 1 else {}
    for p, e in key:
        n_fac[p] = n_fac.get(p, 0) + e
    for p, e in n_fac.items():
        exps[p] = exps.get(p, 0) - e
    if any(e < 0 for e in exps.values()):
        return None  # not an integer: the weights are not integers
    key = tuple(sorted((p, e) for p, e in exps.items() if e))
    if all(e.bit_length() < 900 for _, e in key) and \
            sum(e * p.bit_length() for p, e in key) <= EXACT_COUNT_BITS:
        return power_product([(p, e) for p, e in key])
    return BigCount({key: Fraction(1)})


def _factor(n: int) -> dict[int, int]:
    """Prime factorisation by FLINT (the exact count is only attempted for eigenvalues < 2^96)."""
    if n.bit_length() > 96:
        raise ValueError("eigenvalue too large to factor for an exact count")
    return {int(p): int(e) for p, e in fmpz(n).factor()}


def spanning_trees(cx: Context, alg_lower, lap_upper):
    """(count entry, log entry, Kirchhoff index entry) by the matrix-tree theorem.

    The count is exact when the Laplacian spectrum is (integers), the log a
    certified ball or a rigorous bracket; ``alg_lower`` / ``lap_upper`` bound
    the non-zero spectrum for the moment bracket.

    >>> from powerspec.algebra.grammar import parse
    >>> spanning_trees(Context(parse("K(6)"), 1000, "out", 1.0), None, None)[0]["value"]   # 6^4
    1296
    """
    if not cx.undirected or not cx.nonneg:
        why = "not defined here: needs an undirected graph with non-negative weights"
        return unavailable(why), unavailable(why), unavailable(why)
    comps = cx.shape.c if cx.shape is not None else None
    if comps is not None and comps != 1:
        msg = f"exact: the graph has {count_text(comps)} components, so no spanning tree"
        return (entry(0, 0, 0, msg), unavailable(msg + "; the log of 0 is not defined"),
                unavailable(msg + "; the Kirchhoff index is infinite"))
    got = _nonzero_laplacian(cx)
    if got is not None:
        rest, src = got
        with working():
            s_log = sum((to_arb(m) * _ball(b).log() for b, m in rest), arb(0))
            s_inv = sum((to_arb(m) / _ball(b) for b, m in rest), arb(0))
            log_t = s_log - cx.log_n
            kf = cx.n_arb * s_inv
        how = f"certified: matrix-tree theorem over {src}"
        exact = _exact_tree_count(rest, cx.node)
        count = entry(exact, exact, exact, "exact: matrix-tree theorem, prod of the non-zero Laplacian "
                      "eigenvalues / order (integers)") if exact is not None else _from_log(log_t, how)
        return (count, certified(log_t, how + "; natural log"),
                certified(kf, f"certified: order x sum of 1/alpha over {src}"))
    return _tree_bounds(cx, alg_lower, lap_upper)


def _tree_bounds(cx: Context, alg_lower, lap_upper):
    tau = cx.moments("laplacian")
    if tau is None or cx.shape is None:
        why = "not available: " + (cx.why(("moments", "laplacian")) or "connectivity unknown")
        return unavailable(why), unavailable(why), unavailable(why)
    with working():
        n = cx.n_arb
        mass = n - 1
        mean = n * tau[1] / mass
        var = n * tau[2] / mass - mean * mean
        lo, hi = mean_bounds("log", mean, var, alg_lower, lap_upper)
        lo_i, hi_i = mean_bounds("inv", mean, var, alg_lower, lap_upper)
        log_lo = mass * lo - cx.log_n if lo is not None else None
        log_hi = mass * hi - cx.log_n if hi is not None else None
        kf_lo = n * mass * lo_i if lo_i is not None else None
        kf_hi = n * mass * hi_i if hi_i is not None else None
    how = ("bracket: the exact tr(L), tr(L^2) and the spectrum's ends (two-point Hermite bounds, "
           "Jensen)" + ("" if alg_lower is not None else "; no positive lower bound on alpha_2"))
    count = bracket(_exp_or_none(log_lo), _exp_or_none(log_hi), how) \
        if log_hi is not None and -LOG_WRITABLE < log_hi.upper() < LOG_WRITABLE \
        and (log_lo is None or log_lo.lower() > -LOG_WRITABLE) else \
        unavailable("see log_spanning_trees (too large to write out)")
    return count, bracket(log_lo, log_hi, how + "; natural log"), bracket(kf_lo, kf_hi, how)


def _exp_or_none(x):
    if x is None:
        return None
    with working():
        return x.exp()


def _from_log(log_v: arb, how: str) -> dict:
    if log_v.upper() < LOG_WRITABLE and log_v.lower() > -LOG_WRITABLE:
        with working():
            return certified(log_v.exp(), how)
    return unavailable("see the natural log (too large to write out at 160-bit precision)")


# ------------------------------------------------------------------ energy
def energy(cx: Context, rho) -> dict:
    """The entry of sum |lambda| of A: exact sums, the direct-product closed form, or a bracket.

    >>> from powerspec.algebra.grammar import parse
    >>> energy(Context(parse("direct(K(2)^30)"), 10, "out", 1.0), None)["value"]   # 2^30 * 1
    1073741824
    """
    if not cx.undirected:
        return unavailable("not defined here: the energy sum |lambda| needs a real spectrum")
    if not cx.fold_ok:
        return unavailable(cx.fold_reason())
    sp = cx.full("adjacency")
    src = "the exact spectrum"
    if sp is None:
        sp = cx.covering("adjacency")
        src = "the extreme atoms, which hold the whole spectrum"
    if sp is not None:
        with working():
            e = sum((to_arb(m) * abs(_ball(b)) for b, m in _atoms(sp)), arb(0))
        return certified(e, f"certified: sum of |eigenvalue| over {src}")
    e = cx._get(("direct_energy",), lambda: _direct_energy(cx, cx.node))
    if e is not None:
        return certified(e, "certified: the energy is multiplicative over direct products (|lambda mu|)")
    tau = cx.moments("adjacency")
    if tau is None:
        return unavailable("not available: " + cx.why(("moments", "adjacency")))
    with working():
        n = cx.n_arb
        upper = n * tau[2].sqrt()  # Cauchy-Schwarz: sum |l| <= sqrt(N sum l^2)
        # Hoelder: sum l^2 <= (sum |l|)^(2/3) (sum l^4)^(1/3), so energy >= S2^(3/2) / S4^(1/2)
        lows = [n * (tau[2] ** 3 / tau[4]).sqrt()] if tau[4] > 0 else []
        if rho is not None and rho > 0:
            lows.append(n * tau[2] / rho)  # sum l^2 <= rho sum |l|
    lo, hi = _pair(lows, [upper])
    return bracket(lo, hi, "bracket: exact tr(A^2), tr(A^4) -- Cauchy-Schwarz (upper), Hoelder and "
                           "tr(A^2)/rho (lower)")


def _direct_energy(cx: Context, node: Node):
    if isinstance(node, Leaf) or node.comb.a != 0 or node.comb.b == 0:
        if node is cx.node and not isinstance(node, Leaf):
            return None  # the whole spectrum was already judged too large
        sp = cx.spectrum_of(node, "adjacency")
        with working():
            return sum((to_arb(m) * abs(_ball(b)) for b, m in _atoms(sp)), arb(0))
    out = arb(1)
    copies = 0
    for child, k in node.operands:
        e = _direct_energy(cx, child)
        if e is None:
            return None
        with working():
            out *= e**k
        copies += k
    b = node.comb.b
    with working():
        return out * abs(arb(b.numerator) / b.denominator) ** (copies - 1)


# ------------------------------------------------------------------ exponential sums
def _closed_log_trace(cx: Context, node: Node, kind: str, scale: arb):
    """log sum exp(scale * lambda) for trees whose kind's rule is Cartesian (multiplicative), else None.

    Operands that are not Cartesian use their exact spectrum (when it fits).
    """
    if isinstance(node, Leaf) or MATRIX_RULES[kind](node.comb) is None \
            or MATRIX_RULES[kind](node.comb).mode != "add":
        sp = cx.spectrum_of(node, kind)
        if not sp.is_real:
            return None
        with working():
            return log_sum_exp([_log_count(m) + scale * _ball(b) for b, m in _atoms(sp)])
    out = arb(0)
    for child, k in node.operands:
        r = _closed_log_trace(cx, child, kind, scale)
        if r is None:
            return None
        with working():
            out += k * r
    return out


def _tail(cx: Context, kind: str, scale: arb, top: bool):
    """(lower, upper) of log sum exp(scale lambda) from the extreme atoms and the other end."""
    near = cx.ext(kind, TAIL_ATOMS, not top)
    far = cx.ext(kind, 1, top)
    if near is None or far is None:
        return None, None
    atoms = _atoms(near)
    known = atoms if not top else atoms[::-1]
    rest_c = order_count(cx.node)
    for _, m in known:
        rest_c = rest_c - Count.of(m)
    rest = rest_c.value()
    with working():
        terms = [_log_count(m) + scale * _ball(b) for b, m in known]
        if rest == 0:
            v = log_sum_exp(terms)
            return v, v
        edge = _ball(known[-1][0])  # every other eigenvalue lies beyond this atom
        other = _ball(far.ball(0 if top else len(far) - 1))
        lr = _log_count(rest)
        e1, e2 = lr + scale * edge, lr + scale * other
        return log_sum_exp(terms + [e1.min(e2)]), log_sum_exp(terms + [e1.max(e2)])


def exp_sum(cx: Context, kind: str, lap_upper=None, alg_lower=None):
    """(entry, log entry) of sum e^lambda (adjacency) or sum e^(-t alpha) (laplacian).

    Certified balls from closed forms or exact sums, else rigorous brackets;
    the plain value only when its natural log is below LOG_WRITABLE.

    >>> from powerspec.algebra.grammar import parse
    >>> e, lg = exp_sum(Context(parse("cart(K(2)^3)"), 1000, "out", 1.0), "laplacian")
    >>> round(float(lg["value"]), 12)       # 3 log(1 + e^-2): the heat trace of K_2 is 1 + e^-2t
    0.380784033129
    """
    name = "e^lambda" if kind == "adjacency" else ("e^(-alpha)" if cx.t == 1 else f"e^(-{cx.t:g} alpha)")
    if not cx.undirected:
        why = f"not defined here: sum {name} is computed for undirected graphs only"
        return unavailable(why), unavailable(why)
    if not cx.fold_ok:
        return unavailable(cx.fold_reason()), unavailable(cx.fold_reason())
    with working():
        scale = arb(1) if kind == "adjacency" else -arb(cx.t)
    lg, how = None, ""
    rule = MATRIX_RULES[kind](cx.node.comb) if not isinstance(cx.node, Leaf) else None
    if rule is not None and rule.mode == "add":
        lg = cx._get(("closed", kind), lambda: _closed_log_trace(cx, cx.node, kind, scale))
        how = f"certified: e^(X(+)Y) = e^X (x) e^Y makes sum {name} multiplicative over Cartesian " \
              "products"
    if lg is None and cx.exact_kind(kind):
        sp = cx.full(kind)
        if sp is not None and sp.is_real:
            with working():
                lg = log_sum_exp([_log_count(m) + scale * _ball(b) for b, m in _atoms(sp)])
            how = f"certified: sum {name} over the exact spectrum"
    if lg is None and kind == "laplacian" and not cx.exact_kind("laplacian"):
        bs = cx.blocks()
        if bs is not None:
            with working():
                lg = log_sum_exp([_log_count(m) + scale * b for b, m in bs.balls(nonzero=False)])
            how = f"certified: sum {name} over the " + plan_text(bs)
    if lg is not None:
        return _from_log(lg, how), certified(lg, how + "; natural log")
    return _exp_bounds(cx, kind, scale, name, lap_upper, alg_lower)


def _exp_bounds(cx: Context, kind: str, scale: arb, name: str, lap_upper, alg_lower=None):
    lows, highs, hows = [], [], []
    if cx.exact_kind(kind):
        lo, hi = _tail(cx, kind, scale, top=(kind == "adjacency"))
        if lo is not None:
            lows.append(lo)
            highs.append(hi)
            hows.append(f"the {TAIL_ATOMS} extreme atoms exactly and the rest between the last atom "
                        "and the other end")
    tau = cx.moments(kind)
    if tau is not None:
        a, b = _support(cx, kind, lap_upper)
        with working():
            lo, hi = log_mean_exp_bounds(scale, tau[1], tau[2] - tau[1] * tau[1], a, b)
            if lo is not None:
                lows.append(cx.log_n + lo)
            if hi is not None:
                highs.append(cx.log_n + hi)
        hows.append("the exact tr(M), tr(M^2) and the spectrum's ends (two-point bounds, Jensen)")
    if kind == "laplacian" and cx.nonneg:
        highs.append(cx.log_n)  # alpha >= 0
        comps = cx.shape.c if cx.shape is not None else None
        if comps is not None:
            with working():
                c = to_arb(comps)
                lows.append(c.log())  # each zero eigenvalue (one per component) contributes 1
                if alg_lower is not None and comps == 1:
                    # the other N - 1 eigenvalues are >= alpha_2
                    highs.append(log_sum_exp([arb(0), (cx.n_arb - 1).log()
                                              + scale * alg_lower.lower()]))
            hows.append("one zero eigenvalue per component (exact count)")
    if not lows and not highs:
        why = "not available: " + (cx.why(("moments", kind)) or "no source")
        return unavailable(why), unavailable(why)
    lo, hi = _pair(lows, highs)
    how = "bracket: " + "; ".join(hows) if hows else "bracket: alpha >= 0"
    return (_bracket_exp(lo, hi, how), bracket(lo, hi, how + "; natural log"))


def _bracket_exp(lo, hi, how):
    if hi is not None and -LOG_WRITABLE < hi < LOG_WRITABLE and (lo is None or lo > -LOG_WRITABLE):
        with working():
            return bracket(lo.exp() if lo is not None else None, hi.exp(), how)
    return unavailable("see the natural log (too large to write out at 160-bit precision)")


def _support(cx: Context, kind: str, lap_upper):
    """(a, b) balls bounding the spectrum of the kind from below / above (or None)."""
    if kind == "adjacency":
        bot, top = cx.ext("adjacency", 1, True), cx.ext("adjacency", 1, False)
        a = _ball(bot.ball(0)) if bot is not None else None
        b = _ball(top.ball(len(top) - 1)) if top is not None else None
        return a, b
    a = arb(0) if cx.nonneg else None
    if cx.exact_kind("laplacian"):
        bot = cx.ext("laplacian", 1, True)
        a = _ball(bot.ball(0)) if bot is not None else a
    return a, lap_upper


__all__ = ["energy", "exp_sum", "spanning_trees"]
