"""A small, bounded evaluator for `.param`, `{...}` and `.func` expressions.

Expressions are never handed to Python's eval: they are tokenised with one
regular expression, parsed by precedence climbing into a tuple tree, and the
tree is evaluated over floats. Parsing stops at a configurable nesting depth
and token count, and evaluation at a fixed amount of work and user-function
nesting, so `((((...))))` 10,000 deep, a megabyte of `1+1+...` or a `.func`
calling itself fails fast with an error instead of exhausting the stack or
the CPU. Floats never grow like Python integers, so `10**10**10` costs one
pow call and fails as an overflow. Each expression is evaluated twice over:
once with numbers read as a person means them and once as ngspice reads them
(`4k7`), so the reader can fill both fields of a `Value`.

The dialect is what simulators and their exports write (ngspice manual,
"Parameters, functions, expressions"; the usual built-ins of other
simulators from memory): braces nested inside an expression group like
parentheses (`1 + a*{b}`); comparisons and `&&`, `||`, `!` give 1 or 0; the
ternary `c ? a : b` and `if`/`ternary_fcn` pick a branch without evaluating
the other; `TEMPER`/`TEMP` read the nominal 27 °C; statistical functions read
their nominal value (`agauss`, `gauss`, `aunif`, `unif`, `limit` with two
arguments, `mc`; `gauss(x)` and `flat(x)` with one read 0), which is what a
check at nominal wants; `.func` definitions are user functions. What depends
on the circuit (`V(...)`, `I(...)`, `time`, `hertz`, `ddt`...) or on chance
alone (`rand`) cannot be evaluated: it raises an `ExpressionError` with
`behavioural` set, and the element using it is kept unevaluated.

Grammar:
    expr    := or ('?' expr ':' expr)?                  right-associative
    or      := and ('||' and)*
    and     := equal ('&&' equal)*
    equal   := compare (('=='|'!=') compare)*
    compare := sum (('<'|'<='|'>'|'>=') sum)*
    sum     := term (('+'|'-') term)*
    term    := unary (('*'|'/') unary)*
    unary   := ('-'|'+'|'!') unary | power
    power   := atom (('^'|'**') unary)?                 right-associative
    atom    := NUMBER | NAME | NAME '(' [expr (',' expr)*] ')' | PROBE
             | '(' expr ')' | '{' expr '}'
    PROBE   := ('v'|'i') '(' anything balanced ')'      a circuit quantity
"""

from __future__ import annotations

import math
import re
from collections.abc import Callable, Mapping
from dataclasses import dataclass

from drc.errors import DrcError
from drc.netlist.values import parse_value

_TOKEN = re.compile(
    r"\s*(?:"
    r"(?P<num>(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?[^\W_]*)"
    r"|(?P<name>[^\W\d]\w*)"
    r"|(?P<op>\*\*|==|!=|<=|>=|&&|\|\||[-+*/^(),{}<>!?:])"
    r")"
)
# Circuit quantities: `V(a)`, `V(a,b)`, `I(Vsense)` (their argument is node or
# element names, read raw up to the matching parenthesis).
_PROBES = frozenset({"v", "i"})
_CLOSING = {"(": ")", "{": "}"}

# Built-in functions: name -> (fewest, most arguments; None: any number).
_FUNCTIONS: dict[str, tuple[int, int | None]] = {
    "min": (2, None), "max": (2, None), "abs": (1, 1), "sqrt": (1, 1), "exp": (1, 1),
    "ln": (1, 1), "log": (1, 1), "log10": (1, 1), "pow": (2, 2), "pwr": (2, 2),
    "pwrs": (2, 2), "sin": (1, 1), "cos": (1, 1), "tan": (1, 1), "asin": (1, 1),
    "acos": (1, 1), "atan": (1, 1), "arcsin": (1, 1), "arccos": (1, 1), "arctan": (1, 1),
    "atan2": (2, 2), "sinh": (1, 1), "cosh": (1, 1), "tanh": (1, 1), "asinh": (1, 1),
    "acosh": (1, 1), "atanh": (1, 1), "sgn": (1, 1), "sign": (1, 2), "int": (1, 1),
    "nint": (1, 1), "round": (1, 1), "floor": (1, 1), "ceil": (1, 1), "u": (1, 1),
    "uramp": (1, 1), "if": (3, 3), "ternary_fcn": (3, 3), "limit": (2, 3), "table": (3, None),
    # statistical: their nominal value
    "agauss": (3, 4), "gauss": (1, 4), "aunif": (2, 3), "unif": (2, 3), "mc": (2, 2),
    "flat": (1, 1),
    # depend on the circuit or on chance: never evaluated
    "ddt": (1, 1), "sdt": (1, 2), "idt": (1, 3), "delay": (2, 3), "rand": (0, 1),
    "random": (0, 1), "white": (1, 1), "absdelay": (2, 3),
}
_BEHAVIOURAL_FUNCTIONS = frozenset({"ddt", "sdt", "idt", "delay", "rand", "random", "white",
                                    "absdelay"})
