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
    # issue 12: the 74/4000 functions boards put behind switches, and how exports write them
    ("CD4069UBE", "4069", "4000UB"),
    ("MM74C14N", "14", "74C"),
    ("74C922", "922", "74C"),
    ("SN74LVC2G14DBVR", "2G14", "LVC"),
    ("74AHC3G14DC", "3G14", "AHC"),
    ("74LVC1G17GW,125", "1G17", "LVC"),
    ("CD74HC4067M96", "4067", "HC"),
    ("HEF4051BT", "4051", "4000B"),
    ("MC14021BCP", "4021", "4000B"),
    ("CD4014BE", "4014", "4000B"),
    ("MC14532BCP", "4532", "4000B"),
    ("SN74HC165N", "165", "HC"),
    ("74HCT597D", "597", "HCT"),
    ("SN74LS279N", "279", "LS"),
    ("74ALS541", "541", "ALS"),
    ("74F245", "245", "F"),
    ("SN74LS148N", "148", "LS"),
    ("74HC251D", "251", "HC"),
    ("74LS19", "19", "LS"),
    ("74xx:74HC14", "14", "HC"),          # a tool's library prefix before ':'
    ("CMOS_CD4093BE", "4093", "4000B"),   # a library prefix before '_'
    ("U_SN74HC00_1", "00", "HC"),         # prefix and a suffix after '_'
    ("LM393DR", "LM393", "COMPARATOR-BIPOLAR"),
    ("LM2903", "LM393", "COMPARATOR-BIPOLAR"),
    ("PC817C", "PC817", ""),
    ("4N35", "4N35", ""),
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
    "CD4511BE",         # 4000 function not in the library
    "LM4040AIZ",        # a voltage reference: LM is no 4000-series maker prefix
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


# Logic parts whose supply pins are not at the usual corners, with where they
# are (from memory, the same pinouts as parts.toml: the '73 and '76 have VCC
# in the first row, the 4049/4050 VDD at pin 1, the 4051 VEE at pin 7).
SUPPLY_EXCEPTIONS = {"73": (4, 11), "76": (5, 13), "4049": (1, 8), "4050": (1, 8),
                     "4051": (16, 7, 8), "922": (18, 9)}


def test_supply_pins_sit_at_the_usual_corners(library):
    # common practice, no source: DIP/SOIC logic has VCC at the last pin and GND
    # at the last of the first row; 5-pin single gates GND 3, VCC 5; 6-pin dual
    # gates GND 2, VCC 5; 8-pin triple gates GND 4, VCC 8.
    corners = {14: (14, 7), 16: (16, 8), 20: (20, 10), 24: (24, 12), 5: (5, 3), 6: (5, 2), 8: (8, 4)}
    for part in library.part_types.values():
        if part.kind != "logic":
            continue
        vcc, *gnd = SUPPLY_EXCEPTIONS[part.name] if part.name in SUPPLY_EXCEPTIONS \
            else corners[part.pin_count]
        assert part.pins[vcc].role == "supply", part.name
        assert all(part.pins[g].role == "ground" for g in gnd), part.name
        assert [p.number for p in part.pins.values() if p.role in ("supply", "ground")] \
            == sorted((vcc, *gnd)), part.name


def test_gates_are_consistent(library):
    for part in library.part_types.values():
        gates = part.gates()
        assert gates, part.name
        if part.kind == "optocoupler":
            continue  # an LED in, a transistor out: no logic gate
        analog = any(p.role == "analog" for p in part.pins.values())
        for gate in gates.values():
            bidirectional = all(part.pins[n].function == "bidirectional" for n in gate.inputs)
            assert gate.inputs and (gate.outputs or analog or bidirectional), (part.name, gate)
        # Every gate of a multi-gate part has the same number of inputs/outputs,
        # except latches with extra set inputs ('279 latches 1 and 3).
        shapes = {(len(g.inputs), len(g.outputs)) for g in gates.values()}
        assert len(shapes) == 1 or part.latch, (part.name, shapes)
        # Every logic input belongs to a gate, except a shared oscillator, enable or select input.
        for pin in part.inputs():
            assert pin.gate is not None or pin.function in ("oscillator", "enable", "select", "direction"), \
                (part.name, pin)


