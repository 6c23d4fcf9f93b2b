"""The symbolic bridge: product spectra as sympy expressions, with the power k a symbol.

Three layers, each exact (sympy arithmetic, no floats):

* :class:`SymbolicFactor` -- a factor whose matrix has sympy entries (weights
  ``w``, loop weights ``c``, or exact rationals converted from a numeric
  :class:`~powerspec.factors.Factor`), with its eigenvalues and integer
  multiplicities from the characteristic polynomial.
* Symbolic expression trees -- :func:`symbolic_product` in Python, or
  :func:`symbolic_expression` for the expression language with a bare name
  as power, e.g. ``cart(K(2)^k)``.
* :class:`SpectrumFamily` -- the spectrum of a product whose powers may be
  symbols, as one eigenvalue expression in *composition indices* with its
  multiplicity, and :func:`closed_forms` -- spectral radius, moments, mean,
  variance, Estrada index, heat trace and spanning-tree count as
  expressions in k.

**The guard** (why a request cannot hang): eigenvalues come from
``Matrix.charpoly`` -> ``factor_list`` -> ``roots`` on each irreducible factor.
Before any root finding, powerspec refuses with :class:`SymbolicError`

* a matrix with free symbols beyond :data:`MAX_SYMBOLIC_ORDER` vertices, or
  a numeric one beyond :data:`MAX_EXACT_ORDER` vertices;
* an irreducible factor of degree >= 5 of the characteristic polynomial,
  unless it is a binomial ``a x^d + c`` or a cyclotomic polynomial (both have
  radical roots that sympy writes down directly) -- this catches every
  Abel-Ruffini case (e.g. ``x^5 - x - 1``) that would end in ``CRootOf``;

and the whole eigenvalue computation runs in a forked worker process that is
terminated after :data:`TIME_GUARD` seconds (the degree guard alone is used
where ``fork`` is unavailable).

Conventions: degrees are out-degrees (row sums); eigenvalues are listed in
descending order for adjacency and transition matrices and ascending for
laplacian, signless and normalized ones (so the base eigenvalue of a
composition is the largest adjacency / the zero Laplacian eigenvalue).

>>> fam = symbolic_family("cart(K(2)^k)")
>>> fam.eigenvalue, fam.multiplicity
(-2*j + k, binomial(k, j))
>>> fam.expand(k=3)
[(3, 1), (1, 3), (-1, 3), (-3, 1)]
"""

from __future__ import annotations

import math
import multiprocessing
import re
from collections.abc import Iterable, Sequence
from dataclasses import dataclass
from fractions import Fraction
from typing import Any

import numpy as np
import sympy

from powerspec.algebra import grammar as expressions
from powerspec.algebra.engine import Leaf, Product
from powerspec.algebra.kinds import MATRIX_RULES, NON_EXACT_REASON, PRODUCT_KINDS, Combination
from powerspec.errors import ExpressionError, InputError, NotExactError, SizeLimitError, SymbolicError
from powerspec.factors import MATRIX_KINDS, Factor, from_matrix

__all__ = [
    "MAX_EXACT_ORDER",
    "MAX_EXPAND",
    "MAX_RADICAL_DEGREE",
    "MAX_SYMBOLIC_ORDER",
    "TIME_GUARD",
    "Block",
    "SpectrumFamily",
    "SymbolicFactor",
    "SymLeaf",
    "SymProduct",
    "closed_forms",
    "evaluate",
    "finite_spectrum",
    "spectrum_family",
    "symbolic_expression",
    "symbolic_factor",
    "symbolic_family",
    "symbolic_product",
    "symbolic_report",
    "symbolic_text",
    "traces",
]

MAX_SYMBOLIC_ORDER = 12
"""Largest factor (vertices) with free symbols whose eigenvalues are attempted."""

MAX_EXACT_ORDER = 40
"""Largest factor (vertices) with purely numeric entries whose eigenvalues are attempted."""

MAX_RADICAL_DEGREE = 4
"""Irreducible factors of the characteristic polynomial above this degree are refused
(except binomials and cyclotomic polynomials)."""

TIME_GUARD = 30.0
"""Seconds the eigenvalue worker may run before it is terminated with SymbolicError."""

MAX_EXPAND = 200_000
"""Most compositions :meth:`SpectrumFamily.expand` enumerates (exact sympy arithmetic is slow)."""

MERGE_DIGITS = 40
"""Working digits for the numeric check that merges equal closed-form eigenvalues."""

_DESCENDING_KINDS = ("adjacency", "transition")
_RESERVED = re.compile(r"^(j\d*(_\d+)?|t)$")


# --------------------------------------------------------------- numbers


def _exact(x: Any) -> sympy.Expr:
    """An exact sympy number: ints as Integer, floats via their shortest round-trip decimal."""
    if isinstance(x, sympy.Basic):
        return x
    if isinstance(x, (bool, np.bool_)):
        raise InputError(f"expected a number, got a bool ({x!r})")
    if isinstance(x, (int, np.integer)):
        return sympy.Integer(int(x))
    f = float(x)
    if not math.isfinite(f):
        raise InputError(f"entries must be finite, got {x!r}")
    if f.is_integer():
        return sympy.Integer(int(f))
    # repr gives the shortest decimal that reads back as this double: what the user typed.
    return sympy.Rational(repr(f))


def _numeric(e: sympy.Expr) -> complex | None:
    """Numeric value (complex) of an expression without free symbols, else None."""
    if e.free_symbols:
        return None
    v = complex(sympy.N(e, 30))
    return v


# --------------------------------------------------------------- factors