# Names that read a value when no parameter of that name is defined.
_CONSTANTS = {"pi": math.pi, "temper": 27.0, "temp": 27.0}
# Names that are circuit quantities (never evaluated), unless a parameter.
_BEHAVIOURAL_NAMES = frozenset({"time", "hertz", "freq"})
# Evaluation budget: tree nodes visited per evaluation, user functions nested.
_MAX_STEPS = 1_000_000
_MAX_CALL_DEPTH = 64

Readings = Mapping[str, tuple[float, float]]


class ExpressionError(DrcError):
    """A malformed or unevaluable expression; `offset` is 0-based in its text.

    `limit` names the ReaderOptions field when a resource limit was hit.
    `secondary` is True when the cause lies elsewhere (a parameter used here
    whose own definition could not be evaluated, and was warned about
    there). `behavioural` is True when the value depends on the circuit (or
    on chance) and so has no value for a static check. It has no location of
    its own: the reader turns it into a located NetlistError at the token the
    expression came from.
    """

    def __init__(self, message: str, offset: int = 0, limit: str | None = None,
                 secondary: bool = False, behavioural: bool = False) -> None:
        super().__init__(message)
        self.offset = offset
        self.limit = limit
        self.secondary = secondary
        self.behavioural = behavioural


@dataclass(frozen=True, slots=True)
class Expression:
    """A parsed expression: its text, tree, the parameter names it uses and the
    user functions (`.func`) it calls."""

    text: str
    tree: tuple
    names: frozenset[str]
    calls: frozenset[str] = frozenset()


@dataclass(frozen=True, slots=True)
class UserFunction:
    """A `.func name(args) body` definition."""

    name: str
    args: tuple[str, ...]
    body: Expression


def _limit_error(what: str, limit: str, offset: int) -> ExpressionError:
    option = limit.replace("_", "-")
    return ExpressionError(f"{what} (limit {option}: raise it with --{option} or "
                           f"ReaderOptions.{limit})", offset, limit)


def _probe_end(text: str, start: int) -> int:
    """Index just after the `)` closing the `(` at `start`, or -1."""
    depth = 0
    for index in range(start, len(text)):
        char = text[index]
        if char == "(":
            depth += 1
        elif char == ")":
            depth -= 1
            if depth == 0:
                return index + 1
    return -1


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
        word = match.group(kind)
        start = match.start(kind)
        pos = match.end()
        if kind == "name" and word.casefold() in _PROBES:
            after = pos
            while after < end and text[after].isspace():
                after += 1
            if after < end and text[after] == "(":
                close = _probe_end(text, after)
                if close < 0:
                    raise ExpressionError(f"unclosed `(` after {word}", after)
                kind, word, pos = "probe", text[start:close], close
        tokens.append((kind, word, start))
        if len(tokens) > max_work:
            raise _limit_error(f"expression has more than {max_work} tokens",
                               "max_expression_work", start)
    tokens.append(("end", "", end))
    return tokens


# Binary operator levels, loosest first (the ternary sits above them all).
_LEVELS: tuple[frozenset[str], ...] = (
    frozenset({"||"}), frozenset({"&&"}), frozenset({"==", "!="}),
    frozenset({"<", "<=", ">", ">="}), frozenset({"+", "-"}), frozenset({"*", "/"}),
)


