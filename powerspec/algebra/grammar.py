"""The expression language: text -> syntax tree -> expression nodes.

Grammar (DESIGN §4), parsed by a small recursive-descent parser (no eval)::

    expression := call
    call       := NAME "(" [argument ("," argument)*] ")"
    argument   := term ["^" exponent]
    term       := call | NUMBER | STRING
    exponent   := INTEGER | NAME          (a NAME is a symbolic power)

Product functions -- ``cart``, ``direct``, ``strong`` and ``mix(a, b, ...)``
-- take one or more graph operands; inside them ``G^k`` means k copies of G.
Factor functions build leaves: ``P(n)``, ``C(n)``, ``K(n)``,
``K(1, n)``, ``K(m, n)``, ``dicycle(n)``, ``motif()``,
``load("file")`` (``load("file", "directed")`` for a directed edge list),
``scale(c, G)`` and ``loops(c, G)``.  Every error names the column.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from pathlib import Path

from powerspec.algebra.engine import Leaf, Node, Product
from powerspec.algebra.kinds import PRODUCT_KINDS, Combination
from powerspec.errors import ExpressionError, PowerspecError
from powerspec.factors import families
from powerspec.factors.factor import Factor
from powerspec.factors.readers import load

# ---------------------------------------------------------------- syntax


@dataclass(frozen=True)
class Call:
    """``name(args...)`` at 1-based column ``col``."""

    name: str
    args: tuple
    col: int


@dataclass(frozen=True)
class Num:
    """A numeric literal."""

    value: float | int
    text: str
    col: int


@dataclass(frozen=True)
class Str:
    """A quoted string literal."""

    value: str
    col: int


@dataclass(frozen=True)
class Name:
    """A bare name (only meaningful as a symbolic exponent)."""

    name: str
    col: int


@dataclass(frozen=True)
class Pow:
    """``base ^ exponent`` -- k copies of ``base`` inside a product function."""

    base: object
    exponent: Num | Name
    col: int


_TOKEN = re.compile(
    r"""
    (?P<ws>\s+)
  | (?P<num>[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)
  | (?P<name>[A-Za-z_][A-Za-z_0-9]*)
  | (?P<str>"[^"]*"|'[^']*')
  | (?P<punct>[(),^])
    """,
    re.VERBOSE,
)


def _tokens(text: str) -> list[tuple[str, str, int]]:
    out = []
    pos = 0
    while pos < len(text):
        m = _TOKEN.match(text, pos)
        if not m:
            ch = text[pos]
            if ch in "\"'":
                raise ExpressionError("unterminated string", pos + 1)
            raise ExpressionError(f"unexpected character {ch!r}", pos + 1)
        kind = m.lastgroup
        if kind != "ws":
            out.append((kind, m.group(), pos + 1))
        pos = m.end()
    out.append(("end", "", len(text) + 1))
    return out


class _Parser:
    def __init__(self, text: str):
        self.toks = _tokens(text)
        self.i = 0

    def peek(self):
        return self.toks[self.i]

    def take(self, kind=None, value=None, what=""):
        tok = self.toks[self.i]
        if (kind and tok[0] != kind) or (value and tok[1] != value):
            found = "the end of the expression" if tok[0] == "end" else repr(tok[1])
            raise ExpressionError(f"expected {what or value or kind}, found {found}", tok[2])
        self.i += 1
        return tok

    def expression(self):
        tok = self.peek()
        if tok[0] != "name":
            self.take("name", what="a function such as cart(...) or C(5)")
        node = self.call()
        if self.peek()[0] == "punct" and self.peek()[1] == "^":
            raise ExpressionError(
                "a power G^k is only meaningful inside a product function: "
                "write cart(G^k), direct(G^k), strong(G^k) or mix(a, b, G^k)",
                self.peek()[2],
            )
        end = self.peek()
        if end[0] != "end":
            raise ExpressionError(f"unexpected {end[1]!r} after the expression", end[2])
        return node

    def call(self):
        kind, name, col = self.take("name", what="a function name")
        nxt = self.peek()
        if not (nxt[0] == "punct" and nxt[1] == "("):
            raise ExpressionError(f"expected '(' after {name}", nxt[2])
        self.take("punct", "(")
        args = []
        if not (self.peek()[0] == "punct" and self.peek()[1] == ")"):
            args.append(self.argument())
            while self.peek()[0] == "punct" and self.peek()[1] == ",":
                self.take("punct", ",")
                args.append(self.argument())
        self.take("punct", ")", what="',' or ')'")
        return Call(name, tuple(args), col)

    def argument(self):
        kind, text, col = self.peek()
        if kind == "name":
            if self.toks[self.i + 1][1] == "(":
                term = self.call()
            else:
                self.i += 1
                term = Name(text, col)
        elif kind == "num":
            self.i += 1
            term = Num(_number(text, col), text, col)
        elif kind == "str":
            self.i += 1
            term = Str(text[1:-1], col)
        else:
            found = "the end of the expression" if kind == "end" else repr(text)
            raise ExpressionError(f"expected an argument, found {found}", col)
        if self.peek()[0] == "punct" and self.peek()[1] == "^":
            _, _, pcol = self.take("punct", "^")
            k, ktext, kcol = self.peek()
            if k == "num":
                self.i += 1
                exp = Num(_number(ktext, kcol), ktext, kcol)
            elif k == "name":
                self.i += 1
                exp = Name(ktext, kcol)
            else:
                raise ExpressionError("expected a power after '^'", kcol)
            term = Pow(term, exp, pcol)
        return term


def _number(text: str, col: int) -> float | int:
    try:
        if re.fullmatch(r"[+-]?\d+", text):
            return int(text)
        return float(text)
    except ValueError as exc:  # pragma: no cover - the regex only admits numbers
        raise ExpressionError(f"bad number {text!r}", col) from exc


def parse_syntax(text: str) -> Call:
    """Parse expression text into a syntax tree (no evaluation).

    >>> parse_syntax("cart(C(4)^2)").name
    'cart'
    """
    if not isinstance(text, str) or not text.strip():
        raise ExpressionError("the expression is empty; try e.g. 'cart(C(10)^6)'", 1)
    return _Parser(text).expression()


# -------------------------------------------------------------- building

_FACTOR_FUNCS = {
    "P": (families.P, ("n",)),
    "C": (families.C, ("n",)),
    "K": (families.K, ("m", "n")),
    "J": (families.J, ("n",)),
    "dicycle": (families.dicycle, ("n",)),
    "motif": (families.motif, ()),
}
_PRODUCT_FUNCS = (*PRODUCT_KINDS, "mix")
FUNCTIONS = (*_PRODUCT_FUNCS, *_FACTOR_FUNCS, "load", "scale", "loops")
"""Every function name the expression language knows."""


def parse(text: str, base_dir: str | Path | None = None) -> Node:
    """Parse expression text into an expression node ready for the engine.

    ``base_dir`` resolves relative ``load("...")`` paths (default: the
    current directory).

    >>> parse("cart(K(2)^3)").order
    8
    >>> parse("direct(P(3)^2, C(5))").label()
    'direct(P(3)^2, C(5))'
    """
    tree = parse_syntax(text)
    return _build(tree, Path(base_dir) if base_dir else None)


def _build(t, base: Path | None) -> Node:
    if isinstance(t, Pow):
        raise ExpressionError(
            "a power G^k is only meaningful inside a product function: "
            "write cart(G^k), direct(G^k), strong(G^k) or mix(a, b, G^k)",
            t.col,
        )
    if not isinstance(t, Call):
        raise ExpressionError("expected a graph (a function call such as C(5))", t.col)
    name = t.name
    try:
        if name in _PRODUCT_FUNCS:
            return _build_product(t, base)
        if name in _FACTOR_FUNCS:
            fn, params = _FACTOR_FUNCS[name]
            if name == "K" and len(t.args) == 1:
                params = ("n",)
            _arity(t, len(params), params)
            ints = [_integer(a, f"{name}() argument {p}") for a, p in zip(t.args, params, strict=True)]
            f = fn(*ints)
            if name == "motif":  # echo the expression as written
                f = Factor(f.adjacency, "motif()", f.closed_form)
            return Leaf(f)
        if name == "load":
            return _build_load(t, base)
        if name in ("scale", "loops"):
            _arity(t, 2, ("c", "G"))
            c = _real(t.args[0], f"{name}() weight c")
            g = _build(t.args[1], base)
            if not isinstance(g, Leaf):
                raise ExpressionError(f"{name}() takes a factor, not a product", t.args[1].col)
            return Leaf(getattr(families, name)(c, g.factor))
    except ExpressionError:
        raise
    except PowerspecError as exc:
        raise ExpressionError(str(exc), t.col) from exc
    raise ExpressionError(f"unknown function {name!r}; known: {', '.join(FUNCTIONS)}", t.col)


def _build_product(t: Call, base: Path | None) -> Node:
    args = list(t.args)
    if t.name == "mix":
        if len(args) < 3:
            raise ExpressionError("mix(a, b, G, ...) needs two coefficients and a graph", t.col)
        comb = Combination(_real(args[0], "mix() coefficient a"), _real(args[1], "mix() coefficient b"))
        args = args[2:]
        label = ""
    else:
        if not args:
            raise ExpressionError(f"{t.name}() needs at least one graph", t.col)
        comb = PRODUCT_KINDS[t.name]
        label = t.name
    operands = []
    for a in args:
        if isinstance(a, Pow):
            k = _power(a.exponent)
            operands.append((_build(a.base, base), k))
        else:
            operands.append((_build(a, base), 1))
    if len(operands) == 1 and operands[0][1] == 1:
        return operands[0][0]
    return Product(comb, tuple(operands), label)


def _power(e: Num | Name):
    if isinstance(e, Name):
        raise ExpressionError(
            f"symbolic power {e.name!r} needs the symbolic bridge (--symbolic); "
            "the numeric engine takes an integer power",
            e.col,
        )
    if isinstance(e.value, float):
        raise ExpressionError(f"the power must be a whole number, got {e.text}", e.col)
    if e.value < 1:
        raise ExpressionError(f"the power must be at least 1, got {e.text}", e.col)
    return e.value


def _build_load(t: Call, base: Path | None) -> Leaf:
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
    if base is not None and not path.is_absolute():
        path = base / path
    f = load(path, directed=directed)
    # Keep the name as written so the expression echoes back unchanged.
    shown = f'load("{t.args[0].value}"' + (', "directed")' if directed else ")")
    return Leaf(Factor(f.adjacency, shown, f.closed_form))


def _arity(t: Call, n: int, params) -> None:
    if len(t.args) != n:
        sig = ", ".join(params)
        raise ExpressionError(f"{t.name}({sig}) takes {n} argument(s), got {len(t.args)}", t.col)


def _integer(a, what: str) -> int:
    if not isinstance(a, Num) or not isinstance(a.value, int):
        raise ExpressionError(f"{what} must be a whole number", getattr(a, "col", None))
    return a.value


def _real(a, what: str) -> float:
    if not isinstance(a, Num):
        raise ExpressionError(f"{what} must be a number", getattr(a, "col", None))
    return float(a.value)
