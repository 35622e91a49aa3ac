"""The netlist as loaded: definitions and element lines, before flattening.

Loading (drc/netlist/loader.py) turns statements into these records;
flattening (drc/netlist/flatten.py) expands them into `Element`s. A record
here is local to its `.subckt` definition: its nodes are the names written
on its line, and its value may still be an expression over parameters that
only an instance fixes. `LoadedNetlist` is everything loading found, the
hand-over between the two steps.
"""

from __future__ import annotations

from operator import itemgetter
from typing import Any

from drc.errors import SourceLocation
from drc.netlist.elements import Diagnostic, ModelCard, SkippedDirective, Value
from drc.netlist.expressions import Expression, UserFunction
from drc.netlist.grammar import Assign
from drc.netlist.lines import LogicalLine, SourceFile, annotation_lines
from drc.severity import Severity


class ElementSpec:
    """One element or X line inside a definition, before flattening.

    `extra` holds what a letter needs beyond nodes and value (the inductors
    of K, the controlling source of F/H/W, the raw tokens of Q); `plan` is
    the node mapping flattening works out once (drc/netlist/flatten.py).
    `problem` says why the line cannot be evaluated (its element is kept
    with the nodes that could be told), `problem_at` where the cause is.
    """

    __slots__ = ("designator", "dkey", "kind", "nodes", "nkeys", "value", "model",
                 "params", "line", "location", "extra", "plan", "problem", "problem_at")

    def __init__(self, designator: str, kind: str, nodes: tuple[str, ...],
                 value: Value | Expression | None, model: str | None, params: dict[str, Any],
                 line: LogicalLine, extra: Any = None) -> None:
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
        self.plan: tuple[tuple[int, str, str], ...] | None = None
        self.problem: str | None = None
        self.problem_at: SourceLocation | None = None


class PlainLine(tuple):
    """A plain two-node R, C, L or S line read by the top file's fast loop:
    `(designator, kind, nodes, value, model, line number, source)`.

    A tuple rather than an `ElementSpec`: nothing about it changes during
    flattening, and its statement (`line`) is rebuilt from the file only when
    an error has to point at it.
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
        source: SourceFile = self[6]
        number: int = self[5]
        return LogicalLine(source.line(number).rstrip(), number, 1, None, source)


class Branch:
    """One branch of an `.if` block: its condition (None for `.else`), and the
    element records, `.param` entries and nested blocks written in it."""

    __slots__ = ("condition", "line", "body", "params", "conditionals")

    def __init__(self, condition: Expression | None, line: LogicalLine) -> None:
        self.condition = condition
        self.line = line
        self.body: list[BodyRecord] = []
        self.params: list[tuple[Assign, LogicalLine]] = []
        self.conditionals: list[Conditional] = []


class Conditional:
    """An `.if` / `.elseif` / `.else` / `.endif` block whose condition could not be
    decided while loading (it uses subcircuit parameters, or parameters defined
    further on): decided when flattening, per instance. `serial` names the
    block in a scope's choices (drc/netlist/parameters.py)."""

    __slots__ = ("branches", "line", "serial")

    def __init__(self, line: LogicalLine, serial: int) -> None:
        self.branches: list[Branch] = []
        self.line = line
        self.serial = serial

    kind = ".if"    # never an element letter
    model = None

    @property
    def location(self) -> SourceLocation:
        return self.line.location()


# What a definition's body holds: general records, the fast loop's plain lines,
# and `.if` blocks decided when flattening.
BodyRecord = ElementSpec | PlainLine | Conditional


class SubcircuitDefinition:
    """A `.subckt` definition, or the top level (name "", no line).

    `key` names the definition by value: the case-folded names of the
    definitions it is nested in, then its own (the top level is `()`).
    Names are unique among siblings, so the key is unique in one netlist.
    """

    def __init__(self, name: str, ports: tuple[str, ...], defaults: tuple[Assign, ...],
                 line: LogicalLine | None, parent: SubcircuitDefinition | None) -> None:
        self.name = name
        self.ports = ports
        self.port_keys = tuple(p.casefold() for p in ports)
        self.defaults = defaults
        self.params: list[tuple[Assign, LogicalLine]] = []
        self.body: list[BodyRecord] = []
        self.conditionals: list[Conditional] = []   # `.if` blocks with `.param`s or elements
        self.children: dict[str, SubcircuitDefinition] = {}
        self.line = line
        self.parent = parent
        if parent is None:
            self.key: tuple[str, ...] = ()
        else:
            self.key = parent.key + (name.casefold(),)

    @property
    def depth(self) -> int:
        """How many definitions this one is nested in (the top level is 0)."""
        return len(self.key)

    @property
    def where(self) -> str:
        """Where the definition starts, for messages."""
        return str(self.line.location()) if self.line is not None else "(top level)"

    def entries(self) -> list[tuple[Assign, LogicalLine]]:
        """Header defaults, then `.param`s: what an instance evaluates."""
        line = self.line
        defaults = [(a, line) for a in self.defaults] if line is not None else []
        return defaults + self.params

    def lookup(self, key: str) -> SubcircuitDefinition | None:
        """The definition an X line here names by `key`: its own, or an enclosing one's."""
        definition: SubcircuitDefinition | None = self
        while definition is not None:
            found = definition.children.get(key)
            if found is not None:
                return found
            definition = definition.parent
        return None


class LoadedNetlist:
    """What loading found: definitions, models, globals, and the notes of reading."""

    def __init__(self) -> None:
        self.top = SubcircuitDefinition("", (), (), None, None)
        self.definitions: list[SubcircuitDefinition] = []
        self.models: dict[str, ModelCard] = {}
        self.globals: dict[str, str] = {}   # net key -> first-seen spelling
        self.names: dict[str, str] = {}     # model/subckt key -> first-seen spelling
        self.title = ""
        self.files: list[str] = []
        self.annotation_lines: list[tuple[str, int, str]] = []  # (file, line, text) of `*@drc`
        self.diagnostics: list[Diagnostic] = []
        self.skipped: list[SkippedDirective] = []
        self.functions: dict[str, UserFunction] = {}   # `.func` definitions by key
        self.couplings = False   # a K line was read (flattening checks its inductors)

    def name(self, text: str) -> str:
        """Model or subcircuit name in its first-seen spelling."""
        return self.names.setdefault(text.casefold(), text)

    def warn(self, message: str, line: LogicalLine | SourceLocation, group: str | None = None,
             severity: Severity = Severity.WARNING) -> None:
        """A diagnostic at `line` (a statement, or a location); `group` names what
        it is about, so that many alike are told as one."""
        where = line if isinstance(line, SourceLocation) else line.location()
        self.diagnostics.append(Diagnostic(message, where, severity, group))

    def add_file(self, source: SourceFile) -> None:
        """Record a file read (once), with its `*@drc` annotation lines: the file's
        text is read and decoded once, and nothing reads it again for them."""
        if source.path not in self.files:
            self.files.append(source.path)
            self.annotation_lines.extend(
                (source.path, number, text) for number, text in annotation_lines(source.text))