class _ExpressionParser:
    def __init__(self, text: str, max_depth: int, max_work: int) -> None:
        self.tokens = _tokenize(text, max_work)
        self.i = 0
        self.max_depth = max_depth
        self.names: set[str] = set()
        self.calls: set[str] = set()

    def peek(self) -> tuple[str, str, int]:
        return self.tokens[self.i]

    def take(self) -> tuple[str, str, int]:
        token = self.tokens[self.i]
        self.i += 1
        return token

    def at_op(self, *ops: str) -> bool:
        kind, value, _ = self.tokens[self.i]
        return kind == "op" and value in ops

    def expect(self, op: str) -> None:
        kind, value, offset = self.take()
        if kind != "op" or value != op:
            shown = value or "end of expression"
            raise ExpressionError(f"expected {op!r} in expression, found {shown!r}", offset)

    def deeper(self, depth: int, offset: int) -> int:
        if depth >= self.max_depth:
            raise _limit_error(f"expression nests deeper than {self.max_depth} levels",
                               "max_expression_depth", offset)
        return depth + 1

    def expr(self, depth: int) -> tuple:
        condition = self.binary(0, depth)
        if not self.at_op("?"):
            return condition
        offset = self.take()[2]
        inner = self.deeper(depth, offset)
        when_true = self.expr(inner)
        self.expect(":")
        return ("?", condition, when_true, self.expr(inner))

    def binary(self, level: int, depth: int) -> tuple:
        if level == len(_LEVELS):
            return self.unary(depth)
        ops = _LEVELS[level]
        left = self.binary(level + 1, depth)
        while True:
            kind, value, offset = self.peek()
            if kind != "op" or value not in ops:
                return left
            self.i += 1
            left = (value, left, self.binary(level + 1, depth), offset)

    def unary(self, depth: int) -> tuple:
        kind, value, offset = self.peek()
        if kind == "op" and value in ("-", "+", "!"):
            self.i += 1
            operand = self.unary(self.deeper(depth, offset))
            if value == "+":
                return operand
            return ("neg" if value == "-" else "not", operand)
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
            if self.at_op("("):
                return self.call(low, value, offset, depth)
            self.names.add(low)
            return ("v", low, offset)
        if kind == "probe":
            return ("probe", value, offset)
        if kind == "op" and value in _CLOSING:
            inner = self.expr(self.deeper(depth, offset))
            self.expect(_CLOSING[value])
            return inner
        shown = value or "end of expression"
        raise ExpressionError(f"unexpected {shown!r} in expression", offset)

    def call(self, low: str, name: str, offset: int, depth: int) -> tuple:
        self.i += 1  # the "("
        inner = self.deeper(depth, offset)
        args = []
        if not self.at_op(")"):
            args.append(self.expr(inner))
            while self.at_op(","):
                self.i += 1
                args.append(self.expr(inner))
        self.expect(")")
        arity = _FUNCTIONS.get(low)
        if arity is None:   # a user function (.func), resolved when evaluated
            self.calls.add(low)
            return ("uf", low, tuple(args), offset)
        least, most = arity
        if len(args) < least or (most is not None and len(args) > most):
            count = f"{least}" if most == least else f"{least} to {most}" if most else f"{least}+"
            raise ExpressionError(f"{name}() takes {count} argument(s), got {len(args)}", offset)
        return ("f", low, tuple(args), offset)


def compile_expression(text: str, *, max_depth: int = 64, max_work: int = 10_000) -> Expression:
    """Parse `text` (without outer braces or quotes) into an `Expression`."""
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
    return Expression(text, tree, frozenset(parser.names), frozenset(parser.calls))


# ---------------------------------------------------------------- functions

def _sign(x: float) -> float:
    return (x > 0) - (x < 0)


def _table(args: list[float]) -> float:
    """`table(x, x1, y1, x2, y2, ...)`: y linearly interpolated at x, held at the ends."""
    x, points = args[0], args[1:]
    if len(points) % 2:
        raise ValueError("table() needs x and then pairs")
    pairs = sorted(zip(points[0::2], points[1::2], strict=True))
    if x <= pairs[0][0]:
        return pairs[0][1]
    for (x0, y0), (x1, y1) in zip(pairs, pairs[1:], strict=False):
        if x <= x1:
            return y0 if x1 == x0 else y0 + (y1 - y0) * (x - x0) / (x1 - x0)
    return pairs[-1][1]


