"""SPICE parameter expressions: ``{w*2}``, ``'a+b'``, ``.func`` bodies, ``.param`` lists.

Text is compiled once (pyparsing grammar, cached) into a small tree of our own node
classes and evaluated by walking that tree; Python ``eval`` is never involved, and every
input is bounded: text length, nesting depth, user-function call depth.

The language follows ngspice-39 (manual chapter "Parameters, functions, expressions",
section "Syntax of expressions"), as confirmed by running ngspice-39 in batch mode
(the checks are in ``tests/test_expr.py``).  Lowest to highest precedence:

====================  ==========================================================
``c ? a : b``         ternary, right-associative, only the chosen branch is evaluated
``||``                logical or (short-circuit); results are 1.0 / 0.0
``&&``                logical and (short-circuit)
``== != <> < <= > >=``  comparisons, all one level, left to right
``+ -``               add, subtract
``* / % \\``           multiply, divide, modulo (C ``fmod``), integer divide (truncates)
``- + !``             unary minus, plus, not -- looser than power: ``-2**2`` is -4
``** ^``              power, *left*-associative: ``2**3**2`` is 64; ngspice-39 computes
                      it as ``pwr``, i.e. ``|x|**y``: ``(-2)**3`` is 8
====================  ==========================================================

Numbers take the engineering suffixes of :mod:`lintamp.netlist.units` (``{2*1k}``).
Names are case-insensitive (lower-cased); ngspice predefines no constants in these
expressions (``{pi}`` is an undefined parameter there), so none are predefined here:
a dialect that has ``pi`` puts it in the outer scope.

Every result must be finite: an overflow (``1e308*10``, ``exp(1000)``), a division by
zero or a domain error (``sqrt(-1)``, ``ln(0)``) is an :class:`ExprError` -- ngspice-39
also rejects a parameter whose value is inf or nan.

Deliberate differences from ngspice-39:

- ``mil`` is 25.4e-6 inside expressions too; ngspice-39's expression reader takes
  ``{1mil}`` as 1e-3 (milli), while its number fields read ``1mil`` as 25.4e-6.
- ``limit(x, lo, hi)`` clamps, as other dialects do; ngspice-39 knows only the
  statistical ``limit(nom, avar)`` (which, like ``gauss`` and friends, is evaluated
  here at its nominal value).
- ``if``, ``sign``, ``round``, ``atan2``, ``hypot`` are accepted (see
  :data:`BUILTIN_FUNCTIONS`); ngspice-39 reports them as undefined.
- A built-in called with the wrong number of arguments is an error; ngspice-39
  quietly uses the last one (``sqrt(4,5)`` is sqrt(5) there).
"""

from __future__ import annotations

import math
import re
from collections import ChainMap
from dataclasses import dataclass, field
from functools import lru_cache
from typing import TYPE_CHECKING, Callable, Mapping, Sequence

from lintamp.netlist.units import SUFFIXES, parse_number

if TYPE_CHECKING:
    import pyparsing as pp  # imported, and the grammar built, by _grammar() on first need

__all__ = [
    "BUILTIN_FUNCTIONS",
    "CircularDefinition",
    "Expr",
    "ExprError",
    "MAX_CALL_DEPTH",
    "MAX_NESTING",
    "MAX_TEXT_CHARS",
    "SUFFIXES",
    "UndefinedName",
    "UserFunc",
    "compile_expr",
    "define_func",
    "evaluate_params",
    "evaluate_value",
    "parse_number",
    "strip_delimiters",
]

#: Longest expression text accepted, in characters.
MAX_TEXT_CHARS = 65_536
#: Deepest nesting of parentheses, function calls and ``?:`` accepted.  Real netlists
#: stay far below; the bound keeps the parser and the tree walk well inside Python's
#: recursion limit whatever the caller's own stack depth.
MAX_NESTING = 32
#: Deepest chain of user-function calls (a ``.func`` calling itself never ends).
MAX_CALL_DEPTH = 32
# Bound on the depth of one compiled tree (runs of one operator are flat, so this is
# reached only through nesting, which MAX_NESTING already bounds).
_MAX_TREE_DEPTH = 400
# Bound on the summed tree depth along a chain of user-function calls, i.e. on the
# Python frames one evaluation may use.
_MAX_EVAL_DEPTH = 600

_IDENT = r"[A-Za-z_][A-Za-z0-9_]*"
# Longest piece of expression text (a name, a number) quoted in a message: the text
# is untrusted and may be a 60 000-character name.
_SHOWN_CHARS = 40


def _shown(text: str) -> str:
    return text if len(text) <= _SHOWN_CHARS else text[:_SHOWN_CHARS] + "..."


class ExprError(Exception):
    """An expression that cannot be read or evaluated.

    ``offset`` is the 0-based column within the expression text where the problem is.
    """

    def __init__(self, message: str, offset: int = 0):
        super().__init__(message, offset)
        self.message = message
        self.offset = offset

    def __str__(self) -> str:
        return self.message

    def shifted(self, delta: int) -> "ExprError":
        """The same error with its offset moved by ``delta`` (text embedded in a token)."""
        return ExprError(self.message, self.offset + delta)


