"""Parse one logical netlist line with the lark grammar into a plain record.

grammars/spice.lark is the authority on statement syntax; this module loads
it once (lazily: lark is imported only when a line needs it), parses a
statement with the LALR parser and an inline transformer, and returns plain
tuples, the same records drc/netlist/fastpath.py builds for plain lines:

    element record:   (designator, items, assigns)
    directive record: (keyword, args, assigns)   keyword lower-case, no dot

An item or argument is a `str` (a name, number, `{expr}` or `'expr'` as
written), a `Call(name, args)` or, inside a call, an `Assign(key, value)`.
`assigns` is a tuple of `Assign`. Syntax errors become NetlistError at the
offending column.
"""

from __future__ import annotations

from typing import Any, NamedTuple

from drc.caching import memoized
from drc.datafiles import grammar_path
from drc.netlist.lines import LogicalLine


class Call(NamedTuple):
    """`NAME(args)`, e.g. `PULSE(0 5 1n)` or a model's `SW(VT=2.5)`; a group in
    parentheses after a blank, `(PWL 0 0 1m 5)`, is a Call with the name ""."""

    name: str
    args: tuple


class Assign(NamedTuple):
    """`key=value` as written; value is a str or a Call."""

    key: str
    value: Any


_STARTS = ["element_line", "behav_line", "param_line", "subckt_line", "model_line", "words_line",
           "path_line"]

# Directive keyword -> start rule. Anything else is raw text (see the grammar header).
DIRECTIVE_RULES = {
    "param": "param_line", "subckt": "subckt_line", "model": "model_line",
    "include": "path_line", "inc": "path_line", "lib": "path_line",
    "endl": "words_line", "global": "words_line", "ends": "words_line",
    "end": "words_line",
}


def _transformer():
    from lark import Token, Transformer

    class ToRecord(Transformer):
        def word(self, children):
            return str(children[0])

        def call(self, children):
            return Call(str(children[0])[:-1], tuple(children[1:]))

        def group(self, children):
            return Call("", tuple(children))

        def assign(self, children):
            return Assign(str(children[0]), children[1])

        def element_line(self, children):
            items = tuple(c for c in children[1:] if not isinstance(c, Assign))
            assigns = tuple(c for c in children[1:] if isinstance(c, Assign))
            return (str(children[0]), items, assigns)

        def behav_line(self, children):
            designator, node1, node2, key, rest = (str(c) for c in children)
            return (designator, (node1, node2), (Assign(key, rest.rstrip()),))

        def pvalue(self, children):
            return str(children[0]).strip()

        def pdef(self, children):
            return Assign(str(children[0]), children[1])

        def param_line(self, children):
            return ("param", (), tuple(children[1:]))

        def subckt_line(self, children):
            args = tuple(str(c) for c in children[1:] if not isinstance(c, Assign))
            assigns = tuple(c for c in children[1:] if isinstance(c, Assign))
            return ("subckt", args, assigns)

        def model_line(self, children):
            children = [Token("NAME", c[:-1]) if getattr(c, "type", "") == "CALL_OPEN" else c
                        for c in children]
            args = tuple(c for c in children[1:] if not isinstance(c, Assign))
            assigns = tuple(c for c in children[1:] if isinstance(c, Assign))
            return ("model", tuple(str(a) if not isinstance(a, Call) else a for a in args),
                    assigns)

        def path_line(self, children):
            rest = tuple(str(c).rstrip() for c in children[1:])
            return (str(children[0])[1:].lower(), rest, ())

        def words_line(self, children):
            return (str(children[0])[1:].lower(), tuple(str(c) for c in children[1:]), ())

    return ToRecord()


@memoized(1)
def _parser():
    from lark import Lark

    with open(grammar_path(), encoding="utf-8") as handle:
        text = handle.read()
    return Lark(text, parser="lalr", lexer="contextual", start=_STARTS,
                transformer=_transformer(), maybe_placeholders=False)


def _message(text: str, offset: int) -> str:
    char = text[offset] if 0 <= offset < len(text) else ""
    if char == "*":
        return ("`*` starts a comment only as the first character of a line; "
                "use ` ; ` for an inline comment")
    if char == "{":
        return "unclosed `{` (an expression must end with `}` on the same statement)"
    if char and char in "'\"":
        return f"unclosed quote {char}"
    if char == "=":
        return "unexpected `=` (a parameter needs a name before `=` and a value after it)"
    if char:
        return f"unexpected `{char}` here"
    return "statement ends too early"


def parse_with_grammar(line: LogicalLine, rule: str) -> tuple:
    """Parse `line.text` with start rule `rule`; raise NetlistError on bad syntax."""
    from lark.exceptions import UnexpectedCharacters, UnexpectedEOF, UnexpectedInput, UnexpectedToken

    text = line.text
    offset: int
    try:
        return _parser().parse(text, start=rule)
    except UnexpectedCharacters as exc:
        offset = exc.pos_in_stream or 0
    except UnexpectedToken as exc:
        start = exc.token.start_pos
        offset = start if start is not None else len(text)
        if exc.token.type == "$END":
            offset = len(text)
    except UnexpectedEOF:
        offset = len(text)
    except UnexpectedInput as exc:  # any other lark complaint
        offset = getattr(exc, "pos_in_stream", 0) or 0
    raise line.error(_message(text, offset), min(offset, max(0, len(text) - 1)))


def parse_element(line: LogicalLine) -> tuple:
    """An element record `(designator, items, assigns)` via the grammar."""
    rule = "behav_line" if line.text[0] in "bB" else "element_line"
    return parse_with_grammar(line, rule)


def parse_directive(line: LogicalLine, keyword: str) -> tuple:
    """A directive record `(keyword, args, assigns)` via the grammar."""
    return parse_with_grammar(line, DIRECTIVE_RULES[keyword])
