"""Which net of an instance line is which pin of its part: the pin plan of one instance.

A logic part written as one package (`XU1 n1 n2 ... n14 74HC14`) takes the
library's package pinout in node order. A part written one gate per instance
(`XU1A in out VCC 0 74HC14`) takes its pins by name: from the config's
`pins` list for that designator, else from the port names of the `.subckt`
line that defines the model in the netlist or an included file
(drc/library/pin_names.py reads the names). When neither names the pins and
the node count is not the package's, the order is unknown: the plan says so
and the instance's inputs are reported unchecked, never guessed.
"""

from __future__ import annotations

from dataclasses import dataclass

from drc.library.catalogue import Library
from drc.library.entries import PartType, PinSpec
from drc.library.pin_names import pins_from_names
from drc.netlist.elements import SubcircuitPorts


@dataclass(frozen=True, slots=True)
class PinPlan:
    """pins: one PinSpec per instance node, numbered from 1 (None: order unknown).
    how: where the pins came from, for `drc trace` and the unchecked finding.
    config_unknown: names of the config's `pins` list that name no pin (a config error)."""

    pins: tuple[PinSpec, ...] | None
    how: str
    config_unknown: tuple[str, ...] = ()


def _package(part: PartType) -> tuple[PinSpec, ...]:
    return tuple(spec for _, spec in sorted(part.pins.items()))


def plan_pins(library: Library, part: PartType, nodes: int, model: str,
              config_pins: tuple[str, ...] | None,
              subcircuit: SubcircuitPorts | None) -> PinPlan:
    """The pin plan of an instance with `nodes` nodes of part type `part`."""
    if config_pins is not None:
        if len(config_pins) != nodes:
            return PinPlan(None, f"the config's pins list names {len(config_pins)} pins but the "
                                 f"instance connects {nodes} nodes",
                           config_unknown=())
        pins, unknown = pins_from_names(part, config_pins, library.pin_names)
        if unknown:
            return PinPlan(None, "the config's pins list has names that name no pin of "
                                 f"{part.name}: {', '.join(unknown)}", config_unknown=unknown)
        return PinPlan(pins, f"pins from the config's pins list ({' '.join(config_pins)})")
    package = nodes == part.pin_count
    if subcircuit is not None and len(subcircuit.ports) == nodes:
        pins, unknown = pins_from_names(part, subcircuit.ports, library.pin_names)
        where = f".subckt {subcircuit.name} at {subcircuit.location}"
        if not unknown:
            return PinPlan(pins, f"pins by the port names of {where} "
                                 f"({' '.join(subcircuit.ports)})")
        if package:
            return PinPlan(_package(part), f"pins in the {part.pin_count}-pin package order "
                                           f"(the port names of {where} do not name pins: "
                                           f"{', '.join(unknown)})")
        return PinPlan(None, f"the port names of {where} do not name pins of {part.name} "
                             f"({', '.join(unknown)}), and the instance connects {nodes} nodes, "
                             f"not the package's {part.pin_count}; give the order in the "
                             f"config: [[parts]] pins = [...]")
    if package:
        return PinPlan(_package(part), f"pins in the {part.pin_count}-pin package order")
    return PinPlan(None, f"the instance connects {nodes} nodes, not the package's "
                         f"{part.pin_count}, and no .subckt line or config pins list names "
                         f"them (one gate per instance?); give the order in the config: "
                         f"[[parts]] designator = ..., pins = [...]")