class UndefinedName(ExprError):
    """A parameter (or function, ``kind="function"``) that nothing defines."""

    def __init__(self, name: str, offset: int = 0, kind: str = "parameter"):
        super().__init__(f"undefined {kind} '{_shown(name)}'", offset)
        self.name = name
        self.kind = kind
        self.args = (name, offset, kind)  # so that the error pickles (--jobs)

    def shifted(self, delta: int) -> "UndefinedName":
        moved = UndefinedName(self.name, self.offset + delta, self.kind)
        moved.message = self.message
        return moved


class CircularDefinition(ExprError):
    """A parameter defined in terms of itself, directly or through others."""

    def shifted(self, delta: int) -> "CircularDefinition":
        return CircularDefinition(self.message, self.offset + delta)


# --------------------------------------------------------------------------- nodes
# Each node evaluates itself given a _Context.  Runs of one precedence level
# (a+b-c+..., a**b**c) are one n-ary node, so a long sum costs no tree depth.


@dataclass(slots=True)
class _Context:
    scope: Mapping[str, float]
    funcs: Mapping[str, "UserFunc"] | None
    calls: int  # user-function calls on the current chain
    depth: int  # summed tree depth on the current chain


class _Node:
    __slots__ = ("depth",)

    def evaluate(self, ctx: _Context) -> float:  # pragma: no cover - abstract
        raise NotImplementedError


class _Number(_Node):
    __slots__ = ("value",)

    def __init__(self, value: float):
        self.value = value
        self.depth = 1

    def evaluate(self, ctx: _Context) -> float:
        return self.value


class _Name(_Node):
    __slots__ = ("name", "offset")

    def __init__(self, name: str, offset: int):
        self.name = name
        self.offset = offset
        self.depth = 1

    def evaluate(self, ctx: _Context) -> float:
        try:
            return float(ctx.scope[self.name])
        except KeyError:
            raise UndefinedName(self.name, self.offset) from None


def _finite(value: float, what: str, offset: int) -> float:
    if value - value == 0.0:  # false for inf and nan only
        return value
    raise ExprError(f"{what} overflows (result is not a finite number)", offset)


def _negate(x: float, offset: int) -> float:
    return -x


def _plus(x: float, offset: int) -> float:
    return x


def _not(x: float, offset: int) -> float:
    return 0.0 if x else 1.0


_UNARY: dict[str, Callable[[float, int], float]] = {"-": _negate, "+": _plus, "!": _not}


class _Unary(_Node):
    __slots__ = ("ops", "operand")

    def __init__(self, ops: tuple[tuple[Callable, int], ...], operand: _Node):
        self.ops = ops  # outermost first
        self.operand = operand
        self.depth = operand.depth + 1

    def evaluate(self, ctx: _Context) -> float:
        value = self.operand.evaluate(ctx)
        for apply, offset in reversed(self.ops):
            value = apply(value, offset)
        return value


def _add(a: float, b: float, offset: int) -> float:
    return _finite(a + b, "'+'", offset)


def _sub(a: float, b: float, offset: int) -> float:
    return _finite(a - b, "'-'", offset)


def _mul(a: float, b: float, offset: int) -> float:
    return _finite(a * b, "'*'", offset)


def _div(a: float, b: float, offset: int) -> float:
    if b == 0.0:
        raise ExprError("division by zero", offset)
    return _finite(a / b, "'/'", offset)


def _mod(a: float, b: float, offset: int) -> float:
    if b == 0.0:
        raise ExprError("modulo by zero", offset)
    return math.fmod(a, b)  # C semantics, as ngspice: -7 % 3 is -1


def _int_div(a: float, b: float, offset: int) -> float:
    if b == 0.0:
        raise ExprError("integer division by zero", offset)
    return float(math.trunc(_finite(a / b, "'\\'", offset)))


def _power_abs(base: float, exponent: float, offset: int) -> float:
    """``**`` and ``^``: ngspice-39 computes them as pwr(x, y) = |x| ** y."""
    base = abs(base)
    if base == 0.0 and exponent < 0.0:
        raise ExprError("zero raised to a negative power", offset)
    try:
        return _finite(math.pow(base, exponent), "power", offset)
    except OverflowError:
        raise ExprError("power overflows (result is not a finite number)", offset) from None


def _lt(a: float, b: float, offset: int) -> float:
    return 1.0 if a < b else 0.0


def _le(a: float, b: float, offset: int) -> float:
    return 1.0 if a <= b else 0.0


def _gt(a: float, b: float, offset: int) -> float:
    return 1.0 if a > b else 0.0


def _ge(a: float, b: float, offset: int) -> float:
    return 1.0 if a >= b else 0.0


def _eq(a: float, b: float, offset: int) -> float:
    return 1.0 if a == b else 0.0


def _ne(a: float, b: float, offset: int) -> float:
    return 1.0 if a != b else 0.0