def _nominal(name: str, args: list[float]) -> float:
    """The nominal value of a statistical function (its mean)."""
    if name in ("gauss", "flat") and len(args) == 1:
        return 0.0   # a zero-mean random number with the given spread
    return args[0]


_ONE_ARGUMENT: dict[str, Callable[[float], float]] = {
    "abs": abs, "sqrt": math.sqrt, "exp": math.exp, "ln": math.log, "log": math.log,
    "log10": math.log10, "sin": math.sin, "cos": math.cos, "tan": math.tan, "asin": math.asin,
    "acos": math.acos, "atan": math.atan, "arcsin": math.asin, "arccos": math.acos,
    "arctan": math.atan, "sinh": math.sinh, "cosh": math.cosh, "tanh": math.tanh,
    "asinh": math.asinh, "acosh": math.acosh, "atanh": math.atanh, "sgn": _sign,
    "int": lambda x: float(math.trunc(x)), "nint": lambda x: float(round(x)),
    "round": lambda x: float(round(x)), "floor": lambda x: float(math.floor(x)),
    "ceil": lambda x: float(math.ceil(x)), "u": lambda x: 1.0 if x > 0 else 0.0,
    "uramp": lambda x: x if x > 0 else 0.0,
}
_STATISTICAL = frozenset({"agauss", "gauss", "aunif", "unif", "mc", "flat"})


def _apply(name: str, args: list[float], offset: int) -> float:
    try:
        one = _ONE_ARGUMENT.get(name)
        if one is not None:
            return one(args[0])
        if name in _STATISTICAL:
            return _nominal(name, args)
        if name == "min":
            return min(args)
        if name == "max":
            return max(args)
        if name == "atan2":
            return math.atan2(args[0], args[1])
        if name == "sign":
            return _sign(args[0]) if len(args) == 1 else math.copysign(abs(args[0]), args[1])
        if name == "limit":
            if len(args) == 2:
                return args[0]   # ngspice's limit(nominal, variation): the nominal
            low, high = sorted(args[1:])
            return min(max(args[0], low), high)
        if name == "table":
            return _table(args)
        if name == "pwrs":
            return math.copysign(_power(abs(args[0]), args[1], offset), args[0])
        if name == "pwr":
            return _power(abs(args[0]), args[1], offset)
        return _power(args[0], args[1], offset)
    except (ValueError, OverflowError, ZeroDivisionError):
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


# ---------------------------------------------------------------- evaluation

