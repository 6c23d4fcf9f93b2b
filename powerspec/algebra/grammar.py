"""The expression language: text -> syntax tree -> expression nodes ready for the engine.

The syntax (tokens, parser, the grammar in full) is in
:mod:`~powerspec.algebra.grammar_syntax`; this module builds nodes from it.

Functions (DESIGN §4, the textbook notation):

* products -- ``cart(G, ...)``, ``direct(G, ...)``, ``strong(G, ...)`` and
  ``mix(a, b, G, ...)`` (a·Cartesian + b·direct; for a outside {0, 1} it is
  not associative and is evaluated as a left fold); inside them ``G^k`` means
  k copies of G, 1 <= k <= 10^18;
* factors -- ``P(n)`` path, ``C(n)`` cycle, ``K(n)`` complete graph,
  ``K(m, n)`` complete bipartite graph (the star is ``K(1, n)``), ``J(n)``
  all-ones matrix, ``dicycle(n)`` or ``dicycle(n, w=[w0, ..., w(n-1)])``
  directed cycle with arc weights, ``motif()`` the shipped demo motif,
  ``load("file")`` (``load("file", "directed")`` for a directed edge list),
  ``scale(c, G)`` and ``loops(c, G)``.

Numbers may be fractions (``1/50``, ``-3/4``).  Every number is read exactly
(an ``int``, or a :class:`fractions.Fraction`), checked against the ranges of
:mod:`~powerspec.algebra.limits` on its exact value, and handed to the factor
layer as the nearest double (``float(Fraction)`` rounds correctly): a weight 1/3 becomes
0.333..., not a symbolic third.  The coefficients of ``mix(a, b, ...)`` act on eigenvalues,
not on a matrix, and stay exact: ``mix(1, 1/3, G)`` combines by exactly a third.

Work that grows with the written text is removed while building: equal
operands (same text, blanks ignored) are merged into powers -- all of them in
``cart``, ``direct``, ``strong`` and ``mix(a, b)`` with a in {0, 1}, which are
associative and commutative up to isomorphism, and only adjacent ones in any
other ``mix``, whose left fold depends on the order -- so
``cart(C(5), C(5), P(3), C(5))`` is ``cart(C(5)^3, P(3))`` and echoes so; an
equal sub-expression is built once (equal = same text, blanks ignored, or the same
canonical label after merging).  A left fold over more than
:data:`~powerspec.algebra.limits.MAX_FOLD_COPIES` copies is refused.  Every
error names the column; an unknown name gets the closest known one.
"""

from __future__ import annotations

import difflib
from fractions import Fraction
from pathlib import Path

from powerspec.algebra.engine import Leaf, Node, Product
from powerspec.algebra.grammar_syntax import Call, Kw, Name, Num, NumList, Pow, Str, parse_syntax
from powerspec.algebra.kinds import PRODUCT_KINDS, Combination
from powerspec.algebra.limits import (
    MAX_COPIES,
    MAX_FACTORS,
    MAX_FAMILY_ENTRIES,
    MAX_FOLD_COPIES,
    MAX_OPERANDS,
    ExpressionLimitError,
    check_copies,
    check_real,
    echo,
)
from powerspec.errors import ExpressionError, FactorFileError, PowerspecError
from powerspec.factors import families
from powerspec.factors.factor import Factor
from powerspec.factors.readers import load

SIGNATURES: dict[str, str] = {
    "cart": "cart(G, ...)", "direct": "direct(G, ...)", "strong": "strong(G, ...)",
    "mix": "mix(a, b, G, ...)", "P": "P(n)", "C": "C(n)", "K": "K(n) or K(m, n)", "J": "J(n)",
    "dicycle": "dicycle(n, w=[...])", "motif": "motif()", "load": 'load("file")',
    "scale": "scale(c, G)", "loops": "loops(c, G)",
}
"""How each function of the language is called."""

FUNCTIONS = tuple(SIGNATURES)
"""Every function name the expression language knows."""

_FACTOR_FUNCS = {"P": families.P, "C": families.C, "K": families.K, "J": families.J,
                 "dicycle": families.dicycle, "motif": families.motif}
_PRODUCT_FUNCS = (*PRODUCT_KINDS, "mix")

# Words people write for a factor or a product, and the notation to use instead.
_HINTS = (("bipartite", "K(m, n)"), ("star", "K(1, n)"), ("path", "P(n)"),
          ("directed", "dicycle(n, w=[...])"), ("cycle", "C(n)"), ("complete", "K(n)"),
          ("ones", "J(n)"), ("clique", "K(n)"), ("cartesian", "cart"), ("tensor", "direct"),
          ("kronecker", "direct"), ("file", 'load("file")'), ("read", 'load("file")'))

