"""The expression language's syntax: tokens and a parser from text to a syntax tree (no eval).

Grammar (DESIGN §4)::

    expression := call
    call       := NAME "(" [argument ("," argument)*] ")"
    argument   := NAME "=" value                  (a keyword argument, e.g. w=[1, 2])
                | value ["^" exponent]
    value      := call | number | STRING | list | NAME
    list       := "[" [number ("," number)*] "]"
    number     := NUMBER ["/" NUMBER]              (a fraction such as 1/50 or -3/4)
    exponent   := NUMBER | NAME                    (a NAME is a symbolic power)
    NUMBER     := [+-] digits [. digits] [e [+-] digits]     (ASCII digits)
    STRING     := "..." | '...'

Numbers are read exactly (:func:`powerspec.algebra.limits.read_number`).  The
text is at most :data:`~powerspec.algebra.limits.MAX_EXPRESSION_CHARS`
characters and nests at most :data:`~powerspec.algebra.limits.MAX_DEPTH` calls
and lists deep, so parsing is linear and never reaches Python's recursion
limit.  Every error is an :class:`~powerspec.errors.ExpressionError` with the
1-based column of the offending token.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from fractions import Fraction

from powerspec.algebra.limits import (
    MAX_DEPTH,
    MAX_EXPRESSION_CHARS,
    ExpressionLimitError,
    echo,
    read_number,
)
from powerspec.errors import ExpressionError

# ---------------------------------------------------------------- syntax nodes


@dataclass(frozen=True)
class Call:
    """``name(args...)`` at 1-based column ``col``; ``key`` is its text without blanks."""

    name: str
    args: tuple
    col: int
    key: str = ""


@dataclass(frozen=True)
class Num:
    """A numeric literal: ``value`` is exact (int, or Fraction for any other number)."""

    value: int | Fraction
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


@dataclass(frozen=True)
class Kw:
    """A keyword argument ``name=value`` (``dicycle(5, w=[...])``)."""

    name: str
    value: object
    col: int


@dataclass(frozen=True)
class NumList:
    """A bracketed list of numbers ``[1, 1/2, 0.2]``."""

    items: tuple[Num, ...]
    col: int


# ---------------------------------------------------------------------- tokens

_TOKEN = re.compile(
    r"""
    (?P<ws>\s+)
  | (?P<num>[+-]?(?:[0-9]+\.?[0-9]*|\.[0-9]+)(?:[eE][+-]?[0-9]+)?)
  | (?P<name>[A-Za-z_][A-Za-z_0-9]*)
  | (?P<str>"[^"]*"|'[^']*')
  | (?P<punct>[(),^=\[\]/])
    """,
    re.VERBOSE | re.ASCII,
)

Token = tuple[str, str, int]


def _tokens(text: str) -> list[Token]:
    out: list[Token] = []
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


def _found(tok: Token) -> str:
    return "the end of the expression" if tok[0] == "end" else echo(tok[1])


_POWER_OUTSIDE = ("a power G^k is only meaningful inside a product function: "
                  "write cart(G^k), direct(G^k), strong(G^k) or mix(a, b, G^k)")


# ---------------------------------------------------------------------- parser


class _Parser:
    def __init__(self, text: str):
        self.toks = _tokens(text)
        self.i = 0
        self.depth = 0

    def peek(self, ahead: int = 0) -> Token:
        return self.toks[min(self.i + ahead, len(self.toks) - 1)]

    def at(self, value: str, ahead: int = 0) -> bool:
        tok = self.peek(ahead)
        return tok[0] == "punct" and tok[1] == value

    def take(self, kind: str | None = None, value: str | None = None, what: str = "") -> Token:
        tok = self.toks[self.i]
        if (kind and tok[0] != kind) or (value and tok[1] != value):
            raise ExpressionError(f"expected {what or value or kind}, found {_found(tok)}", tok[2])
        self.i += 1
        return tok

    def enter(self, col: int) -> None:
        self.depth += 1
        if self.depth > MAX_DEPTH:
            raise ExpressionLimitError(
                f"the expression nests more than {MAX_DEPTH} calls or lists deep", col)

    def expression(self) -> Call:
        if self.peek()[0] != "name":
            self.take("name", what="a function such as cart(...) or C(5)")
        node = self.call()
        if self.at("^"):
            raise ExpressionError(_POWER_OUTSIDE, self.peek()[2])
        end = self.peek()
        if end[0] != "end":
            raise ExpressionError(f"unexpected {echo(end[1])} after the expression", end[2])
        return node

    def call(self) -> Call:
        start = self.i
        _, name, col = self.take("name", what="a function name")
        if not self.at("("):
            raise ExpressionError(f"expected '(' after {echo(name)}", self.peek()[2])
        self.take("punct", "(")
        self.enter(col)
        args: list = []
        keyword_seen = False
        if not self.at(")"):
            while True:
                arg = self.argument()
                if isinstance(arg, Kw):
                    keyword_seen = True
                elif keyword_seen:
                    raise ExpressionError("a positional argument cannot follow a keyword argument",
                                          getattr(arg, "col", col))
                args.append(arg)
                if not self.at(","):
                    break
                self.take("punct", ",")
        self.take("punct", ")", what="',' or ')'")
        self.depth -= 1
        key = "".join(tok[1] for tok in self.toks[start:self.i])
        return Call(name, tuple(args), col, key)

    def argument(self):
        kind, text, col = self.peek()
        if kind == "name" and self.at("=", 1):
            self.i += 2
            return Kw(text, self.value(), col)
        term = self.value()
        if self.at("^"):
            _, _, pcol = self.take("punct", "^")
            k, ktext, kcol = self.peek()
            if k == "num":
                self.i += 1
                exp: Num | Name = Num(read_number(ktext, kcol), ktext, kcol)
            elif k == "name":
                self.i += 1
                exp = Name(ktext, kcol)
            else:
                raise ExpressionError("expected a power after '^'", kcol)
            term = Pow(term, exp, pcol)
        return term

    def value(self):
        kind, text, col = self.peek()
        if kind == "name":
            if self.at("(", 1):
                return self.call()
            self.i += 1
            return Name(text, col)
        if kind == "num":
            return self.number()
        if kind == "str":
            self.i += 1
            return Str(text[1:-1], col)
        if self.at("["):
            return self.numlist()
        raise ExpressionError(f"expected an argument, found {_found(self.peek())}", col)

    def number(self) -> Num:
        _, text, col = self.take("num", what="a number")
        if self.at("/"):
            self.take("punct", "/")
            kind, den, dcol = self.peek()
            if kind != "num" or den[0] in "+-":
                raise ExpressionError("expected a positive denominator after '/'", dcol)
            self.i += 1
            text = f"{text}/{den}"
        return Num(read_number(text, col), text, col)

    def numlist(self) -> NumList:
        _, _, col = self.take("punct", "[")
        self.enter(col)
        items: list[Num] = []
        if not self.at("]"):
            while True:
                if self.peek()[0] != "num":
                    raise ExpressionError(
                        f"expected a number in the list, found {_found(self.peek())}",
                        self.peek()[2])
                items.append(self.number())
                if not self.at(","):
                    break
                self.take("punct", ",")
        self.take("punct", "]", what="',' or ']'")
        self.depth -= 1
        return NumList(tuple(items), col)


def parse_syntax(text: str) -> Call:
    """Parse expression text into a syntax tree (no evaluation); ExpressionError otherwise.

    >>> parse_syntax("cart(C(4)^2)").name
    'cart'
    >>> parse_syntax("dicycle(3, w=[1, 1/2, 2])").args[1].value.items[1].value
    Fraction(1, 2)
    """
    if not isinstance(text, str):
        raise ExpressionError(f"an expression is text (str), got {type(text).__name__}", None)
    if not text.strip():
        raise ExpressionError("the expression is empty; try e.g. 'cart(C(10)^6)'", 1)
    if len(text) > MAX_EXPRESSION_CHARS:
        raise ExpressionLimitError(
            f"the expression has {len(text)} characters, over the cap of {MAX_EXPRESSION_CHARS}; "
            "write repeated operands as powers, e.g. cart(C(5)^1000)", MAX_EXPRESSION_CHARS + 1)
    return _Parser(text).expression()


__all__ = ["Call", "Kw", "Name", "Num", "NumList", "Pow", "Str", "parse_syntax"]