class _Evaluation:
    """One evaluation of a tree in one reading (`mode` 0: as a person means the
    numbers, 1: as ngspice reads them), within the work budget."""

    __slots__ = ("mode", "functions", "steps", "calls")

    def __init__(self, mode: int, functions: Mapping[str, UserFunction]) -> None:
        self.mode = mode
        self.functions = functions
        self.steps = 0
        self.calls = 0

    def value(self, tree: tuple, scope: Readings) -> float:
        self.steps += 1
        if self.steps > _MAX_STEPS:
            raise ExpressionError(f"expression needs more than {_MAX_STEPS} steps to evaluate "
                                  "(a fixed limit)", 0)
        tag = tree[0]
        if tag == "n":
            return tree[1][self.mode]
        if tag == "v":
            return self.name(tree, scope)
        if tag == "neg":
            return -self.value(tree[1], scope)
        if tag == "not":
            return 0.0 if self.value(tree[1], scope) else 1.0
        if tag == "?":
            chosen = tree[2] if self.value(tree[1], scope) else tree[3]
            return self.value(chosen, scope)
        if tag == "f":
            return self.function(tree, scope)
        if tag == "uf":
            return self.user_function(tree, scope)
        if tag == "probe":
            raise ExpressionError(f"{tree[1]} is a circuit quantity: the value depends on the "
                                  "circuit (behavioural)", tree[2], behavioural=True)
        return self.binary(tree, scope)

    def name(self, tree: tuple, scope: Readings) -> float:
        found = scope.get(tree[1])
        if found is None:
            constant = _CONSTANTS.get(tree[1])
            if constant is not None:
                return constant
            if tree[1] in _BEHAVIOURAL_NAMES:
                raise ExpressionError(f"{tree[1]!r} is a circuit quantity: the value depends "
                                      "on the circuit (behavioural)", tree[2], behavioural=True)
            raise ExpressionError(f"undefined parameter {tree[1]!r}", tree[2])
        value = found[self.mode]
        if value != value:   # NaN: the parameter's definition could not be evaluated
            raise ExpressionError(f"parameter {tree[1]!r} has no value (its definition could "
                                  "not be evaluated)", tree[2], secondary=True)
        return value

    def function(self, tree: tuple, scope: Readings) -> float:
        name, args, offset = tree[1], tree[2], tree[3]
        if name in _BEHAVIOURAL_FUNCTIONS:
            raise ExpressionError(f"{name}() depends on the circuit or on chance "
                                  "(behavioural)", offset, behavioural=True)
        if name in ("if", "ternary_fcn"):
            chosen = args[1] if self.value(args[0], scope) else args[2]
            return self.value(chosen, scope)
        return _apply(name, [self.value(a, scope) for a in args], offset)

    def user_function(self, tree: tuple, scope: Readings) -> float:
        name, args, offset = tree[1], tree[2], tree[3]
        function = self.functions.get(name)
        if function is None:
            raise ExpressionError(f"unknown function {name!r}", offset)
        if len(args) != len(function.args):
            raise ExpressionError(f"{name}() takes {len(function.args)} argument(s), "
                                  f"got {len(args)}", offset)
        if self.calls >= _MAX_CALL_DEPTH:
            raise ExpressionError(f"functions call each other more than {_MAX_CALL_DEPTH} deep "
                                  "(a .func calling itself?)", offset)
        inner = dict(scope)
        for arg_name, arg in zip(function.args, args, strict=True):
            reading = self.value(arg, scope)
            inner[arg_name] = (reading, reading)
        self.calls += 1
        try:
            return self.value(function.body.tree, inner)
        except ExpressionError as exc:
            if exc.limit or exc.behavioural or exc.message.startswith("functions call"):
                raise
            raise ExpressionError(f"in {function.name}(): {exc.message}", offset,
                                  secondary=exc.secondary) from None
        finally:
            self.calls -= 1

    def binary(self, tree: tuple, scope: Readings) -> float:
        tag = tree[0]
        left = self.value(tree[1], scope)
        if tag == "&&":
            return 1.0 if left and self.value(tree[2], scope) else 0.0
        if tag == "||":
            return 1.0 if left or self.value(tree[2], scope) else 0.0
        right = self.value(tree[2], scope)
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
        if tag == "^":
            return _power(left, right, tree[3])
        return 1.0 if _COMPARE[tag](left, right) else 0.0


_COMPARE: dict[str, Callable[[float, float], bool]] = {
    "==": lambda a, b: a == b, "!=": lambda a, b: a != b, "<": lambda a, b: a < b,
    "<=": lambda a, b: a <= b, ">": lambda a, b: a > b, ">=": lambda a, b: a >= b,
}


def evaluate(expression: Expression, scope: Readings,
             functions: Mapping[str, UserFunction] | None = None) -> tuple[float, float]:
    """(person's reading, ngspice's reading) of `expression` over `scope`.

    `scope` maps case-folded parameter names to their two readings;
    `functions` the `.func` definitions by case-folded name. Raises
    ExpressionError for undefined names, domain errors, overflow and what
    depends on the circuit.
    """
    functions = functions or {}
    try:
        pair = (_Evaluation(0, functions).value(expression.tree, scope),
                _Evaluation(1, functions).value(expression.tree, scope))
    except RecursionError:
        raise ExpressionError("expression nests too deeply for this interpreter "
                              "(limit max-expression-depth: lower --max-expression-depth)", 0,
                              "max_expression_depth") from None
    for number in pair:
        if not math.isfinite(number):
            raise ExpressionError(f"expression {expression.text!r} overflows", 0)
    return pair