_POWER_OUTSIDE = ("a power G^k is only meaningful inside a product function: "
                  "write cart(G^k), direct(G^k), strong(G^k) or mix(a, b, G^k)")


class ExpressionFileError(ExpressionError, FactorFileError):
    """A ``load("...")`` in an expression failed: a FactorFileError that knows its column."""


def suggest(name: str) -> str | None:
    """The closest known function to an unknown ``name`` (as it is called), or None.

    >>> suggest("p"), suggest("cycle"), suggest("stong"), suggest("xyzzy")
    ('P(n)', 'C(n)', 'strong(G, ...)', None)
    """
    low = name.lower()
    for f in FUNCTIONS:
        if f.lower() == low:
            return SIGNATURES[f]
    for fragment, hint in _HINTS:
        if fragment in low:
            return hint
    close = difflib.get_close_matches(low, [f.lower() for f in FUNCTIONS], n=1, cutoff=0.6)
    if close:
        return SIGNATURES[next(f for f in FUNCTIONS if f.lower() == close[0])]
    return None


def _unknown(name: str, col: int) -> ExpressionError:
    hint = suggest(name)
    lead = f"unknown function {echo(name)}"
    if hint:
        lead += f"; did you mean {hint}?"
    return ExpressionError(f"{lead} (known: {', '.join(FUNCTIONS)})", col)


# ------------------------------------------------------------------ entry point


def parse(text: str, base_dir: str | Path | None = None) -> Node:
    """Parse expression text into an expression node ready for the engine.

    ``base_dir`` resolves relative ``load("...")`` paths (default: the
    current directory).  Raises ExpressionError (or a subclass) with the
    column for anything that is not a valid expression within the limits.

    >>> parse("cart(K(2)^3)").order
    8
    >>> parse("direct(P(3)^2, C(5))").label()
    'direct(P(3)^2, C(5))'
    >>> parse("cart(C(5), C(5), P(3), C(5))").label()
    'cart(C(5)^3, P(3))'
    >>> parse("cart(scale(1/2, dicycle(3, w=[1, 2, 1/4]))^2)").label()
    'cart(scale(0.5, dicycle(3, w=[1, 2, 0.25]))^2)'
    """
    tree = parse_syntax(text)
    return _build(tree, Path(base_dir) if base_dir else None)


def _build(t, base: Path | None) -> Node:
    """The expression node of syntax tree ``t`` (``base`` resolves relative load paths)."""
    return _Builder(base).build(t)


class _Builder:
    """Builds nodes from a syntax tree, each distinct sub-expression once."""

    def __init__(self, base: Path | None):
        self.base = base
        self.memo: dict[str, Node] = {}  # call text -> node
        self.canonical: dict[str, Node] = {}  # label -> node
        self.leaves = 0

    def build(self, t) -> Node:
        if isinstance(t, Pow):
            raise ExpressionError(_POWER_OUTSIDE, t.col)
        if not isinstance(t, Call):
            raise ExpressionError(_not_a_graph(t), getattr(t, "col", None))
        if t.key in self.memo:
            return self.memo[t.key]
        built = self._call(t)
        # One node per canonical label: cart(C(3), C(3)) and cart(C(3)^2) become the same
        # node, so that operands written differently still merge.
        node = self.canonical.setdefault(built.label(), built)
        if node is built and isinstance(node, Leaf):
            self.leaves += 1
            if self.leaves > MAX_FACTORS:
                raise ExpressionLimitError(
                    f"the expression has more than {MAX_FACTORS} distinct factors", t.col)
        self.memo[t.key] = node
        return node

    def _call(self, t: Call) -> Node:
        name = t.name
        try:
            if name in _PRODUCT_FUNCS:
                return self._product(t)
            if name in _FACTOR_FUNCS:
                return Leaf(_family(t))
            if name == "load":
                return self._load(t)
            if name in ("scale", "loops"):
                args = _bind(t, ("c", "G"), 2)
                c = _real(args["c"], f"{name}() weight c")
                g = self.build(args["G"])
                if not isinstance(g, Leaf):
                    raise ExpressionError(f"{name}() takes a factor, not a product", args["G"].col)
                return Leaf(getattr(families, name)(c, g.factor))
        except ExpressionError:
            raise
        except FactorFileError as exc:
            raise ExpressionFileError(str(exc), t.col) from None
        except PowerspecError as exc:
            raise ExpressionError(str(exc), t.col) from None
        raise _unknown(name, t.col)

    def _load(self, t: Call) -> Leaf:
        if not t.args or len(t.args) > 2 or not isinstance(t.args[0], Str):
            raise ExpressionError('load() takes a quoted file name: load("motif.mtx")', t.col)
        directed = False
        if len(t.args) == 2:
            opt = t.args[1]
            if not (isinstance(opt, Str) and opt.value in ("directed", "undirected")):
                raise ExpressionError('the second argument of load() is "directed" or "undirected"',
                                      opt.col)
            directed = opt.value == "directed"
        path = Path(t.args[0].value)
        if self.base is not None and not path.is_absolute():
            path = self.base / path
        f = load(path, directed=directed)
        # Keep the name as written so the expression echoes back unchanged.
        shown = f'load("{t.args[0].value}"' + (', "directed")' if directed else ")")
        return Leaf(Factor(f.adjacency, shown, f.closed_form))

    def _product(self, t: Call) -> Node:
        args = list(t.args)
        for a in args:
            if isinstance(a, Kw):
                raise ExpressionError(f"{t.name}() takes graphs, not keyword arguments", a.col)
        if t.name == "mix":
            if len(args) < 3:
                raise ExpressionError("mix(a, b, G, ...) needs two coefficients and a graph", t.col)
            comb = Combination(_exact(args[0], "mix() coefficient a"),
                               _exact(args[1], "mix() coefficient b"))
            args, label = args[2:], ""
        else:
            if not args:
                raise ExpressionError(f"{t.name}() needs at least one graph", t.col)
            comb, label = PRODUCT_KINDS[t.name], t.name
        operands = []
        for a in args:
            base, k = (a.base, _power(a.exponent)) if isinstance(a, Pow) else (a, 1)
            node = self.build(base)
            # Equal text, an equal canonical label and a product that collapses to its one
            # operand all give the same node: merging by node catches them all.
            operands.append([id(node), node, k, a.col])
        merged = merge_operands(operands, everywhere=comb.associative)
        _check_operands(t, comb, merged)
        if len(merged) == 1 and merged[0][2] == 1:
            return merged[0][1]
        return Product(comb, tuple((node, k) for _, node, k, _ in merged), label)


