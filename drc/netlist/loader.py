"""Loading: the statement walk from the top file's text to definitions.

`NetlistLoader` reads the statements of the top file and of the files it
includes into a `LoadedNetlist` (drc/netlist/specs.py): element lines become
`ElementSpec`s of the current `.subckt` definition (drc/netlist/element_lines.py),
directives open and close definitions, collect `.param`s, `.model` cards and
`.global` nets, and follow `.include` and `.lib` through the sandbox
(drc/netlist/includes.py). Simulation directives are recorded and skipped.

The top file of a board export is mostly plain lines (`R12 Net-3 +5V 4k7`),
so `fast_walk` reads it straight from its physical lines: one regular
expression (drc/netlist/fastpath.py PLAIN_LINE, proven against the grammar)
and one split per line make a `PlainLine` record, with no LogicalLine, no
grammar and no `ElementSpec`. Every other statement takes the general path:
logical lines (continuations joined), the fast or grammar parse of its
record, then the element or directive handler.
"""

from __future__ import annotations

import re
from collections.abc import Callable, Sequence

from drc.errors import LimitError, NetlistError
from drc.netlist.conditionals import BLOCK_DIRECTIVES, LOAD_TIME_DIRECTIVES, ConditionalBlocks
from drc.netlist.element_lines import ElementInterpreter
from drc.netlist.elements import ModelCard, SkippedDirective, Value
from drc.netlist.expressions import UserFunction
from drc.netlist.fastpath import PLAIN_LINE, fast_directive
from drc.netlist.grammar import Assign, parse_directive
from drc.netlist.includes import NOT_READ, IncludeSandbox, find_section, opens_section, path_and_section
from drc.netlist.lines import (
    LogicalLine,
    SourceFile,
    continuation_zones,
    limit_hint,
    logical_lines,
    statement_at,
)
from drc.netlist.options import ReaderOptions
from drc.netlist.parameters import compile_token
from drc.netlist.specs import BodyRecord, LoadedNetlist, PlainLine, SubcircuitDefinition
from drc.netlist.tokens import GROUND_NAMES, Token, finite_number, item_text, offset_of, param_value
from drc.severity import Severity

# Directives recorded as SkippedDirective without a warning.
SKIPPED_DIRECTIVES = frozenset({
    "tran", "op", "ac", "dc", "meas", "measure", "print", "plot", "probe", "save",
    "option", "options", "opt", "temp", "ic", "nodeset", "four", "noise", "tf", "sens",
    "disto", "pz", "sp", "width", "csparam", "step", "data", "pss", "literal", "netlist",
})
# `.func name(args) body` (also `= body`, `{body}`, `'body'`): read from its text.
_FUNC = re.compile(r"\.func\s+([^\W\d]\w*)\s*\(([^()]*)\)\s*=?\s*(\S.*)$", re.I | re.S)
_ARGUMENT = re.compile(r"[^\W\d]\w*")

# What `statement` asks of the fast loop after one statement.
_DONE, _WALK_FROM_HERE, _WALK_AFTER_HERE = 0, 1, 2

_new_tuple = tuple.__new__
# Letters of the lines the fast loop reads itself, and the kind each stands for.
_PLAIN_KINDS = {"R": "R", "r": "R", "C": "C", "c": "C", "L": "L", "l": "L", "S": "S", "s": "S",
                "X": "X", "x": "X"}

# A directive's handler: (statement, arguments, `key=value` assignments).
_Handler = Callable[[LogicalLine, Sequence[Token], Sequence[Assign]], None]


def directive_keyword(text: str) -> str:
    """The lower-case keyword of directive `text` (`.subckt` -> `subckt`)."""
    return text[1:].split(None, 1)[0].lower() if len(text) > 1 else ""


