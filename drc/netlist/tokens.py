"""The tokens of a parsed statement, seen as the text they were written as.

The grammar front (drc/netlist/grammar.py) and the fast path hand the reader
records of plain strings, `Call`s and `Assign`s. Loading, parameter
evaluation and flattening all need the same few views of such a token: the
text it was written as (for messages and parameters kept as text), where it
stands in its statement (to point an error at it), and the number it reads
as, if any. Node names that mean ground live here too.
"""

from __future__ import annotations

import re

from drc.netlist.elements import Value
from drc.netlist.grammar import Assign, Call
from drc.netlist.lines import LogicalLine
from drc.netlist.values import parse_value

# Node names that are ground in every subcircuit (ngspice: `0`, and `gnd`).
GROUND_NAMES = frozenset({"0", "gnd"})

# A token: a name, number or expression as written, or a call such as `PULSE(...)`.
Token = str | Call


def strip_quotes(text: str) -> str:
    """`text` without one pair of matching surrounding quotes."""
    if len(text) >= 2 and text[0] == text[-1] and text[0] in "'\"":
        return text[1:-1]
    return text


def call_text(call: Call) -> str:
    """The arguments of `call` as written, blank-separated."""
    parts = []
    for arg in call.args:
        if isinstance(arg, Assign):
            parts.append(f"{arg.key}={item_text(arg.value)}")
        else:
            parts.append(item_text(arg))
    return " ".join(parts)


def item_text(item: Token) -> str:
    """A token as written (a call with its arguments)."""
    if isinstance(item, Call):
        return f"{item.name}({call_text(item)})"
    return item


def offset_of(line: LogicalLine, token: Token, start: int = 0) -> int:
    """Where `token` stands in the statement, for pointing an error at it."""
    text = item_text(token)
    found = re.search(r"(?<![^\s,=(])" + re.escape(text), line.text[start:])
    if found is None:
        found_at = line.text.find(text)
        return max(0, found_at)
    return start + found.start()


def finite_number(text: object) -> Value | None:
    """The value of a number token, or None for anything else (a name, an
    expression, a call, or a number too large for a float)."""
    if not isinstance(text, str):
        return None
    value = parse_value(text)
    if value is not None and (value.si != value.si or abs(value.si) == float("inf")):
        return None
    return value


def param_value(value: Token) -> float | str:
    """A `key=value` kept as written: a number's value, else the text unquoted."""
    if isinstance(value, Call):
        return item_text(value)
    number = finite_number(value)
    return number.si if number is not None else strip_quotes(value)