def merge_operands(operands: list[list], everywhere: bool) -> list[list]:
    """Merge ``[key, node, copies, col]`` operands with equal keys by adding their copies.

    Returns the merged list (the input lists are updated in place).

    With ``everywhere`` (an associative product) all equal operands merge, at the
    place of the first; otherwise only runs of adjacent equal ones (a left fold
    depends on the order).

    >>> ops = [["C(5)", 0, 1, 1], ["P(3)", 1, 1, 6], ["C(5)", 0, 2, 11]]
    >>> [(k, c) for k, _, c, _ in merge_operands([o[:] for o in ops], True)]
    [('C(5)', 3), ('P(3)', 1)]
    >>> [(k, c) for k, _, c, _ in merge_operands([o[:] for o in ops], False)]
    [('C(5)', 1), ('P(3)', 1), ('C(5)', 2)]
    """
    out: list[list] = []
    first: dict[str, int] = {}
    for op in operands:
        key = op[0]
        if everywhere and key in first:
            out[first[key]][2] += op[2]
        elif not everywhere and out and out[-1][0] == key:
            out[-1][2] += op[2]
        else:
            first[key] = len(out)
            out.append(op)
    return out


def _check_operands(t: Call, comb: Combination, merged: list[list]) -> None:
    if len(merged) > MAX_OPERANDS:
        raise ExpressionLimitError(
            f"{t.name}() has {len(merged)} distinct operands, over the cap of {MAX_OPERANDS}", t.col)
    for _, node, k, col in merged:
        if k > MAX_COPIES:
            raise ExpressionLimitError(
                f"the copies of {echo(node.label())} add up to more than 10^18, the most "
                "supported", col)
    if not comb.associative:
        total = sum(k for _, _, k, _ in merged)
        if total > MAX_FOLD_COPIES:
            raise ExpressionLimitError(
                f"{comb.label()} with a outside {{0, 1}} is a left fold, one step per copy; "
                f"{total} copies is over the cap of {MAX_FOLD_COPIES} (mix(1, b) and mix(0, b) "
                "are associative and take any power)", t.col)


# ------------------------------------------------------------------- factors


