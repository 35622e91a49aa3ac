"""Element lines, one letter at a time, into the records flattening expands.

Each element letter has its own line shape (`R name a b value [model]`,
`V name a b [DC] value`, `X name nodes... subckt [params: k=v]`, `Q name
c b e [s] model [area]`...). This module checks a parsed element record
against its letter's shape, with messages that point at the offending token,
and turns it into an `ElementSpec`: nodes as written, the value as a number
or a compiled expression, the model name in its first-seen spelling, and the
`k=v` parameters.

One bad line never sinks the board: a line that does not fit its letter's
shape, or whose value cannot be read, becomes a spec with a `problem` (the
reason) and the nodes that could be told (`fallback_nodes`), so the element
stays in the netlist, unevaluated, with a located warning. Only resource
limits stop reading. A line that starts with no letter at all is not a
statement; it is skipped with a warning, as ngspice does.
"""

from __future__ import annotations

import re
from collections.abc import Callable, Sequence
from typing import Any

from drc.errors import LimitError, NetlistError
from drc.netlist.elements import Value
from drc.netlist.expressions import Expression
from drc.netlist.fastpath import fast_element
from drc.netlist.grammar import Assign, Call, parse_element
from drc.netlist.lines import LogicalLine
from drc.netlist.options import ReaderOptions
from drc.netlist.parameters import compile_token
from drc.netlist.specs import ElementSpec, LoadedNetlist
from drc.netlist.tokens import (
    Token,
    call_text,
    finite_number,
    item_text,
    offset_of,
    param_value,
    strip_quotes,
)

# How many nodes a line of each letter starts with, to keep the nodes of an
# element whose line cannot be read (X: every name but the last).
_NODE_COUNT = {"R": 2, "C": 2, "L": 2, "D": 2, "V": 2, "I": 2, "B": 2, "F": 2, "H": 2,
               "W": 2, "E": 4, "G": 4, "T": 4, "M": 4, "O": 4, "Y": 4, "J": 3, "Z": 3,
               "Q": 3}
# A token that starts like a number but is none (`4k7x-`, `1e999`): never a name.
_NOT_A_NUMBER = re.compile(r"[-+]?(?:\d|\.\d)")
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


def _plain_name(item: Token) -> bool:
    """True for a token that can be a node name (no call, value or expression)."""
    return isinstance(item, str) and item[0] not in "{'\"*(" and "=" not in item


def fallback_nodes(letter: str, items: Sequence[Token]) -> tuple[tuple[str, ...], str | None]:
    """(nodes, model) of a line that cannot be read in full: the leading plain
    names, as many as the letter's lines start with; for X every name but
    the last (the subcircuit), for S two or four, for other letters all but
    the last (a model)."""
    names: list[str] = []
    for item in items:
        if not _plain_name(item):
            break
        names.append(item)    # type: ignore[arg-type]  # a str, checked by _plain_name
    if letter == "S":
        return tuple(names[:2] if len(names) < 4 else names[:4]), None
    count = _NODE_COUNT.get(letter)
    if count is None:   # X, K, A, U and the other letters: nodes, then a name
        return tuple(names[:-1]), (names[-1] if len(names) > 1 else None)
    return tuple(names[:count]), None


def problem_text(message: str, designator: str) -> str:
    """A reader error's message as an element's problem (without its designator)."""
    prefix = designator + ": "
    return message[len(prefix):] if message.startswith(prefix) else message


# Where the model may stand in a Q or M line (0-based among the tokens after
# the designator): Q has 3 to 5 nodes, M 3 (VDMOS) to 7 (SOI).
_MODEL_PLACES = {"Q": (3, 4, 5), "M": (3, 4, 5, 6, 7)}


