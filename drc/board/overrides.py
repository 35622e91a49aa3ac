"""Warnings for config entries that override a part number written in the netlist.

A `[[parts]]` entry with a part number, or an `[[mcu]]` entry, tells drc what
a part is; that is what they are for when the netlist names a part the
library does not know. When the netlist already names a part the library
knows (a 74HC04) and the entry says something else (a 74HC14, a
microcontroller), the config wins, but silently re-defining a part is how one
board's entry ends up changing another board (a root config, the same
designator): so each such override is a located warning, naming the entry
and the part number it overrides. Scoping the entry to its boards
(drc.config.scope) is the usual fix.
"""

from __future__ import annotations

from drc.board.classify import display_designator, matches
from drc.config.settings import Config
from drc.library.catalogue import Library
from drc.netlist.elements import Diagnostic, Netlist


def override_warnings(netlist: Netlist, library: Library, config: Config) -> list[Diagnostic]:
    """One warning per X instance whose written, known part number a config entry overrides."""
    entries = [e for e in config.parts if e.part_number] + list(config.mcus)
    if not entries:
        return []
    out: list[Diagnostic] = []
    for element in netlist.elements:
        if element.kind != "X" or not element.model:
            continue
        written = library.resolve_part(element.model)
        if written is None:
            continue  # the netlist names no part the library knows: nothing to override
        for mcu in config.mcus:
            if matches(mcu.part, element):
                out.append(Diagnostic(
                    f"{display_designator(element)}: the [[mcu]] entry at {mcu.origin or 'the config'} "
                    f"makes it a microcontroller ({mcu.family}), overriding the {element.model} written "
                    f"in the netlist{_advice(mcu.boards)}", element.location))
                break
        else:
            _part_override(element, library, config, written, out)
    return out


def _advice(boards: tuple[str, ...] | None) -> str:
    """An unscoped entry reaches every board: say how to keep it on its own."""
    return "; scope the entry with board = [...] if it is meant for another board" if boards is None else ""


def _part_override(element, library: Library, config: Config, written, out: list[Diagnostic]) -> None:
    for part in config.parts:
        if not part.part_number or not matches(part.pattern, element):
            continue
        given = library.resolve_part(part.part_number)
        if given is not None and (given.part_type, given.family) == (written.part_type, written.family):
            continue  # the same part, spelt another way (SN74HC14N for 74HC14)
        out.append(Diagnostic(
            f"{display_designator(element)}: the [[parts]] entry at {part.origin or 'the config'} "
            f"makes it a {part.part_number}, overriding the {element.model} written in the netlist"
            f"{_advice(part.boards)}", element.location))
        return
