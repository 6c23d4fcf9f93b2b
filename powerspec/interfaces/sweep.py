"""``powerspec sweep``: one number tabulated against the power k or one named parameter.

The expression names the swept parameter as a bare word wherever a number
goes -- a power (``direct(motif()^k)``), a weight
(``dicycle(12, w=[1, 1, t, 1, 1, 1, 1, 1, 1, 1, 1, 1])``), a coefficient
(``mix(1, b, K(3)^20)``) -- and ``NAME=VALUES`` gives its values:

* ``1..30`` -- the whole numbers 1 to 30;
* ``0..1:1/20`` -- 0 to 1 in exact steps of 1/20 (the end is kept when reached);
* ``10..1000000000*10`` -- 10, 100, ..., 10^9 (a geometric progression);
* ``0,1/5,0.5,1`` -- a list, each value exactly as written.

The quantity is an invariant of ``powerspec invariants`` (``spectral_radius``,
``algebraic_connectivity``, ``log_spanning_trees``, ...), ``largest`` or
``smallest`` (the extreme eigenvalue of ``--matrix``), ``quantile=Q`` or
``cdf=X``.  Every point is an ordinary query: its value, rigorous bounds and
method are those of that query; a point that cannot be answered is listed
with the reason and the others go on.

>>> sw = sweep("cart(C(4)^k)", "largest", "k=1..3")
>>> [(p.at, p.value) for p in sw.points]
[(1, 2.0), (2, 4.0), (3, 6.0)]
"""

from __future__ import annotations

import re
from collections.abc import Callable
from dataclasses import dataclass, field
from fractions import Fraction
from typing import Any

from flint import acb, arb

from powerspec.algebra import limits
from powerspec.algebra.grammar import FUNCTIONS
from powerspec.answers.answer import bound_text, dump_json, json_value, value_text
from powerspec.errors import ExpressionError, InputError, PowerspecError
from powerspec.queries import planner
from powerspec.queries.invariants import invariants

MAX_POINTS = 1000
"""Most values one sweep evaluates."""

_NAME = re.compile(r"^[A-Za-z_][A-Za-z0-9_]*$")
_RANGE = re.compile(r"^(?P<a>[^.]+?)\.\.(?P<b>[^:*]+?)(?:(?P<op>[:*])(?P<s>.+))?$")
_DIGITS = re.compile(r"[-+]?\d[\d.e+-]*")
EXTREMES = ("largest", "smallest")


@dataclass
class Point:
    """One row: the parameter value, the expression evaluated and its answer (or the refusal)."""

    at: int | Fraction
    text: str
    expression: str = ""
    order: Any = None
    value: Any = None
    lower: Any = None
    upper: Any = None
    method: str = ""
    error: str | None = None


@dataclass
class Sweep:
    """A tabulated quantity: the template, the parameter, the quantity and the points."""

    template: str
    parameter: str
    quantity: str
    matrix: str
    points: list[Point] = field(default_factory=list)

    def to_dict(self) -> dict:
        """The JSON object: ``expression`` (the template), ``parameter``, ``quantity``,
        ``matrix`` (empty for invariants, which name their own), ``points`` (one object per
        value: ``at``, ``expression``, ``order``, ``value``, ``lower``, ``upper``, ``method``
        -- or ``error``)."""
        rows = []
        for p in self.points:
            row: dict[str, Any] = {"at": json_value(p.at)[0], "expression": p.expression or p.text}
            if p.error is not None:
                row["error"] = p.error
            else:
                row.update({"order": json_value(p.order)[0], "value": json_value(p.value)[0],
                            "lower": json_value(p.lower)[0], "upper": json_value(p.upper)[0],
                            "method": p.method})
            rows.append(row)
        return {"expression": self.template, "parameter": self.parameter,
                "quantity": self.quantity, "matrix": self.matrix, "query": "sweep",
                "points": rows}

    def to_json(self) -> str:
        """JSON text (Python's json.loads reads it back)."""
        return dump_json(self.to_dict()) + "\n"

    def to_text(self) -> str:
        """The table; methods are listed once below it (alike methods, differing only in their
        numbers, once) and referred to by number."""
        what = "an invariant" if self.matrix == "" else f"{self.matrix} matrix"
        lines = ["powerspec sweep",
                 f"  {'expression':<11} {self.template}",
                 f"  {'quantity':<11} {self.quantity} ({what})",
                 f"  {'over':<11} {self.parameter} = {_values_text(self.points)}", ""]
        groups: list[str] = []
        first: dict[str, str] = {}
        alike: dict[str, int] = {}
        rows = []
        for p in self.points:
            if p.error is not None:
                rows.append((p.text, "-", "", "", f"refused: {p.error}"))
                continue
            key = _DIGITS.sub("#", p.method)
            if key not in first:
                groups.append(key)
                first[key] = p.method
            alike[key] = alike.get(key, 0) + 1
            rows.append((p.text, cell(p.value), cell(p.lower, -1), cell(p.upper, 1),
                         f"[{groups.index(key) + 1}]"))
        head = (self.parameter, "value", "lower", "upper", "method")
        widths = [max(len(r[i]) for r in [head, *rows]) for i in range(4)]
        fmt = "  {:>{}}  {:>{}}  {:>{}}  {:>{}}  {}"
        for r in [head, *rows]:
            lines.append(fmt.format(r[0], widths[0], r[1], widths[1], r[2], widths[2], r[3],
                                    widths[3], r[4]).rstrip())
        lines.append("")
        for i, key in enumerate(groups, 1):
            more = alike[key] - 1
            points = "1 more point" if more == 1 else f"{more} more points"
            tail = f" (and {points} alike, with their own numbers; --json lists each)" \
                if more else ""
            lines.append(f"  [{i}] {first[key]}{tail}")
        return "\n".join(lines) + "\n"