class PlainLineReader:
    """Plain lines of the top file into records, for `NetlistLoader.fast_walk`.

    Each method takes a physical line that matched PLAIN_LINE and its line
    number, and answers False when the line is not of its letter's plain
    shape after all (the general path reads it then). Values, part names and
    node spellings are looked up once per distinct text: a board repeats them.
    """

    __slots__ = ("loader", "source", "append", "values", "models", "spelled", "readers")

    def __init__(self, loader: NetlistLoader, source: SourceFile) -> None:
        self.loader = loader
        self.source = source
        self.append = loader.body().append
        self.values: dict[str, Value | bool] = {}   # value text -> Value, False if not a number
        self.models: dict[str, str] = {}           # part name as written -> first-seen spelling
        spellings: dict[str, str] = {}
        self.spelled = spellings.setdefault        # node as written -> one shared string
        by_kind = {"R": self.passive, "C": self.passive, "L": self.passive, "S": self.contact,
                   "X": self.instance}
        # First character of a line -> the method reading it.
        self.readers: dict[str, Callable[[str, int], bool]] = {
            letter: by_kind[kind] for letter, kind in _PLAIN_KINDS.items()}

    def follow(self, body: list[BodyRecord]) -> None:
        """Add records to `body` from now on (a `.subckt` or an `.if` branch opened
        or closed)."""
        self.append = body.append

    def passive(self, raw: str, number: int) -> bool:
        """`R|C|L name a b value`: two nodes and a number."""
        words = raw.split()
        if len(words) != 4:
            return False
        text = words[3]
        value = self.values.get(text)
        if value is None:
            value = self.values[text] = finite_number(text) or False
        if value is False:
            return False
        spelled = self.spelled
        self.append(_new_tuple(PlainLine, (words[0], _PLAIN_KINDS[raw[0]],
                                           (spelled(words[1], words[1]), spelled(words[2], words[2])),
                                           value, None, number, self.source)))
        return True

    def contact(self, raw: str, number: int) -> bool:
        """`S name a b [part]`: a contact, two nodes and an optional part name."""
        words = raw.split()
        n = len(words)
        if n != 3 and n != 4:
            return False
        model = None
        if n == 4:
            written = words[3]
            model = self.models.get(written)
            if model is None:
                model = self.models[written] = self.loader.loaded.name(written)
        spelled = self.spelled
        self.append(_new_tuple(PlainLine, (words[0], "S",
                                           (spelled(words[1], words[1]), spelled(words[2], words[2])),
                                           None, model, number, self.source)))
        return True

    def instance(self, raw: str, number: int) -> bool:
        """`X name nodes... subckt` without parameters: the record is its words."""
        words = raw.split()
        if len(words) < 2 or any(w.casefold() == "params:" for w in words):
            return False
        line = LogicalLine(raw.rstrip(), number, 1, None, self.source)
        line.record = (words[0], tuple(words[1:]), ())
        self.loader.element(line)
        return True