def resolve_nodes(spec: ElementSpec, loaded: LoadedNetlist) -> None:
    """Split a Q or M line's tokens into its nodes and the model (first time only).

    Done at flattening, once every `.model` card is known: the model is the
    first token from the fourth on that names a card; else for Q the last
    non-number among the fourth to sixth, for M the last non-number among
    the fourth to eighth (so `M1 d g s vdmos` has 3 nodes). A number after a
    Q's model is its area; anything else after the model is refused (a
    NetlistError, which leaves the element unevaluated with its nodes).
    """
    if spec.nodes or spec.model is not None or spec.problem is not None:
        return
    items = spec.extra
    places = [i for i in _MODEL_PLACES[spec.kind] if i < len(items)]
    index = next((i for i in places if items[i].casefold() in loaded.models), None)
    if index is None:
        names = [i for i in places if finite_number(items[i]) is None]
        if spec.kind == "Q":   # the last non-number among the 4th to 6th
            index = max([3] + [i for i in (4, 5) if i in names])
        else:
            index = names[-1] if names else 3
    spec.nodes = tuple(items[:index])
    spec.nkeys = tuple(n.casefold() for n in spec.nodes)
    spec.model = loaded.name(items[index])
    node_list(spec.line, items[:index], spec.designator)
    for extra in items[index + 1:]:
        number = finite_number(extra)
        if number is None or spec.kind != "Q":
            raise spec.line.error(f"{spec.designator}: unexpected `{extra}` after the model",
                                  offset_of(spec.line, extra, len(spec.designator)))
        spec.params.setdefault("area", number.si)


# Words after an E or G line's nodes that make it behavioural.
BEHAVIOURAL_KEYWORDS = frozenset({"value", "table", "laplace", "freq", "chebyshev", "vol",
                                  "cur"})
_POLY = re.compile(r"poly\((\d+)\)", re.I)
# PSpice digital primitives (a U line's type), from memory of the PSpice reference.
DIGITAL_PRIMITIVES = frozenset({
    "buf", "inv", "and", "nand", "or", "nor", "xor", "nxor", "bufa", "inva", "anda", "nanda",
    "ora", "nora", "xora", "nxora", "ao", "oa", "aoi", "oai", "buf3", "inv3", "and3", "nand3",
    "or3", "nor3", "xor3", "nxor3", "buf3a", "inv3a", "and3a", "nand3a", "or3a", "nor3a",
    "xor3a", "nxor3a", "jkff", "dff", "srff", "dltch", "pullup", "pulldn", "stim", "fstim",
    "rom", "ram", "pla", "logicexp", "pindly", "constraint",
})
_XSPICE_MARKER = re.compile(r"%[a-z]+$", re.I)


def poly_order(tokens: Sequence[Token]) -> tuple[int | None, Sequence[Token]]:
    """(n, the tokens after it) when `tokens` start with `POLY(n)` (or `POLY (n)`),
    else (None, tokens)."""
    if not tokens:
        return None, tokens
    head = tokens[0]
    if isinstance(head, str):
        match = _POLY.fullmatch(head)
        if match is not None:
            return int(match.group(1)), tokens[1:]
        if head.casefold() == "poly" and len(tokens) > 1 and isinstance(tokens[1], Call) \
                and not tokens[1].name and len(tokens[1].args) == 1 \
                and str(tokens[1].args[0]).isdigit():
            return int(tokens[1].args[0]), tokens[2:]
    elif isinstance(head, Call) and head.name.casefold() == "poly" and len(head.args) == 1 \
            and str(head.args[0]).strip().isdigit():
        return int(head.args[0]), tokens[1:]
    return None, tokens


def relay_hint(designator: str) -> str:
    """What to say to a K line that looks like a relay (K is the relay's
    reference-designator letter, and a coupling's SPICE letter)."""
    return (f"; if {designator} is a relay, write its contact as an S line (`S name a b`) or "
            "an X line of a contact part (`XK1 com nc no RELAY_SPDT`)")


def _words(items: Sequence[Any]) -> list[str]:
    """Every word of `items`, calls and groups opened (a call's name first)."""
    out: list[str] = []
    for item in items:
        if isinstance(item, Call):
            if item.name:
                out.append(item.name)
            out.extend(_words(item.args))
        elif isinstance(item, str):
            out.append(item)
    return out


