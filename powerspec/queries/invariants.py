"""Spectral invariants of products and powers, exact where possible, else rigorous brackets.

Each invariant comes back as ``{"value", "lower", "upper", "method"}``.  A
value with no bounds is exact up to the float rounding of the factors'
eigenvalues (about 1e-15 relative); a bracket [lower, upper] is rigorous
(up to the same rounding, widened by :data:`WIDEN`); ``value`` None means
no rigorous number is available, and ``method`` says why.  Numbers beyond
the double range are mpmath numbers; every ``log_...`` is a natural log.

Sources of each number (in order of preference):

* the exact spectrum when it fits the size limit (:class:`Engine.spectrum`);
* the exact extreme eigenvalues of any power (:func:`extremes.extremes`);
* closed forms: e^{A(+)B} = e^A (x) e^B makes the Estrada index and the heat
  trace multiplicative over Cartesian products, |lambda mu| makes the energy
  multiplicative over direct products, components multiply over Cartesian
  and strong products;
* bounds from exact moments (:mod:`powerspec.moments`): Cauchy–Schwarz and
  Hoelder for the energy, AM–GM / AM–HM for the spanning-tree count and the
  Kirchhoff index, Jensen for Estrada and heat traces, Weyl's inequalities
  (L = D - A with the exact degree range and adjacency extremes) for the
  algebraic connectivity of non-factoring Laplacians.

>>> ans = invariants("cart(K(2)^3)")
>>> ans.invariants["spectral_radius"]["value"], ans.invariants["nullity"]["value"]
(3.0, 0)
"""

from __future__ import annotations

import math
from fractions import Fraction

import mpmath
import numpy as np
import scipy.sparse.csgraph as csgraph

from powerspec.algebra.engine import DEFAULT_LIMIT, Engine, Leaf, Node
from powerspec.algebra.extremes import extremes
from powerspec.algebra.kinds import MATRIX_RULES
from powerspec.algebra.moments import MomentEngine, exact_degrees
from powerspec.answers.answer import Answer
from powerspec.errors import InputError, NotExactError, PowerspecError, SizeLimitError
from powerspec.numbers.counts import BigCount
from powerspec.queries.common import resolve

EXACT_LIMIT = 200_000
"""Distinct eigenvalues the invariants query enumerates by default (keeps queries fast)."""

FULL_BITS = 1 << 27
"""Most bits of exact multiplicities (atoms x bits of the order) an exact sum may enumerate."""

WIDEN = 1e-12
"""Relative widening of brackets computed from float eigenvalues."""

ZERO_TOL = 1e-9
"""An eigenvalue with |value| <= ZERO_TOL * max(1, scale) counts as zero (factor values are snapped)."""

mpf = mpmath.mpf


def _entry(value=None, lower=None, upper=None, method: str = "") -> dict:
    return {"value": _num(value), "lower": _num(lower), "upper": _num(upper), "method": method}


def _num(x):
    """float when it fits a double with full precision, else mpmath; ints stay ints."""
    if x is None or isinstance(x, int):
        return x
    if isinstance(x, Fraction):
        x = mpf(x.numerator) / x.denominator
    if isinstance(x, mpmath.mpf):
        if x == 0 or (1e-300 < abs(x) < 1e300):
            return float(x)
        return x
    return float(x)


def _down(x):
    return None if x is None else x - abs(x) * WIDEN


def _up(x):
    return None if x is None else x + abs(x) * WIDEN


def _big_mpf(n: int) -> mpmath.mpf:
    """mpf of a huge int without converting every bit (relative error 2^-120)."""
    bl = n.bit_length()
    if bl <= 240:
        return mpf(n)
    return mpmath.ldexp(mpf(n >> (bl - 240)), bl - 240)


def _order_mpf(n) -> mpmath.mpf:
    if isinstance(n, BigCount):
        return mpmath.fprod(mpmath.power(b, e) for b, e in n.factors.items())
    return _big_mpf(n)