_BINARY: dict[str, Callable[[float, float, int], float]] = {
    "+": _add, "-": _sub, "*": _mul, "/": _div, "%": _mod, "\\": _int_div,
    "**": _power_abs, "^": _power_abs,
    "<": _lt, "<=": _le, ">": _gt, ">=": _ge, "==": _eq, "!=": _ne, "<>": _ne,
}

# Binary levels, loosest first (ngspice manual precedence 7..3); power is separate.
_LEVELS: tuple[frozenset[str], ...] = (
    frozenset({"||"}),
    frozenset({"&&"}),
    frozenset({"==", "!=", "<>", "<", "<=", ">", ">="}),
    frozenset({"+", "-"}),
    frozenset({"*", "/", "%", "\\"}),
)


class _Chain(_Node):
    """``first op1 x1 op2 x2 ...`` evaluated left to right (one precedence level)."""

    __slots__ = ("first", "rest")

    def __init__(self, first: _Node, rest: tuple[tuple[Callable, _Node, int], ...]):
        self.first = first
        self.rest = rest
        self.depth = 1 + max(first.depth, max(node.depth for _, node, _ in rest))

    def evaluate(self, ctx: _Context) -> float:
        value = self.first.evaluate(ctx)
        for apply, node, offset in self.rest:
            value = apply(value, node.evaluate(ctx), offset)
        return value


class _Logical(_Node):
    """``a || b || ...`` or ``a && b && ...``, stopping as soon as the result is known."""

    __slots__ = ("is_or", "operands")

    def __init__(self, is_or: bool, operands: tuple[_Node, ...]):
        self.is_or = is_or
        self.operands = operands
        self.depth = 1 + max(node.depth for node in operands)

    def evaluate(self, ctx: _Context) -> float:
        if self.is_or:
            for node in self.operands:
                if node.evaluate(ctx):
                    return 1.0
            return 0.0
        for node in self.operands:
            if not node.evaluate(ctx):
                return 0.0
        return 1.0


class _Ternary(_Node):
    """``c1 ? v1 : c2 ? v2 : ... : otherwise``; only the chosen branch is evaluated."""

    __slots__ = ("branches", "otherwise")

    def __init__(self, branches: tuple[tuple[_Node, _Node], ...], otherwise: _Node):
        self.branches = branches
        self.otherwise = otherwise
        self.depth = 1 + max(otherwise.depth, *(max(c.depth, v.depth) for c, v in branches))

    def evaluate(self, ctx: _Context) -> float:
        for condition, value in self.branches:
            if condition.evaluate(ctx):
                return value.evaluate(ctx)
        return self.otherwise.evaluate(ctx)


class _BuiltinCall(_Node):
    __slots__ = ("name", "function", "args", "offset")

    def __init__(self, name: str, function: Callable, args: tuple[_Node, ...], offset: int):
        self.name = name
        self.function = function
        self.args = args
        self.offset = offset
        self.depth = 1 + max((node.depth for node in args), default=0)

    def evaluate(self, ctx: _Context) -> float:
        values = [node.evaluate(ctx) for node in self.args]
        try:
            result = self.function(*values)
        except OverflowError:
            raise ExprError(f"{self.name}() overflows", self.offset) from None
        except (ValueError, ZeroDivisionError):
            shown = ", ".join(f"{v:g}" for v in values)
            raise ExprError(
                f"{self.name}({shown}): argument outside the function's domain", self.offset
            ) from None
        return _finite(float(result), f"{self.name}()", self.offset)


class _UserCall(_Node):
    __slots__ = ("name", "args", "offset")

    def __init__(self, name: str, args: tuple[_Node, ...], offset: int):
        self.name = name
        self.args = args
        self.offset = offset
        self.depth = 1 + max((node.depth for node in args), default=0)

    def evaluate(self, ctx: _Context) -> float:
        func = ctx.funcs.get(self.name) if ctx.funcs else None
        if func is None:
            raise UndefinedName(self.name, self.offset, kind="function")
        if len(self.args) != len(func.args):
            raise ExprError(
                f"{_shown(self.name)}() takes {len(func.args)} argument(s), {len(self.args)} given",
                self.offset,
            )
        calls = ctx.calls + 1
        depth = ctx.depth + func.body.depth
        if calls > MAX_CALL_DEPTH or depth > _MAX_EVAL_DEPTH:
            error = ExprError(
                f"function calls nested too deeply in {_shown(self.name)}() "
                f"(more than {MAX_CALL_DEPTH}; does it call itself?)",
                self.offset,
            )
            error.in_body = True  # type: ignore[attr-defined]  # already names the function
            raise error
        bound = {arg: node.evaluate(ctx) for arg, node in zip(func.args, self.args)}
        inner = _Context(ChainMap(bound, ctx.scope), ctx.funcs, calls, depth)
        try:
            return func.body.root.evaluate(inner)
        except ExprError as error:
            # An offset inside the body means nothing to the caller's text: point at
            # the call, and name the function once (not once per level of recursion).
            raise _at_call(error, self.name, self.offset) from None


