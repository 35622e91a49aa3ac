"""Read a SPICE-style board netlist into a flat `Netlist`.

Public entry: `read_netlist(path)` and `read_netlist_text(text)`, with
`ReaderOptions` for the resource limits. Reading runs in two steps. Loading
walks the logical lines of the top file (drc/lines.py), following `.include`
and `.lib` inside a sandbox (the board's folder tree and the configured
include folders), parses each statement (drc/fastpath.py for plain element
lines, else the lark grammar via drc/grammar.py) and interprets it into a
local element spec inside the current `.subckt` definition. Flattening then
evaluates parameters (drc/expressions.py, order-free, cycles refused) and
expands X instances depth-first, joining designators and local nets with `/`,
mapping ports to the instance's nets, keeping ground ("0", `gnd`) and
`.global` nets global, and canonicalising every net and model name to its
first-seen spelling. X instances of undefined subcircuits, or of names the
`keep_as_part` callback claims, stay as parts (kind "X").
"""

from __future__ import annotations

import os
import re
from dataclasses import dataclass
from operator import itemgetter
from typing import Callable

from drc.cli.gcpause import collection_paused
from drc.errors import LimitError, NetlistError, SourceLocation
from drc.netlist.expressions import Expression, ExpressionError, compile_expression, evaluate
from drc.netlist.fastpath import PLAIN_LINE, fast_directive, fast_element
from drc.netlist.grammar import DIRECTIVE_RULES, Assign, Call, parse_directive, parse_element
from drc.netlist.lines import (LogicalLine, SourceFile, continuation_zones, limit_hint, logical_lines,
                    read_source, source_from_text, statement_at)
from drc.netlist.elements import NO_PARAMS, Diagnostic, Element, ModelCard, Netlist, SkippedDirective, Value
from drc.netlist.values import parse_value

GROUND_NAMES = frozenset({"0", "gnd"})

# Element letters and the smallest number of positional tokens each needs.
_KNOWN_LETTERS = frozenset("RCLKDQMJZVIEFGHSWTBX")
# XSPICE and other letters we do not model: skipped with a warning.
_SKIPPED_LETTERS = frozenset("AOUYPN")
# Directives recorded as SkippedDirective without a warning.
_SKIPPED_DIRECTIVES = frozenset({
    "tran", "op", "ac", "dc", "meas", "measure", "print", "plot", "probe", "save",
    "option", "options", "opt", "temp", "ic", "nodeset", "four", "noise", "tf", "sens",
    "disto", "pz", "sp", "width", "func", "csparam", "step", "data", "if", "else",
    "endif", "nodeset", "pss", "save", "print", "literal", "netlist",
})
_VALUE_KEYS = {"R": ("r", "resistance"), "C": ("c", "capacitance"), "L": ("l", "inductance")}
_KIND_WORDS = {"R": "resistor", "C": "capacitor", "L": "inductor"}
_DRIVE = re.compile(r"^(?:[A-Za-z]:|\\\\|//)")


@dataclass(frozen=True, slots=True)
class ReaderOptions:
    """Resource limits of the reader; each error names the field to raise."""

    max_include_depth: int = 16
    max_subckt_depth: int = 32
    max_elements: int = 1_000_000
    max_file_bytes: int = 256 * 1024 * 1024
    max_line_length: int = 100_000
    max_expression_depth: int = 64
    max_expression_work: int = 10_000
    include_folders: tuple[str, ...] = ()


class ExpressionLimitError(LimitError, NetlistError):
    """An expression hit a resource limit: both a limit and a netlist problem."""


# ---------------------------------------------------------------- specs


class _Spec:
    """One element or X line inside a definition, before flattening."""

    __slots__ = ("designator", "dkey", "kind", "nodes", "nkeys", "value", "model",
                 "params", "line", "location", "extra", "plan")

    def __init__(self, designator: str, kind: str, nodes: tuple, value, model,
                 params: dict, line: LogicalLine, extra=None) -> None:
        self.designator = designator
        self.dkey = designator.casefold()
        self.kind = kind
        self.nodes = nodes
        self.nkeys = tuple(n.casefold() for n in nodes)
        self.value = value
        self.model = model
        self.params = params
        self.line = line
        self.location = SourceLocation(line.source.path, line.line, line.column)
        self.extra = extra
        self.plan = None


class _Plain(tuple):
    """A plain two-node R, C, L or S line read by the top file's fast loop:
    `(designator, kind, nodes, value, model, line number, source)`.

    A tuple rather than a `_Spec`: nothing about it changes during flattening,
    and its statement (`line`) is rebuilt from the file only when an error
    has to point at it.
    """

    __slots__ = ()

    designator = property(itemgetter(0))
    kind = property(itemgetter(1))
    nodes = property(itemgetter(2))
    model = property(itemgetter(4))

    @property
    def location(self) -> SourceLocation:
        return SourceLocation(self[6].path, self[5], 1)

    @property
    def line(self) -> LogicalLine:
        source, number = self[6], self[5]
        return LogicalLine(source.line(number).rstrip(), number, 1, None, source)


_new_tuple = tuple.__new__
# Letters of the lines the fast loop reads itself, and the kind each stands for.
_PLAIN_KINDS = {"R": "R", "r": "R", "C": "C", "c": "C", "L": "L", "l": "L", "S": "S", "s": "S",
                "X": "X", "x": "X"}


class _Def:
    """A `.subckt` definition (or the top level, name None)."""

    def __init__(self, name: str | None, ports: tuple, defaults: tuple, line, parent) -> None:
        self.name = name
        self.ports = ports
        self.port_keys = tuple(p.casefold() for p in ports)
        self.defaults = defaults          # tuple[Assign]
        self.params: list[tuple[Assign, LogicalLine]] = []
        self.body: list[_Spec] = []
        self.children: dict[str, _Def] = {}
        self.line = line
        self.parent = parent
        self.scopes: dict = {}


def _strip_quotes(text: str) -> str:
    if len(text) >= 2 and text[0] == text[-1] and text[0] in "'\"":
        return text[1:-1]
    return text


def _call_text(call: Call) -> str:
    parts = []
    for arg in call.args:
        if isinstance(arg, Assign):
            parts.append(f"{arg.key}={_item_text(arg.value)}")
        else:
            parts.append(_item_text(arg))
    return " ".join(parts)


def _item_text(item) -> str:
    if isinstance(item, Call):
        return f"{item.name}({_call_text(item)})"
    return item


def _offset_of(line: LogicalLine, token, start: int = 0) -> int:
    """Where `token` stands in the statement, for pointing an error at it."""
    text = _item_text(token) if not isinstance(token, str) else token
    found = re.search(r"(?<![^\s,=(])" + re.escape(text), line.text[start:])
    if found is None:
        found_at = line.text.find(text)
        return max(0, found_at)
    return start + found.start()


