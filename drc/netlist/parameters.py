"""Parameter scopes: `.param` and subcircuit parameters, evaluated for flattening.

A value may be an expression over parameters (`{rpull*2}`). Which parameters
it sees depends on where it is flattened: the top level's `.param`s, then
for each X instance its subcircuit's header defaults and `.param`s with the
instance's own `name=value` overrides, over the scope of the parent. Each
group is evaluated order-free (a parameter may use one defined after it).
Expressions are compiled by drc/netlist/expressions.py within the reader's
limits; its errors become located errors at the token they came from.

A parameter that cannot be evaluated (a reference cycle, a division by
zero, an undefined name) does not stop reading: it is warned about once, at
its definition, and has no value (NaN readings); an element using it is
kept unevaluated (drc/netlist/flatten.py). Resource limits still stop.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping, Sequence
from itertools import count
from typing import Any

from drc.errors import LimitError, NetlistError, SourceLocation
from drc.netlist.elements import NO_PARAMS, Value
from drc.netlist.expressions import (
    Expression,
    ExpressionError,
    UserFunction,
    compile_expression,
    evaluate,
)
from drc.netlist.grammar import Assign, Call
from drc.netlist.lines import LogicalLine
from drc.netlist.options import ReaderOptions
from drc.netlist.specs import Conditional, ElementSpec, SubcircuitDefinition
from drc.netlist.tokens import Token, finite_number, item_text, offset_of

# A parameter's two readings: as a person means it, and as ngspice reads it.
Reading = tuple[float, float]
# A `.param`-like entry: the assignment and the statement it was written on.
Entry = tuple[Assign, LogicalLine]
# Memo of one definition's instance scopes: (parent serial, overrides) -> scope.
_ScopeMemo = dict[tuple[int, tuple[tuple[str, Reading], ...]], "ParameterScope"]
# Instance scopes remembered per definition (a board repeats a few shapes).
_SCOPES_PER_DEFINITION = 1000


def readings(number: Value) -> Reading:
    """Both readings of a number token (parsed text always has both)."""
    spice = number.spice_si
    return (number.si, number.si if spice is None else spice)


class ExpressionLimitError(LimitError, NetlistError):
    """An expression hit a resource limit: both a limit and a netlist problem."""


# A parameter whose definition could not be evaluated reads as NaN.
NO_VALUE: Reading = (math.nan, math.nan)
# How a parameter group reports a definition it could not evaluate.
Warn = Callable[[str, SourceLocation], None]


def expression_error(line: LogicalLine, exc: ExpressionError, base: int) -> Exception:
    """`exc`, raised at character `base` of `line`, as a located reader error
    (its `secondary` flag kept)."""
    cls = ExpressionLimitError if exc.limit else NetlistError
    offset = min(base + exc.offset, max(0, len(line.text) - 1))
    error = line.error(exc.message, offset, cls)
    error.secondary = exc.secondary   # type: ignore[attr-defined]
    return error


def compile_token(line: LogicalLine, token: str, options: ReaderOptions) -> Expression:
    """The expression of `token` (`{...}`, `'...'` or bare) on `line`. Braces
    group like parentheses (so `{a}*2` and `1 + a*{b}` read too); one pair of
    surrounding quotes is dropped."""
    quoted = len(token) >= 2 and token[0] == token[-1] == "'"
    body = token[1:-1] if quoted else token
    try:
        return compile_expression(body, max_depth=options.max_expression_depth,
                                  max_work=options.max_expression_work)
    except ExpressionError as exc:
        base = offset_of(line, token) + (1 if quoted else 0)
        raise expression_error(line, exc, base) from None


def written_text(expression: Expression, line: LogicalLine) -> str:
    """The token `expression` was compiled from, as written on `line`."""
    for candidate in (expression.text, "'" + expression.text + "'"):
        if candidate in line.text:
            return candidate
    return expression.text


class ParameterScope:
    """The parameters visible at one place of the hierarchy.

    `serial` is this scope's number in its read, given once and never
    reused, so that instance scopes derived from it can be remembered by it.
    """

    __slots__ = ("values", "serial", "choices")

    def __init__(self, values: dict[str, Reading], serial: int,
                 choices: dict[int, int] | None = None) -> None:
        self.values = values
        self.serial = serial
        # `.if` block serial -> the branch taken (-1: none), decided with the values
        self.choices = choices or {}


def uses(expr: Expression, functions: Mapping[str, UserFunction]) -> frozenset[str]:
    """The parameter names `expr` reads: its own, and those the `.func` bodies it
    calls read (besides their arguments), through every call."""
    if not expr.calls:
        return expr.names
    names = set(expr.names)
    seen: set[str] = set()
    waiting = list(expr.calls)
    while waiting:
        name = waiting.pop()
        function = functions.get(name)
        if name in seen or function is None:
            continue
        seen.add(name)
        names.update(function.body.names.difference(function.args))
        waiting.extend(function.body.calls)
    return frozenset(names)


def _dependencies(expr: Expression | Reading, pending: dict[str, tuple],
                  functions: Mapping[str, UserFunction]) -> list[str]:
    """The pending parameters `expr` uses (itself included, which makes a cycle)."""
    if not isinstance(expr, Expression):
        return []
    return [n for n in uses(expr, functions) if n in pending]


def _evaluation_order(pending: dict[str, tuple],
                      functions: Mapping[str, UserFunction]) -> tuple[list[str], list[str]]:
    """Kahn's algorithm: (an order in which each parameter follows everything it
    uses, the parameters left over because they take part in a cycle)."""
    users: dict[str, list[str]] = {}
    missing: dict[str, int] = {}
    ready = []
    for key, (expr, _line, _assign) in pending.items():
        needs = _dependencies(expr, pending, functions)
        missing[key] = len(needs)
        for need in needs:
            users.setdefault(need, []).append(key)
        if not needs:
            ready.append(key)
    order = []
    while ready:
        key = ready.pop()
        order.append(key)
        for user in users.get(key, ()):
            missing[user] -= 1
            if missing[user] == 0:
                ready.append(user)
    return order, [k for k, waiting in missing.items() if waiting > 0]


def _cycle(stuck: list[str], pending: dict[str, tuple],
           functions: Mapping[str, UserFunction]) -> list[str]:
    """One reference cycle among the stuck parameters, for the message."""
    stuck_set = set(stuck)
    start = sorted(stuck)[0]
    path = [start]
    position = {start: 0}
    while True:
        expr = pending[path[-1]][0]
        nxt = sorted(n for n in uses(expr, functions) if n in stuck_set)[0]
        if nxt in position:
            return path[position[nxt]:] + [nxt]
        position[nxt] = len(path)
        path.append(nxt)


class ParameterEvaluator:
    """Evaluates parameter groups, element values and instance scopes for one read."""

    def __init__(self, options: ReaderOptions, warn: Warn | None = None,
                 functions: Mapping[str, UserFunction] | None = None) -> None:
        self.options = options
        self.warn = warn
        self.functions: Mapping[str, UserFunction] = functions if functions is not None else {}
        self.warned: set[tuple[str, SourceLocation]] = set()
        self.empty = ParameterScope({}, 0)
        self.serials = count(1)
        # Instances with the same parent scope and overrides share one evaluation.
        self.instance_scopes: dict[tuple[str, ...], _ScopeMemo] = {}

    # ------------------------------------------------------------ groups

    def entry_expression(self, assign: Assign, line: LogicalLine) -> Expression | Reading:
        """A `.param`-like entry's expression, or its readings when it is a number."""
        value = assign.value
        if isinstance(value, Call):
            value = item_text(value)
        if value[:1] == '"':
            return NO_VALUE   # a string (a file name): no number, for any expression
        if value[:1] in ("{", "'"):
            return compile_token(line, value, self.options)
        number = finite_number(value)
        if number is not None:
            return readings(number)
        return compile_token(line, value, self.options)

    def group(self, entries: list[Entry], parent: ParameterScope,
              fixed: dict[str, Reading],
              conditionals: Sequence[Conditional] = ()) -> ParameterScope:
        """Evaluate `.param`-like entries, order-free, over `parent`, then the
        `.if` blocks `conditionals` in order (each branch's `.param`s evaluated
        one after another, as written, once the branch is chosen).

        `fixed` holds already-evaluated values that replace entries of the
        same name (instance parameters overriding header defaults). An entry
        that cannot be evaluated is warned about and has no value.
        """
        if not entries and not fixed and not conditionals:
            return parent
        values = dict(parent.values)
        values.update(fixed)
        pending: dict[str, tuple[Expression | Reading, LogicalLine, Assign]] = {}
        for assign, line in entries:
            key = assign.key.casefold()
            if key not in fixed:
                try:
                    pending[key] = (self.entry_expression(assign, line), line, assign)
                except LimitError:
                    raise
                except NetlistError as exc:
                    values[key] = NO_VALUE
                    self.cannot_evaluate(assign, line, exc)
        order, stuck = _evaluation_order(pending, self.functions)
        for key in order:
            expr, line, assign = pending[key]
            if isinstance(expr, Expression):
                values[key] = self.entry_value(expr, values, line, assign)
            else:
                values[key] = expr
        if stuck:
            chain = _cycle(stuck, pending, self.functions)
            _, line, assign = pending[chain[0]]
            names = " -> ".join(pending[k][2].key for k in chain)
            self.cannot_evaluate(assign, line, line.error(f"parameter cycle: {names}",
                                                          offset_of(line, assign.key)))
            for key in stuck:
                values[key] = NO_VALUE
        choices: dict[int, int] = {}
        self.decide(conditionals, values, choices)
        return ParameterScope(values, next(self.serials), choices)

    # ------------------------------------------------------------ .if blocks

    def decide(self, conditionals: Sequence[Conditional], values: dict[str, Reading],
               choices: dict[int, int]) -> None:
        """Choose a branch of each block (into `choices`), evaluating the chosen
        branch's `.param`s into `values` in order, then its nested blocks."""
        for block in conditionals:
            index = self.choose(block, values)
            choices[block.serial] = index
            if index < 0:
                continue
            branch = block.branches[index]
            for assign, line in branch.params:
                key = assign.key.casefold()
                try:
                    expr = self.entry_expression(assign, line)
                except LimitError:
                    raise
                except NetlistError as exc:
                    values[key] = NO_VALUE
                    self.cannot_evaluate(assign, line, exc)
                    continue
                values[key] = self.entry_value(expr, values, line, assign) \
                    if isinstance(expr, Expression) else expr
            self.decide(branch.conditionals, values, choices)

    def choose(self, block: Conditional, values: dict[str, Reading]) -> int:
        """The index of the first branch of `block` whose condition holds (`.else`
        always does), or -1 for none. A condition that cannot be evaluated is
        warned about, and no branch is taken."""
        for index, branch in enumerate(block.branches):
            if branch.condition is None:
                return index
            try:
                holds = self.evaluate(branch.condition, values, branch.line,
                                      branch.condition.text)[0]
            except LimitError:
                raise
            except NetlistError as exc:
                self.condition_failed(branch.line, exc)
                return -1
            if holds:
                return index
        return -1

    def condition_failed(self, line: LogicalLine, exc: NetlistError) -> None:
        """Warn, once per place, that a condition cannot be evaluated."""
        if self.warn is None:
            raise exc
        location = exc.location or line.location()
        message = f"{line.text.split()[0]} condition cannot be evaluated ({exc.message}); " \
                  "no branch of the block is read"
        if (message, location) not in self.warned:
            self.warned.add((message, location))
            self.warn(message, location)

    def entry_value(self, expr: Expression, values: dict[str, Reading], line: LogicalLine,
                    assign: Assign) -> Reading:
        """A parameter's readings, or NO_VALUE (warned) when it cannot be evaluated."""
        try:
            return self.evaluate(expr, values, line, assign.value)
        except LimitError:
            raise
        except NetlistError as exc:
            if not getattr(exc, "secondary", False):
                self.cannot_evaluate(assign, line, exc)
            return NO_VALUE

    def cannot_evaluate(self, assign: Assign, line: LogicalLine, exc: Exception) -> None:
        """Warn, once per definition, that parameter `assign` (on `line`) has no value."""
        if self.warn is None:
            raise exc
        message = getattr(exc, "message", str(exc))
        location = getattr(exc, "location", None) or line.location()
        if (message, location) in self.warned:
            return
        self.warned.add((message, location))
        self.warn(f"parameter {assign.key}: {message}; it has no value, and elements using it "
                  "are not evaluated", location)

    def evaluate(self, expr: Expression, values: dict[str, Reading], line: LogicalLine,
                 token: Token) -> Reading:
        """Both readings of `expr`; errors point at `token` on `line`."""
        try:
            return evaluate(expr, values, self.functions)
        except ExpressionError as exc:
            text = item_text(token)
            quoted = len(text) >= 2 and text[0] == text[-1] == "'"
            base = offset_of(line, text) + (1 if quoted else 0)
            raise expression_error(line, exc, base) from None

    # ------------------------------------------------------------ elements

    def element_value(self, spec: ElementSpec, scope: ParameterScope) -> Value | None:
        """The element's main value, its expression evaluated in `scope`."""
        value = spec.value
        if isinstance(value, Expression):
            text = written_text(value, spec.line)
            si, spice = self.evaluate(value, scope.values, spec.line, text)
            return Value(si, text, spice)
        return value

    def element_params(self, spec: ElementSpec, scope: ParameterScope) -> dict[str, Any]:
        """The element's `k=v` parameters, expressions evaluated in `scope`."""
        if not spec.params:
            return NO_PARAMS
        out = {}
        for key, value in spec.params.items():
            if isinstance(value, Expression):
                out[key] = self.evaluate(value, scope.values, spec.line,
                                         written_text(value, spec.line))[0]
            else:
                out[key] = value
        return out

    # ------------------------------------------------------------ instances

    def instance_value(self, spec: ElementSpec, raw: str, scope: ParameterScope) -> Reading:
        """Both readings of an instance's `name=raw` parameter in the parent `scope`
        (a double-quoted string has none: NO_VALUE)."""
        if raw[:1] == '"':
            return NO_VALUE
        if raw[:1] not in "{'":
            number = finite_number(raw)
            if number is not None:
                return readings(number)
        expr = compile_token(spec.line, raw, self.options)
        return self.evaluate(expr, scope.values, spec.line, raw)

    def overrides(self, definition: SubcircuitDefinition, spec: ElementSpec,
                  scope: ParameterScope) -> tuple[dict[str, Reading], list[str]]:
        """The instance's parameters that its subcircuit declares, evaluated in the
        parent `scope`, and the names (as written) of those it does not declare."""
        declared = {a.key.casefold() for a in definition.defaults}
        fixed = {}
        undeclared = []
        for key, (written, raw) in spec.params.items():
            if key in declared:
                fixed[key] = self.instance_value(spec, raw, scope)
            else:
                undeclared.append(written)
        return fixed, undeclared

    def instance_scope(self, definition: SubcircuitDefinition, scope: ParameterScope,
                       fixed: dict[str, Reading]) -> ParameterScope:
        """The scope inside an instance of `definition` placed in `scope` with
        the overrides `fixed`."""
        memo = self.instance_scopes.get(definition.key)
        if memo is None:
            memo = self.instance_scopes[definition.key] = {}
        memo_key = (scope.serial, tuple(sorted(fixed.items())))
        cached = memo.get(memo_key)
        if cached is not None:
            return cached
        result = self.group(definition.entries(), scope, fixed, definition.conditionals)
        if len(memo) < _SCOPES_PER_DEFINITION:
            memo[memo_key] = result
        return result