def _at_call(error: ExprError, func_name: str, offset: int) -> ExprError:
    suffix = "" if getattr(error, "in_body", False) else f" (in the body of {_shown(func_name)}())"
    if isinstance(error, UndefinedName):
        moved: ExprError = UndefinedName(error.name, offset, error.kind)
        moved.message = error.message + suffix
    else:
        moved = ExprError(error.message + suffix, offset)
    moved.in_body = True  # type: ignore[attr-defined]
    return moved


# ----------------------------------------------------------------- built-in functions


def _sgn(x: float) -> float:
    return 1.0 if x > 0 else -1.0 if x < 0 else 0.0


def _sign(x: float, y: float | None = None) -> float:
    # sign(x) is sgn(x); sign(x, y) is |x| with the sign of y (Fortran SIGN) [from memory:
    # HSPICE-style decks]
    return _sgn(x) if y is None else math.copysign(abs(x), y)


def _pow_c(x: float, y: float) -> float:
    if x == 0.0 and y < 0.0:
        raise ZeroDivisionError
    return math.pow(x, y)  # C pow: negative base with fractional exponent is a domain error


def _pwr(x: float, y: float) -> float:
    if x == 0.0 and y < 0.0:
        raise ZeroDivisionError
    return math.pow(abs(x), y)


def _ln(x: float) -> float:
    return math.log(x)  # raises ValueError for x <= 0


def _round_half_away(x: float) -> float:
    return float(math.floor(abs(x) + 0.5)) * (1.0 if x >= 0 else -1.0)


def _median3(x: float, lo: float, hi: float) -> float:
    # limit(x, lo, hi) clamps; the median also copes with the bounds written swapped
    return sorted((x, lo, hi))[1]


def _limit(nom: float, b: float, c: float | None = None) -> float:
    # Two arguments: ngspice's statistical limit(nom, avar); lintamp evaluates the nominal
    # corner.  Three: the clamp limit(x, lo, hi) of other dialects [from memory].
    return nom if c is None else _median3(nom, b, c)


def _nominal(nom: float, *variation: float) -> float:
    return nom


#: name -> (fewest args, most args or None for any, function, source).  Sources:
#: "ngspice" = listed in the ngspice manual, "Syntax of expressions", and accepted by
#: ngspice-39; "extension" = not in ngspice-39 numparam (it reports "Undefined parameter"),
#: accepted because decks written for other simulators use them.
BUILTIN_FUNCTIONS: dict[str, tuple[int, int | None, Callable, str]] = {
    "sqrt": (1, 1, math.sqrt, "ngspice"),
    "sin": (1, 1, math.sin, "ngspice"),
    "cos": (1, 1, math.cos, "ngspice"),
    "tan": (1, 1, math.tan, "ngspice"),
    "sinh": (1, 1, math.sinh, "ngspice"),
    "cosh": (1, 1, math.cosh, "ngspice"),
    "tanh": (1, 1, math.tanh, "ngspice"),
    "asin": (1, 1, math.asin, "ngspice"),
    "acos": (1, 1, math.acos, "ngspice"),
    "atan": (1, 1, math.atan, "ngspice"),
    "arctan": (1, 1, math.atan, "ngspice"),
    "asinh": (1, 1, math.asinh, "ngspice"),
    "acosh": (1, 1, math.acosh, "ngspice"),
    "atanh": (1, 1, math.atanh, "ngspice"),
    "exp": (1, 1, math.exp, "ngspice"),
    "ln": (1, 1, _ln, "ngspice"),
    "log": (1, 1, _ln, "ngspice"),  # natural log in ngspice-39: log(10) = 2.302585
    "log10": (1, 1, math.log10, "ngspice"),
    "abs": (1, 1, abs, "ngspice"),
    "nint": (1, 1, round, "ngspice"),  # halves to even, as the manual says
    "int": (1, 1, math.trunc, "ngspice"),
    "floor": (1, 1, math.floor, "ngspice"),
    "ceil": (1, 1, math.ceil, "ngspice"),
    "pow": (2, 2, _pow_c, "ngspice"),
    "pwr": (2, 2, _pwr, "ngspice"),
    "min": (2, 2, min, "ngspice"),
    "max": (2, 2, max, "ngspice"),
    "sgn": (1, 1, _sgn, "ngspice"),
    "gauss": (2, 4, _nominal, "ngspice"),
    "agauss": (2, 4, _nominal, "ngspice"),
    "unif": (2, 2, _nominal, "ngspice"),
    "aunif": (2, 2, _nominal, "ngspice"),
    "limit": (2, 3, _limit, "ngspice"),
    # ternary_fcn and if become _Ternary nodes (lazy), see _make_call
    "ternary_fcn": (3, 3, _nominal, "ngspice"),
    "if": (3, 3, _nominal, "extension"),
    "sign": (1, 2, _sign, "extension"),
    "round": (1, 1, _round_half_away, "extension"),
    "atan2": (2, 2, math.atan2, "extension"),
    "hypot": (2, 2, math.hypot, "extension"),
}
_LAZY_FUNCTIONS = frozenset({"if", "ternary_fcn"})
# what ngspice-39 makes of a slip in the operand count of min and max (checked: max(0.5)
# = 1, min(7) = 1, max(2, 7, 3) = 3, four operands a syntax error), said in the error
_NGSPICE_READS = {
    (f, 1): f" (ngspice-39 takes the missing operand as 1: {f}(x) is {f}(x, 1))" for f in ("min", "max")
} | {
    (f, 3): f" (ngspice-39 drops the middle one: {f}(a, b, c) is {f}(a, c))" for f in ("min", "max")
}