def cell(v: Any, side: int = 0) -> str:
    """A number for a table cell: certified text, long integers by their leading digits; a lower
    (``side`` -1) or upper (+1) bound rounded outward, so the cell is itself a bound.

    >>> cell(2**1000), cell(0.5), cell(None), cell(2**1000, -1)   # 2^1000 = 1.0715086071862...e301
    ('1.07150860719e+301', '0.5', '-', '1.07150860718e+301')
    """
    if side:
        return bound_text(v, side)
    t = value_text(v)
    digits = t.lstrip("-")
    if len(digits) > 24 and digits.isdigit():
        sign = "-" if t.startswith("-") else ""
        return f"{sign}{digits[0]}.{digits[1:15]}e+{len(digits) - 1}"
    return t.split(" (an integer")[0]


def _values_text(points: list[Point]) -> str:
    texts = [p.text for p in points]
    if len(texts) > 6:
        return f"{', '.join(texts[:3])}, ..., {texts[-1]} ({len(texts)} values)"
    return ", ".join(texts)


# ----------------------------------------------------------------- parsing
def _number(text: str, what: str) -> int | Fraction:
    try:
        return limits.read_number(text)
    except ExpressionError as exc:
        raise InputError(f"sweep values: {what} {text.strip()!r}: {exc}") from None


def number_text(v: int | Fraction) -> str:
    """An exact number as the expression language writes it: 3, -1/5, 0.25.

    >>> number_text(Fraction(1, 4)), number_text(Fraction(-1, 3)), number_text(7)
    ('0.25', '-1/3', '7')
    """
    if isinstance(v, int) or v.denominator == 1:
        return str(int(v))
    d = v.denominator
    while d % 2 == 0:
        d //= 2
    while d % 5 == 0:
        d //= 5
    if d == 1 and v.denominator <= 10**6:
        digits = len(str(v.denominator))
        text = f"{float(v):.{digits + 1}f}".rstrip("0")
        if Fraction(text) == v:
            return text
    return f"{v.numerator}/{v.denominator}"


def parse_over(spec: str) -> tuple[str, list[tuple[int | Fraction, str]]]:
    """``NAME=VALUES`` -> (name, [(exact value, its text)]); see the module docstring.

    >>> parse_over("k=1..4")[1]
    [(1, '1'), (2, '2'), (3, '3'), (4, '4')]
    >>> [t for _, t in parse_over("t=0..1:1/4")[1]], [t for _, t in parse_over("k=10..1000*10")[1]]
    (['0', '0.25', '0.5', '0.75', '1'], ['10', '100', '1000'])
    >>> parse_over("w=0, 1/5, 0.5")[1]
    [(0, '0'), (Fraction(1, 5), '1/5'), (Fraction(1, 2), '0.5')]
    """
    name, eq, values = spec.partition("=")
    name = name.strip()
    if not eq or not _NAME.match(name):
        raise InputError(f"--over expects NAME=VALUES such as k=1..30 or t=0..1:1/10, got {spec!r}")
    if name in FUNCTIONS:
        raise InputError(f"--over: {name!r} is a function of the expression language; name the "
                         "parameter otherwise (e.g. k or t)")
    values = values.strip()
    m = _RANGE.match(values)
    if m is None:
        out = [(_number(t, "value"), t.strip()) for t in values.split(",") if t.strip()]
        if not out:
            raise InputError(f"--over {name}=: no values given")
    else:
        a, b = _number(m["a"], "start"), _number(m["b"], "end")
        op, s = m["op"], _number(m["s"], "step") if m["s"] else 1
        out = _progression(a, b, op or ":", s)
    if len(out) > MAX_POINTS:
        raise InputError(f"--over {name}: {len(out)} values, at most {MAX_POINTS} per sweep")
    return name, out


