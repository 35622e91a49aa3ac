"""Element lines, one letter at a time, into the records flattening expands.

Each element letter has its own line shape (`R name a b value [model]`,
`V name a b [DC] value`, `X name nodes... subckt [params: k=v]`, `Q name
c b e [s] model [area]`...). This module checks a parsed element record
against its letter's shape, with messages that point at the offending token,
and turns it into an `ElementSpec`: nodes as written, the value as a number
or a compiled expression, the model name in its first-seen spelling, and the
`k=v` parameters. Lines whose letter we do not model (XSPICE A, and O U Y P
N) are skipped with a warning.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from typing import Any

from drc.netlist.elements import Value
from drc.netlist.expressions import Expression
from drc.netlist.fastpath import fast_element
from drc.netlist.grammar import Assign, Call, parse_element
from drc.netlist.lines import LogicalLine
from drc.netlist.options import ReaderOptions
from drc.netlist.parameters import compile_token
from drc.netlist.specs import ElementSpec, LoadedNetlist
from drc.netlist.tokens import Token, call_text, finite_number, item_text, offset_of, param_value

# XSPICE and other letters we do not model: skipped with a warning.
SKIPPED_LETTERS = frozenset("AOUYPN")
_VALUE_KEYS = {"R": ("r", "resistance"), "C": ("c", "capacitance"), "L": ("l", "inductance")}
_KIND_WORDS = {"R": "resistor", "C": "capacitor", "L": "inductor"}

Items = Sequence[Token]
Assigns = Sequence[Assign]
# How one letter's line becomes a spec: (letter, designator, items, assigns, line).
_Interpret = Callable[[str, str, Items, Assigns, LogicalLine], ElementSpec]


def node_list(line: LogicalLine, items: Items, designator: str) -> tuple[str, ...]:
    """`items` as node names; anything else is refused at its position."""
    nodes = []
    for item in items:
        if not isinstance(item, str) or item[0] in "{'\"":
            raise line.error(f"{designator}: expected a node name, found "
                             f"`{item_text(item)}`", offset_of(line, item, len(designator)))
        nodes.append(item)
    return tuple(nodes)


def need(items: Items, count: int, designator: str, line: LogicalLine, what: str) -> Items:
    """`items`, refused when they are fewer than `count`."""
    if len(items) < count:
        raise line.error(f"{designator}: needs {what}; found {len(items)} token(s)")
    return items


def text_params(assigns: Assigns) -> dict[str, Any]:
    """`k=v` parameters kept as the text written."""
    return {a.key.casefold(): item_text(a.value) for a in assigns}


def resolve_bjt(spec: ElementSpec, loaded: LoadedNetlist) -> None:
    """Split a Q line's tokens into 3-5 nodes and the model (first time only).

    Done at flattening, once every `.model` card is known: the model is the
    first token from the fourth on that names a card, else the last
    non-number among the fourth to sixth.
    """
    if spec.nodes or spec.model is not None:
        return
    items = spec.extra
    models = loaded.models
    index = next((i for i in (3, 4, 5) if i < len(items) and
                  items[i].casefold() in models), None)
    if index is None:
        index = 3
        for candidate in (4, 5):
            if candidate < len(items) and finite_number(items[candidate]) is None:
                index = candidate
    spec.nodes = node_list(spec.line, items[:index], spec.designator)
    spec.nkeys = tuple(n.casefold() for n in spec.nodes)
    spec.model = loaded.name(items[index])
    for extra in items[index + 1:]:
        number = finite_number(extra)
        if number is None:
            raise spec.line.error(f"{spec.designator}: unexpected `{extra}` after the model",
                                  offset_of(spec.line, extra, len(spec.designator)))
        spec.params.setdefault("area", number.si)


class ElementInterpreter:
    """Turns element lines into `ElementSpec`s, one method per line shape."""

    def __init__(self, loaded: LoadedNetlist, options: ReaderOptions) -> None:
        self.loaded = loaded
        self.options = options
        self.shapes: dict[str, _Interpret] = {
            "X": self.subcircuit_instance, "R": self.passive, "C": self.passive,
            "L": self.passive, "V": self.source, "I": self.source, "S": self.switch,
            "B": self.behavioural, "K": self.coupling, "F": self.current_controlled,
            "H": self.current_controlled, "W": self.current_switch, "E": self.voltage_controlled,
            "G": self.voltage_controlled, "T": self.transmission_line, "M": self.mosfet,
            "J": self.fet, "Z": self.fet, "D": self.diode, "Q": self.bjt,
        }

    # ------------------------------------------------------------ lines

    def interpret(self, line: LogicalLine) -> ElementSpec | None:
        """The spec of element line `line`, or None for a letter we skip."""
        text = line.text
        letter = text[0].upper()
        shape = self.shapes.get(letter)
        if shape is None:
            if letter in SKIPPED_LETTERS:
                self.loaded.warn(f"{text.split()[0]}: element letter {letter} (XSPICE or other "
                                 "devices) is not modelled; element skipped", line)
                return None
            raise line.error(f"unknown element letter {text[0]!r} (a statement starts with "
                             "an element letter, `.`, `*` or `+`)")
        record = line.record
        if record is None:
            record = fast_element(text)
            if record is None:
                record = parse_element(line)
            line.record = record
        designator, items, assigns = record
        return shape(letter, designator, items, assigns, line)

    # ------------------------------------------------------------ tokens

    def value_of(self, line: LogicalLine, token: Token, designator: str) -> Value | Expression:
        """A value token: a number, or an expression to evaluate when flattening."""
        if not isinstance(token, str):
            raise line.error(f"{designator}: `{item_text(token)}` is not a value",
                             offset_of(line, token, len(designator)))
        if token[0] in "{'":
            return compile_token(line, token, self.options)
        value = finite_number(token)
        if value is None:
            raise line.error(f"{designator}: `{token}` is not a number",
                             offset_of(line, token, len(designator)))
        return value

    def element_params(self, line: LogicalLine, assigns: Assigns) -> dict[str, Any]:
        """`k=v` parameters: expressions compiled, numbers read, the rest as text."""
        params: dict[str, Any] = {}
        for assign in assigns:
            value = assign.value
            key = assign.key.casefold()
            if isinstance(value, str) and value[:1] in ("{", "'"):
                params[key] = compile_token(line, value, self.options)
                continue
            number = finite_number(value)
            params[key] = number.si if number is not None else item_text(value)
        return params

    def model_name(self, token: Token) -> str:
        return self.loaded.name(item_text(token))

    # ------------------------------------------------------------ shapes

    def passive(self, letter: str, designator: str, items: Items, assigns: Assigns,
                line: LogicalLine) -> ElementSpec:
        """`R|C|L name a b value [model]`, or the value as `r=`/`c=`/`l=`."""
        n = len(items)
        params = self.element_params(line, assigns)
        value_key = next((k for k in _VALUE_KEYS[letter] if k in params), None)
        if n < 2 or (n == 2 and value_key is None):
            raise self.missing_value(letter, designator, items, line)
        nodes = node_list(line, items[:2], designator)
        value: Value | Expression | None
        if n >= 3:
            value = self.value_of(line, items[2], designator)
        elif value_key is not None:
            value = self.keyed_value(line, designator, value_key, params, assigns)
        else:  # refused above; here for the type checker
            raise self.missing_value(letter, designator, items, line)
        model = self.model_name(items[3]) if n >= 4 else None
        if n >= 5:
            raise line.error(f"{designator}: unexpected `{item_text(items[4])}` after the "
                             "value and model", offset_of(line, items[4], len(designator)))
        return ElementSpec(designator, letter, nodes, value, model, params, line)

    @staticmethod
    def keyed_value(line: LogicalLine, designator: str, value_key: str, params: dict[str, Any],
                    assigns: Assigns) -> Value | Expression:
        """The value given as `r=`, `c=` or `l=` (taken out of `params`)."""
        raw = params.pop(value_key)
        if isinstance(raw, Expression):
            return raw
        value = finite_number(next(a.value for a in assigns if a.key.casefold() == value_key))
        if value is None:
            raise line.error(f"{designator}: `{value_key}=` needs a number")
        return value

    @staticmethod
    def missing_value(letter: str, designator: str, items: Items, line: LogicalLine) -> Exception:
        word = _KIND_WORDS[letter]
        if len(items) == 2 and isinstance(items[1], str) and finite_number(items[1]) is not None \
                and isinstance(items[0], str):
            return line.error(f"{designator}: only one node before the value "
                              f"`{items[1]}` (a {word} needs two nodes and a value)",
                              offset_of(line, items[1], len(designator)))
        return line.error(f"{designator}: missing value (a {word} needs two nodes "
                          "and a value)", len(line.text) - 1)

    def source(self, letter: str, designator: str, items: Items, assigns: Assigns,
               line: LogicalLine) -> ElementSpec:
        """`V|I name a b [DC] value [AC value] [words or calls...] [k=v...]`."""
        need(items, 2, designator, line, "2 nodes")
        nodes = node_list(line, items[:2], designator)
        params: dict[str, Any] = {}
        value = self.source_words(items[2:], designator, line, params)
        for assign in assigns:
            key = assign.key.casefold()
            if key == "dc" and isinstance(assign.value, str):
                value = self.value_of(line, assign.value, designator)
            else:
                params[key] = param_value(assign.value)
        return ElementSpec(designator, letter, nodes, value, None, params, line)

    def source_words(self, rest: Items, designator: str, line: LogicalLine,
                     params: dict[str, Any]) -> Value | Expression | None:
        """The value among a source's words after its nodes; the other words go
        into `params` (`ac`, calls such as `PULSE(...)`, bare words)."""
        value = None
        index = 0
        while index < len(rest):
            token = rest[index]
            index += 1
            if isinstance(token, Call):
                params[token.name.casefold()] = call_text(token)
                continue
            low = token.casefold()
            following = rest[index] if index < len(rest) else None
            if low in ("dc", "ac") and isinstance(following, str) and _is_value_text(following):
                index += 1
                if low == "dc":
                    value = self.value_of(line, following, designator)
                else:
                    number = finite_number(following)   # None for an expression
                    params["ac"] = number.si if number is not None else following
                continue
            if index == 1 and _is_value_text(token):
                value = self.value_of(line, token, designator)
                continue
            params[low] = ""
        return value

    def switch(self, letter: str, designator: str, items: Items, assigns: Assigns,
               line: LogicalLine) -> ElementSpec:
        """A contact `S name a b [part]`, or a simulated switch `S name a b c d model`."""
        n = len(items)
        if n in (2, 3):
            nodes = node_list(line, items[:2], designator)
            model = self.model_name(items[2]) if n == 3 else None
            return ElementSpec(designator, "S", nodes, None, model,
                               self.element_params(line, assigns), line)
        if n >= 5:
            return self.simple(letter, designator, items, assigns, line, 4, True)
        raise line.error(f"{designator}: an S line is a contact `S name a b [part]` or a "
                         f"simulated switch `S name a b c d model`; found {n} tokens")

    def behavioural(self, letter: str, designator: str, items: Items, assigns: Assigns,
                    line: LogicalLine) -> ElementSpec:
        """`B name a b v=expr|i=expr`: the expression kept as text."""
        nodes = node_list(line, need(items, 2, designator, line, "2 nodes"), designator)
        return ElementSpec(designator, "B", nodes[:2], None, None, text_params(assigns), line)

    def coupling(self, letter: str, designator: str, items: Items, assigns: Assigns,
                 line: LogicalLine) -> ElementSpec:
        """`K name L1 L2 k`: the inductors named in `extra`."""
        need(items, 3, designator, line, "two inductor names and a coupling")
        inductors = node_list(line, items[:2], designator)
        value = self.value_of(line, items[2], designator)
        params = self.element_params(line, assigns)
        return ElementSpec(designator, "K", (), value, None, params, line, extra=inductors)

    def current_controlled(self, letter: str, designator: str, items: Items, assigns: Assigns,
                           line: LogicalLine) -> ElementSpec:
        """`F|H name a b Vsource gain`."""
        need(items, 4, designator, line, "2 nodes, a controlling source and a gain")
        nodes = node_list(line, items[:2], designator)
        value = self.value_of(line, items[3], designator)
        params = self.element_params(line, assigns)
        return ElementSpec(designator, letter, nodes, value, None, params, line,
                           extra=item_text(items[2]))

    def current_switch(self, letter: str, designator: str, items: Items, assigns: Assigns,
                       line: LogicalLine) -> ElementSpec:
        """`W name a b Vsource model`."""
        need(items, 4, designator, line, "2 nodes, a controlling source and a model")
        nodes = node_list(line, items[:2], designator)
        params = self.element_params(line, assigns)
        return ElementSpec(designator, "W", nodes, None, self.model_name(items[3]),
                           params, line, extra=item_text(items[2]))

    def voltage_controlled(self, letter: str, designator: str, items: Items, assigns: Assigns,
                           line: LogicalLine) -> ElementSpec:
        """`E|G name a b c d [gain]`, or `E|G name a b k=expr` (behavioural)."""
        n = len(items)
        if n == 2 and assigns:
            nodes = node_list(line, items, designator)
            return ElementSpec(designator, letter, nodes, None, None, text_params(assigns), line)
        need(items, 4, designator, line, "4 nodes")
        nodes = node_list(line, items[:4], designator)
        value = finite_number(items[4]) if n >= 5 else None
        return ElementSpec(designator, letter, nodes, value, None, text_params(assigns), line)

    def transmission_line(self, letter: str, designator: str, items: Items, assigns: Assigns,
                          line: LogicalLine) -> ElementSpec:
        """`T name a b c d [k=v...]`."""
        need(items, 4, designator, line, "4 nodes")
        return self.simple(letter, designator, items, assigns, line, 4, False)

    def mosfet(self, letter: str, designator: str, items: Items, assigns: Assigns,
               line: LogicalLine) -> ElementSpec:
        """`M name d g s b model`."""
        return self.simple(letter, designator, items, assigns, line, 4, True)

    def fet(self, letter: str, designator: str, items: Items, assigns: Assigns,
            line: LogicalLine) -> ElementSpec:
        """`J|Z name d g s model`."""
        return self.simple(letter, designator, items, assigns, line, 3, True)

    def diode(self, letter: str, designator: str, items: Items, assigns: Assigns,
              line: LogicalLine) -> ElementSpec:
        """`D name a k model`."""
        return self.simple(letter, designator, items, assigns, line, 2, True)

    def bjt(self, letter: str, designator: str, items: Items, assigns: Assigns,
            line: LogicalLine) -> ElementSpec:
        """`Q name c b e [s] model [area]`: split by `resolve_bjt` once models are known."""
        need(items, 4, designator, line, "3 to 5 nodes and a model")
        for item in items:
            if not isinstance(item, str):
                raise line.error(f"{designator}: unexpected `{item_text(item)}`",
                                 offset_of(line, item, len(designator)))
        return ElementSpec(designator, "Q", (), None, None, self.element_params(line, assigns),
                           line, extra=tuple(items))

    def subcircuit_instance(self, letter: str, designator: str, items: Items,
                            assigns: Assigns, line: LogicalLine) -> ElementSpec:
        """`X name nodes... subckt [params:] [k=v...]`: parameters kept as written."""
        positional = []
        for item in items:
            if isinstance(item, str) and item.casefold() == "params:":
                break
            positional.append(item)
        if not positional:
            raise line.error(f"{designator}: needs nodes and a subcircuit name",
                             len(line.text) - 1)
        nodes = node_list(line, positional[:-1], designator)
        last = positional[-1]
        if not isinstance(last, str) or last[0] in "{'\"":
            raise line.error(f"{designator}: expected a subcircuit name, found "
                             f"`{item_text(last)}`", offset_of(line, last, len(designator)))
        params = {a.key.casefold(): (a.key, item_text(a.value)) for a in assigns}
        return ElementSpec(designator, "X", nodes, None, self.loaded.name(last), params, line)

    def simple(self, letter: str, designator: str, items: Items, assigns: Assigns,
               line: LogicalLine, nodes_count: int, with_model: bool) -> ElementSpec:
        """Nodes, an optional model, then bare words (a number is the `area`)."""
        count = nodes_count + (1 if with_model else 0)
        what = f"{nodes_count} nodes" + (" and a model" if with_model else "")
        need(items, count, designator, line, what)
        nodes = node_list(line, items[:nodes_count], designator)
        model = self.model_name(items[nodes_count]) if with_model else None
        params = self.element_params(line, assigns)
        for extra in items[count:]:
            number = finite_number(extra)
            if number is not None and "area" not in params:
                params["area"] = number.si
            else:
                params[item_text(extra).casefold()] = item_text(extra)
        return ElementSpec(designator, letter, nodes, None, model, params, line)


def _is_value_text(token: str) -> bool:
    """True for a number or an expression token."""
    return token[0] in "{'" or finite_number(token) is not None