# -------------------------------------------------------------------------- grammar


class _Op:
    """An operator token with its place, produced while parsing."""

    __slots__ = ("symbol", "offset")

    def __init__(self, symbol: str, offset: int):
        self.symbol = symbol
        self.offset = offset


def _make_call(text: str, loc: int, tokens: pp.ParseResults) -> _Node:
    head, args = tokens[0], tuple(tokens[1])
    name = head.symbol
    spec = BUILTIN_FUNCTIONS.get(name)
    if spec is None:
        return _UserCall(name, args, head.offset)
    fewest, most, function, _source = spec
    if len(args) < fewest or (most is not None and len(args) > most):
        wanted = str(fewest) if fewest == most else (
            f"at least {fewest}" if most is None else f"{fewest} to {most}"
        )
        raise ExprError(f"{name}() takes {wanted} argument(s), {len(args)} given"
                        + _NGSPICE_READS.get((name, min(len(args), 3)), ""), head.offset)
    if name in _LAZY_FUNCTIONS:
        return _Ternary(((args[0], args[1]),), args[2])
    return _BuiltinCall(name, function, args, head.offset)


class _Operand:
    """An operand with the unary operators written before it, while parsing."""

    __slots__ = ("ops", "node")

    def __init__(self, ops: list[_Op], node: _Node):
        self.ops = ops
        self.node = node


def _make_operand(text: str, loc: int, tokens: pp.ParseResults) -> _Operand:
    *ops, node = tokens
    return _Operand(ops, node)


def _signed(ops: list[_Op], node: _Node) -> _Node:
    if not ops:
        return node
    return _Unary(tuple((_UNARY[op.symbol], op.offset) for op in ops), node)


def _bind_powers(operands: list[_Operand], ops: list[_Op]) -> tuple[list[_Node], list[_Op]]:
    """Fold each run ``x ** y ** z`` (left-associative) into one node.

    A unary operator before the run applies to the whole run (``-2**2`` is -4, as in
    ngspice-39); one before a later operand applies to that operand (``2**-1``).
    """
    nodes: list[_Node] = []
    kept: list[_Op] = []
    i = 0
    while i < len(operands):
        first = operands[i]
        rest = []
        while i < len(ops) and ops[i].symbol in ("**", "^"):
            following = operands[i + 1]
            rest.append((_power_abs, _signed(following.ops, following.node), ops[i].offset))
            i += 1
        node = _Chain(first.node, tuple(rest)) if rest else first.node
        nodes.append(_signed(first.ops, node))
        if i < len(ops):
            kept.append(ops[i])
        i += 1
    return nodes, kept


def _fold_levels(operands: list[_Node], ops: list[_Op], level: int) -> _Node:
    """Build the tree of ``x0 o1 x1 ... on xn`` by splitting at the loosest level first.

    Notes
    -----
    O(n * levels) for n operands; recursion only over the five levels.
    """
    if not ops:
        return operands[0]
    symbols = _LEVELS[level]
    groups: list[tuple[list[_Node], list[_Op]]] = [([operands[0]], [])]
    splitters: list[_Op] = []
    for op, operand in zip(ops, operands[1:]):
        if op.symbol in symbols:
            splitters.append(op)
            groups.append(([operand], []))
        else:
            groups[-1][1].append(op)
            groups[-1][0].append(operand)
    nodes = [_fold_levels(g_operands, g_ops, level + 1) for g_operands, g_ops in groups]
    if not splitters:
        return nodes[0]
    if level < 2:  # || and &&
        return _Logical(level == 0, tuple(nodes))
    rest = tuple((_BINARY[op.symbol], node, op.offset) for op, node in zip(splitters, nodes[1:]))
    return _Chain(nodes[0], rest)


def _make_binary(text: str, loc: int, tokens: pp.ParseResults) -> _Node:
    items = list(tokens[0])
    nodes, ops = _bind_powers(items[0::2], items[1::2])
    return _fold_levels(nodes, ops, 0)


def _make_ternary(text: str, loc: int, tokens: pp.ParseResults) -> _Node:
    # tokens: c0 [v0 c1] [v1 c2] ...; a ? b : c ? d : e is a ? b : (c ? d : e)
    if len(tokens) == 1:
        return tokens[0]
    branches = tuple((tokens[i], tokens[i + 1]) for i in range(0, len(tokens) - 1, 2))
    return _Ternary(branches, tokens[-1])


def _operator(pattern: str, name: str) -> pp.ParserElement:
    import pyparsing as pp

    return (
        pp.Regex(pattern)
        .set_name(name)
        .set_parse_action(lambda s, loc, t: _Op(t[0], loc))
    )