class SymbolicFactor:
    """A factor graph given by a square sympy matrix (entries may hold symbols).

    ``matrix`` is stored as an ImmutableMatrix; :meth:`eigenvalues` returns the
    exact distinct eigenvalues of a matrix kind with integer multiplicities.

    >>> c = sympy.Symbol("c")
    >>> g = SymbolicFactor(sympy.Matrix([[c, 1], [1, c]]), "loops(c, K(2))")
    >>> g.eigenvalues()
    [(c + 1, 1), (c - 1, 1)]
    """

    def __init__(self, matrix: Any, name: str | None = None):
        try:
            m = sympy.ImmutableMatrix(matrix)
        except (TypeError, ValueError, sympy.SympifyError) as exc:
            raise InputError(f"cannot read a sympy matrix from {type(matrix).__name__}: {exc}") from None
        if m.rows == 0 or m.rows != m.cols:
            raise InputError(f"a factor matrix must be square and non-empty, got {m.rows}x{m.cols}")
        for e in m:
            if e.has(sympy.zoo, sympy.nan, sympy.oo, -sympy.oo):
                raise InputError(f"factor matrix entries must be finite, got {e}")
            if not e.is_number and not e.free_symbols:
                raise InputError(f"factor matrix entry {e} is not a number or expression")
        self.matrix = m
        self.name = name if name is not None else f"matrix({m.rows}x{m.rows})"
        self._cache: dict[str, list] = {}

    def __repr__(self) -> str:
        return f"SymbolicFactor({self.name!r}, n={self.n})"

    @property
    def n(self) -> int:
        """Number of vertices."""
        return int(self.matrix.rows)

    @property
    def symbols(self) -> tuple[sympy.Symbol, ...]:
        """The free symbols of the entries, sorted by name."""
        return tuple(sorted(self.matrix.free_symbols, key=lambda s: s.name))

    @property
    def directed(self) -> bool:
        """True when the matrix is not identically symmetric."""
        return any(sympy.expand(x) != 0 for x in (self.matrix - self.matrix.T))

    def degrees(self) -> list[sympy.Expr]:
        """Exact out-degrees (row sums)."""
        return [sympy.expand(sum(self.matrix.row(i))) for i in range(self.n)]

    def regular_degree(self) -> sympy.Expr | None:
        """The common degree when all row sums are identical expressions, else None."""
        d = self.degrees()
        return d[0] if all(sympy.expand(x - d[0]) == 0 for x in d) else None

    def nonnegative(self) -> bool:
        """True when every entry is provably >= 0 (numbers, or symbols declared nonnegative)."""
        return all(e.is_nonnegative is True for e in self.matrix)

    def kind_matrix(self, kind: str = "adjacency") -> sympy.ImmutableMatrix:
        """The exact matrix of a kind: A, D - A, D + A, I - D^-1/2 A D^-1/2 or D^-1 A."""
        _check_kind(kind)
        a = self.matrix
        if kind == "adjacency":
            return a
        d = self.degrees()
        if kind in ("laplacian", "signless"):
            sign = -1 if kind == "laplacian" else 1
            return sympy.ImmutableMatrix(sympy.diag(*d) + sign * a)
        if any(x == 0 for x in d):
            raise InputError(f"the {kind} matrix needs non-zero degrees; {self.name} has a zero degree")
        if kind == "transition":
            return sympy.ImmutableMatrix(sympy.diag(*[1 / x for x in d]) * a)
        if self.directed:
            raise InputError("the normalized Laplacian is defined for undirected graphs only; "
                             "use --matrix laplacian or transition")
        h = sympy.diag(*[1 / sympy.sqrt(x) for x in d])
        return sympy.ImmutableMatrix(sympy.eye(self.n) - h * a * h)

    def eigenvalues(self, kind: str = "adjacency", timeout: float | None = TIME_GUARD
                    ) -> list[tuple[sympy.Expr, int]]:
        """Distinct exact eigenvalues with multiplicities (Python ints), sorted (see module doc).

        Raises SymbolicError when the guard refuses (see module docstring).
        """
        _check_kind(kind)
        if kind not in self._cache:
            m = self.kind_matrix(kind)
            limit = MAX_SYMBOLIC_ORDER if m.free_symbols else MAX_EXACT_ORDER
            if self.n > limit:
                raise SymbolicError(
                    f"{self.name} has {self.n} vertices; symbolic eigenvalues are attempted up to "
                    f"{limit} vertices{' with symbols' if m.free_symbols else ''}; "
                    "use the numeric engine (drop --symbolic)"
                )
            pairs = _guarded(_eigen_job, (m, self.name), timeout)
            self._cache[kind] = _sorted_pairs(pairs, kind)
        return list(self._cache[kind])


def _check_kind(kind: str) -> None:
    if kind not in MATRIX_KINDS:
        raise InputError(f"unknown matrix kind {kind!r}; choose one of {', '.join(MATRIX_KINDS)}")


def _is_binomial(f: sympy.Poly) -> bool:
    terms = f.terms()
    return len(terms) == 2 and min(t[0][0] for t in terms) == 0


def _eigen_job(m: sympy.ImmutableMatrix, name: str) -> list[tuple[sympy.Expr, int]]:
    """Eigenvalues via charpoly -> factor_list -> roots, with the degree guard."""
    char = m.charpoly()  # a PurePoly in a private generator
    x = char.gen
    poly = sympy.Poly(char.as_expr(), x)
    _, facs = sympy.factor_list(poly)
    out: dict[sympy.Expr, int] = {}
    for f, e in facs:
        d = f.degree()
        if d > MAX_RADICAL_DEGREE and not (_is_binomial(f) or f.is_cyclotomic):
            text = str(f.as_expr()).replace(str(x), "x")
            text = text if len(text) <= 80 else text[:77] + "..."
            raise SymbolicError(
                f"the characteristic polynomial of {name} has an irreducible factor of degree {d} "
                f"({text}) that sympy cannot solve in radicals; use the numeric engine "
                "(drop --symbolic)"
            )
        rts = sympy.roots(f, multiple=False)
        if sum(rts.values()) != d or any(r.has(sympy.CRootOf) for r in rts):
            raise SymbolicError(
                f"sympy found no closed form for the eigenvalues of {name} (a degree-{d} factor "
                "of the characteristic polynomial); use the numeric engine (drop --symbolic)"
            )
        for r, mult in rts.items():
            out[r] = out.get(r, 0) + int(mult) * int(e)
    return list(out.items())


def _child(conn, fn, args) -> None:  # pragma: no cover - runs in the forked worker
    try:
        conn.send(("ok", fn(*args)))
    except SymbolicError as exc:
        conn.send(("err", str(exc)))
    except Exception as exc:  # noqa: BLE001 - reported to the parent as a SymbolicError
        conn.send(("err", f"sympy failed: {type(exc).__name__}: {exc}"))
    finally:
        conn.close()


def _guarded(fn, args: tuple, timeout: float | None):
    """Run fn(*args) in a forked worker, terminated after ``timeout`` seconds.

    Without fork (or with timeout None) fn runs inline under the degree guard only.
    """
    if timeout is None or "fork" not in multiprocessing.get_all_start_methods():
        return fn(*args)
    ctx = multiprocessing.get_context("fork")
    recv, send = ctx.Pipe(duplex=False)
    proc = ctx.Process(target=_child, args=(send, fn, args), daemon=True)
    proc.start()
    send.close()
    try:
        if not recv.poll(timeout):
            raise SymbolicError(
                f"sympy did not finish the eigenvalues of {args[-1]} within {timeout:g} s; "
                "use the numeric engine (drop --symbolic) or a smaller factor"
            )
        try:
            status, value = recv.recv()
        except EOFError:
            raise SymbolicError(f"the sympy worker for {args[-1]} died without an answer") from None
    finally:
        recv.close()
        if proc.is_alive():
            proc.terminate()
        proc.join()
    if status == "err":
        raise SymbolicError(value)
    return value


def _sort_key(e: sympy.Expr, kind: str):
    # Presentation order only: symbols are set to 1 to place symbolic values plausibly.
    v = _numeric(e.subs({s: 1 for s in e.free_symbols}))
    if v is None:
        v = 0j
    sign = -1 if kind in _DESCENDING_KINDS else 1
    return (sign * round(v.real, 12), sign * round(v.imag, 12), sympy.default_sort_key(e))


def _sorted_pairs(pairs: Iterable[tuple[sympy.Expr, int]], kind: str) -> list[tuple[sympy.Expr, int]]:
    return sorted(((sympy.sympify(v), int(m)) for v, m in pairs), key=lambda p: _sort_key(p[0], kind))