# ---------------------------------------------------------------- the reader


class _Reader:
    def __init__(self, options: ReaderOptions, keep_as_part, roots: list[str]) -> None:
        self.options = options
        self.keep_as_part = keep_as_part
        self.roots = roots
        self.files: list[str] = []
        self.diagnostics: list[Diagnostic] = []
        self.skipped: list[SkippedDirective] = []
        self.models: dict[str, ModelCard] = {}
        self.globals: dict[str, str] = {}
        self.names: dict[str, str] = {}    # model/subckt key -> first-seen spelling
        self.top = _Def(None, (), (), None, None)
        self.current = self.top
        self.title = ""
        self.end_seen: LogicalLine | None = None
        self.after_end_warned = False
        self.include_stack: list[str] = []
        self.sources: dict[str, SourceFile] = {}
        self.all_defs: list[_Def] = []
        self.included: dict[tuple, SourceLocation] = {}   # (file, section, definition) -> where
        self.logical: dict[str, list[LogicalLine]] = {}   # statements of each file read
        self.statements = 0
        self.spellings: dict[str, str] = {}  # node names of plain lines, one string each

    # ------------------------------------------------------------ loading

    def load_top(self, source: SourceFile, real: str | None) -> None:
        if source.path not in self.files:
            self.files.append(source.path)
        # The physical lines, split once here and not kept on `source`: the
        # fast loop lets go of each line once read (peak memory of big files).
        lines = source.text.split("\n")
        self.title = lines[0].strip()
        if real:
            self.include_stack.append(real)
        self.fast_walk(source, lines)
        if self.current is not self.top:
            line = self.current.line
            raise line.error(f"missing .ends for .subckt {self.current.name}")

    def fast_walk(self, source: SourceFile, lines: list[str]) -> None:
        """Read the top file's statements straight from its physical lines.

        The common line of a board export (`R12 Net-3 +5V 4k7`: a plain line
        at column 1, two nodes and a number, or a contact with an optional
        part name) becomes a `_Plain` record with one regular expression
        (drc/fastpath.py PLAIN_LINE, proven against the grammar), one split
        and cached value lookups: no LogicalLine, no grammar, no `_Spec`.
        Every other line takes the general path: continued statements (found
        in bulk by `continuation_zones`), comments, directives, other element
        letters. A block directive (`.control`, a `.lib` section) or content
        after `.end` hands the rest of the file to `walk`, which handles them.
        """
        max_length = self.options.max_line_length
        zones = continuation_zones(lines, 1, source.text)
        zone_index = 0
        next_zone = zones[0][0] if zones else -1
        count = len(lines)
        plain = PLAIN_LINE.fullmatch
        kinds = _PLAIN_KINDS
        values: dict[str, Value | bool] = {}   # value text -> Value, False if not a number
        models: dict[str, str] = {}           # part name as written -> first-seen spelling
        spelled = self.spellings.setdefault   # node as written -> one shared string per spelling
        new = _new_tuple
        append = self.current.body.append
        index = 1
        while index < count:
            if index == next_zone:
                start, stop = zones[zone_index]
                zone_index += 1
                next_zone = zones[zone_index][0] if zone_index < len(zones) else -1
                for line in logical_lines(source, start, max_length, stop + 1, lines):
                    how = self.statement(line)
                    if how:
                        return self.hand_over(source, lines, start if how == 1 else stop + 1)
                append = self.current.body.append
                index = stop + 1
                continue
            raw = lines[index]
            lines[index] = None   # type: ignore[call-overload]  # let the text go once read
            index += 1
            if not raw:
                continue
            kind = kinds.get(raw[0])
            if kind is not None and len(raw) <= max_length and plain(raw) is not None:
                words = raw.split()
                n = len(words)
                if kind == "X":
                    if n > 1 and not any(w.casefold() == "params:" for w in words):
                        line = LogicalLine(raw.rstrip(), index, 1, None, source)
                        line.record = (words[0], tuple(words[1:]), ())
                        self.element(line)
                        continue
                elif kind == "S":
                    if n in (3, 4):  # a contact: two nodes and an optional part name
                        model = None
                        if n == 4:
                            written = words[3]
                            model = models.get(written)
                            if model is None:
                                model = models[written] = self.name(written)
                        append(new(_Plain, (words[0], "S", (spelled(words[1], words[1]),
                                                            spelled(words[2], words[2])),
                                            None, model, index, source)))
                        continue
                elif n == 4:
                    text = words[3]
                    value = values.get(text)
                    if value is None:
                        value = values[text] = _number(text) or False
                    if value is not False:
                        append(new(_Plain, (words[0], kind, (spelled(words[1], words[1]),
                                                            spelled(words[2], words[2])),
                                            value, None, index, source)))
                        continue
            elif raw[0] == "*":
                continue
            line = statement_at(source, raw, index - 1, max_length)
            if line is None:
                continue
            how = self.statement(line)
            if how:
                lines[index - 1] = raw
                return self.hand_over(source, lines, index - 1 if how == 1 else index)
            append = self.current.body.append

    def statement(self, line: LogicalLine) -> int:
        """One top-file statement for `fast_walk`: 0 when done, 1 when it must be
        read by `walk` (a block directive), 2 when done but what follows must
        be (it was `.end`)."""
        text = line.text
        if text[0] != ".":
            self.element(line)
            return 0
        keyword = text[1:].split(None, 1)[0].lower() if len(text) > 1 else ""
        if keyword == "control" or (keyword == "lib" and len(text.split()) == 2):
            return 1
        self.directive(line, keyword)
        return 2 if self.end_seen is not None else 0

    def hand_over(self, source: SourceFile, lines: list, index: int) -> None:
        """Read the rest of the top file, from physical line index `index`, with `walk`."""
        self.walk(logical_lines(source, index, self.options.max_line_length, None, lines), None)

    def walk(self, lines: list[LogicalLine], section: str | None) -> None:
        """Process statements; with `section`, only those in `.lib section`."""
        index = 0
        count = len(lines)
        inside = section is None
        element = self.element
        while index < count:
            line = lines[index]
            index += 1
            text = line.text
            if not inside:
                if text[0] == "." and text[1:4].lower() == "lib":
                    words = text.split()
                    if words[0].lower() == ".lib" and len(words) == 2 \
                            and words[1].casefold() == section.casefold():
                        inside = True
                continue
            if self.end_seen is not None and not self.after_end_warned:
                self.after_end_warned = True
                self.warn("content after .end is read anyway (as ngspice does)", line)
            if text[0] != ".":
                element(line)
                continue
            keyword = text[1:].split(None, 1)[0].lower() if len(text) > 1 else ""
            if keyword == "endl" and section is not None:
                return
            if keyword == "control":
                index = self.skip_block(lines, index, line, "endc")
            elif keyword == "lib" and len(text.split()) == 2:
                # A section definition read straight through: skip it.
                index = self.skip_block(lines, index, line, "endl", record=False)
            else:
                self.directive(line, keyword)
        if section is not None and not inside:
            raise NetlistError(f"library section {section!r} not found", None)

    def skip_block(self, lines, index: int, start: LogicalLine, end: str, record: bool = True) -> int:
        texts = [start.text]
        while index < len(lines):
            line = lines[index]
            index += 1
            word = line.text.split(None, 1)[0].lower()
            if word == "." + end:
                if record:
                    self.skipped.append(SkippedDirective(
                        start.text.split()[0][1:].lower(), "\n".join(texts), start.location()))
                return index
            texts.append(line.text)
        raise start.error(f"missing .{end} for this {start.text.split()[0]} block")

    def warn(self, message: str, line: LogicalLine) -> None:
        self.diagnostics.append(Diagnostic(message, line.location()))

    def directive(self, line: LogicalLine, keyword: str) -> None:
        if keyword == "title":
            parts = line.text.split(None, 1)
            self.title = parts[1] if len(parts) > 1 else ""
            return
        if keyword == "endc":
            raise line.error(".endc without .control")
        rule = DIRECTIVE_RULES.get(keyword)
        if rule is None:
            self.skipped.append(SkippedDirective(keyword, line.text, line.location()))
            if keyword not in _SKIPPED_DIRECTIVES:
                self.warn(f"unknown directive .{keyword} skipped", line)
            return
        record = line.record
        if record is None:
            record = fast_directive(line.text, keyword)
            if record is None or record[0] != line.text.split(None, 1)[0][1:].lower():
                record = parse_directive(line, keyword)
            line.record = record
        _, args, assigns = record
        handler = getattr(self, "d_" + keyword)
        handler(line, args, assigns)

    def d_param(self, line, args, assigns) -> None:
        for assign in assigns:
            self.current.params.append((assign, line))

    def d_subckt(self, line, args, assigns) -> None:
        if not args:
            raise line.error(".subckt needs a name")
        name = self.name(args[0])
        ports = tuple(a for a in args[1:] if a.casefold() != "params:")
        seen: set[str] = set()
        for port in ports:
            if port.casefold() in seen:
                raise line.error(f"port {port!r} appears twice in .subckt {name}",
                                 _offset_of(line, port, len(args[0])))
            seen.add(port.casefold())
        key = name.casefold()
        if key in self.current.children:
            other = self.current.children[key].line
            raise line.error(f"subcircuit {name} is defined twice (first at "
                             f"{other.location()})", _offset_of(line, args[0]))
        definition = _Def(name, ports, assigns, line, self.current)
        self.current.children[key] = definition
        self.all_defs.append(definition)
        if self.depth_of(definition) > self.options.max_subckt_depth:
            raise line.error(f"subcircuit definitions nest deeper than "
                             f"{self.options.max_subckt_depth} "
                             + limit_hint("max_subckt_depth"), cls=LimitError)
        self.current = definition

    @staticmethod
    def depth_of(definition: _Def) -> int:
        depth = 0
        while definition.parent is not None:
            depth += 1
            definition = definition.parent
        return depth

    def d_ends(self, line, args, assigns) -> None:
        if self.current is self.top:
            raise line.error(".ends without a .subckt")
        if args and args[0].casefold() != self.current.name.casefold():
            raise line.error(f".ends {args[0]} closes .subckt {self.current.name}",
                             _offset_of(line, args[0], 5))
        self.current = self.current.parent

    def d_end(self, line, args, assigns) -> None:
        # Only the top file's .end matters; one in an included file is ignored.
        if self.end_seen is None and len(self.include_stack) <= 1:
            self.end_seen = line

    def d_endl(self, line, args, assigns) -> None:
        self.warn(".endl outside a library section ignored", line)

    def d_global(self, line, args, assigns) -> None:
        for name in args:
            key = name.casefold()
            if key in GROUND_NAMES:
                continue
            self.globals.setdefault(key, name)

    def d_model(self, line, args, assigns) -> None:
        if len(args) < 2 or not isinstance(args[1], str):
            raise line.error(".model needs a name and a type")
        name = self.name(args[0])
        params: dict[str, float | str] = {}
        for assign in assigns:
            params[assign.key.casefold()] = self.plain_param(assign.value)
        for extra in args[2:]:
            params[_item_text(extra).casefold()] = ""
        key = name.casefold()
        if key in self.models:
            self.warn(f"model {name} defined again; the later card is used", line)
        self.models[key] = ModelCard(name, args[1], params, line.location())

    def d_include(self, line, args, assigns) -> None:
        if len(args) != 1:
            raise line.error(".include needs exactly one file name")
        self.include(line, args[0], None)

    d_inc = d_include

    def d_lib(self, line, args, assigns) -> None:
        if len(args) != 2:
            raise line.error(".lib needs a file name and a section name")
        self.include(line, args[0], args[1])

    def include(self, line: LogicalLine, raw: str, section: str | None) -> None:
        real, shown = self.resolve(line, raw)
        if real in self.include_stack:
            chain = " -> ".join(os.path.basename(p) for p in self.include_stack + [real])
            raise line.error(f"include cycle: {chain}")
        if len(self.include_stack) > self.options.max_include_depth:
            raise line.error(f"includes nest deeper than {self.options.max_include_depth} "
                             + limit_hint("max_include_depth"), cls=LimitError)
        once = (real, section.casefold() if section else None, id(self.current))
        if once in self.included:
            self.warn(f"{shown} was already included here (at {self.included[once]}); "
                      "included once only", line)
            return
        self.included[once] = line.location()
        source = self.sources.get(real)
        if source is None:
            try:
                source = read_source(real, shown, self.options.max_file_bytes)
            except NetlistError as exc:
                if exc.location is not None and exc.location.line > 0:
                    raise
                raise line.error(f"cannot read included file {shown}: {exc.message}") from None
            self.sources[real] = source
        if shown not in self.files:
            self.files.append(shown)
        self.include_stack.append(real)
        try:
            lines = self.logical.get(real)
            if lines is None:
                lines = self.logical[real] = logical_lines(source, 0,
                                                           self.options.max_line_length)
            self.count_statements(len(lines), line)
            try:
                self.walk(lines, section)
            except NetlistError as exc:
                if exc.location is None:
                    raise line.error(f"{exc.message} in {shown}") from None
                raise
        finally:
            self.include_stack.pop()

    def count_statements(self, count: int, line: LogicalLine) -> None:
        """Statements read from included files, a file read again counting again:
        an include bomb (files including files many times over) stops at the
        element limit, at the `.include` line that crossed it."""
        self.statements += count
        limit = self.options.max_elements
        if self.statements > limit:
            message = (f"more than {limit} statements read (included files counted each time "
                       "they are read) " + limit_hint("max_elements"))
            raise line.error(message, cls=LimitError)

    def resolve(self, line: LogicalLine, raw: str) -> tuple[str, str]:
        """Real and shown path of an include; refuse paths leaving the sandbox."""
        name = _strip_quotes(raw)
        offset = _offset_of(line, raw, 1)
        if not name:
            raise line.error("empty include path", offset)
        if _DRIVE.match(name):
            raise line.error(f"include path {name!r} uses a drive letter or network path; "
                             "only paths inside the board's folder are read", offset)
        name = name.replace("\\", "/")
        base_shown = os.path.dirname(line.source.path)
        base_real = os.path.dirname(self.include_stack[-1]) if self.include_stack else self.roots[0]
        if os.path.isabs(name):
            candidate = os.path.normpath(name)
            shown = candidate
        else:
            candidate = os.path.normpath(os.path.join(base_real, name))
            shown = os.path.normpath(os.path.join(base_shown, name))
        if not self.inside(os.path.abspath(candidate)):
            how = "is absolute and" if os.path.isabs(name) else "uses `..` and"
            raise line.error(f"include path {name!r} {how} leaves the board's folder tree "
                             "(add its folder to include_folders to allow it)", offset)
        real = os.path.realpath(candidate)
        if not self.inside(real):
            raise line.error(f"include path {name!r} is a symlink leading outside the "
                             "board's folder tree (add its folder to include_folders)", offset)
        if not os.path.exists(real):
            raise line.error(f"included file {name!r} not found", offset)
        return real, shown

    def inside(self, path: str) -> bool:
        for root in self.roots:
            if path == root or path.startswith(root.rstrip(os.sep) + os.sep):
                return True
        return False

    # ------------------------------------------------------------ elements

    def name(self, text: str) -> str:
        """Model or subcircuit name in its first-seen spelling."""
        return self.names.setdefault(text.casefold(), text)

    def element(self, line: LogicalLine) -> None:
        text = line.text
        letter = text[0].upper()
        if letter not in _KNOWN_LETTERS:
            if letter in _SKIPPED_LETTERS:
                self.warn(f"{text.split()[0]}: element letter {letter} (XSPICE or other "
                          "devices) is not modelled; element skipped", line)
                return
            raise line.error(f"unknown element letter {text[0]!r} (a statement starts with "
                             "an element letter, `.`, `*` or `+`)")
        record = line.record
        if record is None:
            record = fast_element(text)
            if record is None:
                record = parse_element(line)
            line.record = record
        designator, items, assigns = record
        self.current.body.append(self.interpret(letter, designator, items, assigns, line))

    def node_list(self, line: LogicalLine, items, designator: str) -> tuple:
        for item in items:
            if not isinstance(item, str) or item[0] in "{'\"":
                raise line.error(f"{designator}: expected a node name, found "
                                 f"`{_item_text(item)}`", _offset_of(line, item, len(designator)))
        return tuple(items)

    def value_of(self, line: LogicalLine, token, designator: str) -> Value | Expression:
        if not isinstance(token, str):
            raise line.error(f"{designator}: `{_item_text(token)}` is not a value",
                             _offset_of(line, token, len(designator)))
        if token[0] in "{'":
            return self.compile(line, token)
        value = _number(token)
        if value is None:
            raise line.error(f"{designator}: `{token}` is not a number",
                             _offset_of(line, token, len(designator)))
        return value

    def compile(self, line: LogicalLine, token: str) -> Expression:
        braced = token[0] in "{'"
        body = token[1:-1] if braced else token
        try:
            return compile_expression(body, max_depth=self.options.max_expression_depth,
                                      max_work=self.options.max_expression_work)
        except ExpressionError as exc:
            base = _offset_of(line, token) + (1 if braced else 0)
            raise _expression_error(line, exc, base) from None

    def plain_param(self, value) -> float | str:
        if isinstance(value, Call):
            return _item_text(value)
        number = _number(value)
        return number.si if number is not None else _strip_quotes(value)

    def element_params(self, line, assigns) -> dict:
        params: dict = {}
        for assign in assigns:
            value = assign.value
            if isinstance(value, str) and value[:1] in ("{", "'"):
                params[assign.key.casefold()] = self.compile(line, value)
            elif isinstance(value, str) and _number(value) is not None:
                params[assign.key.casefold()] = _number(value).si
            else:
                params[assign.key.casefold()] = _item_text(value)
        return params

    def interpret(self, letter: str, designator: str, items: tuple, assigns: tuple,
                  line: LogicalLine) -> _Spec:
        if letter == "X":
            return self.interpret_x(designator, items, assigns, line)
        n = len(items)
        if letter in "RCL":
            return self.interpret_passive(letter, designator, items, assigns, line)
        if letter in "VI":
            return self.interpret_source(letter, designator, items, assigns, line)
        if letter == "S":
            if n in (2, 3):
                nodes = self.node_list(line, items[:2], designator)
                model = self.name(_item_text(items[2])) if n == 3 else None
                return _Spec(designator, "S", nodes, None, model,
                             self.element_params(line, assigns), line)
            if n >= 5:
                return self.simple(letter, designator, items, assigns, line, 4, True)
            raise line.error(f"{designator}: an S line is a contact `S name a b [part]` or a "
                             f"simulated switch `S name a b c d model`; found {n} tokens")
        if letter == "B":
            nodes = self.node_list(line, self.need(items, 2, designator, line, "2 nodes"),
                                   designator)
            params = {a.key.casefold(): _item_text(a.value) for a in assigns}
            return _Spec(designator, "B", nodes[:2], None, None, params, line)
        if letter == "K":
            self.need(items, 3, designator, line, "two inductor names and a coupling")
            inductors = self.node_list(line, items[:2], designator)
            value = self.value_of(line, items[2], designator)
            params = self.element_params(line, assigns)
            return _Spec(designator, "K", (), value, None, params, line, extra=inductors)
        if letter in "FH":
            self.need(items, 4, designator, line, "2 nodes, a controlling source and a gain")
            nodes = self.node_list(line, items[:2], designator)
            value = self.value_of(line, items[3], designator)
            params = self.element_params(line, assigns)
            return _Spec(designator, letter, nodes, value, None, params, line,
                         extra=_item_text(items[2]))
        if letter == "W":
            self.need(items, 4, designator, line, "2 nodes, a controlling source and a model")
            nodes = self.node_list(line, items[:2], designator)
            params = self.element_params(line, assigns)
            return _Spec(designator, "W", nodes, None, self.name(_item_text(items[3])),
                         params, line, extra=_item_text(items[2]))
        if letter in "EG":
            if n == 2 and assigns:
                nodes = self.node_list(line, items, designator)
                params = {a.key.casefold(): _item_text(a.value) for a in assigns}
                return _Spec(designator, letter, nodes, None, None, params, line)
            self.need(items, 4, designator, line, "4 nodes")
            nodes = self.node_list(line, items[:4], designator)
            value = None
            if n >= 5 and isinstance(items[4], str) and _number(items[4]) is not None:
                value = _number(items[4])
            params = {a.key.casefold(): _item_text(a.value) for a in assigns}
            return _Spec(designator, letter, nodes, value, None, params, line)
        if letter == "T":
            self.need(items, 4, designator, line, "4 nodes")
            return self.simple(letter, designator, items, assigns, line, 4, False)
        if letter == "M":
            return self.simple(letter, designator, items, assigns, line, 4, True)
        if letter in "JZ":
            return self.simple(letter, designator, items, assigns, line, 3, True)
        if letter == "D":
            return self.simple(letter, designator, items, assigns, line, 2, True)
        if letter == "Q":
            self.need(items, 4, designator, line, "3 to 5 nodes and a model")
            for item in items:
                if not isinstance(item, str):
                    raise line.error(f"{designator}: unexpected `{_item_text(item)}`",
                                     _offset_of(line, item, len(designator)))
            return _Spec(designator, "Q", (), None, None, self.element_params(line, assigns),
                         line, extra=tuple(items))
        raise line.error(f"unsupported element letter {letter}")  # pragma: no cover

    def need(self, items, count: int, designator: str, line, what: str):
        if len(items) < count:
            raise line.error(f"{designator}: needs {what}; found {len(items)} token(s)")
        return items

    def simple(self, letter, designator, items, assigns, line, nodes_count: int,
               with_model: bool) -> _Spec:
        need = nodes_count + (1 if with_model else 0)
        what = f"{nodes_count} nodes" + (" and a model" if with_model else "")
        self.need(items, need, designator, line, what)
        nodes = self.node_list(line, items[:nodes_count], designator)
        model = self.name(_item_text(items[nodes_count])) if with_model else None
        params = self.element_params(line, assigns)
        for extra in items[need:]:
            if isinstance(extra, str) and _number(extra) is not None and "area" not in params:
                params["area"] = _number(extra).si
            else:
                params[_item_text(extra).casefold()] = _item_text(extra)
        return _Spec(designator, letter, nodes, None, model, params, line)

    def interpret_passive(self, letter, designator, items, assigns, line) -> _Spec:
        n = len(items)
        word = _KIND_WORDS[letter]
        params = self.element_params(line, assigns)
        value_key = next((k for k in _VALUE_KEYS[letter] if k in params), None)
        if n < 2 or (n == 2 and value_key is None):
            if n == 2 and isinstance(items[1], str) and _number(items[1]) is not None \
                    and isinstance(items[0], str):
                raise line.error(f"{designator}: only one node before the value "
                                 f"`{items[1]}` (a {word} needs two nodes and a value)",
                                 _offset_of(line, items[1], len(designator)))
            raise line.error(f"{designator}: missing value (a {word} needs two nodes "
                             "and a value)", len(line.text) - 1)
        nodes = self.node_list(line, items[:2], designator)
        if n >= 3:
            value = self.value_of(line, items[2], designator)
        else:
            raw = params.pop(value_key)
            value = raw if isinstance(raw, Expression) else _number(
                next(a.value for a in assigns if a.key.casefold() == value_key))
            if value is None:
                raise line.error(f"{designator}: `{value_key}=` needs a number")
        model = None
        if n >= 4:
            model = self.name(_item_text(items[3]))
        if n >= 5:
            raise line.error(f"{designator}: unexpected `{_item_text(items[4])}` after the "
                             "value and model", _offset_of(line, items[4], len(designator)))
        return _Spec(designator, letter, nodes, value, model, params, line)

    def interpret_source(self, letter, designator, items, assigns, line) -> _Spec:
        self.need(items, 2, designator, line, "2 nodes")
        nodes = self.node_list(line, items[:2], designator)
        params: dict = {}
        value = None
        rest = items[2:]
        index = 0
        while index < len(rest):
            token = rest[index]
            index += 1
            if isinstance(token, Call):
                params[token.name.casefold()] = _call_text(token)
                continue
            low = token.casefold()
            following = rest[index] if index < len(rest) else None
            if low in ("dc", "ac") and isinstance(following, str) and \
                    (following[0] in "{'" or _number(following) is not None):
                index += 1
                if low == "dc":
                    value = self.value_of(line, following, designator)
                else:
                    params["ac"] = following if following[0] in "{'" else _number(following).si
                continue
            if index == 1 and (token[0] in "{'" or _number(token) is not None):
                value = self.value_of(line, token, designator)
                continue
            params[low] = ""
        for assign in assigns:
            key = assign.key.casefold()
            if key == "dc" and isinstance(assign.value, str):
                value = self.value_of(line, assign.value, designator)
            else:
                params[key] = self.plain_param(assign.value)
        return _Spec(designator, letter, nodes, value, None, params, line)

    def interpret_x(self, designator, items, assigns, line) -> _Spec:
        positional = []
        for item in items:
            if isinstance(item, str) and item.casefold() == "params:":
                break
            positional.append(item)
        if not positional:
            raise line.error(f"{designator}: needs nodes and a subcircuit name",
                             len(line.text) - 1)
        nodes = self.node_list(line, positional[:-1], designator)
        if not isinstance(positional[-1], str) or positional[-1][0] in "{'\"":
            raise line.error(f"{designator}: expected a subcircuit name, found "
                             f"`{_item_text(positional[-1])}`",
                             _offset_of(line, positional[-1], len(designator)))
        name = self.name(positional[-1])
        params = {}
        for assign in assigns:
            value = assign.value
            if isinstance(value, Call):
                value = _item_text(value)
            params[assign.key.casefold()] = (assign.key, value)
        return _Spec(designator, "X", nodes, None, name, params, line)