def xspice_ports(items: Sequence[Token]) -> tuple[tuple[str, ...], str | None]:
    """(nodes, model) of an XSPICE A line: the port names with vector brackets,
    port-type markers (`%v`, `%vd(a b)`, `%d`...), `~` inversions and `NULL`
    connections taken off; the model is the last word."""
    words = _words(items)
    if len(words) < 2:
        return (), None
    nodes: list[str] = []
    skip_next = False
    for word in words[:-1]:
        word = word.strip("[]")
        if skip_next or not word:
            skip_next = False
            continue
        if word[0] == "%":
            inside = word.find("(")
            if inside < 0:
                skip_next = word.casefold() == "%vnam"   # a source name follows, no node
                continue
            word = word[inside + 1:word.rfind(")")] if word.endswith(")") else word[inside + 1:]
        word = word.lstrip("~")
        if word and word.casefold() != "null":
            nodes.append(word)
    return tuple(nodes), words[-1]


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
            "A": self.xspice, "U": self.u_line, "O": self.nodes_then_model,
            "Y": self.nodes_then_model, "P": self.nodes_then_model, "N": self.nodes_then_model,
        }

    # ------------------------------------------------------------ lines

    def interpret(self, line: LogicalLine) -> ElementSpec | None:
        """The spec of element line `line` (with a problem when it cannot be
        evaluated), or None for a line that is not a statement."""
        text = line.text
        letter = text[0].upper()
        shape = self.shapes.get(letter)
        if shape is None:
            self.not_a_statement(line)
            return None
        try:
            record = line.record
            if record is None:
                record = fast_element(text)
                if record is None:
                    record = parse_element(line)
                line.record = record
            designator, items, assigns = record
            return shape(letter, designator, items, assigns, line)
        except LimitError:
            raise
        except NetlistError as exc:
            return self.unevaluable(line, letter, exc)

    def not_a_statement(self, line: LogicalLine) -> None:
        """Warn about a line that starts with neither a letter, `.`, `*` nor `+`
        (ngspice reads such a line as a comment), or a `+` line continuing
        nothing but the title."""
        first = line.text[0]
        if first == "+":
            message = ("continuation line (`+`) with no statement before it (it would "
                       "continue the title line); ignored")
        else:
            message = (f"a line starting with `{first}` is not a statement (a statement "
                       "starts with an element letter, `.`, `*` or `+`); ignored, as ngspice does")
        self.loaded.warn(message, line, group="not-a-statement")

    def unevaluable(self, line: LogicalLine, letter: str, exc: NetlistError) -> ElementSpec:
        """The spec of an element line that cannot be read in full: the nodes that
        can be told, and the reason as its problem."""
        record = line.record
        if record is not None:
            designator, items = record[0], record[1]
        else:
            words = line.text.split()
            designator, items = words[0], words[1:]
        nodes, model = fallback_nodes(letter, items)
        spec = ElementSpec(designator, letter, nodes, None, model, {}, line)
        spec.problem = problem_text(exc.message, designator)
        spec.problem_at = exc.location
        return spec

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
            if _NOT_A_NUMBER.match(token) or token[0] == '"':
                raise line.error(f"{designator}: `{token}` is not a number",
                                 offset_of(line, token, len(designator)))
            # A bare parameter name or expression as the value: `R1 a b rval`.
            try:
                return compile_token(line, token, self.options)
            except LimitError:
                raise
            except NetlistError as exc:
                raise line.error(f"{designator}: `{token}` is not a number, nor an expression "
                                 f"({exc.message})", offset_of(line, token, len(designator))
                                 ) from None
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
            params[key] = number.si if number is not None else strip_quotes(item_text(value))
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

    def keyed_value(self, line: LogicalLine, designator: str, value_key: str,
                    params: dict[str, Any], assigns: Assigns) -> Value | Expression:
        """The value given as `r=`, `c=` or `l=` (taken out of `params`)."""
        raw = params.pop(value_key)
        if isinstance(raw, Expression):
            return raw
        written = next(a.value for a in assigns if a.key.casefold() == value_key)
        value = finite_number(written)
        if value is not None:
            return value
        if not isinstance(written, str) or not written or written[0] == '"':
            raise line.error(f"{designator}: `{value_key}=` needs a number or an expression")
        return compile_token(line, written, self.options)   # `R=V(c)*1k`, `r=rval*2`

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
        into `params` (`ac`, calls such as `PULSE(...)`, bare words). A bare
        parameter name in the value's place is the value (`V1 vcc 0 vsupply`)."""
        value = None
        index = 0
        rest = source_tokens(rest)
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
            if index == 1 and (_is_value_text(token) or _is_parameter_name(token)):
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
        """`K name L1 L2 [L3...] k`: the inductors named in `extra` (whether they are
        inductors is checked when flattening, drc/netlist/flatten.py)."""
        names = [item for item in items if isinstance(item, str) and _plain_name(item)]
        params = self.element_params(line, assigns)
        coupling: Token | None = items[-1] if items else None
        if "k" in params and len(names) == len(items):
            coupling = None
        elif isinstance(coupling, str) and (_is_value_text(coupling) or (
                len(names) > 2 and all(n[:1] in "lL" for n in names[:-1]))):
            names = names[:-1]     # the coupling: a number, an expression, a parameter name
        else:
            raise line.error(f"{designator}: a K line couples inductors (`K name L1 L2 "
                             "coupling`)" + relay_hint(designator))
        if len(names) < 2:
            raise line.error(f"{designator}: a K line couples two or more inductors (`K name "
                             "L1 L2 coupling`)" + relay_hint(designator))
        value = self.value_of(line, coupling, designator) if coupling is not None else \
            self.keyed_value(line, designator, "k", params, assigns)
        self.loaded.couplings = True
        return ElementSpec(designator, "K", (), value, None, params, line, extra=tuple(names))

    def current_controlled(self, letter: str, designator: str, items: Items, assigns: Assigns,
                           line: LogicalLine) -> ElementSpec:
        """`F|H name a b Vsource gain`, `F|H name a b POLY(n) V1 ... Vn c0 c1 ...`, or
        a behavioural `H name a b VALUE={...}`."""
        n = len(items)
        if n == 2 and assigns:
            nodes = node_list(line, items, designator)
            return ElementSpec(designator, letter, nodes, None, None, text_params(assigns), line)
        order, rest = poly_order(items[2:])
        if order is not None:
            nodes = node_list(line, need(items, 2, designator, line, "2 nodes")[:2], designator)
            controls = [item_text(t) for t in rest[:order]]
            params = {"poly": order, "controls": " ".join(controls),
                      "coefficients": " ".join(item_text(t) for t in rest[order:])}
            return ElementSpec(designator, letter, nodes, None, None, params, line)
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
        """`E|G name a b c d [gain]`; `E|G name a b POLY(n) c1+ c1- ... coefficients`;
        behavioural: `E|G name a b VALUE={...}` (or `VOL=`, `CUR=`), `... TABLE {x} =
        (x1,y1) ...`, `LAPLACE {x} = {...}`, `FREQ {x} = ...`: the expression kept
        as text, the output nodes its nodes (what it reads is inside `V()`)."""
        n = len(items)
        if n == 2 and assigns:
            nodes = node_list(line, items, designator)
            return ElementSpec(designator, letter, nodes, None, None, text_params(assigns), line)
        keyword = items[2].casefold() if n > 2 and isinstance(items[2], str) else ""
        if keyword in BEHAVIOURAL_KEYWORDS:
            nodes = node_list(line, items[:2], designator)
            start = offset_of(line, items[2], len(designator))
            return ElementSpec(designator, letter, nodes, None, None,
                               {keyword: line.text[start + len(items[2]):].strip()}, line)
        order, rest = poly_order(items[2:])
        if order is not None:
            nodes = node_list(line, items[:2], designator) + \
                node_list(line, rest[:2 * order], designator)
            params = {"poly": order,
                      "coefficients": " ".join(item_text(t) for t in rest[2 * order:])}
            return ElementSpec(designator, letter, nodes, None, None, params, line)
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
        """`M name d g s [b ...] model`: 3 nodes for a vertical power MOSFET (VDMOS),
        4 usually, up to 7 (SOI); split by `resolve_nodes` once models are known."""
        need(items, 4, designator, line, "3 or 4 nodes and a model")
        for item in items:
            if not isinstance(item, str):
                raise line.error(f"{designator}: unexpected `{item_text(item)}`",
                                 offset_of(line, item, len(designator)))
        return ElementSpec(designator, "M", (), None, None, self.element_params(line, assigns),
                           line, extra=tuple(items))

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
        """`Q name c b e [s] model [area]`: split by `resolve_nodes` once models are known."""
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

    def xspice(self, letter: str, designator: str, items: Items, assigns: Assigns,
               line: LogicalLine) -> ElementSpec:
        """An XSPICE code-model instance `A name ports... model`: ports may be
        vectors `[a b]`, typed `%vd(a b)`, inverted `~a` or `NULL`."""
        nodes, model = xspice_ports(items)
        if model is None:
            raise line.error(f"{designator}: an A line needs its connections and a model")
        return ElementSpec(designator, "A", nodes, None, self.loaded.name(model),
                           self.element_params(line, assigns), line)

    def u_line(self, letter: str, designator: str, items: Items, assigns: Assigns,
               line: LogicalLine) -> ElementSpec:
        """A PSpice digital primitive `U name TYPE[(n...)] pwr gnd nodes... timing io`
        (the type one of DIGITAL_PRIMITIVES), else ngspice's distributed RC line
        `U name a b c model`."""
        head = items[0] if items else None
        kind = (head.name if isinstance(head, Call) else head.split("(", 1)[0]) \
            if head is not None else ""
        if not isinstance(kind, str) or kind.casefold() not in DIGITAL_PRIMITIVES:
            return self.nodes_then_model(letter, designator, items, assigns, line)
        rest = list(items[1:])
        if rest and isinstance(rest[0], Call) and not rest[0].name:
            rest = rest[1:]   # `NAND (2)`: the primitive's parameters
        names = [item for item in rest if isinstance(item, str) and _plain_name(item)]
        if head is None or len(names) < 4:
            raise line.error(f"{designator}: a {kind} primitive needs its power and ground "
                             "nodes, its nodes, a timing model and an I/O model")
        params = self.element_params(line, assigns)
        params["primitive"] = item_text(head).casefold()
        params["io_model"] = names[-1]
        return ElementSpec(designator, "U", tuple(names[:-2]), None, self.loaded.name(names[-2]),
                           params, line)

    def nodes_then_model(self, letter: str, designator: str, items: Items, assigns: Assigns,
                         line: LogicalLine) -> ElementSpec:
        """`O|Y|P|N name nodes... model [k=v...]` (lossy and coupled lines, numerical
        devices): every plain name but the last is a node."""
        nodes, model = fallback_nodes(letter, items)
        if model is None or len(nodes) + 1 < len(items):
            raise line.error(f"{designator}: expected nodes and then a model name")
        return ElementSpec(designator, letter, nodes, None, self.loaded.name(model),
                           self.element_params(line, assigns), line)

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