def symbolic_factor(obj: Any, name: str | None = None) -> SymbolicFactor:
    """A SymbolicFactor from a SymbolicFactor, a numeric Factor/Leaf, a sympy Matrix or an array.

    Numeric entries become exact sympy numbers: each float64 becomes the rational of its
    shortest round-trip decimal (0.1 -> 1/10, which is what was typed; it differs from
    the stored double by under one ulp).

    >>> symbolic_factor(expressions.parse("C(3)")).eigenvalues()
    [(2, 1), (-1, 2)]
    """
    if isinstance(obj, SymbolicFactor):
        return obj
    if isinstance(obj, Leaf):
        obj = obj.factor
    if isinstance(obj, Factor):
        adj = obj.adjacency.tocoo()
        m = sympy.zeros(obj.n, obj.n)
        for i, j, v in zip(adj.row, adj.col, adj.data, strict=True):
            m[int(i), int(j)] = _exact(float(v))
        return SymbolicFactor(m, name or obj.name)
    if isinstance(obj, sympy.MatrixBase) and obj.free_symbols:
        return SymbolicFactor(obj, name)
    return symbolic_factor(from_matrix(obj), name)


# ---------------------------------------------------------- expression tree


@dataclass(frozen=True, eq=False)
class SymLeaf:
    """A symbolic factor at a leaf of a symbolic expression."""

    factor: SymbolicFactor

    def label(self) -> str:
        """Expression text."""
        return self.factor.name

    def powers(self) -> set:
        """Symbols used as powers below this node (none for a leaf)."""
        return set()

    def leaves(self) -> list[SymbolicFactor]:
        """The factors of this subtree."""
        return [self.factor]


@dataclass(frozen=True, eq=False)
class SymProduct:
    """a(A(+)B) + b(A(x)B) over operands (node, power); a power is an int >= 1 or a Symbol."""

    a: sympy.Expr
    b: sympy.Expr
    operands: tuple
    name: str = ""

    def label(self) -> str:
        """Expression text, e.g. ``cart(K(2)^k)``."""
        head = self.name or _comb_name(self.a, self.b)
        parts = [n.label() + ("" if k == 1 else f"^{k}") for n, k in self.operands]
        if head.startswith("mix("):
            return head[:-1] + ", " + ", ".join(parts) + ")"
        return f"{head}({', '.join(parts)})"

    def powers(self) -> set:
        """Symbols used as powers in this subtree."""
        out = {k for _, k in self.operands if isinstance(k, sympy.Symbol)}
        for n, _ in self.operands:
            out |= n.powers()
        return out

    def leaves(self) -> list[SymbolicFactor]:
        """The factors of this subtree."""
        return [f for n, _ in self.operands for f in n.leaves()]


SymNode = SymLeaf | SymProduct


def _comb_name(a, b) -> str:
    for name, c in PRODUCT_KINDS.items():
        if (_exact(c.a), _exact(c.b)) == (a, b):
            return name
    return f"mix({a}, {b})"


def _as_node(x: Any) -> SymNode:
    if isinstance(x, (SymLeaf, SymProduct)):
        return x
    if isinstance(x, Product):
        return _from_numeric(x)
    return SymLeaf(symbolic_factor(x))


def _check_power(k: Any) -> int | sympy.Symbol:
    if isinstance(k, sympy.Symbol):
        return k
    if isinstance(k, (int, np.integer, sympy.Integer)) and not isinstance(k, bool) and int(k) >= 1:
        return int(k)
    raise InputError(f"a power must be an integer >= 1 or a sympy Symbol, got {k!r}")


def symbolic_product(product: str | tuple, *operands: Any) -> SymProduct:
    """A product node: ``product`` is 'cart', 'direct', 'strong' or a pair (a, b) for mix.

    Each operand is a factor-like object or a pair (factor-like, power) with power an
    int or a sympy Symbol.

    >>> k = sympy.Symbol("k", integer=True, positive=True)
    >>> from powerspec.factors import K
    >>> symbolic_product("cart", (K(2), k)).label()
    'cart(K(2)^k)'
    """
    if isinstance(product, str):
        if product not in PRODUCT_KINDS:
            raise InputError(f"unknown product {product!r}; use cart, direct, strong or a pair (a, b)")
        c = PRODUCT_KINDS[product]
        a, b, name = _exact(c.a), _exact(c.b), product
    else:
        a, b = (_exact(v) for v in product)
        name = ""
    if not operands:
        raise InputError("a product needs at least one operand")
    ops = []
    for op in operands:
        if isinstance(op, tuple) and len(op) == 2:
            ops.append((_as_node(op[0]), _check_power(op[1])))
        else:
            ops.append((_as_node(op), 1))
    return SymProduct(a, b, tuple(ops), name)


def _from_numeric(node) -> SymNode:
    if isinstance(node, Leaf):
        return SymLeaf(symbolic_factor(node.factor))
    ops = tuple((_from_numeric(c), k) for c, k in node.operands)
    return SymProduct(_exact(node.comb.a), _exact(node.comb.b), ops, node.name)


def _power_symbol(name: str, col: int) -> sympy.Symbol:
    if _RESERVED.match(name) or not isinstance(sympy.sympify(name), sympy.Symbol):
        raise ExpressionError(
            f"{name!r} cannot be a symbolic power (reserved for indices, the heat-trace time, "
            "or a sympy constant); use e.g. k or n", col)
    return sympy.Symbol(name, integer=True, positive=True)


def _has_name_power(t) -> bool:
    if isinstance(t, expressions.Pow):
        return isinstance(t.exponent, expressions.Name) or _has_name_power(t.base)
    if isinstance(t, expressions.Call):
        return any(_has_name_power(a) for a in t.args)
    return False


def _walk(t) -> SymNode:
    if not _has_name_power(t):
        return _from_numeric(expressions._build(t, None))
    if not (isinstance(t, expressions.Call) and (t.name in PRODUCT_KINDS or t.name == "mix")):
        raise ExpressionError("a symbolic power may only appear inside cart, direct, strong or mix",
                              t.col)
    args = list(t.args)
    if t.name == "mix":
        if len(args) < 3:
            raise ExpressionError("mix(a, b, G, ...) needs two coefficients and a graph", t.col)
        a = _exact(expressions._real(args[0], "mix() coefficient a"))
        b = _exact(expressions._real(args[1], "mix() coefficient b"))
        args, name = args[2:], ""
    else:
        c = PRODUCT_KINDS[t.name]
        a, b, name = _exact(c.a), _exact(c.b), t.name
    ops = []
    for arg in args:
        if isinstance(arg, expressions.Pow):
            e = arg.exponent
            if isinstance(e, expressions.Name):
                k = _power_symbol(e.name, e.col)
            else:
                k = expressions._power(e)
            ops.append((_walk(arg.base), k))
        else:
            ops.append((_walk(arg), 1))
    return SymProduct(a, b, tuple(ops), name)


def symbolic_expression(text: str) -> SymNode:
    """Parse expression text whose powers may be bare names (symbols) into a symbolic tree.

    Power names become sympy Symbols with integer=True, positive=True.

    >>> symbolic_expression("strong(K(3)^k, P(2))").label()
    'strong(K(3)^k, P(2))'
    """
    return _walk(expressions.parse_syntax(text))


# ------------------------------------------------------------- families


@dataclass(frozen=True)
class Block:
    """One operand of a product: distinct eigenvalues, multiplicities, and its power."""

    values: tuple
    mults: tuple
    power: Any

    @property
    def n(self) -> int:
        """Vertex count of the operand."""
        return sum(self.mults)


def _linearisation(a: sympy.Expr, b: sympy.Expr) -> tuple[str | None, sympy.Expr, sympy.Expr]:
    """(mode, shift, factor) with s = shift + factor * x (see products.Combination.to_s)."""
    if a == 1 and b == 0:
        return "add", sympy.Integer(0), sympy.Integer(1)
    if a == 1:
        return "mul", sympy.Integer(1), b
    if a == 0 and b != 0:
        return "mul", sympy.Integer(0), b
    return None, sympy.Integer(0), sympy.Integer(1)