# ---------------------------------------------------------------- flattening


class _Flattener:
    def __init__(self, reader: _Reader) -> None:
        self.reader = reader
        self.options = reader.options
        self.elements: list[Element] = []
        self.seen: dict[str, _Spec] = {}
        self.canon: dict[str, str] = {}
        self.top_nets: dict[str, str] = {}   # top-level node as written -> flat net
        self.net_keys: dict[str, str] = {}   # node as written -> case-folded key
        self.globals = reader.globals
        self.keep_cache: dict[str, bool] = {}
        self.limit = reader.options.max_elements

    def run(self) -> list[Element]:
        self.check_size()
        self.reader.spellings.clear()   # the records hold the strings; the index is done
        scope = self.evaluate_group(self.reader.top.params, {}, {})
        self.expand(self.reader.top, scope, "", "", (), {}, 0, [])
        return self.elements

    # ------------------------------------------------------------ size

    def size(self, definition: _Def, sizes: dict, depth: int) -> int:
        """Elements `definition` flattens to (recursion and too-deep nesting count 0:
        expansion reports those with their own messages)."""
        known = sizes.get(id(definition))
        if known is not None:
            return known
        if depth > self.options.max_subckt_depth:
            return 0
        sizes[id(definition)] = 0  # a recursive reference counts nothing
        total = 0
        for spec in definition.body:
            total += self.spec_size(definition, spec, sizes, depth)
        sizes[id(definition)] = total
        return total

    def spec_size(self, parent: _Def, spec: _Spec, sizes: dict, depth: int) -> int:
        if spec.kind != "X":
            return 1
        child = self.lookup(parent, spec.model.casefold())
        if child is None or self.keep(spec.model):
            return 1
        return 1 + self.size(child, sizes, depth + 1)

    def check_size(self) -> None:
        """Refuse, before building anything, a hierarchy that flattens past the limit
        (ten levels of ten instances is 10**10 elements: count, never build them)."""
        sizes: dict[int, int] = {}
        top = self.reader.top
        total = 0
        for spec in top.body:
            total += self.spec_size(top, spec, sizes, 0)
            if total > self.limit:
                detail = (f" ({spec.designator} alone expands to "
                          f"{self.spec_size(top, spec, sizes, 0)})" if spec.kind == "X" else "")
                raise spec.line.error(f"more than {self.limit} elements after flattening, "
                                      f"counting subcircuit instances{detail} "
                                      + limit_hint("max_elements"), cls=LimitError)

    # ------------------------------------------------------------ params

    def param_expression(self, assign: Assign, line: LogicalLine):
        value = assign.value
        if isinstance(value, Call):
            value = _item_text(value)
        if value[:1] in ("{", "'"):
            return self.reader.compile(line, value)
        number = _number(value)
        if number is not None:
            return (number.si, number.spice_si)
        return self.reader.compile(line, value)

    def evaluate_group(self, entries, parent: dict, fixed: dict) -> dict:
        """Evaluate `.param`-like (Assign, line) entries, order-free, over `parent`.

        `fixed` holds already-evaluated values that replace entries of the
        same name (instance parameters overriding header defaults).
        """
        if not entries and not fixed:
            return parent
        scope = dict(parent)
        scope.update(fixed)
        pending: dict[str, tuple] = {}
        for assign, line in entries:
            key = assign.key.casefold()
            if key in fixed:
                continue
            pending[key] = (self.param_expression(assign, line), line, assign)
        # Kahn's algorithm: evaluate a parameter once everything it uses is known.
        users: dict[str, list[str]] = {}
        missing: dict[str, int] = {}
        ready = []
        for key, (expr, line, assign) in pending.items():
            needs = [n for n in expr.names if n in pending and n != key] \
                if isinstance(expr, Expression) else []
            if isinstance(expr, Expression) and key in expr.names:
                raise line.error(f"parameter {assign.key} refers to itself",
                                 _offset_of(line, assign.key))
            missing[key] = len(needs)
            for need in needs:
                users.setdefault(need, []).append(key)
            if not needs:
                ready.append(key)
        while ready:
            key = ready.pop()
            expr, line, assign = pending[key]
            if isinstance(expr, Expression):
                scope[key] = self.evaluate(expr, scope, line, assign.value)
            else:
                scope[key] = expr
            for user in users.get(key, ()):
                missing[user] -= 1
                if missing[user] == 0:
                    ready.append(user)
        stuck = [k for k, count in missing.items() if count > 0]
        if stuck:
            chain = self.cycle(stuck, pending)
            expr, line, assign = pending[chain[0]]
            names = " -> ".join(pending[k][2].key for k in chain)
            raise line.error(f"parameter cycle: {names}", _offset_of(line, assign.key))
        return scope

    @staticmethod
    def cycle(stuck: list[str], pending: dict) -> list[str]:
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

    def evaluate(self, expr: Expression, scope: dict, line: LogicalLine, token) -> tuple:
        try:
            return evaluate(expr, scope)
        except ExpressionError as exc:
            text = token if isinstance(token, str) else _item_text(token)
            base = _offset_of(line, text) + (1 if text[:1] in "{'" else 0)
            raise _expression_error(line, exc, base) from None

    def value(self, spec: _Spec, scope: dict):
        value = spec.value
        if isinstance(value, Expression):
            text = "{" + value.text + "}"
            for candidate in ("{" + value.text + "}", "'" + value.text + "'"):
                if candidate in spec.line.text:
                    text = candidate
            si, spice = self.evaluate(value, scope, spec.line, text)
            return Value(si, text, spice)
        return value

    def params(self, spec: _Spec, scope: dict) -> dict:
        if not spec.params:
            return NO_PARAMS
        out = {}
        for key, value in spec.params.items():
            if isinstance(value, Expression):
                out[key] = self.evaluate(value, scope, spec.line, "{" + value.text + "}")[0]
            else:
                out[key] = value
        return out

    # ------------------------------------------------------------ nets

    def plan(self, spec: _Spec) -> tuple:
        """Per node: 0 ground, 1 global (payload name), 2 port key, 3 local name."""
        plan = []
        for name, key in zip(spec.nodes, spec.nkeys):
            if key in GROUND_NAMES:
                plan.append((0, "0", key))
            elif key in self.globals:
                plan.append((1, name, key))
            else:
                plan.append((3, name, key))
        return tuple(plan)

    def nets(self, spec: _Spec, prefix: str, pkey: str, ports: dict) -> tuple:
        plan = spec.plan
        if plan is None:
            plan = spec.plan = self.plan(spec)
        canon = self.canon
        out = []
        for how, name, key in plan:
            if how == 0:
                out.append("0")
                continue
            if how == 3:
                mapped = ports.get(key)
                if mapped is not None:
                    out.append(mapped)
                    continue
                name = prefix + name
                key = pkey + key
            got = canon.get(key)
            if got is None:
                canon[key] = got = name
            out.append(got)
        return tuple(out)

    # ------------------------------------------------------------ expansion

    def add(self, spec: _Spec, designator: str, dkey: str, element: Element) -> None:
        dkey = designator_key(designator)
        first = self.seen.get(dkey)
        if first is not None:
            raise spec.line.error(f"duplicate designator {designator} (first at "
                                  f"{first.location})")
        self.seen[dkey] = spec
        self.elements.append(element)
        if len(self.elements) > self.limit:
            raise spec.line.error(f"more than {self.limit} elements after flattening "
                                  + limit_hint("max_elements"), cls=LimitError)

    def lookup(self, definition: _Def, key: str) -> _Def | None:
        while definition is not None:
            found = definition.children.get(key)
            if found is not None:
                return found
            definition = definition.parent
        return None

    def keep(self, name: str) -> bool:
        callback = self.reader.keep_as_part
        if callback is None:
            return False
        key = name.casefold()
        cached = self.keep_cache.get(key)
        if cached is None:
            cached = self.keep_cache[key] = bool(callback(name))
        return cached

    def expand(self, definition: _Def, scope: dict, prefix: str, pkey: str, path: tuple,
               ports: dict, depth: int, stack: list) -> None:
        # The hot loop of the reader: net mapping and the duplicate check are
        # inlined here rather than called per element (profiled: 2x faster).
        canon = self.canon
        seen = self.seen
        elements = self.elements
        append = elements.append
        top_nets = self.top_nets
        body = definition.body
        # The top level is expanded once: its records are let go as they are
        # used, so the plain lines and the elements are not all held at once.
        consume = len(body) - 1 if definition.line is None else 0
        for position, spec in enumerate(body):
            if position < consume:
                body[position] = None
            if spec.__class__ is _Plain:
                # A plain two-node line (most of a board): inlined, no plan.
                designator, kind, (name_a, name_b), value, model, number, source = spec
                if prefix:
                    designator = prefix + designator
                    net_a = self.local_net(name_a, prefix, pkey, ports)
                    net_b = self.local_net(name_b, prefix, pkey, ports)
                else:
                    net_a = top_nets.get(name_a)
                    if net_a is None:
                        net_a = self.top_net(name_a)
                    net_b = top_nets.get(name_b)
                    if net_b is None:
                        net_b = self.top_net(name_b)
                dkey = designator_key(designator)
                first = seen.get(dkey)
                if first is not None:
                    raise spec.line.error(f"duplicate designator {designator} (first at "
                                          f"{first.location})")
                element = Element(designator, kind, (net_a, net_b), value, model, number,
                                  NO_PARAMS, None, path, source)
                seen[dkey] = element
                append(element)
                continue
            kind = spec.kind
            designator = prefix + spec.designator
            dkey = pkey + spec.dkey
            if kind == "X":
                self.instance(definition, spec, scope, prefix, pkey, path, ports, depth, stack,
                              designator, dkey)
                continue
            skey = designator_key(designator)
            first = seen.get(skey)
            if first is not None:
                raise spec.line.error(f"duplicate designator {designator} (first at "
                                      f"{first.location})")
            seen[skey] = spec
            if kind == "Q":
                self.resolve_q(spec)
            plan = spec.plan
            if plan is None:
                plan = spec.plan = self.plan(spec)
            nodes = []
            for how, name, key in plan:
                if how == 3:
                    mapped = ports.get(key)
                    if mapped is None:
                        full_key = pkey + key
                        mapped = canon.get(full_key)
                        if mapped is None:
                            mapped = canon[full_key] = prefix + name
                elif how == 0:
                    mapped = "0"
                else:
                    mapped = canon.get(key)
                    if mapped is None:
                        mapped = canon[key] = name
                nodes.append(mapped)
            value = spec.value
            if value is not None and value.__class__ is not Value:
                value = self.value(spec, scope)
            params = self.params(spec, scope) if spec.params else NO_PARAMS
            if spec.extra is not None:
                params = dict(params)
                if kind == "K":
                    params["inductors"] = tuple(prefix + name for name in spec.extra)
                elif kind in "FHW":
                    params["control"] = prefix + spec.extra
            append(Element(designator, kind, tuple(nodes), value, spec.model,
                           spec.location, params, spec.line.text, path))
        if len(elements) > self.limit:
            raise self.limit_error(definition)

    def top_net(self, name: str) -> str:
        """The flat net of top-level node `name`, remembered per spelling."""
        key = name.casefold()
        if key in GROUND_NAMES:
            net = "0"
        else:
            net = self.canon.get(key)
            if net is None:
                net = self.canon[key] = name
        self.top_nets[name] = net
        return net

    def local_net(self, name: str, prefix: str, pkey: str, ports: dict) -> str:
        """The flat net of node `name` of a plain line inside an instance."""
        key = self.net_keys.get(name)
        if key is None:
            key = self.net_keys[name] = name.casefold()
        if key in GROUND_NAMES:
            return "0"
        if key in self.globals:
            net = self.canon.get(key)
            if net is None:
                net = self.canon[key] = name
            return net
        net = ports.get(key)
        if net is None:
            full_key = pkey + key
            net = self.canon.get(full_key)
            if net is None:
                net = self.canon[full_key] = prefix + name
        return net

    def limit_error(self, definition: _Def) -> Exception:
        line = definition.line or definition.body[-1].line
        return line.error(f"more than {self.limit} elements after flattening "
                          + limit_hint("max_elements"), cls=LimitError)

    def resolve_q(self, spec: _Spec) -> None:
        """Split a Q line's tokens into 3-5 nodes and the model (first time only)."""
        if spec.nodes or spec.model is not None:
            return
        items = spec.extra
        models = self.reader.models
        index = next((i for i in (3, 4, 5) if i < len(items) and
                      items[i].casefold() in models), None)
        if index is None:
            index = 3
            for candidate in (4, 5):
                if candidate < len(items) and _number(items[candidate]) is None:
                    index = candidate
        spec.nodes = self.reader.node_list(spec.line, items[:index], spec.designator)
        spec.nkeys = tuple(n.casefold() for n in spec.nodes)
        spec.model = self.reader.name(items[index])
        for extra in items[index + 1:]:
            number = _number(extra)
            if number is None:
                raise spec.line.error(f"{spec.designator}: unexpected `{extra}` after the model",
                                      _offset_of(spec.line, extra, len(spec.designator)))
            spec.params.setdefault("area", number.si)

    def instance(self, parent: _Def, spec: _Spec, scope: dict, prefix: str, pkey: str,
                 path: tuple, ports: dict, depth: int, stack: list, designator: str,
                 dkey: str) -> None:
        nets = self.nets(spec, prefix, pkey, ports) if spec.nodes else ()
        key = spec.model.casefold()
        definition = self.lookup(parent, key)
        if definition is None or self.keep(spec.model):
            params = {} if spec.params else NO_PARAMS
            for pkey_, (_, raw) in spec.params.items():
                params[pkey_] = self.instance_value(spec, raw, scope)[0] \
                    if (raw[:1] in "{'" or _number(raw) is not None) else raw
            self.add(spec, designator, dkey, Element(designator, "X", nets, None, spec.model,
                                                     spec.location, params, spec.line.text,
                                                     path))
            return
        if definition in stack:
            chain = " -> ".join(d.name for d in stack[stack.index(definition):] + [definition])
            raise spec.line.error(f"subcircuit recursion: {chain}")
        if depth >= self.options.max_subckt_depth:
            raise spec.line.error(f"subcircuit instances nest deeper than "
                                  f"{self.options.max_subckt_depth} "
                                  + limit_hint("max_subckt_depth"), cls=LimitError)
        if len(nets) != len(definition.ports):
            raise spec.line.error(
                f"{designator} connects {len(nets)} node(s) but subcircuit {definition.name} "
                f"has {len(definition.ports)} port(s) (defined at {definition.line.location()})",
                len(spec.designator))
        child_ports = {}
        for port_key, net in zip(definition.port_keys, nets):
            if port_key in GROUND_NAMES or port_key in self.globals:
                continue  # a `0` or global port stays global (ngspice behaviour)
            child_ports[port_key] = net
        if len(self.elements) > self.limit:
            raise spec.line.error(f"more than {self.limit} elements after flattening "
                                  + limit_hint("max_elements"), cls=LimitError)
        child_scope = self.instance_scope(definition, spec, scope)
        self.seen_instance(spec, designator, dkey)
        stack.append(definition)
        self.expand(definition, child_scope, designator + "/", dkey + "/",
                    path + (designator,), child_ports, depth + 1, stack)
        stack.pop()

    def seen_instance(self, spec: _Spec, designator: str, dkey: str) -> None:
        """Instance names share the designator space of elements (ngspice does too)."""
        dkey = designator_key(designator)
        first = self.seen.get(dkey)
        if first is not None:
            raise spec.line.error(f"duplicate designator {designator} (first at "
                                  f"{first.location})")
        self.seen[dkey] = spec

    def instance_value(self, spec: _Spec, raw: str, scope: dict) -> tuple:
        if raw[:1] in "{'":
            expr = self.reader.compile(spec.line, raw)
        else:
            number = _number(raw)
            if number is not None:
                return (number.si, number.spice_si)
            expr = self.reader.compile(spec.line, raw)
        return self.evaluate(expr, scope, spec.line, raw)

    def instance_scope(self, definition: _Def, spec: _Spec, scope: dict) -> dict:
        if not definition.defaults and not definition.params and not spec.params:
            return scope
        declared = {a.key.casefold() for a in definition.defaults}
        fixed = {}
        for key, (written, raw) in spec.params.items():
            if key not in declared:
                self.reader.warn(f"{spec.designator}: parameter {written} is not declared by "
                                 f"subcircuit {definition.name}; ignored", spec.line)
                continue
            fixed[key] = self.instance_value(spec, raw, scope)
        # Instances with the same parent scope and overrides share one evaluation.
        # The cached entry holds the parent scope itself, so its id stays unique.
        cache_key = (id(scope), tuple(sorted(fixed.items())))
        cached = definition.scopes.get(cache_key)
        if cached is not None and cached[0] is scope:
            return cached[1]
        entries = [(a, definition.line) for a in definition.defaults] + definition.params
        result = self.evaluate_group(entries, scope, fixed)
        if len(definition.scopes) < 1000:
            definition.scopes[cache_key] = (scope, result)
        return result