def _family(t: Call) -> Factor:
    name = t.name
    if name == "K":
        positional = [a for a in t.args if not isinstance(a, Kw)]
        kws = {a.name for a in t.args if isinstance(a, Kw)}
        one = (len(positional) == 1 and not kws) or (not positional and kws == {"n"})
        args = _bind(t, ("n",), 1) if one else _bind(t, ("m", "n"), 2)
    elif name == "dicycle":
        args = _bind(t, ("n", "w"), 1)
    elif name == "motif":
        _bind(t, (), 0)
        f = families.motif()
        return Factor(f.adjacency, "motif()", f.closed_form)  # echo as written
    else:
        args = _bind(t, ("n",), 1)
    ints = {p: _integer(a, f"{name}() argument {p}") for p, a in args.items() if p != "w"}
    n = ints["n"]
    m = ints.get("m")
    entries = {"P": 2 * (n - 1), "C": 2 * n, "J": n * n, "dicycle": n,
               "K": n * (n - 1) if m is None else 2 * m * n}[name]
    if min(n, m or 1) >= 1 and entries > MAX_FAMILY_ENTRIES:  # smaller n: the family refuses
        shown = f"{name}({n})" if m is None else f"{name}({m}, {n})"
        raise ExpressionLimitError(
            f"{shown} would store {entries:,} matrix entries, over the cap of "
            f"{MAX_FAMILY_ENTRIES:,} per factor", t.col)
    if name == "dicycle":
        w = args.get("w")
        if w is None:
            return families.dicycle(n)
        if not isinstance(w, NumList):
            raise ExpressionError("dicycle() weights w are a list of numbers, e.g. w=[1, 1, 0.2]",
                                  getattr(w, "col", t.col))
        return families.dicycle(n, w=[_real(x, "a dicycle() weight") for x in w.items])
    fn = _FACTOR_FUNCS[name]
    return fn(n) if m is None else fn(m, n)


def _bind(t: Call, params: tuple[str, ...], required: int) -> dict:
    """Map a call's arguments to ``params`` (positional first, then keywords); check arity."""
    sig = SIGNATURES.get(t.name, t.name + "()")
    positional = [a for a in t.args if not isinstance(a, Kw)]
    if len(positional) > len(params):
        raise ExpressionError(
            f"{sig} takes at most {len(params)} argument(s), got {len(positional)}",
            getattr(positional[len(params)], "col", t.col))
    out = dict(zip(params, positional, strict=False))
    for kw in (a for a in t.args if isinstance(a, Kw)):
        if kw.name not in params:
            close = difflib.get_close_matches(kw.name, params, n=1)
            hint = (f"; did you mean {close[0]}=?" if close
                    else f"; its arguments are {', '.join(params) or 'none'}")
            raise ExpressionError(f"{t.name}() has no argument {echo(kw.name)}{hint}", kw.col)
        if kw.name in out:
            raise ExpressionError(f"{t.name}() got argument {kw.name} twice", kw.col)
        out[kw.name] = kw.value
    missing = [p for p in params[:required] if p not in out]
    if missing:
        raise ExpressionError(f"{sig} needs {' and '.join(missing)}; got {len(t.args)} argument(s)",
                              t.col)
    return out


# -------------------------------------------------------------------- numbers


def _not_a_graph(t) -> str:
    if isinstance(t, Name) and t.name in SIGNATURES:
        return f"expected a graph; write {SIGNATURES[t.name]} with its parentheses"
    if isinstance(t, Kw):
        return "a keyword argument is not a graph"
    return "expected a graph (a function call such as C(5))"


def _power(e: Num | Name) -> int:
    """The number of copies written after ``^``: a whole number in 1..10^18."""
    if isinstance(e, Name):
        raise ExpressionError(
            f"symbolic power {echo(e.name)} needs the symbolic bridge (--symbolic); "
            "the numeric engine takes an integer power",
            e.col,
        )
    if not isinstance(e.value, int):
        raise ExpressionError(f"the power must be a whole number, got {echo(e.text)}", e.col)
    return check_copies(e.value, "the power", e.col)


def _integer(a, what: str) -> int:
    if not isinstance(a, Num) or not isinstance(a.value, int):
        raise ExpressionError(f"{what} must be a whole number", getattr(a, "col", None))
    if abs(a.value) > 10**15:
        raise ExpressionLimitError(f"{what} = {echo(a.text)} is out of range", a.col)
    return a.value


def _exact(a, what: str) -> Fraction:
    """A mix coefficient exactly as written (1/3 stays a third: the rule's arithmetic is exact),
    after the range check of the limits."""
    _real(a, what)
    return Fraction(a.value)


def _real(a, what: str) -> float:
    """The nearest double to a weight or coefficient, after the range check of the limits."""
    if not isinstance(a, Num):
        raise ExpressionError(f"{what} must be a number", getattr(a, "col", None))
    return check_real(a.value, what, a.col, text=a.text)


__all__ = ["FUNCTIONS", "SIGNATURES", "ExpressionFileError", "merge_operands", "parse",
           "parse_syntax", "suggest", "Call", "Kw", "Name", "Num", "NumList", "Pow", "Str"]