class SpectrumFamily:
    """The spectrum of a product with (possibly symbolic) powers, as sympy expressions.

    For blocks b (operands with distinct eigenvalues lambda_{b,0..r_b-1}, multiplicities
    m_{b,i} and power k_b), a *composition* c_b of k_b counts how many of the k_b copies
    take each eigenvalue.  Indices ``j`` are the counts c_{b,1..r_b-1}; the base count is
    c_{b,0} = k_b - sum_i j_{b,i}.  Then, with s = shift + factor * x the combination's
    linearisation,

    * ``eigenvalue`` = post(x) where s(x) = sum c s(lambda) ('add') or prod s(lambda)^c ('mul');
    * ``multiplicity`` = prod_b multinomial(k_b; c_b) prod_i m_{b,i}^{c_{b,i}}, written as a
      product of binomials (Python int after substitution);
    * ``constraints``: j >= 0 and sum_i j_{b,i} <= k_b.

    Distinct compositions may give equal eigenvalues; :meth:`expand` merges them.
    ``post`` = (p0, p1) maps x to p0 + p1 x (used for kinds exact only on regular graphs).
    """

    def __init__(self, a, b, blocks: Sequence[Block], kind: str = "adjacency",
                 post: tuple = (0, 1), label: str = ""):
        self.a, self.b = sympy.sympify(a), sympy.sympify(b)
        self.mode, self.shift, self.factor = _linearisation(self.a, self.b)
        if self.mode is None:
            raise SymbolicError("internal: a non-associative family must be folded first")
        self.blocks = tuple(blocks)
        self.kind = kind
        self.post = (sympy.sympify(post[0]), sympy.sympify(post[1]))
        self.label = label
        many = len(self.blocks) > 1
        self.indices: list[sympy.Symbol] = []
        self.counts: list[tuple] = []
        ranges: list[tuple] = []
        for bi, blk in enumerate(self.blocks):
            r = len(blk.values)
            if many:
                names = [f"j{bi + 1}_{i}" for i in range(1, r)]
            else:
                names = ["j"] if r == 2 else [f"j{i}" for i in range(1, r)]
            js = [sympy.Symbol(nm, integer=True, nonnegative=True) for nm in names]
            self.indices += js
            self.counts.append((blk.power - sum(js, sympy.Integer(0)), *js))
            ranges.append((blk.power, js))
        self._ranges = ranges

    # -- closed forms ---------------------------------------------------------------
    @property
    def symbols(self) -> list[sympy.Symbol]:
        """The symbolic powers, sorted by name."""
        return sorted({b.power for b in self.blocks if isinstance(b.power, sympy.Symbol)},
                      key=lambda s: s.name)

    def s_values(self, blk: Block) -> list[sympy.Expr]:
        """The block's eigenvalues in s-space."""
        return [sympy.expand(self.shift + self.factor * v) for v in blk.values]

    def _from_s(self, s: sympy.Expr, post: tuple | None = None) -> sympy.Expr:
        x = s if self.mode == "add" else (s - self.shift) / self.factor
        p0, p1 = post or self.post
        return p0 + p1 * x

    @property
    def eigenvalue(self) -> sympy.Expr:
        """The eigenvalue as an expression in the powers and the indices."""
        if self.mode == "add":
            s = sum((c * v for blk, cs in zip(self.blocks, self.counts, strict=True)
                     for c, v in zip(cs, self.s_values(blk), strict=True)), sympy.Integer(0))
            return sympy.expand(self._from_s(s))
        s = sympy.Mul(*[v ** c for blk, cs in zip(self.blocks, self.counts, strict=True)
                        for c, v in zip(cs, self.s_values(blk), strict=True)])
        return self._from_s(s)

    @property
    def multiplicity(self) -> sympy.Expr:
        """The multiplicity of one composition, an expression in the powers and indices."""
        out = sympy.Integer(1)
        for blk, cs, (k, js) in zip(self.blocks, self.counts, self._ranges, strict=True):
            rest = k
            for jj in js:
                out *= sympy.binomial(rest, jj)
                rest = rest - jj
            for c, m in zip(cs, blk.mults, strict=True):
                out *= sympy.Integer(m) ** c
        return out

    @property
    def constraints(self) -> sympy.Expr:
        """And(...) of the index ranges: j >= 0, sum of a block's indices <= its power."""
        rel = []
        for k, js in self._ranges:
            # evaluate=False keeps j >= 0 visible (the index symbols are nonnegative).
            rel += [sympy.Ge(jj, 0, evaluate=False) for jj in js]
            if js:
                rel.append(sympy.Le(sum(js, sympy.Integer(0)), k, evaluate=False))
        return sympy.And(*rel, evaluate=False) if rel else sympy.true

    @property
    def order(self) -> sympy.Expr:
        """Vertex count prod n_b^k_b."""
        return sympy.Mul(*[sympy.Integer(b.n) ** b.power for b in self.blocks])

    @property
    def count(self) -> sympy.Expr:
        """Number of compositions (an upper bound on the distinct eigenvalues)."""
        return sympy.Mul(*[sympy.binomial(b.power + len(b.values) - 1, len(b.values) - 1)
                           for b in self.blocks])

    def products(self) -> list[tuple[sympy.Expr, tuple]]:
        """(expression, limits) pairs: the nested ranges for sympy Sum/Product over all indices."""
        limits = []
        for k, js in self._ranges:
            for i, jj in enumerate(js):
                limits.append((jj, 0, k - sum(js[:i], sympy.Integer(0))))
        return limits[::-1]  # sympy evaluates the first limit innermost

    # -- expansion ------------------------------------------------------------------
    def _power_values(self, values: dict[str, int]) -> list[int]:
        out = []
        names = {s.name: s for s in self.symbols}
        unknown = set(values) - set(names)
        if unknown:
            raise InputError(f"unknown power name(s) {sorted(unknown)}; this family has {sorted(names)}")
        for blk in self.blocks:
            k = blk.power
            if isinstance(k, sympy.Symbol):
                if k.name not in values:
                    raise InputError(f"expand() needs a value for the power {k.name}")
                k = values[k.name]
            if not isinstance(k, (int, np.integer)) or isinstance(k, bool) or int(k) < 1:
                raise InputError(f"a power must be an integer >= 1, got {k!r}")
            out.append(int(k))
        return out

    def expand(self, **powers: int) -> list[tuple[sympy.Expr, int]]:
        """The concrete spectrum for integer powers: merged (value, multiplicity) pairs.

        Values are exact sympy numbers (or expressions in the factor's symbols);
        multiplicities are Python ints.  Equal values are merged by exact equality of the
        expanded forms, then (symbol-free values) by a 40-digit numeric check confirmed
        with sympy's ``equals``.
        """
        ks = self._power_values(powers)
        size = math.prod(math.comb(k + len(b.values) - 1, len(b.values) - 1)
                         for b, k in zip(self.blocks, ks, strict=True))
        if size > MAX_EXPAND:
            raise SizeLimitError(
                f"expanding {self.label or 'this family'} means {size} compositions, over the "
                f"symbolic limit of {MAX_EXPAND}; use the numeric engine (drop --symbolic)")
        acc: dict = {self._identity(): 1}
        for blk, k in zip(self.blocks, ks, strict=True):
            acc = self._combine(acc, self._power(blk, k))
        # The regular-form post map may hold the powers (degree d = 3^k - 1, say).
        subs = {blk.power: k for blk, k in zip(self.blocks, ks, strict=True)
                if isinstance(blk.power, sympy.Symbol)}
        post = tuple(sympy.sympify(v).subs(subs) for v in self.post)
        out = [(sympy.expand(self._from_s(_to_sympy(s), post)), m) for s, m in acc.items()]
        return _sorted_pairs(_merge(out), self.kind)

    def _identity(self):
        return Fraction(0) if self.mode == "add" else Fraction(1)

    def _block_s(self, blk: Block) -> dict:
        vals = [_to_fraction(s) for s in self.s_values(blk)]
        return {v: m for v, m in zip(vals, blk.mults, strict=True)}

    def _power(self, blk: Block, k: int) -> dict:
        # Power by repeated squaring of the merged distribution (the engine's idea, exactly).
        base, result = self._block_s(blk), {self._identity(): 1}
        while k:
            if k & 1:
                result = self._combine(result, base)
            k >>= 1
            if k:
                base = self._combine(base, base)
        return result

    def _combine(self, x: dict, y: dict) -> dict:
        out: dict = {}
        for u, mu in x.items():
            for v, mv in y.items():
                w = _op(u, v, self.mode)
                out[w] = out.get(w, 0) + mu * mv
        return out