def test_nand_gate_one_is_pins_1_2_to_3(library):
    # from memory: the '00 / '132 / 4011 / 4093 gate 1 has inputs 1, 2 and output 3.
    for name in ("00", "132", "4011", "4093"):
        gate = library.part_types[name].gates()["1"]
        assert (gate.inputs, gate.outputs) == ((1, 2), (3,)), name


def test_schmitt_edge_and_debounce_flags(library):
    schmitt = {"14", "132", "19", "1G14", "1G17", "2G14", "2G17", "3G14", "4093", "40106"}
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
    assert [name for name, p in library.part_types.items() if p.debounces] == ["4490", "922"]
    bouncer = library.part_types["4490"]
    assert all(p.internal_pull == "up" for p in bouncer.inputs() if p.function == "data")
    assert len([p for p in bouncer.inputs() if p.function == "data"]) == 6


# The functions issue 12 asks the library to cover, as generic numbers
# (74-series, then 4000-series); each must resolve in every 74-letter family
# of families.toml (74C included) or in 4000B, as its numbering says.
ISSUE_12_FUNCTIONS_74 = ["00", "02", "04", "08", "14", "19", "32", "86", "132", "244", "245", "541",
                         "279", "74", "109", "112", "161", "163", "193", "393", "165", "166", "597",
                         "151", "251", "148"]
ISSUE_12_SINGLE_GATES = ["1G14", "1G17", "2G14", "3G14"]
ISSUE_12_FUNCTIONS_4000 = ["4011", "4093", "40106", "4013", "4014", "4021", "4051", "4067", "4532"]


def test_the_issue_12_functions_are_covered(library):
    letters = {a.upper()[2:]: f.name for f in library.families.values() for a in f.aliases
               if a.upper()[:2] == "74" and a.upper()[2:].isalpha()}
    assert {"LS", "ALS", "F", "HC", "HCT", "AC", "ACT", "AHC", "AHCT", "LVC", "LVX", "ALVC", "C"} \
        <= set(letters)
    for number in ISSUE_12_FUNCTIONS_74:
        for letter, family in letters.items():
            resolved = library.resolve_part(f"SN74{letter}{number}N")
            assert resolved is not None and resolved.family == family, (number, letter)
    for number in ISSUE_12_SINGLE_GATES:  # made in the CMOS families only (from memory)
        for letter in ("LVC", "AHC", "AHCT", "HC", "HCT"):
            assert library.resolve_part(f"74{letter}{number}DBVR") is not None, (number, letter)
    for number in ISSUE_12_FUNCTIONS_4000:
        resolved = library.resolve_part(f"CD{number}BE")
        assert resolved is not None and resolved.family == "4000B", number


def test_families_of_agrees_with_resolution(library):
    """The library's size (functions x families) as read from the data agrees with
    what part numbers actually resolve to."""
    letters = {a.upper()[2:] for f in library.families.values() for a in f.aliases
               if a.upper()[:2] == "74" and a.upper()[2:].isalpha()}
    pairs = 0
    for part in library.part_types.values():
        probed = set()
        for series in part.numberings:
            if series == "74":
                probed |= {r.family for r in (library.resolve_part(f"74{x}{part.name}") for x in letters)
                           if r is not None and r.part_type is part}
            elif series == "4000":
                probed |= {r.family for r in (library.resolve_part(f"CD{part.name}{g}E") for g in ("B", "UB"))
                           if r is not None and r.part_type is part}
            else:
                resolved = library.resolve_part(part.name)
                assert resolved is not None and resolved.part_type is part
                if resolved.family:  # an optocoupler has no logic family
                    probed.add(resolved.family)
        assert tuple(sorted(probed)) == library.families_of(part), part.name
        pairs += len(probed)
    logic = [p for p in library.part_types.values() if p.kind == "logic"]
    logic_pairs = sum(len(library.families_of(p)) for p in logic)
    print(f"\npart library: {len(logic)} logic functions, {logic_pairs} function x family pairs; "
          f"{len(library.part_types) - len(logic)} comparators and optocouplers; {pairs} pairs in all")
    assert logic_pairs >= 13 * len(ISSUE_12_FUNCTIONS_74)
