"""Builds the small example netlists that rule documentation carries.

Every example is one switch stage on a 5 V rail feeding input 1A (pin 1) of
a hex inverter in the standard 14-pin pinout (1A 1, 1Y 2, 2A 3, 2Y 4, 3A 5,
3Y 6, GND 7, 4Y 8, 4A 9, 5Y 10, 5A 11, 6Y 12, 6A 13, VCC 14), the five
unused inputs tied to ground. The helper only saves writing that instance
line twelve times; each rule module still spells out its own stage.
"""

from __future__ import annotations


def inverter_instance(part: str = "74HC14", input_net: str = "in", vcc_net: str = "vcc",
                      designator: str = "XU1") -> str:
    """`XU1 in y1 0 y2 0 y3 0 y4 0 y5 0 y6 0 vcc 74HC14`: 14 nets in pin order."""
    nets = [input_net, "y1", "0", "y2", "0", "y3", "0", "y4", "0", "y5", "0", "y6", "0", vcc_net]
    return f"{designator} {' '.join(nets)} {part}"


def netlist(title: str, *lines: str, part: str = "74HC14", vcc_net: str = "vcc") -> str:
    """A complete example deck: title, the stage's lines, the receiver, `.end`."""
    body = "\n".join(lines)
    return f"* {title}\n{body}\n{inverter_instance(part, vcc_net=vcc_net)}\n.end\n"


# The reference stage every example starts from: a 10 ms tactile contact,
# 8.2 kΩ pull-up, 39 kΩ / 1 µF filter into a Schmitt input. Both edges take
# 12-80 ms between the fastest and slowest corners, so it clears a 10 ms
# bounce and a 100 ms latency on a Schmitt or a plain HC input's thresholds.
def debounced_stage(r1: str = "8.2k", r2: str = "39k", c1: str = "1u",
                    contact: str = "TACTILE", extra: tuple[str, ...] = ()) -> tuple[str, ...]:
    return ("V1 vcc 0 DC 5", f"R1 vcc n1 {r1}", f"SW1 n1 0 {contact}",
            f"R2 n1 in {r2}", f"C1 in 0 {c1}", *extra)
