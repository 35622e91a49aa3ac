"""A small, bounded evaluator for `.param` and `{...}` expressions.

Expressions are never handed to Python's eval: they are tokenised with one
regular expression, parsed by precedence climbing into a tuple tree, and the
tree is evaluated over floats. Parsing stops at a configurable nesting depth
and token count, so `((((...))))` 10,000 deep or a megabyte of `1+1+...`
fails fast with an error instead of exhausting the stack or the CPU. Floats
never grow like Python integers, so `10**10**10` costs one pow call and fails
as an overflow. Each expression is evaluated twice over: once with numbers
read as a person means them and once as ngspice reads them (`4k7`), so the
reader can fill both fields of a `Value`.

Grammar (SPICE-style, ngspice manual "Parameters, functions, expressions"):
    expr   := term (('+'|'-') term)*
    term   := unary (('*'|'/') unary)*
    unary  := ('-'|'+') unary | power
    power  := atom (('^'|'**') unary)?        right-associative
    atom   := NUMBER | NAME | NAME '(' expr (',' expr)* ')' | '(' expr ')'
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass

from drc.errors import DrcError
from drc.netlist.values import parse_value

_TOKEN = re.compile(
    r"\s*(?:"
    r"(?P<num>(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?[^\W_]*)"
    r"|(?P<name>[^\W\d]\w*)"
    r"|(?P<op>\*\*|[-+*/^(),])"
    r")"
)

_FUNCTIONS = {
    "min": (2, None), "max": (2, None), "abs": (1, 1), "sqrt": (1, 1),
    "exp": (1, 1), "log": (1, 1), "log10": (1, 1), "pow": (2, 2),
}


class ExpressionError(DrcError):
    """A malformed or unevaluable expression; `offset` is 0-based in its text.

    `limit` names the ReaderOptions field when a resource limit was hit. It
    has no location of its own: the reader turns it into a located
    NetlistError at the token the expression came from.
    """

    def __init__(self, message: str, offset: int = 0, limit: str | None = None) -> None:
        super().__init__(message)
        self.offset = offset
        self.limit = limit


@dataclass(frozen=True, slots=True)
class Expression:
    """A parsed expression: its text, tree and the parameter names it uses."""

    text: str
    tree: tuple
    names: frozenset[str]


def _tokenize(text: str, max_work: int) -> list[tuple[str, str, int]]:
    tokens: list[tuple[str, str, int]] = []
    pos = 0
    end = len(text)
    while True:
        while pos < end and text[pos].isspace():
            pos += 1
        if pos >= end:
            break
        match = _TOKEN.match(text, pos)
        if match is None or match.lastgroup is None:
            raise ExpressionError(f"unexpected character {text[pos]!r} in expression", pos)
        kind = match.lastgroup
        tokens.append((kind, match.group(kind), match.start(kind)))
        if len(tokens) > max_work:
            raise ExpressionError(
                f"expression has more than {max_work} tokens "
                "(limit max-expression-work: raise it with --max-expression-work or "
                "ReaderOptions.max_expression_work)", pos, "max_expression_work")
        pos = match.end()
    tokens.append(("end", "", end))
    return tokens


class _ExpressionParser:
    def __init__(self, text: str, max_depth: int, max_work: int) -> None:
        self.tokens = _tokenize(text, max_work)
        self.i = 0
        self.max_depth = max_depth
        self.names: set[str] = set()

    def peek(self) -> tuple[str, str, int]:
        return self.tokens[self.i]

    def take(self) -> tuple[str, str, int]:
        token = self.tokens[self.i]
        self.i += 1
        return token

    def expect(self, op: str) -> None:
        kind, value, offset = self.take()
        if kind != "op" or value != op:
            shown = value or "end of expression"
            raise ExpressionError(f"expected {op!r} in expression, found {shown!r}", offset)

    def deeper(self, depth: int, offset: int) -> int:
        if depth >= self.max_depth:
            raise ExpressionError(
                f"expression nests deeper than {self.max_depth} levels "
                "(limit max-expression-depth: raise it with --max-expression-depth or "
                "ReaderOptions.max_expression_depth)", offset, "max_expression_depth")
        return depth + 1

    def expr(self, depth: int) -> tuple:
        left = self.term(depth)
        while True:
            kind, value, offset = self.peek()
            if kind == "op" and value in ("+", "-"):
                self.i += 1
                left = (value, left, self.term(depth), offset)
            else:
                return left

    def term(self, depth: int) -> tuple:
        left = self.unary(depth)
        while True:
            kind, value, offset = self.peek()
            if kind == "op" and value in ("*", "/"):
                self.i += 1
                left = (value, left, self.unary(depth), offset)
            else:
                return left

    def unary(self, depth: int) -> tuple:
        kind, value, offset = self.peek()
        if kind == "op" and value in ("-", "+"):
            self.i += 1
            operand = self.unary(self.deeper(depth, offset))
            return ("neg", operand) if value == "-" else operand
        return self.power(depth)

    def power(self, depth: int) -> tuple:
        base = self.atom(depth)
        kind, value, offset = self.peek()
        if kind == "op" and value in ("^", "**"):
            self.i += 1
            return ("^", base, self.unary(self.deeper(depth, offset)), offset)
        return base

    def atom(self, depth: int) -> tuple:
        kind, value, offset = self.take()
        if kind == "num":
            number = parse_value(value)
            if number is None:
                raise ExpressionError(f"{value!r} is not a number", offset)
            return ("n", (number.si, number.spice_si))
        if kind == "name":
            low = value.casefold()
            nxt = self.peek()
            if nxt[0] == "op" and nxt[1] == "(":
                return self.call(low, value, offset, depth)
            self.names.add(low)
            return ("v", low, offset)
        if kind == "op" and value == "(":
            inner = self.expr(self.deeper(depth, offset))
            self.expect(")")
            return inner
        shown = value or "end of expression"
        raise ExpressionError(f"unexpected {shown!r} in expression", offset)

    def call(self, low: str, name: str, offset: int, depth: int) -> tuple:
        if low not in _FUNCTIONS:
            raise ExpressionError(f"unknown function {name!r}", offset)
        self.i += 1  # the "("
        inner = self.deeper(depth, offset)
        args = [self.expr(inner)]
        while self.peek()[0] == "op" and self.peek()[1] == ",":
            self.i += 1
            args.append(self.expr(inner))
        self.expect(")")
        least, most = _FUNCTIONS[low]
        if len(args) < least or (most is not None and len(args) > most):
            raise ExpressionError(f"{name}() takes {least}{'' if most == least else '+'} "
                                  f"argument(s), got {len(args)}", offset)
        return ("f", low, tuple(args), offset)


def compile_expression(text: str, *, max_depth: int = 64, max_work: int = 10_000) -> Expression:
    """Parse `text` (without braces or quotes) into an `Expression`."""
    parser = _ExpressionParser(text, max_depth, max_work)
    try:
        tree = parser.expr(0)
    except RecursionError:
        raise ExpressionError("expression nests too deeply for this interpreter "
                              "(limit max-expression-depth: lower --max-expression-depth or "
                              "ReaderOptions.max_expression_depth)", 0,
                              "max_expression_depth") from None
    kind, value, offset = parser.peek()
    if kind != "end":
        raise ExpressionError(f"unexpected {value!r} in expression", offset)
    return Expression(text, tree, frozenset(parser.names))


def _apply(name: str, args: list[float], offset: int) -> float:
    try:
        if name == "min":
            return min(args)
        if name == "max":
            return max(args)
        if name == "abs":
            return abs(args[0])
        if name == "sqrt":
            return math.sqrt(args[0])
        if name == "exp":
            return math.exp(args[0])
        if name == "log":
            return math.log(args[0])
        if name == "log10":
            return math.log10(args[0])
        return _power(args[0], args[1], offset)
    except (ValueError, OverflowError):
        raise ExpressionError(f"{name}() is undefined or overflows for {args}", offset) from None


def _power(base: float, exponent: float, offset: int) -> float:
    try:
        result = base ** exponent
    except (OverflowError, ZeroDivisionError):
        raise ExpressionError(f"{base:g} ** {exponent:g} overflows or divides by zero",
                              offset) from None
    if isinstance(result, complex):
        raise ExpressionError(f"{base:g} ** {exponent:g} is not a real number", offset)
    return result


def _eval(tree: tuple, scope: dict[str, tuple[float, float]], mode: int) -> float:
    tag = tree[0]
    if tag == "n":
        return tree[1][mode]
    if tag == "v":
        try:
            return scope[tree[1]][mode]
        except KeyError:
            raise ExpressionError(f"undefined parameter {tree[1]!r}", tree[2]) from None
    if tag == "neg":
        return -_eval(tree[1], scope, mode)
    if tag == "f":
        return _apply(tree[1], [_eval(a, scope, mode) for a in tree[2]], tree[3])
    left = _eval(tree[1], scope, mode)
    right = _eval(tree[2], scope, mode)
    if tag == "+":
        return left + right
    if tag == "-":
        return left - right
    if tag == "*":
        return left * right
    if tag == "/":
        if right == 0:
            raise ExpressionError("division by zero in expression", tree[3])
        return left / right
    return _power(left, right, tree[3])


def evaluate(expression: Expression,
             scope: dict[str, tuple[float, float]]) -> tuple[float, float]:
    """(person's reading, ngspice's reading) of `expression` over `scope`.

    `scope` maps case-folded parameter names to their two readings.
    Raises ExpressionError for undefined names, domain errors and overflow.
    """
    try:
        pair = (_eval(expression.tree, scope, 0), _eval(expression.tree, scope, 1))
    except RecursionError:
        raise ExpressionError("expression nests too deeply for this interpreter "
                              "(limit max-expression-depth: lower --max-expression-depth)", 0,
                              "max_expression_depth") from None
    for number in pair:
        if not math.isfinite(number):
            raise ExpressionError(f"expression {expression.text!r} overflows", 0)
    return pair