def _log_order(n) -> mpmath.mpf:
    if isinstance(n, BigCount):
        return mpmath.fsum(e * mpmath.log(b) for b, e in n.factors.items())
    return mpmath.log(_big_mpf(n))


def _nonnegative(node: Node) -> bool:
    """True when every weight and every product coefficient is >= 0."""
    if isinstance(node, Leaf):
        a = node.factor.adjacency
        return bool(a.nnz == 0 or a.data.min() >= 0)
    return node.comb.a >= 0 and node.comb.b >= 0 and all(_nonnegative(c) for c, _ in node.operands)


def _modes(node: Node) -> set:
    """The combination modes used anywhere in the tree ('add', 'mul', None) and 'direct'."""
    if isinstance(node, Leaf):
        return set()
    out = {node.comb.mode}
    if node.comb.a == 0:
        out.add("direct")
    for c, _ in node.operands:
        out |= _modes(c)
    return out


class _Context:
    """Caches the spectra, extremes and moments one invariants query needs."""

    def __init__(self, node: Node, limit: int, degrees: str):
        self.node = node
        self.eng = Engine(limit, direction=degrees)
        # extremes() enumerates whatever fits its engine; keep that enumeration small in bits
        bits = max(node.order.bit_length(), 1)
        self.ext_eng = Engine(max(1, min(limit, FULL_BITS // bits)), direction=degrees)
        self.degrees = degrees
        self.N = node.order
        self.logN = _log_order(node.order)
        self.undirected = not node.directed
        self.nonneg = _nonnegative(node)
        self._full: dict = {}
        self._ext: dict = {}
        self._tau: dict = {}

    def full(self, kind: str):
        """The exact spectrum of the kind, or None when it is too large or not exact."""
        if kind not in self._full:
            sp = None
            try:
                bits = self.node.order.bit_length()
                small = self.eng.bound(self.node, kind) * bits <= FULL_BITS
                if small and self.eng.fits(self.node, kind):
                    sp = self.eng.spectrum(self.node, kind)
            except (SizeLimitError, NotExactError, MemoryError):
                sp = None
            self._full[kind] = sp
        return self._full[kind]

    def ext(self, kind: str, m: int, bottom: bool):
        """[(value, multiplicity), ...] of the m extreme distinct eigenvalues, or None."""
        key = (kind, m, bottom)
        if key not in self._ext:
            try:
                sp, _ = extremes(self.ext_eng, self.node, kind, m, bottom)
                self._ext[key] = sp.atoms()
            except (SizeLimitError, NotExactError):
                self._ext[key] = None
        return self._ext[key]

    def exact_kind(self, kind: str) -> bool:
        """True when the kind's spectrum is an exact function of the factors' spectra."""
        try:
            return _exact_kind(self.eng, self.node, kind)
        except PowerspecError:
            return False

    def tau(self, kind: str, p: int):
        """Exact tr(M^p)/order as a Fraction, or None when it is too large."""
        key = (kind, p)
        if key not in self._tau:
            try:
                self._tau[key] = MomentEngine(p, self.degrees).normalised(self.node, kind)[p]
            except (SizeLimitError, NotExactError):
                self._tau[key] = None
        return self._tau[key]


def _exact_kind(eng: Engine, node: Node, kind: str) -> bool:
    if isinstance(node, Leaf):
        return True
    if MATRIX_RULES[kind](node.comb) is not None:
        return all(_exact_kind(eng, c, kind) for c, _ in node.operands)
    return eng.is_regular(node)


def _f(x) -> mpmath.mpf:
    if isinstance(x, complex):
        raise TypeError
    return x if isinstance(x, mpmath.mpf) else mpf(float(x))


def _is_zero(v, scale=1.0) -> bool:
    return abs(complex(v)) <= ZERO_TOL * max(1.0, scale) if not isinstance(v, mpmath.mpf) else v == 0


# --------------------------------------------------------------------------- invariants


def _spectral_radius(cx: _Context) -> tuple[dict, dict, object]:
    sp = cx.full("adjacency")
    rho = None
    how = ""
    if sp is not None:
        vals = [abs(v) for v, _ in sp.atoms()]
        rho = max(vals, key=lambda v: _f(v)) if vals else 0.0
        how = "exact: largest |eigenvalue| of the exact spectrum"
    elif cx.undirected:
        top, bot = cx.ext("adjacency", 1, False), cx.ext("adjacency", 1, True)
        if top is not None and bot is not None:
            rho = max(abs(top[-1][0]), abs(bot[0][0]), key=lambda v: _f(v))
            how = "exact: max(|largest|, |smallest|) eigenvalue by best-first extremes"
    elif cx.nonneg:
        top = cx.ext("adjacency", 1, False)
        if top is not None:
            rho = abs(top[-1][0].real if isinstance(top[-1][0], complex) else top[-1][0])
            how = "exact: Perron root = largest real eigenvalue (non-negative weights)"
    if rho is None:
        why = "not available: directed graph with negative weights whose spectrum is too large"
        return _entry(method=why), _entry(method=why), None
    rho_m = _f(rho)
    log_rho = mpmath.log(rho_m) if rho_m > 0 else None
    return (_entry(rho_m, method=how),
            _entry(log_rho,
                   method=how + "; natural log" if log_rho is not None else "spectral radius 0"),
            rho_m)


def _epidemic(cx: _Context, rho) -> dict:
    if rho is None:
        return _entry(method="not available: the spectral radius is not available")
    if not cx.nonneg:
        return _entry(method="not defined: the threshold 1/lambda_max needs non-negative weights")
    if rho == 0:
        return _entry(method="not defined: lambda_max = 0 (no edges), the threshold is infinite")
    return _entry(1 / rho, method="exact: 1/lambda_max of the adjacency matrix (Perron root)")


def _degree_range(node: Node, degrees: str):
    """Exact-ish (min, max) degree as mpf when degrees and coefficients are >= 0, else None."""
    if isinstance(node, Leaf):
        d = exact_degrees(node.factor, degrees)
        lo, hi = min(d), max(d)
        if lo < 0:
            return None
        return mpf(lo.numerator) / lo.denominator, mpf(hi.numerator) / hi.denominator
    a, b = node.comb.a, node.comb.b
    if a < 0 or b < 0:
        return None
    kids = [(_degree_range(c, degrees), k) for c, k in node.operands]
    if any(r is None for r, _ in kids):
        return None
    out = []
    for j in (0, 1):
        vals = [(r[j], k) for r, k in kids]
        mode = node.comb.mode
        if mode == "add":
            out.append(mpmath.fsum(v * k for v, k in vals))
        elif mode == "mul":
            c, f = node.comb.to_s()
            s = mpmath.fprod(mpmath.power(c + f * v, k) for v, k in vals)
            out.append((s - c) / f)
        else:
            seq = [v for v, k in vals for _ in range(k)]
            acc = seq[0]
            for v in seq[1:]:
                acc = a * (acc + v) + b * acc * v
            out.append(acc)
    return out[0], out[1]


def _has_loops(node: Node) -> bool:
    return any(f.has_loops for f in node.leaves())


def _algebraic_connectivity(cx: _Context) -> tuple[dict, object]:
    """(entry, lower bound or exact value usable for other bounds)."""
    if not cx.undirected:
        why = "not defined here: the algebraic connectivity needs an undirected graph"
        return _entry(method=why), None
    if cx.exact_kind("laplacian"):
        bot = cx.ext("laplacian", 2, True)
        if bot is not None:
            v0, m0 = bot[0]
            val = v0 if (m0 >= 2 or len(bot) < 2) else bot[1][0]
            val = _f(val)
            if _is_zero(val):
                val = mpf(0)
            how = "exact: 2nd smallest Laplacian eigenvalue (with multiplicity)"
            return _entry(val, method=how), val
    rng = _degree_range(cx.node, cx.degrees)
    top = cx.ext("adjacency", 2, False)
    if rng is None or top is None or not cx.nonneg:
        return _entry(method="not available: the Laplacian does not factor and no Weyl bracket applies "
                             "(negative weights or adjacency extremes out of reach)"), None
    d_min, d_max = rng
    top1 = top[-1]
    lam2 = _f(top1[0]) if top1[1] >= 2 or len(top) < 2 else _f(top[-2][0])
    # Weyl, ascending order: l_(i+j-1)(X+Y) >= l_i(X) + l_j(Y) and l_(i+j-n)(X+Y) <= l_i(X) + l_j(Y)
    # with X = D, Y = -A: (i, j) = (1, 2) gives the lower, (n, 2) the upper bound.
    lower = max(mpf(0), _down(d_min - lam2))
    upper = _up(d_max - lam2)
    how = ("bracket (Weyl): lambda_2(D - A) in [d_min - lambda_2(A), d_max - lambda_2(A)] with the "
           "exact "
           "degree range and adjacency extremes")
    if not _has_loops(cx.node) and isinstance(cx.N, int) and cx.N > 1:
        # Fiedler: alpha_2 <= N/(N-1) * min_i L_ii, and L_ii = d_i without loops
        fied = _up(mpf(cx.N) / (cx.N - 1) * d_min)
        if fied < upper:
            upper, how = fied, how + "; Fiedler's N/(N-1) d_min (upper)"
    return _entry(None, lower, upper, how + "; the Laplacian does not factor"), (
        lower if lower > 0 else None)


def _spectral_gap(cx: _Context) -> dict:
    if not cx.undirected:
        return _entry(method="not defined here: the adjacency gap needs a real spectrum (undirected)")
    top = cx.ext("adjacency", 2, False)
    if top is None:
        return _entry(method="not available: the adjacency extremes are out of reach")
    v1, m1 = top[-1]
    gap = mpf(0) if (m1 >= 2 or len(top) < 2) else _f(v1) - _f(top[-2][0])
    return _entry(gap, method="exact: lambda_1 - lambda_2 of the adjacency matrix "
                              "(largest minus second largest, with multiplicity)")


def _zero_count(sp) -> int:
    scale = max((abs(complex(v)) for v, _ in sp.atoms() if not isinstance(v, mpmath.mpf)), default=1.0)
    return sum(m for v, m in sp.atoms() if _is_zero(v, scale))


def _direct_nonzero(node: Node, eng: Engine):
    """Number of non-zero adjacency eigenvalues for pure direct-type trees, else None."""
    if isinstance(node, Leaf):
        sp = eng.spectrum(node, "adjacency")
        return node.order - _zero_count(sp)
    if node.comb.a != 0:
        return None
    out = 1
    for c, k in node.operands:
        nz = _direct_nonzero(c, eng)
        if nz is None:
            return None
        if k * max(nz.bit_length(), 1) > (1 << 22):
            raise SizeLimitError("the nullity would have more than a million digits")
        out *= nz**k
    return out


def _nullity(cx: _Context) -> dict:
    sp = cx.full("adjacency")
    note = " (zero = |eigenvalue| <= 1e-9 * scale; factor eigenvalues near integers are snapped)"
    if sp is not None:
        return _entry(_zero_count(sp), method="exact: multiplicity of 0 in the exact spectrum" + note)
    try:
        nz = _direct_nonzero(cx.node, cx.eng)
    except SizeLimitError as exc:
        return _entry(method=f"not available: {exc}")
    if nz is not None and isinstance(cx.N, int):
        return _entry(cx.N - nz, method="exact: direct product, non-zero eigenvalues are products of "
                                        "non-zero factor eigenvalues" + note)
    return _entry(method="not available: the spectrum is too large and 0 is not isolated by a "
                         "closed form for this product")


def _leaf_components(node: Leaf) -> int:
    return int(csgraph.connected_components(node.factor.adjacency, directed=False)[0])


def _components_rule(node: Node):
    if isinstance(node, Leaf):
        return _leaf_components(node)
    if not (node.comb.a > 0 and node.comb.b >= 0):
        return None
    out = 1
    for c, k in node.operands:
        r = _components_rule(c)
        if r is None:
            return None
        out *= r**k
    return out


def _components(cx: _Context):
    if not cx.undirected or not cx.nonneg:
        why = "not defined here: needs an undirected graph with non-negative weights"
        return _entry(method=why), None
    if cx.exact_kind("laplacian"):
        bot = cx.ext("laplacian", 1, True)
        if bot is not None:
            v, m = bot[0]
            c = m if _is_zero(v) else 0
            if c:
                return _entry(c, method="exact: multiplicity of the Laplacian eigenvalue 0"), c
    c = _components_rule(cx.node) if all(m != "direct" for m in _modes(cx.node)) else None
    if c is not None and not isinstance(c, BigCount):
        return _entry(c, method="exact: components multiply over Cartesian and strong products "
                                "(graph theory, not the spectrum)"), c
    return _entry(method="not available: the Laplacian does not factor for this product"), None


def _log_trees(cx: _Context, comps, alg_lower) -> tuple[dict, dict]:
    if not cx.undirected or not cx.nonneg:
        why = "not defined here: needs an undirected graph with non-negative weights"
        return _entry(method=why), _entry(method=why)
    sp = cx.full("laplacian")
    if sp is not None:
        atoms = sp.atoms()
        scale = max(abs(complex(v)) for v, _ in atoms)
        zeros = sum(m for v, m in atoms if _is_zero(v, scale))
        if zeros != 1:
            msg = f"exact: the graph has {zeros} components, so no spanning tree (count 0)"
            return (_entry(method=msg + "; log undefined"),
                    _entry(method=msg + "; Kirchhoff index infinite"))
        with mpmath.workdps(30):
            nz = [(v, m) for v, m in atoms if not _is_zero(v, scale)]
            s_log = mpmath.fsum(_big_mpf(m) * mpmath.log(_f(v)) for v, m in nz)
            s_inv = mpmath.fsum(_big_mpf(m) / _f(v) for v, m in atoms if not _is_zero(v, scale))
            log_t = s_log - cx.logN
            kf = _order_mpf(cx.N) * s_inv
        return (_entry(log_t, method="exact: matrix-tree theorem, log(prod of non-zero Laplacian "
                                     "eigenvalues / order), natural log"),
                _entry(kf, method="exact: order * sum of 1/alpha over non-zero Laplacian eigenvalues"))
    tau1 = cx.tau("laplacian", 1)
    if tau1 is None:
        why = "not available: neither the Laplacian spectrum nor its trace is within the size limit"
        return _entry(method=why), _entry(method=why)
    with mpmath.workdps(30):
        n = _order_mpf(cx.N)
        t1 = mpf(tau1.numerator) / tau1.denominator  # mean degree = tr(L) / order
        # AM-GM over the N - 1 non-zero eigenvalues of a connected graph (tau = 0 otherwise):
        up = (n - 1) * mpmath.log(n * t1 / (n - 1)) - cx.logN if t1 > 0 else None
        lo = (n - 1) * mpmath.log(alg_lower) - cx.logN if alg_lower is not None else None
        # AM-HM: sum 1/alpha >= (N-1)^2 / tr(L); sum 1/alpha <= (N-1) / alpha_2
        kf_lo = (n - 1) ** 2 / t1 if t1 > 0 else None
        kf_up = n * (n - 1) / alg_lower if alg_lower is not None else None
    ok = comps == 1
    lt = _entry(None, _down(lo) if ok else None, _up(up),
                "bracket: AM-GM with the exact tr(L) (upper; holds for any graph), "
                + ("(N-1) log(lower bound of alpha_2) (lower)" if lo is not None and ok
                   else "no positive lower bound on alpha_2 (lower unavailable)")
                + "; natural log of the spanning-tree count")
    kf = _entry(None, _down(kf_lo) if ok else None, _up(kf_up) if ok else None,
                "bracket: AM-HM with the exact tr(L) (lower), order (N-1)/alpha_2 (upper); "
                "valid for a connected graph" + ("" if ok else " -- connectivity not established"))
    return lt, kf


def _energy(cx: _Context, rho) -> dict:
    if not cx.undirected:
        return _entry(method="not defined here: the graph energy sum |lambda| needs a real spectrum")
    sp = cx.full("adjacency")
    if sp is not None:
        with mpmath.workdps(30):
            e = mpmath.fsum(_big_mpf(m) * abs(_f(v)) for v, m in sp.atoms())
        return _entry(e, method="exact: sum of |eigenvalue| over the exact spectrum")
    e = _direct_energy(cx.node, cx.eng)
    if e is not None:
        return _entry(e, method="exact: energy is multiplicative over direct products, |lambda mu|")
    tau2 = cx.tau("adjacency", 2)
    if tau2 is None:
        return _entry(method="not available: tr(A^2) is beyond the size limit")
    with mpmath.workdps(30):
        n = _order_mpf(cx.N)
        t2 = mpf(tau2.numerator) / tau2.denominator
        up = n * mpmath.sqrt(t2)  # Cauchy-Schwarz: sum|l| <= sqrt(N sum l^2)
        lo = n * t2 / rho if rho else None  # sum l^2 <= rho sum |l|
    return _entry(None, _down(lo), _up(up),
                  "bracket: tr(A^2)/rho <= energy <= sqrt(order * tr(A^2)), exact tr(A^2)")


def _direct_energy(node: Node, eng: Engine):
    if isinstance(node, Leaf):
        return mpmath.fsum(abs(mpf(float(v))) for v in node.factor.eigenvalues("adjacency"))
    if node.comb.a != 0:
        return None
    out = mpf(1)
    copies = 0
    for c, k in node.operands:
        e = _direct_energy(c, eng)
        if e is None:
            return None
        out *= mpmath.power(e, k)
        copies += k
    return out * mpmath.power(abs(mpf(node.comb.b)), copies - 1)


def _log_trace_exp(node: Node, kind: str, sign: float, degrees: str):
    """log tr(exp(sign * M)) for Cartesian-type trees (multiplicative), else None."""
    if isinstance(node, Leaf):
        vals = node.factor.eigenvalues(kind, degrees)
        if vals.dtype.kind == "c":
            return None
        v = sign * vals
        top = float(np.max(v))
        return mpf(top) + mpmath.log(mpmath.fsum(mpmath.exp(mpf(x - top)) for x in v))
    if node.comb.mode != "add":
        return None
    if kind != "adjacency" and MATRIX_RULES[kind](node.comb) is None:
        return None
    out = mpf(0)
    for c, k in node.operands:
        r = _log_trace_exp(c, kind, sign, degrees)
        if r is None:
            return None
        out += k * r
    return out


def _trace_exp(cx: _Context, kind: str, t: float, name: str) -> tuple[dict, dict]:
    sign = 1.0 if kind == "adjacency" else -t
    what = "e^lambda" if kind == "adjacency" else f"e^(-{t:g} alpha)"
    if not cx.undirected:
        why = f"not defined here: sum {what} is computed for undirected graphs only"
        return _entry(method=why), _entry(method=why)
    with mpmath.workdps(30):
        lg = _log_trace_exp(cx.node, kind, sign, cx.degrees)
        how = f"exact: e^(A(+)B) = e^A (x) e^B makes sum {what} multiplicative over Cartesian products"
        if lg is None:
            sp = cx.full(kind)
            if sp is not None:
                terms = [(_big_mpf(m), sign * _f(v)) for v, m in sp.atoms()]
                top = max(x for _, x in terms)
                lg = top + mpmath.log(mpmath.fsum(m * mpmath.exp(x - top) for m, x in terms))
                how = f"exact: sum {what} over the exact spectrum"
        if lg is not None:
            # the factors' float eigenvalues carry ~1e-15 relative error, which e^lambda turns
            # into a relative error of about 1e-15 * |lambda|: bracket the log by WIDEN * scale
            err = WIDEN * max(mpf(1), abs(lg) + cx.logN)
            how += f" (bracket: log +- {mpmath.nstr(err, 3)} for the factors' float rounding)"
            return (_entry(mpmath.exp(lg), mpmath.exp(lg - err), mpmath.exp(lg + err), how),
                    _entry(lg, lg - err, lg + err, how + "; natural log"))
        tau1 = cx.tau(kind, 1)
        if tau1 is None:
            why = "not available: the spectrum and tr(M) are beyond the size limit"
            return _entry(method=why), _entry(method=why)
        t1 = mpf(tau1.numerator) / tau1.denominator
        lo = cx.logN + sign * t1  # Jensen: mean of e^x >= e^(mean x)
        if kind == "adjacency":
            top = cx.ext("adjacency", 1, False)
            up = cx.logN + _f(top[-1][0]) if top is not None else None
            up_how = "order e^lambda_max (upper)"
        else:
            up = cx.logN if cx.nonneg else None  # alpha >= 0
            up_how = "order (upper, alpha >= 0)"
        how = f"bracket: Jensen with the exact tr(M) (lower), {up_how}"
        e_up = mpmath.exp(_up(up)) if up is not None else None
        return (_entry(None, mpmath.exp(_down(lo)), e_up, how),
                _entry(None, _down(lo), _up(up), how + "; natural log"))


def invariants(expr, *, limit: int | None = None, degrees: str = "out", t: float = 1.0) -> Answer:
    """The ``invariants`` query: spectral radius, thresholds, connectivity, tree counts, ...

    Returns an Answer whose ``invariants`` maps names to
    ``{"value", "lower", "upper", "method"}`` (see the module docstring).
    ``limit`` caps the distinct eigenvalues enumerated for exact sums
    (default :data:`EXACT_LIMIT`); ``t`` is the heat-kernel time.

    >>> inv = invariants("cart(C(4)^2)").invariants
    >>> inv["algebraic_connectivity"]["value"], inv["components"]["value"]
    (2.0, 1)
    """
    if degrees not in ("out", "in"):
        raise InputError(f"degree direction must be 'out' or 'in', got {degrees!r}")
    try:
        t = float(t)
    except (TypeError, ValueError):
        raise InputError(f"the heat-kernel time t must be a number, got {t!r}") from None
    if not math.isfinite(t) or t < 0:
        raise InputError(f"the heat-kernel time t must be finite and >= 0, got {t!r}")
    node = resolve(expr)
    cx = _Context(node, EXACT_LIMIT if limit is None else limit, degrees)
    out: dict[str, dict] = {}
    with mpmath.workdps(30):
        out["spectral_radius"], out["log_spectral_radius"], rho = _spectral_radius(cx)
        out["epidemic_threshold"] = _epidemic(cx, rho)
        out["algebraic_connectivity"], alg = _algebraic_connectivity(cx)
        out["spectral_gap"] = _spectral_gap(cx)
        out["nullity"] = _nullity(cx)
        out["components"], comps = _components(cx)
        out["log_spanning_trees"], out["kirchhoff_index"] = _log_trees(cx, comps, alg)
        out["energy"] = _energy(cx, rho)
        out["estrada_index"], out["log_estrada_index"] = _trace_exp(cx, "adjacency", t, "estrada")
        out["heat_trace"], out["log_heat_trace"] = _trace_exp(cx, "laplacian", t, "heat")
    method = ("each invariant carries its own method; values without bounds are exact up to the float "
              "rounding of the factors' eigenvalues, brackets are rigorous")
    return Answer("invariants", node.label(), "adjacency/laplacian", node.order, method,
                  invariants=out, inputs={"limit": cx.eng.limit, "degrees": degrees, "t": t},
                  notes=[f"heat_trace uses t = {t:g}; spectral_gap is lambda_1 - lambda_2 of the "
                         "adjacency matrix; logs are natural"])


__all__ = ["invariants", "EXACT_LIMIT", "DEFAULT_LIMIT"]