# ---------------------------------------------------------------- helpers

_ASCII_UPPER = str.maketrans("abcdefghijklmnopqrstuvwxyz", "ABCDEFGHIJKLMNOPQRSTUVWXYZ")


def designator_key(text: str) -> str:
    """The key the duplicate-designator check files `text` under: the case-folded
    text with its ASCII letters upper-cased (the same identity as `key()`,
    character by character), so the usual upper-case designator is its own
    key and a million of them need no second string."""
    if text.isascii():
        upper = text.upper()
        return text if upper == text else upper
    return text.casefold().translate(_ASCII_UPPER)


def _number(text) -> Value | None:
    if not isinstance(text, str):
        return None
    value = parse_value(text)
    if value is not None and (value.si != value.si or abs(value.si) == float("inf")):
        return None
    return value


def _expression_error(line: LogicalLine, exc: ExpressionError, base: int) -> Exception:
    cls = ExpressionLimitError if exc.limit else NetlistError
    offset = min(base + exc.offset, max(0, len(line.text) - 1))
    return line.error(exc.message, offset, cls)


def _roots(top_dir: str, options: ReaderOptions) -> list[str]:
    roots = [os.path.realpath(top_dir)]
    roots.extend(os.path.realpath(folder) for folder in options.include_folders)
    return roots