# Words of a source line that are never a parameter name in the value's place.
SOURCE_KEYWORDS = frozenset({
    "dc", "ac", "pulse", "sin", "sine", "pwl", "exp", "sffm", "am", "trnoise", "trrandom",
    "pat", "distof1", "distof2", "external", "file", "r", "td", "portnum", "z0",
})
_IDENTIFIER = re.compile(r"[^\W\d]\w*")


def _is_parameter_name(token: str) -> bool:
    """True for a bare identifier that is no source keyword."""
    return _IDENTIFIER.fullmatch(token) is not None and token.casefold() not in SOURCE_KEYWORDS


def source_tokens(rest: Items) -> list[Token]:
    """A source's words with parenthesised groups read as simulators read them:
    `(PWL 0 0 1m 5)` is the call `PWL(0 0 1m 5)`, `(AC 1v)` the words `AC 1v`, and a
    word followed by a group (`PWL (0 0 1m 5)`) the call of that word."""
    out: list[Token] = []
    for token in rest:
        if not isinstance(token, Call) or token.name:
            out.append(token)
            continue
        args = token.args
        head = args[0] if args else None
        if isinstance(head, str) and head.casefold() in ("dc", "ac"):
            out.extend(a for a in args if isinstance(a, str | Call))
        elif isinstance(head, str) and _IDENTIFIER.fullmatch(head):
            out.append(Call(head, tuple(args[1:])))
        elif out and isinstance(out[-1], str) and _IDENTIFIER.fullmatch(out[-1]):
            out[-1] = Call(out[-1], args)
        else:
            out.append(token)
    return out
