"""Parameter scopes: `.param` and subcircuit parameters, evaluated for flattening.

A value may be an expression over parameters (`{rpull*2}`). Which parameters
it sees depends on where it is flattened: the top level's `.param`s, then
for each X instance its subcircuit's header defaults and `.param`s with the
instance's own `name=value` overrides, over the scope of the parent. Each
group is evaluated order-free (a parameter may use one defined after it;
a reference cycle is refused and named). Expressions are compiled by
drc/netlist/expressions.py within the reader's limits; its errors become
located errors at the token they came from.
"""

from __future__ import annotations

from itertools import count
from typing import Any

from drc.errors import LimitError, NetlistError
from drc.netlist.elements import NO_PARAMS, Value
from drc.netlist.expressions import Expression, ExpressionError, compile_expression, evaluate
from drc.netlist.grammar import Assign, Call
from drc.netlist.lines import LogicalLine
from drc.netlist.options import ReaderOptions
from drc.netlist.specs import ElementSpec, SubcircuitDefinition
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


def expression_error(line: LogicalLine, exc: ExpressionError, base: int) -> Exception:
    """`exc`, raised at character `base` of `line`, as a located reader error."""
    cls = ExpressionLimitError if exc.limit else NetlistError
    offset = min(base + exc.offset, max(0, len(line.text) - 1))
    return line.error(exc.message, offset, cls)


def compile_token(line: LogicalLine, token: str, options: ReaderOptions) -> Expression:
    """The expression of `token` (`{...}`, `'...'` or bare) on `line`."""
    braced = token[0] in "{'"
    body = token[1:-1] if braced else token
    try:
        return compile_expression(body, max_depth=options.max_expression_depth,
                                  max_work=options.max_expression_work)
    except ExpressionError as exc:
        base = offset_of(line, token) + (1 if braced else 0)
        raise expression_error(line, exc, base) from None


class ParameterScope:
    """The parameters visible at one place of the hierarchy.

    `serial` is this scope's number in its read, given once and never
    reused, so that instance scopes derived from it can be remembered by it.
    """

    __slots__ = ("values", "serial")

    def __init__(self, values: dict[str, Reading], serial: int) -> None:
        self.values = values
        self.serial = serial


def _dependencies(key: str, expr: Expression | Reading, pending: dict[str, tuple],
                  line: LogicalLine, assign: Assign) -> list[str]:
    """The pending parameters `expr` uses; a parameter using itself is refused."""
    if not isinstance(expr, Expression):
        return []
    if key in expr.names:
        raise line.error(f"parameter {assign.key} refers to itself", offset_of(line, assign.key))
    return [n for n in expr.names if n in pending]


def _evaluation_order(pending: dict[str, tuple]) -> tuple[list[str], list[str]]:
    """Kahn's algorithm: (an order in which each parameter follows everything it
    uses, the parameters left over because they take part in a cycle)."""
    users: dict[str, list[str]] = {}
    missing: dict[str, int] = {}
    ready = []
    for key, (expr, line, assign) in pending.items():
        needs = _dependencies(key, expr, pending, line, assign)
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


def _cycle(stuck: list[str], pending: dict[str, tuple]) -> list[str]:
    """One reference cycle among the stuck parameters, for the message."""
    stuck_set = set(stuck)
    start = sorted(stuck)[0]
    path = [start]
    position = {start: 0}
    while True:
        expr = pending[path[-1]][0]
        nxt = sorted(n for n in expr.names if n in stuck_set)[0]
        if nxt in position:
            return path[position[nxt]:] + [nxt]
        position[nxt] = len(path)
        path.append(nxt)


class ParameterEvaluator:
    """Evaluates parameter groups, element values and instance scopes for one read."""

    def __init__(self, options: ReaderOptions) -> None:
        self.options = options
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
        if value[:1] in ("{", "'"):
            return compile_token(line, value, self.options)
        number = finite_number(value)
        if number is not None:
            return readings(number)
        return compile_token(line, value, self.options)

    def group(self, entries: list[Entry], parent: ParameterScope,
              fixed: dict[str, Reading]) -> ParameterScope:
        """Evaluate `.param`-like entries, order-free, over `parent`.

        `fixed` holds already-evaluated values that replace entries of the
        same name (instance parameters overriding header defaults).
        """
        if not entries and not fixed:
            return parent
        values = dict(parent.values)
        values.update(fixed)
        pending: dict[str, tuple[Expression | Reading, LogicalLine, Assign]] = {}
        for assign, line in entries:
            key = assign.key.casefold()
            if key not in fixed:
                pending[key] = (self.entry_expression(assign, line), line, assign)
        order, stuck = _evaluation_order(pending)
        for key in order:
            expr, line, assign = pending[key]
            if isinstance(expr, Expression):
                values[key] = self.evaluate(expr, values, line, assign.value)
            else:
                values[key] = expr
        if stuck:
            chain = _cycle(stuck, pending)
            _, line, assign = pending[chain[0]]
            names = " -> ".join(pending[k][2].key for k in chain)
            raise line.error(f"parameter cycle: {names}", offset_of(line, assign.key))
        return ParameterScope(values, next(self.serials))

    def evaluate(self, expr: Expression, values: dict[str, Reading], line: LogicalLine,
                 token: Token) -> Reading:
        """Both readings of `expr`; errors point at `token` on `line`."""
        try:
            return evaluate(expr, values)
        except ExpressionError as exc:
            text = item_text(token)
            base = offset_of(line, text) + (1 if text[:1] in "{'" else 0)
            raise expression_error(line, exc, base) from None

    # ------------------------------------------------------------ elements

    def element_value(self, spec: ElementSpec, scope: ParameterScope) -> Value | None:
        """The element's main value, its expression evaluated in `scope`."""
        value = spec.value
        if isinstance(value, Expression):
            text = "{" + value.text + "}"
            for candidate in ("{" + value.text + "}", "'" + value.text + "'"):
                if candidate in spec.line.text:
                    text = candidate
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
                out[key] = self.evaluate(value, scope.values, spec.line, "{" + value.text + "}")[0]
            else:
                out[key] = value
        return out

    # ------------------------------------------------------------ instances

    def instance_value(self, spec: ElementSpec, raw: str, scope: ParameterScope) -> Reading:
        """Both readings of an instance's `name=raw` parameter in the parent `scope`."""
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
        result = self.group(definition.entries(), scope, fixed)
        if len(memo) < _SCOPES_PER_DEFINITION:
            memo[memo_key] = result
        return result