# \d+(?:\.\d*)? rather than \d+\.?\d*: the same numbers without two adjacent digit runs,
# whose backtracking made a failed full match of a long digit string quadratic.
_NUMBER_PATTERN = r"(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?[^\W\d_]*"


def _make_atom(text: str, loc: int, tokens: pp.ParseResults) -> _Node:
    token = tokens[0]
    if token[0].isdigit() or token[0] == ".":
        value = parse_number(token)
        if value is None:  # the pattern only matches numbers, so this is an overflow
            raise ExprError(f"number '{_shown(token)}' is out of range", loc)
        return _Number(value)
    return _Name(token.lower(), loc)


def _build_grammar() -> pp.ParserElement:
    """The pyparsing grammar: one flat level of operands and binary operators.

    Precedence is applied afterwards (_bind_powers, _fold_levels) rather than by one
    grammar level per precedence, which keeps pyparsing's recursion -- and its time --
    per nesting level small.  No rule is ever retried after an operand has been
    parsed, so there is no backtracking blowup and packrat caching is not needed.
    """
    import pyparsing as pp

    expr = pp.Forward().set_name("expression")
    # A number, or a name that is not followed by "(" (then it is a call).
    atom = pp.Regex(rf"{_NUMBER_PATTERN}|{_IDENT}(?![A-Za-z0-9_])(?!\s*\()").set_name("operand")
    atom.set_parse_action(_make_atom)
    call_head = pp.Regex(_IDENT + r"\s*\(").set_name("function call")
    call_head.set_parse_action(lambda s, loc, t: _Op(t[0][:-1].strip().lower(), loc))
    arguments = pp.Group(pp.Optional(expr + pp.ZeroOrMore(pp.Suppress(",") - expr)))
    close = pp.Suppress(")").set_name("')'")
    call = (call_head - arguments - close).set_parse_action(_make_call)
    group = pp.Suppress("(") - expr - close
    primary = (atom | call | group).set_name("operand")
    unary_op = _operator(r"[-+]|!(?!=)", "unary operator")
    operand = (pp.ZeroOrMore(unary_op) + primary).set_parse_action(_make_operand)
    binary_op = _operator(
        r"\*\*|\^|\|\||&&|==|!=|<>|<=|>=|<|>|\+|-|\*|/|%|\\", "operator"
    )
    binary = pp.Group(operand + pp.ZeroOrMore(binary_op - operand)).set_parse_action(
        _make_binary
    )
    ternary = binary + pp.ZeroOrMore(
        pp.Suppress("?") - expr - pp.Suppress(":").set_name("':'") - binary
    )
    expr <<= ternary.set_parse_action(_make_ternary)
    return expr + pp.StringEnd().set_name("end of expression")


_GRAMMAR: pp.ParserElement | None = None


def _grammar() -> pp.ParserElement:
    """The grammar, built on the first expression that is more than a number or a name.

    Most small decks have none, and importing pyparsing and building the grammar
    costs more than checking such a deck.
    """
    global _GRAMMAR
    if _GRAMMAR is None:
        _GRAMMAR = _build_grammar()
    return _GRAMMAR


_SIMPLE_RE = re.compile(rf"\s*({_NUMBER_PATTERN}|{_IDENT})\s*")


# ---------------------------------------------------------------------- public API


@dataclass(frozen=True, slots=True)
class Expr:
    """A compiled expression: immutable, hashable, cheap to evaluate many times.

    ``names`` are the free parameter names (lower-case), ``calls`` the user functions
    it calls (built-ins excluded), ``depth`` the depth of its tree.
    """

    text: str
    names: frozenset[str]
    calls: frozenset[str] = field(default=frozenset())
    depth: int = field(default=1, compare=False)
    name_offsets: tuple[tuple[str, int], ...] = field(default=(), compare=False, repr=False)
    root: _Node = field(default=None, compare=False, repr=False)  # type: ignore[assignment]

    @property
    def is_constant(self) -> bool:
        return not self.names and not self.calls

    def offset_of(self, name: str) -> int:
        """0-based column of the first use of ``name`` (0 when it is not used)."""
        return next((offset for n, offset in self.name_offsets if n == name), 0)

    def evaluate(
        self, scope: Mapping[str, float], funcs: Mapping[str, "UserFunc"] | None = None
    ) -> float:
        """Value of the expression with ``scope`` (lower-case names -> values).

        Raises
        ------
        UndefinedName
            A name (or user function) that neither ``scope`` nor ``funcs`` defines.
        ExprError
            Division by zero, a domain error, an overflow, a wrong argument count, or
            user functions nested too deeply.
        """
        try:
            return self.root.evaluate(_Context(scope, funcs, 0, self.depth))
        except RecursionError:  # only if the caller's own stack was already deep
            raise ExprError("expression nested too deeply to evaluate", 0) from None


@dataclass(frozen=True, slots=True)
class UserFunc:
    """A ``.func name(args) {body}`` definition; names lower-case."""

    name: str
    args: tuple[str, ...]
    body: Expr


