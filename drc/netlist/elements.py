"""The circuit model a netlist is read into.

A `Netlist` is flat: subcircuits are expanded, designators and local nets of
an instance are joined with `/` (`XK1/R1`, `XK1/key`), ground is the net "0".
An X instance whose subcircuit is not defined in the netlist, or that the
parts/contacts library recognises, stays an element of kind "X": a part with
its instance's nets as pins, in instance-line order.

Names keep the case they were written in; comparisons are case-insensitive,
so lookups use `key()`.

An element the reader could not evaluate (a value it cannot compute, a line
of a shape it cannot read) is kept, with the nodes it could tell, and says
why in `Element.problem`: one bad line never sinks the board, and whatever
checks a path through it knows the path is not understood. Warnings about
the netlist are `Diagnostic`s; thousands alike (one per transistor whose
model was not read) are grouped into one with a count (`group_diagnostics`).
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass, field, replace

from drc.errors import SourceLocation
from drc.severity import Severity

GROUND = "0"


def key(name: str) -> str:
    """Case-insensitive identity of a designator, net or model name."""
    return name.casefold()


@dataclass(frozen=True, slots=True)
class Value:
    """A numeric value as a person meant it, plus how SPICE3 would read it.

    `si` is the value in SI units as read by SPICE rules, except that the
    letter-and-digit code (`4k7`, `2R2`, `0R1`, `1M5`, `4n7`) is read as a
    person means it (4700, 2.2, 0.1, 1.5e6, 4.7e-9). A plain `1M` stays
    milli, as SPICE reads it; the ambiguous-value rule says so. `spice_si` is
    what ngspice's default mode reads from the same text (`4k7` -> 4000), or
    None where SPICE would not read a number. `text` is the text as
    written, so rules can warn where the two readings differ.
    """

    si: float
    text: str
    spice_si: float | None = None

    @property
    def differs_from_spice(self) -> bool:
        return self.spice_si is None or self.spice_si != self.si


class _NoParams(dict):
    """The one shared, read-only, empty parameter mapping of elements without
    parameters (most of them): a dict per element would cost 64 bytes each."""

    __slots__ = ()

    def _refuse(self, *args, **kwargs):
        raise TypeError("Element.params is shared when empty; build a new dict to change it")

    __setitem__ = __delitem__ = setdefault = update = pop = popitem = clear = _refuse
    __ior__ = _refuse

    def __reduce__(self):
        return (_no_params, ())


NO_PARAMS: dict = _NoParams()


def _no_params() -> dict:
    return NO_PARAMS


class Element:
    """One flattened circuit element.

    kind: the upper-case element letter (R C L K D Q M J V I E F G H S W B T X).
    nodes: net names after flattening (ground is "0").
    value: the main value (R, C, L, a DC source's voltage), or None.
    model: model name (D, Q, M, J, S, W) or subcircuit name (X).
    location: where the element's statement starts.
    params: instance parameters as written (`k=v`), values evaluated where numeric
      (one shared read-only empty mapping when there are none).
    text: the statement as read (after continuation joining and comment removal).
    instance_path: the X instances this element was expanded through, outermost first.
    problem: why the element cannot be evaluated (a value that cannot be
      computed, a construct the reader skips), or None. Such an element keeps
      its nodes so that tracing can tell whether it lies on a contact's path.

    A plain slotted class rather than a dataclass so that a million elements
    stay small: the reader may pass `location` as a bare line number with the
    `origin` file (column 1) and leave `text` as None; both are then built
    from the file on first use. Equality compares the fields as a dataclass
    would.
    """

    __slots__ = ("designator", "kind", "nodes", "value", "model", "_where", "params",
                 "_text", "instance_path", "_origin", "problem")

    def __init__(self, designator: str, kind: str, nodes: tuple[str, ...],
                 value: Value | None, model: str | None, location: SourceLocation | int,
                 params: dict[str, float | str] = NO_PARAMS, text: str | None = "",
                 instance_path: tuple[str, ...] = (), origin=None,
                 problem: str | None = None) -> None:
        self.designator = designator
        self.kind = kind
        self.nodes = nodes
        self.value = value
        self.model = model
        self._where = location
        self.params = params
        self._text = text
        self.instance_path = instance_path
        self._origin = origin
        self.problem = problem

    @property
    def location(self) -> SourceLocation:
        where = self._where
        if isinstance(where, int):
            return SourceLocation(self._origin.path, where, 1)
        return where

    @location.setter
    def location(self, value: SourceLocation) -> None:
        self._where = value

    @property
    def text(self) -> str:
        text = self._text
        if text is None:
            text = self._origin.line(self._where).rstrip()
        return text

    @text.setter
    def text(self, value: str) -> None:
        self._text = value

    def _fields(self) -> tuple:
        return (self.designator, self.kind, self.nodes, self.value, self.model, self.location,
                self.params, self.text, self.instance_path, self.problem)

    def __eq__(self, other: object) -> bool:
        if not isinstance(other, Element) or other.__class__ is not self.__class__:
            return NotImplemented
        return self._fields() == other._fields()

    __hash__ = None  # type: ignore[assignment]  # mutable, as the dataclass was

    def __repr__(self) -> str:
        names = ("designator", "kind", "nodes", "value", "model", "location", "params", "text",
                 "instance_path", "problem")
        inner = ", ".join(f"{n}={v!r}" for n, v in zip(names, self._fields(), strict=True))
        return f"Element({inner})"

    def __getstate__(self) -> tuple:
        return (self.designator, self.kind, self.nodes, self.value, self.model, self.location,
                dict(self.params) if self.params else NO_PARAMS, self.text, self.instance_path,
                None, self.problem)

    def __setstate__(self, state: tuple) -> None:
        Element.__init__(self, *state)


@dataclass(frozen=True, slots=True)
class Diagnostic:
    """A warning (or a note) about the netlist that does not stop reading it.

    `group` names what the diagnostic is about, so that diagnostics alike
    (the same group) can be told as one (`group_diagnostics`); `count` is how
    many diagnostics a grouped one stands for, its location the first's.
    """

    message: str
    location: SourceLocation
    severity: Severity = Severity.WARNING
    group: str | None = None
    count: int = 1


# More diagnostics of one group than this are told as one line with a count.
GROUP_ABOVE = 3


def group_diagnostics(diagnostics: Iterable[Diagnostic], above: int = GROUP_ABOVE) -> list[Diagnostic]:
    """`diagnostics` with every group of more than `above` alike ones told as one.

    The grouped diagnostic stands where the group's first one stood, keeps its
    location and message and adds the count; diagnostics without a group, and
    groups of `above` or fewer, are kept as they are. Order is kept.
    """
    diagnostics = list(diagnostics)
    sizes: dict[str, int] = {}
    for diagnostic in diagnostics:
        if diagnostic.group is not None:
            sizes[diagnostic.group] = sizes.get(diagnostic.group, 0) + diagnostic.count
    if all(size <= above for size in sizes.values()):
        return diagnostics
    out: list[Diagnostic] = []
    told: set[str] = set()
    for diagnostic in diagnostics:
        group = diagnostic.group
        if group is None or sizes[group] <= above:
            out.append(diagnostic)
        elif group not in told:
            told.add(group)
            count = sizes[group]
            message = diagnostic.message.split(" (grouped: ", 1)[0]
            out.append(replace(diagnostic, count=count,
                               message=f"{message} (grouped: {count:,} alike, the first shown)"))
    return out


@dataclass(frozen=True, slots=True)
class ModelCard:
    name: str
    type: str
    params: dict[str, float | str]
    location: SourceLocation


@dataclass(frozen=True, slots=True)
class SkippedDirective:
    """A recorded but unused directive (.tran, .option, a .control block...)."""

    name: str
    text: str
    location: SourceLocation


@dataclass(frozen=True, slots=True)
class SubcircuitPorts:
    """A `.subckt` line as the netlist (or an included file) defines it.

    ports: the port names in order; kinds: the element letters of its body
    (an "S" or "W" among them makes it a simulated switch, whatever its name).
    """

    name: str
    ports: tuple[str, ...]
    kinds: frozenset[str]
    location: SourceLocation


@dataclass(slots=True)
class Netlist:
    path: str
    title: str
    elements: list[Element] = field(default_factory=list)
    models: dict[str, ModelCard] = field(default_factory=dict)
    global_nets: tuple[str, ...] = ()
    subcircuit_names: tuple[str, ...] = ()
    # key(name) -> its definition line; the first definition of a name wins.
    subcircuits: dict[str, SubcircuitPorts] = field(default_factory=dict)
    diagnostics: list[Diagnostic] = field(default_factory=list)
    skipped: list[SkippedDirective] = field(default_factory=list)
    files: tuple[str, ...] = ()
    # `*@drc` comment lines of every file read, as (file, line number, text):
    # annotations (drc/config/annotations.py) are parsed from these.
    annotation_lines: tuple[tuple[str, int, str], ...] = ()

    def nets(self) -> set[str]:
        """Every distinct net, ground included when used (a K coupling has no
        nodes: it names inductors; a refused K line keeps the nets it named)."""
        out: set[str] = set()
        for element in self.elements:
            out.update(element.nodes)
        return out

    def by_designator(self) -> dict[str, Element]:
        return {key(e.designator): e for e in self.elements}