def _finish(reader: _Reader, path: str) -> Netlist:
    flattener = _Flattener(reader)
    elements = flattener.run()
    netlist = Netlist(path=path, title=reader.title, elements=elements)
    netlist.models = {card.name: card for card in reader.models.values()}
    netlist.global_nets = tuple(flattener.canon.get(key, name)
                                for key, name in reader.globals.items())
    netlist.subcircuit_names = tuple(d.name for d in reader.all_defs)
    netlist.diagnostics = reader.diagnostics
    netlist.skipped = reader.skipped
    netlist.files = tuple(reader.files)
    return netlist


def read_netlist(path, *, options: ReaderOptions | None = None,
                 keep_as_part: Callable[[str], bool] | None = None) -> Netlist:
    """Read, include and flatten the netlist at `path`.

    Raises NetlistError (or LimitError) with file, line and column on bad input.
    """
    options = options or ReaderOptions()
    shown = os.fspath(path)
    real = os.path.realpath(shown)
    source = read_source(shown, shown, options.max_file_bytes)
    reader = _Reader(options, keep_as_part, _roots(os.path.dirname(real), options))
    with collection_paused():
        reader.load_top(source, real)
        return _finish(reader, shown)


def read_netlist_text(text: str, path: str = "<text>", *,
                      options: ReaderOptions | None = None,
                      keep_as_part: Callable[[str], bool] | None = None) -> Netlist:
    """Read netlist `text` as if it were the file `path` (includes resolve from
    the folder of `path`, or the working folder for `<text>`)."""
    options = options or ReaderOptions()
    if len(text) > options.max_file_bytes:
        raise LimitError(f"text is longer than {options.max_file_bytes} characters "
                         + limit_hint("max_file_bytes"), SourceLocation(path))
    source = source_from_text(text, path)
    folder = os.getcwd() if path.startswith("<") else os.path.dirname(os.path.abspath(path))
    reader = _Reader(options, keep_as_part, _roots(folder, options))
    real = None if path.startswith("<") else os.path.join(os.path.realpath(folder),
                                                           os.path.basename(path))
    with collection_paused():
        reader.load_top(source, real)
        return _finish(reader, path)
