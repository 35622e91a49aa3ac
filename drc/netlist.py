"""The circuit model a netlist is read into.

A `Netlist` is flat: subcircuits are expanded, designators and local nets of
an instance are joined with `/` (`XK1/R1`, `XK1/key`), ground is the net "0".
An X instance whose subcircuit is not defined in the netlist, or that the
parts/contacts library recognises, stays an element of kind "X": a part with
its instance's nets as pins, in instance-line order.

Names keep the case they were written in; comparisons are case-insensitive,
so lookups use `key()`.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from .errors import SourceLocation

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


@dataclass(slots=True)
class Element:
    """One flattened circuit element.

    kind: the upper-case element letter (R C L K D Q M J V I E F G H S W B T X).
    nodes: net names after flattening (ground is "0").
    value: the main value (R, C, L, a DC source's voltage), or None.
    model: model name (D, Q, M, J, S, W) or subcircuit name (X).
    params: instance parameters as written (`k=v`), values evaluated where numeric.
    instance_path: the X instances this element was expanded through, outermost first.
    """

    designator: str
    kind: str
    nodes: tuple[str, ...]
    value: Value | None
    model: str | None
    location: SourceLocation
    params: dict[str, float | str] = field(default_factory=dict)
    text: str = ""
    instance_path: tuple[str, ...] = ()


@dataclass(frozen=True, slots=True)
class Diagnostic:
    """A warning about the netlist that does not stop reading it."""

    message: str
    location: SourceLocation


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


@dataclass(slots=True)
class Netlist:
    path: str
    title: str
    elements: list[Element] = field(default_factory=list)
    models: dict[str, ModelCard] = field(default_factory=dict)
    global_nets: tuple[str, ...] = ()
    subcircuit_names: tuple[str, ...] = ()
    diagnostics: list[Diagnostic] = field(default_factory=list)
    skipped: list[SkippedDirective] = field(default_factory=list)
    files: tuple[str, ...] = ()

    def nets(self) -> set[str]:
        """Every distinct net, ground included when used."""
        out: set[str] = set()
        for element in self.elements:
            if element.kind != "K":
                out.update(element.nodes)
        return out

    def by_designator(self) -> dict[str, Element]:
        return {key(e.designator): e for e in self.elements}
