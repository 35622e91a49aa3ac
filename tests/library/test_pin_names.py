"""Port names of a per-gate instance's .subckt line (or a config pins list) to pin roles.

The names are the ones schematic symbols and simulator models use (A, B, Y,
VCC, GND, VDD, VSS, IN, OUT, numbered 1A/2Y, active-low marks); the roles
they must give follow from the parts.toml pinouts (the usual pinouts, from
memory). A name that names no pin fails the mapping: never a guess.
"""

import pytest

from drc.library.pin_names import normal_name, pins_from_names

CASES = [
    # part, port names, (role, function, gate) per port
    ("14", ("A", "Y", "VCC", "GND"), [("input", "data", "1"), ("output", "output", "1"),
                                      ("supply", "supply", None), ("ground", "ground", None)]),
    ("14", ("IN", "OUT", "VDD", "VSS"), [("input", "data", "1"), ("output", "output", "1"),
                                         ("supply", "supply", None), ("ground", "ground", None)]),
    ("00", ("2A", "2B", "2Y", "VCC", "0"), [("input", "data", "2"), ("input", "data", "2"),
                                            ("output", "output", "2"), ("supply", "supply", None),
                                            ("ground", "ground", None)]),
    ("00", ("A3", "B3", "Y3", "VCC", "GND"), [("input", "data", "3"), ("input", "data", "3"),
                                              ("output", "output", "3"), ("supply", "supply", None),
                                              ("ground", "ground", None)]),
    ("74", ("D", "CLK", "~PRE", "CLR_N", "Q", "QB", "VCC", "GND"),
     [("input", "data", "1"), ("input", "clock", "1"), ("input", "preset", "1"), ("input", "clear", "1"),
      ("output", "output", "1"), ("output", "output", "1"), ("supply", "supply", None),
      ("ground", "ground", None)]),
    ("4013", ("D", "CP", "S", "R", "Q", "QN", "VDD", "VSS"),
     [("input", "data", "1"), ("input", "clock", "1"), ("input", "set", "1"), ("input", "reset", "1"),
      ("output", "output", "1"), ("output", "output", "1"), ("supply", "supply", None),
      ("ground", "ground", None)]),
    ("LM393", ("IN+", "IN-", "V+", "V-", "OUT"),
     [("input", "noninverting", "1"), ("input", "inverting", "1"), ("supply", "supply", None),
      ("ground", "ground", None), ("output", "output", "1")]),
]


@pytest.mark.parametrize("part,ports,want", CASES, ids=[f"{c[0]}:{' '.join(c[1])}" for c in CASES])
def test_port_names_give_roles(library, part, ports, want):
    pins, unknown = pins_from_names(library.part_types[part], ports, library.pin_names)
    assert unknown == ()
    assert [(p.role, p.function, p.gate) for p in pins] == want
    assert [p.number for p in pins] == list(range(1, len(ports) + 1))
    assert [p.name for p in pins] == list(ports)


def test_schmitt_and_edge_flags_come_from_the_part(library):
    pins, _ = pins_from_names(library.part_types["14"], ("A", "Y", "VCC", "GND"), library.pin_names)
    assert pins[0].schmitt
    pins, _ = pins_from_names(library.part_types["74"], ("D", "CK", "Q", "VCC", "GND"), library.pin_names)
    assert [p.edge_sensitive for p in pins[:2]] == [False, True]


def test_pin_numbers_name_the_package_only_when_all_pins_are_there(library):
    part = library.part_types["14"]
    whole = tuple(f"P{n}" for n in range(1, 15))
    pins, unknown = pins_from_names(part, whole, library.pin_names)
    assert unknown == () and [p.role for p in pins] == [s.role for s in part.pins.values()]
    # four numbered ports of a 14-pin part: which four pins? unknown, never guessed
    pins, unknown = pins_from_names(part, ("1", "2", "3", "4"), library.pin_names)
    assert unknown == ("1", "2", "3", "4")


def test_an_unknown_name_fails(library):
    _pins, unknown = pins_from_names(library.part_types["14"], ("A", "Y", "VCC", "SHIELD"), library.pin_names)
    assert unknown == ("SHIELD",)


@pytest.mark.parametrize("written,normal", [("IN+", "INP"), ("IN-", "INN"), ("V-", "VN"), ("~CLR", "CLR"),
                                            ("CLR_N", "CLRN"), ("/Q", "Q"), ("1a", "1A")])
def test_normal_names(written, normal):
    assert normal_name(written) == normal
