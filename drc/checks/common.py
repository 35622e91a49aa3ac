"""Small shared vocabulary for rule messages: names of contacts, thresholds, parts.

Messages must read without the documentation, so every rule names things the
same way: "SW3 (tactile)", "VT- 1.35 V", "R2 4.7 kΩ". These helpers only
format what a StageResult already holds (and, for an edge's parts, the
stage's topology: drc.analysis.charging); they solve nothing.
"""

from __future__ import annotations

from drc.analysis.charging import charging_parts
from drc.analysis.results import EdgeResult, StageResult
from drc.board.stage import Capacitor, Resistor
from drc.checks.context import part_value_text

# Stage kinds whose debouncing happens somewhere other than an RC at the pin.
DEBOUNCED_ELSEWHERE = ("latch", "firmware", "dedicated")
RC_KINDS = ("rc", "rc-schmitt")
PULL_ROLES = ("pull", "series")


def contact_name(result: StageResult) -> str:
    """"SW3 (tactile)"."""
    contact = result.stage.contact
    return f"{contact.designator} ({contact.contact_class})" if contact.contact_class else contact.designator


def is_schmitt(result: StageResult) -> bool:
    rx = result.receiver_electrical
    return rx.schmitt if rx is not None else result.stage.receiver.schmitt


def threshold_name(result: StageResult, edge: EdgeResult) -> str:
    """VT+/VT- for a Schmitt input, VIH/VIL band edge for a plain one."""
    if is_schmitt(result):
        return "VT+" if edge.direction == "rising" else "VT-"
    return "the input threshold"


def resistor_text(r: Resistor) -> str:
    return f"{r.designator} {part_value_text(r.ohms, 'Ω')}"


def capacitor_text(c: Capacitor) -> str:
    return f"{c.designator} {part_value_text(c.farads, 'F')}"


def pull_resistors(result: StageResult) -> tuple[Resistor, ...]:
    return tuple(r for r in result.stage.circuit.resistors if r.role == "pull")


def timing_parts(result: StageResult, edge: str | None = None) -> tuple[str, ...]:
    """Designators of the resistors and capacitors that set the stage's timing; with an
    edge, only those its capacitor charges through (drc.analysis.charging), when any."""
    circuit = result.stage.circuit
    parts = tuple(r.designator for r in circuit.resistors if r.role in ("pull", "series", "other")) + \
        tuple(c.designator for c in circuit.capacitors)
    if edge is None:
        return parts
    path = set(charging_parts(circuit, edge))
    return tuple(p for p in parts if p in path) or parts


def timing_text(result: StageResult, edge: str | None = None) -> str:
    """"R1 10 kΩ, R2 39 kΩ, C1 1 µF" for the parts that set the timing (of `edge`)."""
    circuit = result.stage.circuit
    wanted = set(timing_parts(result, edge))
    texts = [resistor_text(r) for r in circuit.resistors if r.designator in wanted]
    texts += [capacitor_text(c) for c in circuit.capacitors if c.designator in wanted]
    return ", ".join(texts)


def receiver_name(result: StageResult) -> str:
    """"U1:1 (HC, Schmitt)"."""
    rx = result.stage.receiver
    kind = "Schmitt" if is_schmitt(result) else "plain"
    return f"{rx.ref} ({rx.family}, {kind})"


def target_level_defined(result: StageResult, edge: EdgeResult) -> bool:
    """False when the state an edge ends in has no defined level (floating-input says so)."""
    target = "pressed" if edge.edge == "press" else "released"
    start = "released" if edge.edge == "press" else "pressed"
    for state in (target, start):
        level = result.levels.get(state)
        if level is not None and level.logic == "undefined":
            return False
    return True
