"""Which pin of a part type a port name names: per-gate instances read by name.

Exports often write one gate per instance (`XU1A in out VCC 0 74HC14`) with a
`.subckt 74HC14 A Y VCC GND` line in a model library; a config `[[parts]]`
entry can give the same names (`pins = ["A", "Y", "VCC", "GND"]`). Each name
is matched, in this order, against: the part type's own pin names (`1A`,
`CLOCK1`, `VCC`); a pin number when the names are the package's numbers;
the pin's name without its gate digits (`A`, `2A`, `A2` all name an A
input); the synonym groups of parts.toml [pin_names] (`CK` names `CLK`); the
supply and ground words; the generic input and output words (`IN`, `OUT`).
Active-low marks are tried off (`~CLR`, `CLR_N`, `nCLR` name `CLR`). A name
that matches none of these fails the whole mapping: an order is never
guessed (the caller reports the instance as having an unknown pin order).
"""

from __future__ import annotations

import re
from dataclasses import replace

from drc.library.entries import PartType, PinNames, PinRole, PinSpec

_MARKS = re.compile(r"[^A-Z0-9]")
_PIN_NUMBER = re.compile(r"^(?:PIN|P)?(\d+)$")
_GATE_DIGITS = re.compile(r"^(\d*)([A-Z][A-Z0-9]*?)(\d*)$")


def normal_name(name: str) -> str:
    """Upper case, + as P and - as N (IN+ -> INP, V- -> VN), other marks dropped."""
    text = name.strip().upper().lstrip("~/!\\#")
    text = text.replace("+", "P").replace("-", "N")
    return _MARKS.sub("", text)


def _split(name: str) -> tuple[str, str]:
    """(base, gate digits): `1A` -> (A, 1), `CLOCK2` -> (CLOCK, 2), `VCC` -> (VCC, "")."""
    m = _GATE_DIGITS.match(name)
    if not m:
        return name, ""
    lead, base, trail = m.groups()
    return base, lead or trail


def _variants(name: str) -> list[str]:
    """The name, then without an active-low mark (CLRN, NCLR -> CLR)."""
    out = [name]
    if len(name) > 2 and name.endswith(("N", "B", "L")):
        out.append(name[:-1])
    if len(name) > 2 and name.startswith("N"):
        out.append(name[1:])
    return out


class _PartNames:
    """The part type's pins by full name, by number and by base name."""

    def __init__(self, part: PartType) -> None:
        self.part = part
        self.full: dict[str, PinSpec] = {}
        self.base: dict[str, list[PinSpec]] = {}
        for spec in part.pins.values():
            name = normal_name(spec.name)
            self.full.setdefault(name, spec)
            self.base.setdefault(_split(name)[0], []).append(spec)

    def by_base(self, base: str, gate: str, names: PinNames) -> PinSpec | None:
        for candidate in sorted(names.group(base), key=lambda n: (n != base, n)):
            specs = self.base.get(candidate)
            if specs:
                same_gate = [s for s in specs if s.gate == gate]
                return (same_gate or specs)[0]
        return None

    def first(self, role: PinRole) -> PinSpec | None:
        specs = [s for s in self.part.pins.values() if s.role == role]
        data = [s for s in specs if s.function == "data"]
        found = data or specs
        return found[0] if found else None


def _spec_for(table: _PartNames, name: str, count_is_package: bool,
              names: PinNames) -> tuple[PinSpec | None, str]:
    """The library pin (or a role-only pin) that `name` names, or None; and the
    gate digits the name carries when it named the pin by its base name (2A)."""
    if name in table.full:
        return table.full[name], ""
    if name == "0":  # the ground node as a port name
        return PinSpec(0, name, PinRole.GROUND, False, False, "ground", None), ""
    numbered = _PIN_NUMBER.match(name)
    if numbered:  # 3, P3, PIN3: the package's pin 3, when the names are the whole package
        return (table.part.pins.get(int(numbered.group(1))) if count_is_package else None), ""
    for variant in _variants(name):
        base, gate = _split(variant)
        found = table.by_base(base, gate, names)
        if found is not None:
            return found, gate
    return _role_word(table, name, names), ""


def _role_word(table: _PartNames, name: str, names: PinNames) -> PinSpec | None:
    """A supply, ground, generic input or generic output word."""
    if name in names.supply:
        return PinSpec(0, name, PinRole.SUPPLY, False, False, "supply", None)
    if name in names.ground:
        return PinSpec(0, name, PinRole.GROUND, False, False, "ground", None)
    base, _gate = _split(name)
    if name in names.inputs or base in names.inputs:
        return table.first(PinRole.INPUT)
    if name in names.outputs or base in names.outputs:
        return table.first(PinRole.OUTPUT)
    return None


def pins_from_names(part: PartType, ports: tuple[str, ...],
                    names: PinNames) -> tuple[tuple[PinSpec, ...], tuple[str, ...]]:
    """(pins in port order, numbered from 1; names no rule matched).

    The mapping holds only when the second item is empty. A pin keeps the
    library pin's role, function and flags; its gate is the port's own gate
    digits when it has them, else the library pin's.
    """
    table = _PartNames(part)
    gates = {spec.gate for spec in part.pins.values() if spec.gate is not None}
    count_is_package = len(ports) == part.pin_count
    pins: list[PinSpec] = []
    unknown: list[str] = []
    for position, port in enumerate(ports, start=1):
        name = normal_name(port)
        spec, digits = _spec_for(table, name, count_is_package, names) if name else (None, "")
        if spec is None:
            unknown.append(port)
            continue
        # The port's digits name its gate when the part has such a gate (2A: gate 2);
        # otherwise they number a bit (D3 of a shift register) and the pin keeps its own.
        gate = digits if spec.gate is not None and digits in gates else spec.gate
        pins.append(replace(spec, number=position, name=port, gate=gate))
    return tuple(pins), tuple(unknown)