def _to_fraction(e: sympy.Expr):
    """Rationals as Fractions (fast exact arithmetic), anything else as an expanded sympy key."""
    if e.is_Rational:
        return Fraction(int(e.p), int(e.q))
    return sympy.expand(e)


def _to_sympy(v) -> sympy.Expr:
    return sympy.Rational(v.numerator, v.denominator) if isinstance(v, Fraction) else v


def _op(u, v, mode):
    if isinstance(u, Fraction) and isinstance(v, Fraction):
        return u + v if mode == "add" else u * v
    r = _to_sympy(u) + _to_sympy(v) if mode == "add" else _to_sympy(u) * _to_sympy(v)
    return _to_fraction(sympy.expand(r))


def _merge(pairs: list[tuple[sympy.Expr, int]]) -> list[tuple[sympy.Expr, int]]:
    """Merge equal values: exact expanded form first, then a numeric check plus ``equals``."""
    exact: dict = {}
    for v, m in pairs:
        key = sympy.expand(v)
        exact[key] = exact.get(key, 0) + int(m)
    items = list(exact.items())
    numeric = [(v, m, None if v.free_symbols or v.is_Rational else complex(sympy.N(v, MERGE_DIGITS)))
               for v, m in items]
    out: list[list] = []
    pending = sorted((t for t in numeric if t[2] is not None), key=lambda t: (t[2].real, t[2].imag))
    for v, m, z in pending:
        if out and out[-1][2] is not None:
            w = out[-1][2]
            close = abs(z - w) <= 1e-12 * max(1.0, abs(z))
            if close and _equal(out[-1][0], v):
                out[-1][1] += m
                continue
        out.append([v, m, z])
    out += [[v, m, z] for v, m, z in numeric if z is None]
    return [(v, m) for v, m, _ in out]


def _equal(x: sympy.Expr, y: sympy.Expr) -> bool:
    d = sympy.N(x - y, MERGE_DIGITS)
    if abs(complex(d)) > sympy.Float(10) ** (-(MERGE_DIGITS - 5)):
        return False
    return (x - y).equals(0) is not False


# ------------------------------------------------------------- evaluation


def _rule(node: SymProduct, kind: str) -> tuple | None:
    c = MATRIX_RULES[kind](Combination(float(node.a), float(node.b)))
    if c is None:
        return None
    if (c.a, c.b) == (float(node.a), float(node.b)):
        return node.a, node.b
    return _exact(c.a), _exact(c.b)


_REGULAR_FORM = {
    "laplacian": lambda d: (d, -1),
    "signless": lambda d: (d, 1),
    "normalized": lambda d: (1, -1 / d),
    "transition": lambda d: (0, 1 / d),
}


def _degree(node: SymNode) -> sympy.Expr:
    """Common degree of a node whose factors are all regular (NotExactError otherwise)."""
    if isinstance(node, SymLeaf):
        d = node.factor.regular_degree()
        if d is None:
            raise NotExactError(f"{node.label()} is not regular")
        return d
    mode, shift, factor = _linearisation(node.a, node.b)
    ds = [(_degree(c), k) for c, k in node.operands]
    if mode == "add":
        return sympy.expand(sum((k * d for d, k in ds), sympy.Integer(0)))
    if mode == "mul":
        s = sympy.Mul(*[(shift + factor * d) ** k for d, k in ds])
        return (s - shift) / factor
    acc = None
    for d, k in ds:
        if isinstance(k, sympy.Symbol):
            raise SymbolicError("mix(a, b) with a not 0 or 1 is a left fold; give integer powers")
        for _ in range(k):
            acc = d if acc is None else sympy.expand(node.a * (acc + d) + node.b * acc * d)
    return acc


def spectrum_family(node: SymNode, kind: str = "adjacency") -> SpectrumFamily:
    """The SpectrumFamily of a symbolic node for a matrix kind (see :class:`SpectrumFamily`).

    Symbolic powers may appear only at this node's own operands; operands themselves are
    evaluated to finite exact spectra.  Raises NotExactError for a kind that is not exact
    (as the numeric engine does) and SymbolicError for a left fold with a symbolic power.
    """
    _check_kind(kind)
    if isinstance(node, SymLeaf):
        vals = node.factor.eigenvalues(kind)
        return SpectrumFamily(1, 0, [Block(tuple(v for v, _ in vals), tuple(m for _, m in vals), 1)],
                              kind, label=node.label())
    rule = _rule(node, kind)
    if rule is None:
        if kind == "normalized" and any(f.directed for f in node.leaves()):
            raise InputError("the normalized Laplacian is defined for undirected graphs only; "
                             "use --matrix laplacian or transition")
        try:
            d = _degree(node)
        except NotExactError as exc:
            raise NotExactError(
                f"the {kind} spectrum of {node.label()} is not exact: {NON_EXACT_REASON[kind]} "
                f"unless every factor is regular ({exc}); use --matrix adjacency, or a Cartesian "
                "product for laplacian/signless") from None
        if kind in ("normalized", "transition") and d == 0:
            raise InputError(f"the {kind} matrix needs non-zero degrees; {node.label()} has degree 0")
        fam = spectrum_family(node, "adjacency")
        return SpectrumFamily(fam.a, fam.b, fam.blocks, kind, _REGULAR_FORM[kind](d), node.label())
    a, b = rule
    mode, _, _ = _linearisation(a, b)
    if mode is None:
        vals = _fold_values(node, a, b, kind)
        return SpectrumFamily(1, 0, [Block(tuple(v for v, _ in vals), tuple(m for _, m in vals), 1)],
                              kind, label=node.label())
    blocks = []
    for child, k in node.operands:
        if child.powers():
            raise SymbolicError(
                f"symbolic powers are supported in the outermost product only; {child.label()} "
                "has one inside; give its power as an integer")
        vals = finite_spectrum(child, kind)
        blocks.append(Block(tuple(v for v, _ in vals), tuple(m for _, m in vals), k))
    return SpectrumFamily(a, b, blocks, kind, label=node.label())