def _check_nesting(text: str) -> None:
    # pyparsing recurses once per nesting level; refuse deep text before it does.
    if text.count("(") + text.count("?") <= MAX_NESTING:
        return
    depth = 0
    for offset, char in enumerate(text):
        if char in "(?":
            depth += 1
            if depth > MAX_NESTING:
                raise ExprError(
                    f"expression nested too deeply (more than {MAX_NESTING} levels)", offset
                )
        elif char in "):":
            depth -= 1


def _collect(root: _Node) -> tuple[frozenset[str], frozenset[str], tuple[tuple[str, int], ...]]:
    """Free names, called user functions and first offsets, by an explicit-stack walk."""
    names: dict[str, int] = {}
    calls: set[str] = set()
    stack: list[_Node] = [root]
    while stack:
        node = stack.pop()
        if isinstance(node, _Name):
            if node.name not in names or node.offset < names[node.name]:
                names[node.name] = node.offset
        elif isinstance(node, _Unary):
            stack.append(node.operand)
        elif isinstance(node, _Chain):
            stack.append(node.first)
            stack.extend(child for _, child, _ in node.rest)
        elif isinstance(node, _Logical):
            stack.extend(node.operands)
        elif isinstance(node, _Ternary):
            stack.append(node.otherwise)
            for condition, value in node.branches:
                stack.extend((condition, value))
        elif isinstance(node, _UserCall):
            calls.add(node.name)
            stack.extend(node.args)
        elif isinstance(node, _BuiltinCall):
            stack.extend(node.args)
    offsets = tuple(sorted(names.items(), key=lambda item: item[1]))
    return frozenset(names), frozenset(calls), offsets


def _describe(error: pp.ParseBaseException, text: str) -> str:
    found = text[error.loc : error.loc + 1]
    expected = str(error.msg)
    if expected.startswith("Expected "):
        expected = expected[len("Expected ") :]
    if "end of expression" in expected or "StringEnd" in expected:
        return f"unexpected '{found}'" if found else "unexpected end of expression"
    shown = f"'{found}'" if found else "end of expression"
    return f"expected {expected}, found {shown}"


@lru_cache(maxsize=65536)
def compile_expr(text: str) -> Expr:
    """Compile expression text (without its ``{}`` or ``''``) into an :class:`Expr`.

    Raises
    ------
    ExprError
        Bad syntax, a number out of range, a built-in called with the wrong number of
        arguments, text longer than ``MAX_TEXT_CHARS`` or nested deeper than
        ``MAX_NESTING``; ``offset`` says where.

    Notes
    -----
    O(len(text)) parse (the grammar never backtracks over a parsed operand); results
    are cached on the text (LRU, 65536 entries: a deck's or a PDK library's distinct
    expressions, which the checks read in several passes), so repeated values cost a
    dict lookup.

    Examples
    --------
    >>> e = compile_expr("W*2 + 1k")
    >>> sorted(e.names), e.evaluate({"w": 0.5})
    (['w'], 1001.0)
    """
    if len(text) > MAX_TEXT_CHARS:
        raise ExprError(f"expression longer than {MAX_TEXT_CHARS} characters", MAX_TEXT_CHARS)
    if not text.strip():
        raise ExprError("empty expression", 0)
    simple = _SIMPLE_RE.fullmatch(text)
    if simple is not None:
        # A lone number or name, the commonest value by far: no need for the grammar.
        root = _make_atom(text, simple.start(1), [simple.group(1)])
        names, calls, offsets = _collect(root)
        return Expr(text, names, calls, 1, offsets, root)
    _check_nesting(text)
    grammar = _grammar()
    import pyparsing as pp

    try:
        root = grammar.parse_string(text, parse_all=True)[0]
    except pp.ParseBaseException as error:
        raise ExprError(_describe(error, text), error.loc) from None
    except RecursionError:
        raise ExprError("expression nested too deeply", 0) from None
    if root.depth > _MAX_TREE_DEPTH:
        raise ExprError("expression nested too deeply", 0)
    names, calls, offsets = _collect(root)
    return Expr(text, names, calls, root.depth, offsets, root)


def strip_delimiters(token: str) -> str:
    """The expression inside ``{...}`` or ``'...'``; any other token unchanged.

    >>> strip_delimiters("{a*2}"), strip_delimiters("'a+b'"), strip_delimiters("10k")
    ('a*2', 'a+b', '10k')
    """
    if len(token) >= 2 and (
        (token[0] == "{" and token[-1] == "}") or (token[0] == "'" and token[-1] == "'")
    ):
        return token[1:-1]
    return token


def evaluate_value(
    token: str, scope: Mapping[str, float], funcs: Mapping[str, UserFunc] | None = None
) -> float:
    """Value of a token as written on a card: ``10k``, ``{w*2}``, ``'a+b'`` or ``WA``.

    Error offsets are columns within ``token`` (the delimiter counts).

    >>> evaluate_value("{w*2}", {"w": 1e-6}), evaluate_value("10uF", {})
    (2e-06, 1e-05)
    """
    value = parse_number(token)
    if value is not None:
        return value
    inner = strip_delimiters(token)
    shift = 1 if inner is not token else 0
    try:
        return compile_expr(inner).evaluate(scope, funcs)
    except ExprError as error:
        raise error.shifted(shift) from None