class NetlistLoader:
    """Walks the statements of one board's files into a `LoadedNetlist`."""

    def __init__(self, options: ReaderOptions, roots: list[str]) -> None:
        self.options = options
        self.loaded = LoadedNetlist()
        self.interpreter = ElementInterpreter(self.loaded, options)
        self.includes = IncludeSandbox(options, roots)
        self.current = self.loaded.top
        self.blocks = ConditionalBlocks(self.loaded, options)
        self.end_seen: LogicalLine | None = None
        self.after_end_warned = False
        self.handlers: dict[str, _Handler] = {
            "param": self.on_param, "subckt": self.on_subckt, "ends": self.on_ends,
            "end": self.on_end, "endl": self.on_endl, "global": self.on_global,
            "model": self.on_model, "include": self.on_include, "inc": self.on_include,
            "lib": self.on_lib, "func": self.on_func,
        }

    # ------------------------------------------------------------ the top file

    def load_top(self, source: SourceFile, real: str | None) -> LoadedNetlist:
        """Load the top file (`real`: its real path, None for text without a file)."""
        self.loaded.add_file(source)
        # The physical lines, split once here and not kept on `source`: the
        # fast loop lets go of each line once read (peak memory of big files).
        lines = source.text.split("\n")
        self.loaded.title = lines[0].strip()
        self.includes.enter_top(real)
        self.fast_walk(source, lines)
        self.blocks.close(self.current, None)
        unclosed = self.current.line   # None at the top level
        if unclosed is not None:
            raise unclosed.error(f"missing .ends for .subckt {self.current.name}")
        return self.loaded

    def fast_walk(self, source: SourceFile, lines: list[str]) -> None:
        """Read the top file's statements straight from its physical lines.

        Plain lines (PlainLineReader) take the fast path; every other line
        takes the general one: continued statements (found in bulk by
        `continuation_zones`), comments, directives, other element letters. A
        block directive (`.control`, a `.lib` section) or content after
        `.end` hands the rest of the file to `walk`, which handles them.
        """
        max_length = self.options.max_line_length
        zones = iter(continuation_zones(lines, 1, source.text))
        zone = next(zones, None)
        next_zone = zone[0] if zone is not None else -1
        count = len(lines)
        plain = PLAIN_LINE.fullmatch
        plain_lines = PlainLineReader(self, source)
        readers = plain_lines.readers
        index = 1
        while index < count:
            if index == next_zone and zone is not None:
                if self.read_zone(source, lines, zone):
                    return
                plain_lines.follow(self.body())
                index = zone[1] + 1
                zone = next(zones, None)
                next_zone = zone[0] if zone is not None else -1
                continue
            raw = lines[index]
            lines[index] = None   # type: ignore[call-overload]  # let the text go once read
            index += 1
            if not raw:
                continue
            read_plain = readers.get(raw[0])
            if read_plain is not None:
                if len(raw) <= max_length and plain(raw) is not None and read_plain(raw, index):
                    continue
            elif raw[0] == "*":
                continue
            if self.read_line(source, lines, raw, index):
                return
            plain_lines.follow(self.body())

    def read_zone(self, source: SourceFile, lines: list[str], zone: tuple[int, int]) -> bool:
        """The statement continued over physical lines `zone`; True when the rest
        of the file was handed to `walk`."""
        start, stop = zone
        for line in logical_lines(source, start, self.options.max_line_length, stop + 1, lines):
            how = self.statement(line)
            if how != _DONE:
                self.hand_over(source, lines, start if how == _WALK_FROM_HERE else stop + 1)
                return True
        return False

    def read_line(self, source: SourceFile, lines: list[str], raw: str, index: int) -> bool:
        """The one-line statement `raw` (physical line number `index`); True when
        the rest of the file was handed to `walk`."""
        line = statement_at(source, raw, index - 1, self.options.max_line_length)
        if line is None:
            return False
        how = self.statement(line)
        if how == _DONE:
            return False
        lines[index - 1] = raw
        self.hand_over(source, lines, index - 1 if how == _WALK_FROM_HERE else index)
        return True

    def statement(self, line: LogicalLine) -> int:
        """One top-file statement for `fast_walk`: _DONE, _WALK_FROM_HERE when it
        must be read by `walk` (a block directive), _WALK_AFTER_HERE when done but
        what follows must be (it was `.end`)."""
        text = line.text
        if text[0] != ".":
            self.element(line)
            return _DONE
        keyword = directive_keyword(text)
        if keyword == "control" or (keyword == "lib" and len(text.split()) == 2):
            return _WALK_FROM_HERE
        self.directive(line, keyword)
        return _WALK_AFTER_HERE if self.end_seen is not None else _DONE

    def hand_over(self, source: SourceFile, lines: list[str], index: int) -> None:
        """Read the rest of the top file, from physical line index `index`, with `walk`."""
        self.walk(logical_lines(source, index, self.options.max_line_length, None, lines), None)

    # ------------------------------------------------------------ the general walk

    def walk(self, lines: list[LogicalLine], section: str | None) -> None:
        """Process statements; with `section`, only those in `.lib section`."""
        index = 0 if section is None else (find_section(lines, section) or 0)
        count = len(lines)
        element = self.element
        while index < count:
            line = lines[index]
            index += 1
            text = line.text
            if self.end_seen is not None and not self.after_end_warned:
                self.after_end_warned = True
                self.loaded.warn("content after .end is read anyway (as ngspice does)", line)
            if text[0] != ".":
                element(line)
                continue
            keyword = directive_keyword(text)
            if keyword == "endl" and section is not None:
                return
            if keyword == "control":
                index = self.skip_block(lines, index, line, "endc")
            elif keyword == "lib" and opens_section(lines, index - 1):
                # A section definition read straight through: skip it.
                index = self.skip_block(lines, index, line, "endl", record=False)
            else:
                self.directive(line, keyword)

    def skip_block(self, lines: list[LogicalLine], index: int, start: LogicalLine, end: str,
                   record: bool = True) -> int:
        """Skip from `start` to its `.end` line (`.endc`, `.endl`); the index after it."""
        texts = [start.text]
        while index < len(lines):
            line = lines[index]
            index += 1
            word = line.text.split(None, 1)[0].lower()
            if word == "." + end:
                if record:
                    self.loaded.skipped.append(SkippedDirective(
                        start.text.split()[0][1:].lower(), "\n".join(texts), start.location()))
                return index
            texts.append(line.text)
        # Left open at the end of the file (common for `.control`): the block
        # runs to the end, as simulators read it.
        if record:
            self.loaded.skipped.append(SkippedDirective(
                start.text.split()[0][1:].lower(), "\n".join(texts), start.location()))
        if end != "endc":
            self.loaded.warn(f"{start.text.split()[0]} block has no .{end}; it runs to the "
                             "end of the file", start)
        return index

    def body(self) -> list[BodyRecord]:
        """Where the next element record goes (the current definition, or the
        recorded `.if` branch open in it; a sink inside a branch not read)."""
        return self.blocks.body(self.current)

    def element(self, line: LogicalLine) -> None:
        if self.blocks.skipping:
            return
        spec = self.interpreter.interpret(line)
        if spec is not None:
            self.body().append(spec)

    # ------------------------------------------------------------ directives

    def directive(self, line: LogicalLine, keyword: str) -> None:
        if keyword == "title":
            parts = line.text.split(None, 1)
            self.loaded.title = parts[1] if len(parts) > 1 else ""
            return
        if keyword in BLOCK_DIRECTIVES:
            self.block_directive(line, keyword)
            return
        if self.blocks.skipping:
            return
        if keyword == "endc":
            self.loaded.warn(".endc without .control; ignored", line)
            return
        if keyword in LOAD_TIME_DIRECTIVES:
            self.blocks.load_time(self.current, line)
        handler = self.handlers.get(keyword)
        if handler is None:
            self.loaded.skipped.append(SkippedDirective(keyword, line.text, line.location()))
            if keyword not in SKIPPED_DIRECTIVES:
                self.loaded.warn(f"unknown directive .{keyword} skipped", line,
                                 group=f"directive:{keyword}")
            return
        if keyword == "func":   # read from its text (drc/netlist/loader.py _FUNC)
            self.on_func(line, (), ())
            return
        record = line.record
        if keyword == "subckt" and len(line.text.split(None, 2)) < 2:
            raise line.error(".subckt needs a name")
        if record is None:
            record = fast_directive(line.text, keyword)
            if record is None or record[0] != line.text.split(None, 1)[0][1:].lower():
                try:
                    record = parse_directive(line, keyword)
                except LimitError:
                    raise
                except NetlistError as exc:
                    if keyword == "subckt":   # where a definition starts must be known
                        raise
                    self.unreadable_directive(line, keyword, exc)
                    return
            line.record = record
        _, args, assigns = record
        handler(line, args, assigns)

    def unreadable_directive(self, line: LogicalLine, keyword: str, exc: NetlistError) -> None:
        """A directive line the grammar cannot read: warned about and skipped
        (what it would define stays undefined; whatever uses that is not evaluated)."""
        self.loaded.warn(f".{keyword} line not read ({exc.message}); skipped",
                         exc.location or line.location())

    def block_directive(self, line: LogicalLine, keyword: str) -> None:
        """`.if`, `.elseif`, `.else`, `.endif` (drc/netlist/conditionals.py)."""
        if keyword == "if":
            self.blocks.on_if(line, self.current)
        elif keyword == "endif":
            self.blocks.on_endif(line, self.current)
        else:
            self.blocks.on_else(line, self.current, keyword)

    def on_func(self, line: LogicalLine, args: Sequence[Token], assigns: Sequence[Assign]) -> None:
        """`.func name(a, b) body`: a user function for every expression (global,
        wherever written)."""
        match = _FUNC.match(line.text)
        if match is None:
            self.loaded.warn(".func line not read (expected `.func name(arguments) "
                             "expression`); skipped", line)
            return
        name, arguments, body = match.groups()
        body = body.strip()
        if body[:1] in "{'" and body[-1:] in "}'":
            body = body[1:-1]
        try:
            expression = compile_token(line, body, self.options)
        except LimitError:
            raise
        except NetlistError as exc:
            self.loaded.warn(f".func {name} not read ({exc.message}); skipped",
                             exc.location or line.location())
            return
        key = name.casefold()
        if key in self.loaded.functions:
            self.loaded.warn(f".func {name} defined again; the later definition is used", line)
        names = tuple(a.casefold() for a in _ARGUMENT.findall(arguments))
        self.loaded.functions[key] = UserFunction(name, names, expression)

    def on_param(self, line: LogicalLine, args: Sequence[Token], assigns: Sequence[Assign]) -> None:
        for assign in assigns:
            self.blocks.add_param(self.current, (assign, line))

    def on_subckt(self, line: LogicalLine, args: Sequence[Token], assigns: Sequence[Assign]) -> None:
        if not args:
            raise line.error(".subckt needs a name")
        written = item_text(args[0])
        name = self.loaded.name(written)
        ports = tuple(item_text(a) for a in args[1:] if item_text(a).casefold() != "params:")
        seen: set[str] = set()
        at = offset_of(line, written) + len(written)
        for port in ports:
            at = offset_of(line, port, at)
            if port.casefold() in seen:
                raise line.error(f"port {port!r} appears twice in .subckt {name}", at)
            seen.add(port.casefold())
            at += len(port)
        key = name.casefold()
        definition = SubcircuitDefinition(name, ports, tuple(assigns), line, self.current)
        if key in self.current.children:
            # As ngspice does: the first definition is used; this one is read
            # (so its `.ends` closes it) but belongs to no one.
            other = self.current.children[key]
            self.loaded.warn(f"subcircuit {name} is defined again (first at {other.where}); "
                             "the first definition is used, as ngspice does", line)
        else:
            self.current.children[key] = definition
            self.loaded.definitions.append(definition)
        if definition.depth > self.options.max_subckt_depth:
            raise line.error(f"subcircuit definitions nest deeper than "
                             f"{self.options.max_subckt_depth} "
                             + limit_hint("max_subckt_depth"), cls=LimitError)
        self.current = definition

    def on_ends(self, line: LogicalLine, args: Sequence[Token], assigns: Sequence[Assign]) -> None:
        parent = self.current.parent
        if parent is None:
            self.loaded.warn(".ends without a .subckt; ignored", line)
            return
        self.blocks.close(self.current, line)
        name = self.current.name
        if args and item_text(args[0]).casefold() != name.casefold():
            self.loaded.warn(f".ends {item_text(args[0])} names another subcircuit; it closes "
                             f".subckt {name} (opened at {self.current.where})",
                             line.location(offset_of(line, args[0], 5)))
        self.current = parent

    def on_end(self, line: LogicalLine, args: Sequence[Token], assigns: Sequence[Assign]) -> None:
        # Only the top file's .end matters; one in an included file is ignored.
        if self.end_seen is None and self.includes.depth <= 1:
            self.end_seen = line

    def on_endl(self, line: LogicalLine, args: Sequence[Token], assigns: Sequence[Assign]) -> None:
        self.loaded.warn(".endl outside a library section ignored", line)

    def on_global(self, line: LogicalLine, args: Sequence[Token], assigns: Sequence[Assign]) -> None:
        for arg in args:
            name = item_text(arg)
            key = name.casefold()
            if key in GROUND_NAMES:
                continue
            self.loaded.globals.setdefault(key, name)

    def on_model(self, line: LogicalLine, args: Sequence[Token], assigns: Sequence[Assign]) -> None:
        if len(args) < 2 or not isinstance(args[1], str):
            self.loaded.warn(".model needs a name and a type; skipped", line)
            return
        name = self.loaded.name(item_text(args[0]))
        params: dict[str, float | str] = {}
        for assign in assigns:
            params[assign.key.casefold()] = param_value(assign.value)
        for extra in args[2:]:
            params[item_text(extra).casefold()] = ""
        key = name.casefold()
        if key in self.loaded.models:
            self.loaded.warn(f"model {name} defined again; the later card is used", line)
        self.loaded.models[key] = ModelCard(name, args[1], params, line.location())

    def on_include(self, line: LogicalLine, args: Sequence[Token], assigns: Sequence[Assign]) -> None:
        """`.include PATH` / `.inc PATH`: the rest of the line is the path (quoted
        or not, so a path with blanks reads whole)."""
        path, _ = path_and_section(args, False)
        if path is None:
            self.loaded.warn(f"{line.text.split()[0]} names no file; ignored", line)
            return
        self.include(line, path, None)

    def on_lib(self, line: LogicalLine, args: Sequence[Token], assigns: Sequence[Assign]) -> None:
        """`.lib FILE SECTION` (a section), or `.lib FILE` (the whole file, as several
        simulators write it; a `.lib NAME ... .endl` block never gets here)."""
        path, section = path_and_section(args, True)
        if path is None:
            self.loaded.warn(".lib names no file; ignored", line)
            return
        self.include(line, path, section)

    def include(self, line: LogicalLine, raw: str, section: str | None) -> None:
        """Read included file `raw` (only its `.lib section` when given) here."""
        includes = self.includes
        opened = includes.open(line, raw)
        if opened is None:
            self.loaded.warn(f"`{line.text}`: {NOT_READ}", line, group="library-not-read",
                             severity=Severity.NOTE)
            return
        real, shown = opened
        earlier = includes.earlier_inclusion(real, section, self.current.key, line)
        if earlier is not None:
            self.loaded.warn(f"{shown} was already included here (at {earlier}); "
                             "included once only", line)
            return
        source = includes.source(line, real, shown)
        self.loaded.add_file(source)
        with includes.reading(real):
            lines = includes.statements_of(line, real, source)
            if section is not None and find_section(lines, section) is None:
                self.loaded.warn(f"library section {section!r} not found in {shown}; nothing "
                                 "read from it", line)
                return
            self.walk(lines, section)