def _fold_values(node: SymProduct, a, b, kind) -> list[tuple[sympy.Expr, int]]:
    seq = []
    for child, k in node.operands:
        if isinstance(k, sympy.Symbol):
            raise SymbolicError(
                f"mix({a}, {b}) is not associative (a left fold), so its power {k} has no "
                "composition form; give an integer power")
        seq += [finite_spectrum(child, kind)] * k
    acc = seq[0]
    for nxt in seq[1:]:
        pairs = [(a * (x + y) + b * x * y, mx * my) for x, mx in acc for y, my in nxt]
        acc = _merge(pairs)
    return _sorted_pairs(acc, kind)


def finite_spectrum(node: SymNode, kind: str = "adjacency") -> list[tuple[sympy.Expr, int]]:
    """Exact merged spectrum of a node without symbolic powers: [(value, multiplicity)].

    >>> finite_spectrum(symbolic_expression("cart(P(2)^2)"))
    [(2, 1), (0, 2), (-2, 1)]
    """
    if isinstance(node, SymLeaf):
        return node.factor.eigenvalues(kind)
    if node.powers():
        raise SymbolicError(f"{node.label()} has symbolic powers; use spectrum_family(...).expand(...)")
    return spectrum_family(node, kind).expand()


def symbolic_family(text: str, kind: str = "adjacency") -> SpectrumFamily:
    """Shortcut: :func:`spectrum_family` of :func:`symbolic_expression` ``(text)``."""
    return spectrum_family(symbolic_expression(text), kind)


# ----------------------------------------------------------------- traces


def _tidy(e: sympy.Expr) -> sympy.Expr:
    return sympy.expand(sympy.expand_func(e))


def traces(node: SymNode, kind: str = "adjacency", p: int = 4) -> list[sympy.Expr]:
    """[tr(M^0), ..., tr(M^p)] of the node's matrix, exact sympy expressions in the powers.

    Leaves use exact matrix powers; products use trace identities: Cartesian
    powers through the exponential formula  sum_p tr(M^p) t^p/p! = prod (tr e^{tA_b})^{k_b}
    (so each tr(M^p) is n^k times a polynomial of degree <= p in k), multiplicative rules
    through tr(S^q) = prod tr(S_b^q)^{k_b} with S = shift + factor M, left folds through
    the commuting terms A(x)I, I(x)B, A(x)B.

    >>> k = sympy.Symbol("k", integer=True, positive=True)
    >>> traces(symbolic_product("cart", (symbolic_factor(np.ones((2, 2)) - np.eye(2)), k)), p=2)
    [2**k, 0, 2**k*k]
    """
    _check_kind(kind)
    if not isinstance(p, int) or p < 0:
        raise InputError(f"the moment order must be a non-negative integer, got {p!r}")
    if isinstance(node, SymLeaf):
        m = node.factor.kind_matrix(kind)
        out, acc = [sympy.Integer(node.factor.n)], sympy.eye(node.factor.n)
        for _ in range(p):
            acc = (acc * m).applyfunc(sympy.expand)
            out.append(sympy.expand(acc.trace()))
        return out
    rule = _rule(node, kind)
    if rule is None:
        spectrum_family(node, kind)  # raises NotExactError when the kind is not exact
        d = _degree(node)
        p0, p1 = (sympy.sympify(v) for v in _REGULAR_FORM[kind](d))
        ta = traces(node, "adjacency", p)
        return [_tidy(sum((sympy.binomial(q, i) * p0 ** (q - i) * p1 ** i * ta[i] for i in range(q + 1)),
                          sympy.Integer(0))) for q in range(p + 1)]
    a, b = rule
    mode, shift, factor = _linearisation(a, b)
    parts = [(traces(c, kind, p), k) for c, k in node.operands]
    if mode == "add":
        acc = None
        for tc, k in parts:
            tb = _cartesian_power_traces(tc, k, p)
            acc = tb if acc is None else [
                _tidy(sum((sympy.binomial(q, i) * acc[i] * tb[q - i] for i in range(q + 1)),
                          sympy.Integer(0))) for q in range(p + 1)]
        return acc
    if mode == "mul":
        ts = [sympy.Integer(1)] * (p + 1)
        for tc, k in parts:
            for q in range(p + 1):
                sq = sum((sympy.binomial(q, i) * shift ** (q - i) * factor ** i * tc[i]
                          for i in range(q + 1)), sympy.Integer(0))
                ts[q] = ts[q] * sympy.expand(sq) ** k
        return [_tidy(factor ** (-q) * sum((sympy.binomial(q, i) * (-shift) ** (q - i) * ts[i]
                                            for i in range(q + 1)), sympy.Integer(0)))
                for q in range(p + 1)]
    seq = []
    for tc, k in parts:
        if isinstance(k, sympy.Symbol):
            raise SymbolicError(f"mix({a}, {b}) is a left fold; its moments need an integer power")
        seq += [tc] * k
    acc = seq[0]
    for tb in seq[1:]:
        acc = [_tidy(sum((sympy.Integer(math.factorial(q) // (math.factorial(i) * math.factorial(j)
                                                               * math.factorial(q - i - j)))
                          * a ** (i + j) * b ** (q - i - j) * acc[q - j] * tb[q - i]
                          for i in range(q + 1) for j in range(q + 1 - i)), sympy.Integer(0)))
               for q in range(p + 1)]
    return acc


def _cartesian_power_traces(tc: list, k, p: int) -> list[sympy.Expr]:
    # (n + F(t))^k = sum_j C(k, j) n^(k-j) F^j with F = sum_{q>=1} tc[q] t^q / q!; only j <= p matter.
    n = tc[0]
    f = [sympy.Integer(0)] + [tc[q] / sympy.factorial(q) for q in range(1, p + 1)]
    powers = [[sympy.Integer(1)] + [sympy.Integer(0)] * p]
    for _ in range(p):
        prev = powers[-1]
        powers.append([sympy.expand(sum((prev[i] * f[q - i] for i in range(q + 1)), sympy.Integer(0)))
                       for q in range(p + 1)])
    out = []
    for q in range(p + 1):
        total = sum((sympy.binomial(k, j) * n ** (k - j) * sympy.factorial(q) * powers[j][q]
                     for j in range(q + 1)), sympy.Integer(0))
        out.append(_tidy(total))
    return out


# ------------------------------------------------------------ closed forms


def _ratio(e: sympy.Expr) -> sympy.Expr:
    # Combine b1**k / b2**k into (b1/b2)**k (k is an integer power, so force is safe).
    e = sympy.powsimp(sympy.expand(sympy.powdenest(e, force=True)), combine="base", force=True)
    return sympy.expand(sympy.powsimp(e, force=True))


def _is_real(e: sympy.Expr) -> bool:
    z = _numeric(e)
    if z is not None:
        return abs(z.imag) <= 1e-20 * max(1.0, abs(z))
    return e.is_real is True


def _radius(values: Sequence[sympy.Expr]) -> sympy.Expr:
    """Largest modulus among exact values (numeric choice; Max of Abs with symbols)."""
    if any(v.free_symbols for v in values):
        return sympy.Max(*[sympy.Abs(v) for v in values])
    best = max(values, key=lambda v: abs(_numeric(v)))
    return sympy.nsimplify(sympy.Abs(best)) if best.is_Rational else sympy.Abs(best)


