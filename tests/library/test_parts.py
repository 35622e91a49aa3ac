"""Part types: part-number resolution and pinout sanity."""

import tomllib

import pytest

from drc.datafiles import rules_path

RESOLVES = [
    # part number as written, generic type, family
    ("74HC14", "14", "HC"),
    ("74LS14", "14", "LS"),
    ("74LVC1G14", "1G14", "LVC"),
    ("40106B", "40106", "4000B"),
    ("CD4093BE", "4093", "4000B"),
    ("SN74HC14N", "14", "HC"),
    ("MC14490P", "4490", "4000B"),
    ("HEF4013BP", "4013", "4000B"),
    ("74AHCT1G04DBVR", "1G04", "AHCT"),
    ("54LS00J", "00", "LS"),
    ("CD4011UBE", "4011", "4000UB"),
    ("HEF4011UBT", "4011", "4000UB"),
    ("sn74hct132n", "132", "HCT"),
    ("74ALS04", "04", "ALS"),
    ("74F00", "00", "F"),
    ("74AC14", "14", "AC"),
    ("74ACT14", "14", "ACT"),
    ("74AHC14PW", "14", "AHC"),
    ("74LVX14", "14", "LVX"),
    ("74ALVC14", "14", "ALVC"),
    ("SN74LS393N", "393", "LS"),
    ("74HC161D", "161", "HC"),
    ("SN74HC74N", "74", "HC"),
    ("74HC14D,653", "14", "HC"),
    ("74HC14-Q100", "14", "HC"),
    ("MC14093BCP", "4093", "4000B"),   # Motorola 14xxx numbering, from memory
    ("MC14106B", "40106", "4000B"),
    ("4584B", "40106", "4000B"),        # same function and pinout, from memory
    ("CD4093", "4093", "4000B"),
]

REJECTS = [
    "",                 # empty
    "FOO",              # no number
    "LM358",            # an op-amp
    "NE555",
    "7414",             # plain 74 TTL: no family recorded
    "74HCU04",          # unbuffered HC: no family recorded
    "74FCT14",          # FCT: not a recorded family
    "74VHC14",          # VHC: not a recorded family
    "74HC4",            # function number incomplete
    "74HC999",          # unknown function
    "74LS1G14",         # single-gate parts are not made in LS
    "CD4069UBE",        # 4000 function not in the library
    "LM4040",           # a voltage reference, not the 4040 counter (and 4040 is not recorded)
    "CD4011AE",         # the older 4000A grade: other ratings, not guessed as B
    "SW_PUSH",          # a contact, not a part
]


@pytest.mark.parametrize("name,part_type,family", RESOLVES, ids=[c[0] for c in RESOLVES])
def test_part_numbers_resolve(library, name, part_type, family):
    resolved = library.resolve_part(name)
    assert resolved is not None, name
    assert (resolved.part_type.name, resolved.family, resolved.part_number) == \
        (part_type, family, name)


@pytest.mark.parametrize("name", REJECTS)
def test_unknown_names_resolve_to_none(library, name):
    assert library.resolve_part(name) is None


def test_every_74_type_resolves_in_every_family_it_is_made_in(library):
    letters = [f for f in library.families if f"74{f}" in library.family(f).aliases]
    assert {"LS", "ALS", "F", "HC", "HCT", "AC", "ACT", "AHC", "AHCT", "LVC", "LVX",
            "ALVC"} <= set(letters)
    for part in library.part_types.values():
        if part.series != "74":
            continue
        for family in letters:
            resolved = library.resolve_part(f"SN74{family}{part.name}N")
            if part.families is None or family in part.families:
                assert resolved is not None and resolved.part_type is part
                assert resolved.family == family
            else:
                assert resolved is None


def test_is_known_subcircuit(library):
    assert library.is_known_subcircuit("74HC14")
    assert library.is_known_subcircuit("SW_PUSH")
    assert not library.is_known_subcircuit("OPAMP_GENERIC")


def _raw_parts():
    with open(rules_path("parts.toml"), "rb") as handle:
        return tomllib.load(handle)["parts"]


def test_each_pin_appears_once_in_the_file():
    for name, part in _raw_parts().items():
        numbers = [p["n"] for p in part["pins"]]
        assert len(numbers) == len(set(numbers)), name
        assert sorted(numbers) == list(range(1, len(numbers) + 1)), name


def test_supply_pins_sit_at_the_usual_corners(library):
    # common practice, no source: 14/16-pin logic has VCC at the last pin and
    # GND at the last of the first row; 5-pin single gates GND 3, VCC 5.
    corners = {14: (14, 7), 16: (16, 8), 5: (5, 3)}
    for part in library.part_types.values():
        vcc, gnd = corners[part.pin_count]
        assert part.pins[vcc].role == "supply", part.name
        assert part.pins[gnd].role == "ground", part.name
        assert [p.number for p in part.pins.values() if p.role in ("supply", "ground")] \
            == sorted((vcc, gnd)), part.name


def test_gates_are_consistent(library):
    for part in library.part_types.values():
        gates = part.gates()
        assert gates, part.name
        for gate in gates.values():
            assert gate.inputs and gate.outputs, (part.name, gate)
        # Every gate of a multi-gate part has the same number of inputs/outputs.
        shapes = {(len(g.inputs), len(g.outputs)) for g in gates.values()}
        assert len(shapes) == 1, (part.name, shapes)
        # Every logic input belongs to a gate, except a shared oscillator input.
        for pin in part.inputs():
            assert pin.gate is not None or pin.function == "oscillator", (part.name, pin)


def test_nand_gate_one_is_pins_1_2_to_3(library):
    # from memory: the '00 / '132 / 4011 / 4093 gate 1 has inputs 1, 2 and output 3.
    for name in ("00", "132", "4011", "4093"):
        gate = library.part_types[name].gates()["1"]
        assert (gate.inputs, gate.outputs) == ((1, 2), (3,)), name


def test_schmitt_edge_and_debounce_flags(library):
    schmitt = {"14", "132", "1G14", "4093", "40106"}
    for part in library.part_types.values():
        data_inputs = [p for p in part.inputs() if p.function != "oscillator"]
        assert all(p.schmitt == (part.name in schmitt) for p in data_inputs), part.name
    d_ff = library.part_types["74"]
    assert [p.number for p in d_ff.inputs() if p.edge_sensitive] == [3, 11]
    assert {d_ff.pins[n].function for n in (1, 13)} == {"clear"}
    assert {d_ff.pins[n].function for n in (4, 10)} == {"preset"}
    assert not any(d_ff.pins[n].edge_sensitive for n in (1, 4, 10, 13))
    counter = library.part_types["393"]
    assert [p.number for p in counter.inputs() if p.edge_sensitive] == [1, 13]
    assert [p.number for p in library.part_types["4013"].inputs() if p.edge_sensitive] == [3, 11]
    assert [name for name, p in library.part_types.items() if p.debounces] == ["4490"]
    bouncer = library.part_types["4490"]
    assert all(p.internal_pull == "up" for p in bouncer.inputs() if p.function == "data")
    assert len([p for p in bouncer.inputs() if p.function == "data"]) == 6