_IDENT_RE = re.compile(_IDENT)


def define_func(name: str, args: Sequence[str], body: str) -> UserFunc:
    """Compile a ``.func name(args) {body}`` definition (``body`` with or without ``{}``).

    Raises
    ------
    ExprError
        A bad name or argument name, a repeated argument, a built-in's name, or a body
        that does not compile (offset within ``body``).
    """
    lowered = name.lower()
    for item in (name, *args):
        if _IDENT_RE.fullmatch(item) is None:
            raise ExprError(f"'{_shown(item)}' is not a valid name", 0)
    if lowered in BUILTIN_FUNCTIONS:
        raise ExprError(f"'{name}' is a built-in function and cannot be redefined", 0)
    arg_names = tuple(arg.lower() for arg in args)
    if len(set(arg_names)) != len(arg_names):
        raise ExprError(f"{_shown(name)}() names an argument twice", 0)
    inner = strip_delimiters(body)
    try:
        compiled = compile_expr(inner)
    except ExprError as error:
        raise error.shifted(1 if inner is not body else 0) from None
    return UserFunc(lowered, arg_names, compiled)


def evaluate_params(
    defs: list[tuple[str, str]],
    outer: Mapping[str, float],
    funcs: Mapping[str, UserFunc] | None = None,
) -> tuple[dict[str, float], dict[str, ExprError]]:
    """Resolve ``(name, text)`` definitions, such as one ``.param`` scope.

    A definition may use one written later (``a={b*2}`` then ``b=3``), names in
    ``outer`` (an enclosing scope; local names shadow it) and ``funcs``.  When a name is
    defined twice the later text wins.  Texts may carry ``{}``/``''``.

    Returns
    -------
    values : dict
        lower-case name -> value, for every definition that could be evaluated.
    errors : dict
        lower-case name -> ExprError for every other one: syntax errors, undefined
        names (:class:`UndefinedName`), cycles and self-references, and definitions
        that depend on one of those (offset: the use of the failed name).

    Notes
    -----
    O(total size of the texts): an iterative depth-first walk of the dependency
    graph, so a chain of 100 000 forward references needs no deep Python stack.
    """
    texts: dict[str, str] = {}
    for name, text in defs:
        texts[name.lower()] = text
    compiled: dict[str, Expr] = {}
    shift: dict[str, int] = {}  # 1 where the text is wrapped in {} or ''
    errors: dict[str, ExprError] = {}
    for name, text in texts.items():
        number = parse_number(text)
        if number is not None:  # a plain number field, with ngspice's lenient reading
            compiled[name] = Expr(text, frozenset(), root=_Number(number))
            continue
        inner = strip_delimiters(text)
        shift[name] = 1 if inner is not text else 0
        try:
            compiled[name] = compile_expr(inner)
        except ExprError as error:
            errors[name] = error.shifted(shift[name])
    deps = {name: [n for n, _ in expr.name_offsets if n in texts] for name, expr in compiled.items()}

    values: dict[str, float] = {}
    scope = ChainMap(values, outer)
    state: dict[str, int] = {}  # 1 = on the current path, 2 = finished

    def finish(name: str) -> None:
        if name in errors:
            return
        expr = compiled[name]
        for dep in deps[name]:
            if dep in errors:
                errors[name] = ExprError(
                    f"'{_shown(name)}' depends on '{_shown(dep)}', which has an error",
                    expr.offset_of(dep) + shift.get(name, 0),
                )
                return
        try:
            values[name] = expr.evaluate(scope, funcs)
        except ExprError as error:
            errors[name] = error.shifted(shift.get(name, 0))

    for root in texts:
        if root in state:
            continue
        state[root] = 1
        path = [root]
        stack = [iter(deps.get(root, ()))]
        while stack:
            for dep in stack[-1]:
                seen = state.get(dep)
                if seen == 1:
                    cycle = path[path.index(dep) :]
                    if len(cycle) == 1:
                        message = f"'{_shown(dep)}' is defined in terms of itself"
                    else:  # a long cycle is named by its ends, not listed whole
                        names = [_shown(n) for n in cycle + [dep]]
                        if len(names) > 8:
                            names[4:-3] = [f"... ({len(cycle) - 6} more)"]
                        message = "circular definition: " + " -> ".join(names)
                    for member, user in zip(cycle, cycle[1:] + [dep]):
                        offset = compiled[member].offset_of(user) + shift.get(member, 0)
                        errors.setdefault(member, CircularDefinition(message, offset))
                elif seen is None:
                    state[dep] = 1
                    path.append(dep)
                    stack.append(iter(deps.get(dep, ())))
                    break
            else:
                stack.pop()
                done = path.pop()
                state[done] = 2
                finish(done)
    return values, errors