def _extreme(values: Sequence[sympy.Expr], largest: bool) -> int:
    key = [(_numeric(v) or 0j).real for v in values]
    return int(np.argmax(key) if largest else np.argmin(key))


def _nonneg_tree(node: SymNode, kind: str) -> bool:
    if isinstance(node, SymLeaf):
        return all(e.is_nonnegative is True for e in node.factor.kind_matrix(kind))
    return (node.a.is_nonnegative and node.b.is_nonnegative
            and all(_nonneg_tree(c, kind) for c, _ in node.operands))


def _spanning_trees(node: SymNode) -> tuple[sympy.Expr, sympy.Expr] | str:
    """(count as a sympy Product, its logarithm as a Sum), or the reason it is omitted."""
    if not (isinstance(node, SymProduct) and node.a == 1 and node.b == 0):
        return "spanning trees: closed form given for Cartesian products only"
    if any(f.directed for f in node.leaves()):
        return "spanning trees: the factors must be undirected"
    try:
        fam = spectrum_family(node, "laplacian")
    except (NotExactError, SymbolicError) as exc:
        return f"spanning trees: {exc}"
    for blk in fam.blocks:
        if blk.values[0] != 0 or blk.mults[0] != 1:
            return "spanning trees: every operand must be connected (a simple zero Laplacian eigenvalue)"
    value, mult, js = fam.eigenvalue, fam.multiplicity, fam.indices
    if not js:
        return "spanning trees: every operand has a single vertex"
    # The zero eigenvalue is the all-base composition j = 0 (Laplacian values ascend); the
    # Kronecker delta turns its factor 0^1 into 1^1.  With one index the range starts at 1.
    limits = fam.products()
    if len(js) == 1:
        limits = [(js[0], 1, limits[0][2])]
        body = value
    else:
        body = value + sympy.KroneckerDelta(sum(js, sympy.Integer(0)), 0)
    tau = sympy.Product(body ** mult, *limits) / fam.order
    log_n = sum((b.power * sympy.log(b.n) for b in fam.blocks), sympy.Integer(0))
    log_tau = sympy.Sum(mult * sympy.log(body), *limits) - log_n
    return tau, log_tau


def _extremes(fam: SpectrumFamily, node: SymNode, kind: str, forms: dict, notes: list) -> None:
    """largest / smallest eigenvalue with multiplicity, where a closed form is valid."""
    blocks = fam.blocks
    if fam.post != (0, 1):
        return
    if fam.mode == "add" and all(_is_real(v) and not v.free_symbols for b in blocks for v in b.values):
        # Real spectra: the max (min) of a sum of independent choices is the sum of the maxima
        # (minima), attained only by choosing the maximum in every copy.
        for name, top in (("largest", True), ("smallest", False)):
            idx = [_extreme(b.values, top) for b in blocks]
            forms[name] = sum((b.power * b.values[i] for b, i in zip(blocks, idx, strict=True)),
                              sympy.Integer(0))
            forms[name + "_multiplicity"] = sympy.Mul(
                *[sympy.Integer(b.mults[i]) ** b.power for b, i in zip(blocks, idx, strict=True)])
    elif fam.mode == "mul" and fam.shift == 1 and fam.factor.is_positive and _nonneg_tree(node, kind):
        # Perron-Frobenius: 1 + b*rho is the unique largest |1 + b*lambda|, so only the all-rho
        # composition reaches it.
        tops = []
        for b in blocks:
            if any(v.free_symbols for v in b.values):
                return
            tops.append(_extreme([sympy.Abs(v) for v in b.values], True))
        s = sympy.Mul(*[(1 + fam.factor * b.values[i]) ** b.power
                        for b, i in zip(blocks, tops, strict=True)])
        forms["largest"] = (s - 1) / fam.factor
        forms["largest_multiplicity"] = sympy.Mul(
            *[sympy.Integer(b.mults[i]) ** b.power for b, i in zip(blocks, tops, strict=True)])
    else:
        notes.append("largest/smallest eigenvalue: closed form given for real Cartesian-type "
                     "spectra and Perron-Frobenius strong-type products only")


def closed_forms(node: SymNode, kind: str = "adjacency", max_power: int = 4
                 ) -> tuple[dict[str, sympy.Expr], list[str]]:
    """Closed forms in the powers: ({name: expression}, notes on assumptions and omissions).

    Names: ``order``; ``spectral_radius`` (Cartesian-type sums: sum k_b rho_b for one
    operand or real spectra -- triangle inequality, attained by repeating a
    largest-modulus eigenvalue; direct-type: |b|^(K-1) prod rho_b^k_b; strong and
    mix(1, b > 0): ((prod (1 + b rho_b)^k_b) - 1)/b only for entrywise non-negative
    matrices, by Perron-Frobenius); ``epidemic_threshold`` = 1/radius (adjacency);
    ``moment_p`` = tr(M^p); ``mean`` = tr(M)/N; ``variance`` = tr(M^2)/N - mean^2 (the
    variance when the spectrum is real); ``estrada_index`` = prod (sum m e^lambda)^k for
    Cartesian adjacency; ``heat_trace`` = prod (sum m e^(-t alpha))^k for Cartesian
    Laplacians; ``spanning_trees`` / ``log_spanning_trees`` for Cartesian products of
    connected undirected factors (matrix-tree theorem: prod of nonzero Laplacian
    eigenvalues / N).

    >>> forms, _ = closed_forms(symbolic_expression("cart(K(2)^k)"))
    >>> forms["spectral_radius"], forms["variance"]
    (k, k)
    """
    fam = spectrum_family(node, kind)
    forms: dict[str, sympy.Expr] = {"order": fam.order}
    notes: list[str] = []
    n_total = fam.order
    post_identity = fam.post == (0, 1)
    blocks = fam.blocks
    if not post_identity:
        notes.append("spectral radius: omitted for a kind obtained from the regular form")
    elif fam.mode == "add":
        if len(blocks) == 1:
            forms["spectral_radius"] = blocks[0].power * _radius(blocks[0].values)
        elif all(_is_real(v) for blk in blocks for v in blk.values):
            hi = sum((b.power * b.values[_extreme(b.values, True)] for b in blocks), sympy.Integer(0))
            lo = sum((b.power * b.values[_extreme(b.values, False)] for b in blocks), sympy.Integer(0))
            forms["spectral_radius"] = sympy.Max(hi, -lo)
        else:
            notes.append("spectral radius: omitted for a sum of complex spectra")
    elif fam.shift == 0:
        big_k = sum((b.power for b in blocks), sympy.Integer(0))
        forms["spectral_radius"] = sympy.Abs(fam.factor) ** (big_k - 1) * sympy.Mul(
            *[_radius(b.values) ** b.power for b in blocks])
    elif fam.factor.is_positive and _nonneg_tree(node, kind):
        s = sympy.Mul(*[(1 + fam.factor * _radius(b.values)) ** b.power for b in blocks])
        forms["spectral_radius"] = (s - 1) / fam.factor
        notes.append("spectral radius: Perron-Frobenius (entrywise non-negative factors)")
    else:
        notes.append("spectral radius: no closed form without entrywise non-negative factors")
    _extremes(fam, node, kind, forms, notes)
    if kind == "adjacency" and "spectral_radius" in forms:
        forms["epidemic_threshold"] = 1 / forms["spectral_radius"]
    tr = traces(node, kind, max(max_power, 2))
    for p in range(1, max_power + 1):
        forms[f"moment_{p}"] = tr[p]
    mean = _ratio(tr[1] / n_total)
    forms["mean"] = mean
    forms["variance"] = _ratio(tr[2] / n_total - mean ** 2)
    if fam.mode == "add" and post_identity:
        sums = [(sum((m * sympy.exp(v) for v, m in zip(b.values, b.mults, strict=True)),
                     sympy.Integer(0)), b.power) for b in blocks]
        if kind == "adjacency":
            forms["estrada_index"] = sympy.Mul(*[s ** k for s, k in sums])
        if kind == "laplacian":
            t = sympy.Symbol("t", positive=True)
            forms["heat_trace"] = sympy.Mul(*[
                sum((m * sympy.exp(-t * v) for v, m in zip(b.values, b.mults, strict=True)),
                    sympy.Integer(0)) ** b.power for b in blocks])
    st = _spanning_trees(node)
    if isinstance(st, str):
        notes.append(st)
    else:
        forms["spanning_trees"], forms["log_spanning_trees"] = st
    return forms, notes