def _progression(a, b, op: str, s) -> list[tuple[int | Fraction, str]]:
    if b < a:
        raise InputError(f"sweep range {number_text(a)}..{number_text(b)}: the end is below the start")
    vals = []
    if op == ":":
        if s <= 0:
            raise InputError("sweep step must be positive")
        n = int((Fraction(b) - a) / s) + 1
        if n > MAX_POINTS:
            raise InputError(f"sweep range has {n} values, at most {MAX_POINTS}")
        vals = [a + i * s for i in range(n)]
    else:
        if a <= 0 or s <= 1:
            raise InputError("a geometric sweep A..B*F needs A > 0 and a factor F > 1")
        v = a
        while v <= b and len(vals) <= MAX_POINTS:
            vals.append(v)
            v = v * s
    out = []
    for v in vals:
        v = Fraction(v)
        v = int(v) if v.denominator == 1 else v
        out.append((v, number_text(v)))
    return out


def substitute(template: str, name: str, text: str) -> str:
    """The template with every bare occurrence of ``name`` (outside strings and not a function
    call) replaced by ``text``.

    >>> substitute("direct(K(4), dicycle(4, w=[1, t, 1, 1]))", "t", "1/5")
    'direct(K(4), dicycle(4, w=[1, 1/5, 1, 1]))'
    """
    parts = re.split(r'("[^"]*")', template)
    pattern = re.compile(rf"(?<![A-Za-z0-9_.]){re.escape(name)}(?![A-Za-z0-9_]|\s*[(=])")
    return "".join(p if p.startswith('"') else pattern.sub(text, p) for p in parts)


# ------------------------------------------------------------ evaluation
def _evaluator(quantity: str, matrix: str, *, limit, degrees: str, t: float, workers: int,
               scheduler: str | None) -> Callable[[str], tuple]:
    """expression text -> (order, value, lower, upper, method) for the quantity."""
    q, eq, arg = quantity.partition("=")
    if q in ("quantile", "cdf"):
        if not eq:
            raise InputError(f"sweep quantity {q} needs a point: {q}=0.5")
        fn = planner.quantile if q == "quantile" else planner.cdf
        x = float(_number(arg, "point"))
        if q == "quantile" and not 0 < x < 1:
            raise InputError(f"quantile level must lie strictly between 0 and 1, got {arg}")

        def dist(text):
            a = fn(text, x, matrix, limit=limit, degrees=degrees)
            return a.order, a.estimate, a.lower, a.upper, a.method
        return dist
    if eq:
        raise InputError(f"sweep quantity {quantity!r}: only quantile=Q and cdf=X take a value")
    if q in EXTREMES:
        def extreme(text):
            a = planner.top(text, 1, matrix, bottom=q == "smallest", limit=limit, degrees=degrees,
                            workers=workers, scheduler=scheduler)
            ball = a.listed_atoms()[0][0]
            return a.order, a.atoms.value(0), *_ball_bounds(ball), a.method
        return extreme

    def invariant(text):
        a = invariants(text, limit=limit, degrees=degrees, t=t)
        if q not in a.invariants:
            raise InputError(f"unknown sweep quantity {q!r}; choose largest, smallest, quantile=Q, "
                             f"cdf=X or an invariant: {', '.join(a.invariants)}")
        d = a.invariants[q]
        return a.order, d.get("value"), d.get("lower"), d.get("upper"), d.get("method", "")
    return invariant


def _ball_bounds(ball) -> tuple[Any, Any]:
    if isinstance(ball, acb):
        ball = ball.real
    if isinstance(ball, arb):
        return ball.lower(), ball.upper()
    return ball, ball


def sweep(template: str, quantity: str, over: str, matrix: str = "adjacency", *,
          limit: int | None = None, degrees: str = "out", t: float = 1.0, workers: int = 1,
          scheduler: str | None = None, progress=None) -> Sweep:
    """Evaluate ``quantity`` of ``template`` at every value of ``over`` (``NAME=VALUES``).

    ``progress(done, total)`` is called after each point.  Raises InputError for
    a bad specification; a point that is refused is kept with its reason
    (InputError when every point is refused).
    """
    name, values = parse_over(over)
    probe = substitute(template, name, "1")
    if probe == template:
        raise InputError(f"the expression does not mention the swept parameter {name!r}: write it "
                         f"where the number goes, e.g. direct(motif()^{name})")
    evaluate = _evaluator(quantity, matrix, limit=limit, degrees=degrees, t=t, workers=workers,
                          scheduler=scheduler)
    kind = matrix if quantity.partition("=")[0] in (*EXTREMES, "quantile", "cdf") else ""
    out = Sweep(template, name, quantity, kind)
    for i, (v, text) in enumerate(values):
        expr = substitute(template, name, text)
        point = Point(v, text, expr)
        try:
            point.order, point.value, point.lower, point.upper, point.method = evaluate(expr)
        except InputError as exc:
            if "unknown sweep quantity" in str(exc):
                raise
            point.error = str(exc)
        except PowerspecError as exc:
            point.error = str(exc)
        out.points.append(point)
        if progress is not None:
            progress(i + 1, len(values))
    if all(p.error is not None for p in out.points):
        raise InputError(f"no point of the sweep could be answered; at {name} = "
                         f"{out.points[0].text}: {out.points[0].error}")
    return out


__all__ = ["MAX_POINTS", "Point", "Sweep", "number_text", "parse_over", "substitute", "sweep"]