def evaluate(expr: sympy.Expr, **values: Any) -> sympy.Expr:
    """Substitute symbols by name and evaluate every Sum/Product by explicit exact loops.

    sympy's ``doit`` leaves nested ranges such as (j2, 0, k - j1) unevaluated; this
    loops over them once the powers are integers.

    >>> forms, _ = closed_forms(symbolic_expression("cart(C(4)^k)"))
    >>> evaluate(forms["spanning_trees"], k=2)
    42467328
    """
    e = sympy.sympify(expr)
    e = e.subs({s: values[s.name] for s in e.free_symbols if s.name in values})
    return _loops(e)


def _loops(e: sympy.Expr) -> sympy.Expr:
    if isinstance(e, (sympy.Product, sympy.Sum)):
        body, limits = e.function, list(e.limits)
        var, lo, hi = limits[-1]
        if not (lo.is_Integer and hi.is_Integer):
            names = sorted(map(str, (lo - hi).free_symbols))
            raise InputError(f"cannot evaluate {e}: give integer values for {names}")
        inner = lambda v: body.subs(var, v) if len(limits) == 1 else type(e)(  # noqa: E731
            body, *limits[:-1]).subs(var, v)
        parts = [_loops(inner(v)) for v in range(int(lo), int(hi) + 1)]
        return sympy.Mul(*parts) if isinstance(e, sympy.Product) else sympy.Add(*parts)
    if e.args:
        return e.func(*[_loops(a) for a in e.args])
    return e


# ------------------------------------------------------------------ output

_COMMANDS = ("spectrum", "top", "moments", "invariants")


def _as_text(e: Any) -> str:
    return sympy.sstr(e, order="rev-lex")


def symbolic_report(command: str, expression_text: str, *, matrix: str = "adjacency",
                    latex: bool = False, max_power: int = 4) -> dict:
    """The symbolic answer as a dict with the JSON keys of DESIGN §4 plus ``symbolic``.

    ``order`` is a sympy-readable string such as ``"2**k"``; ``symbolic`` maps names
    to expression strings that ``sympy.sympify`` reads back (symbols lose their
    assumptions); ``latex`` (when asked) maps the same names to LaTeX; ``notes`` lists
    assumptions and omitted closed forms.  ``max_power`` is the largest moment order.

    >>> r = symbolic_report("spectrum", "cart(K(2)^k)")
    >>> r["order"], r["symbolic"]["eigenvalue"], r["symbolic"]["multiplicity"]
    ('2**k', 'k - 2*j', 'binomial(k, j)')
    """
    if command not in _COMMANDS:
        raise InputError(f"the symbolic bridge answers {', '.join(_COMMANDS)}, not {command!r}")
    if not isinstance(max_power, int) or isinstance(max_power, bool) or max_power < 1:
        raise InputError(f"the moment order must be a positive integer, got {max_power!r}")
    _check_kind(matrix)
    node = symbolic_expression(expression_text)
    fam = spectrum_family(node, matrix)
    out: dict[str, sympy.Expr] = {}
    notes: list[str] = []
    if command == "spectrum":
        out = {"eigenvalue": fam.eigenvalue, "multiplicity": fam.multiplicity,
               "constraint": fam.constraints, "count": fam.count}
        method = ("exact symbolic: eigenvalue and multiplicity of each composition of the powers "
                  "over the factors' exact eigenvalues (sympy)")
        if fam.indices:
            notes.append("indices: " + ", ".join(s.name for s in fam.indices) + " (composition counts)")
        notes.append("count is the number of compositions, an upper bound on the distinct eigenvalues")
    else:
        forms, notes = closed_forms(node, matrix, max_power)
        if command == "top":
            keep = ("spectral_radius", "epidemic_threshold", "largest", "largest_multiplicity",
                    "smallest", "smallest_multiplicity")
            method = "exact symbolic: spectral radius as a closed form in the powers (sympy)"
            notes = [x for x in notes if x.startswith(("spectral radius", "largest"))]
        elif command == "moments":
            keep = tuple(f"moment_{p}" for p in range(1, max_power + 1)) + ("mean", "variance")
            method = "exact symbolic: tr(M^p) from trace identities of the product (sympy)"
            notes = []
        else:
            keep = tuple(forms)
            method = "exact symbolic: closed forms in the powers (sympy)"
        out = {k: forms[k] for k in keep if k in forms}
        if command == "top" and "spectral_radius" not in out:
            raise SymbolicError("no closed form for the spectral radius here: " + "; ".join(notes))
    report = {
        "expression": node.label(),
        "matrix": matrix,
        "order": _as_text(fam.order),
        "method": method,
        "symbolic": {k: _as_text(v) for k, v in out.items()},
        "query": command,
        "symbols": [s.name for s in sorted(_all_symbols(node, fam), key=lambda s: s.name)],
    }
    if notes:
        report["notes"] = notes
    if latex:
        report["latex"] = {k: sympy.latex(v) for k, v in out.items()}
    return report


def _all_symbols(node: SymNode, fam: SpectrumFamily) -> set:
    out = set(fam.symbols)
    for f in node.leaves():
        out |= set(f.symbols)
    return out


def symbolic_text(report: dict, latex: bool = False) -> str:
    """Readable print of :func:`symbolic_report`: sympy-readable text, or LaTeX with latex=True.

    >>> print(symbolic_text(symbolic_report("spectrum", "cart(K(2)^k)")).splitlines()[6])
      eigenvalue   = k - 2*j
    """
    lines = [f"powerspec {report.get('query', '')} (symbolic)".replace("  ", " ")]
    for key in ("expression", "matrix", "order", "method"):
        lines.append(f"  {key:<11} {report[key]}")
    lines.append("")
    names = report["symbolic"]
    w = max([len(k) for k in names] + [1])
    for k, v in names.items():
        shown = (report.get("latex") or {}).get(k) or sympy.latex(sympy.sympify(v)) if latex else v
        lines.append(f"  {k:<{w}} = {shown}")
    for note in report.get("notes", []):
        lines.append(f"  note: {note}")
    return "\n".join(lines) + "\n"
