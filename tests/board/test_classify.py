"""classify: rails, contacts, parts and receivers from small netlists.

The expectations come from the netlists themselves and from facts of the
trade named beside each check. Pinouts are the usual 14-pin DIP pinouts of
the generic parts (rules/parts.toml marks them "from memory").
"""

from __future__ import annotations

import pytest

from drc.config.settings import Config, ContactConfig, McuConfig, McuPinConfig, PartConfig, RailConfig, Tolerances
from drc.errors import ConfigError

HC14 = "XU1 in1 o1 0 o2 0 o3 0 o4 0 o5 0 o6 0 {vcc} 74HC14"


def _rail(board, net):
    return board.rails[net.casefold()]


# ---------------------------------------------------------------- rails

def test_rails_from_sources_negative_and_chained(board_of):
    board = board_of("""rails
V1 +5V 0 DC 5
V2 0 NEG12 DC 12
V3 AUX +5V DC 1
R1 +5V a 10k
R2 NEG12 a 10k
R3 AUX a 1k
""")
    assert _rail(board, "+5V").voltage == 5.0
    # SPICE: V+ node first; a source with its + node on ground holds the
    # other node at minus its value (SPICE element convention, ngspice manual).
    assert _rail(board, "NEG12").voltage == -12.0
    assert _rail(board, "AUX").voltage == pytest.approx(6.0)
    assert _rail(board, "+5V").source == "V1"
    assert _rail(board, "+5V").tolerance == Tolerances().rail


def test_rail_tolerance_and_voltage_from_config(board_of):
    config = Config(rails=(RailConfig("vcc", 3.3, 0.02), RailConfig("+5v", 5.0, 0.1),
                           RailConfig("ELSEWHERE", 12.0)))
    board = board_of("""config rails
V1 +5V 0 DC 5
R1 VCC a 10k
R2 +5V b 10k
""", config)
    vcc = _rail(board, "VCC")
    assert (vcc.net, vcc.voltage, vcc.tolerance, vcc.source) == ("VCC", 3.3, 0.02, "config")
    assert _rail(board, "+5V").tolerance == 0.1  # a source's rail takes the config tolerance
    assert "elsewhere" not in board.rails  # a shared config may name nets this board lacks
    assert not board.diagnostics


def test_rail_named_net_without_voltage_is_a_diagnostic(board_of):
    board = board_of("""unnamed rails
R1 +3V3 a 10k
R2 VDD_IO b 10k
R3 5V0 c 10k
R4 +3.3V d 10k
R5 SIGNAL e 10k
""")
    assert board.rails == {}
    text = " ".join(d.message for d in board.diagnostics)
    for net in ("+3V3", "VDD_IO", "5V0", "+3.3V"):
        assert f"net {net} " in text
    assert "SIGNAL" not in text
    assert board.diagnostics[0].location.line == 2


# ---------------------------------------------------------------- contacts

def test_s_line_contacts_class_form_and_bounce(board_of, lib):
    board = board_of("""contacts
SW1 a 0 TACTILE
SW2 b 0
SW3 c 0 REED
SW4 d 0 TACTILE_NC
""")
    c = {x.designator: x for x in board.contacts}
    assert c["SW1"].contact_class == "tactile" and c["SW1"].form == "SPST-NO"
    assert c["SW2"].contact_class == "tactile"  # no name: the default class
    assert c["SW3"].contact_class == "reed"
    assert c["SW3"].bounce_s == lib.contact_classes["reed"].bounce_s
    assert c["SW4"].form == "SPST-NC"
    assert c["SW1"].terminals == ("a", "0") and c["SW1"].origin == "element"
    assert c["SW1"].location.line == 2


def test_bounce_precedence_config_then_cli_then_class(board_of, lib):
    text = """bounce
SW1 a 0 TACTILE
SW2 b 0 TACTILE
"""
    config = Config(contacts=(ContactConfig("SW2", bounce_s=3e-3),))
    class_default = lib.contact_classes["tactile"].bounce_s
    plain = board_of(text, config)
    assert [c.bounce_s for c in plain.contacts] == [class_default, 3e-3]
    cli = board_of(text, config, default_bounce_s=7e-3)
    assert [c.bounce_s for c in cli.contacts] == [7e-3, 3e-3]
    config_default = Config(contacts=config.contacts, default_bounce_s=5e-3)
    assert [c.bounce_s for c in board_of(text, config_default).contacts] == [5e-3, 3e-3]
    both = board_of(text, config_default, default_bounce_s=7e-3)
    assert [c.bounce_s for c in both.contacts] == [7e-3, 3e-3]


def test_config_contact_class_and_form(board_of):
    config = Config(contacts=(ContactConfig("SW*", contact_class="toggle"),
                              ContactConfig("SW9", form="SPST-NC")))
    board = board_of("""config contacts
SW1 a 0
SW9 b 0 TACTILE
""", config)
    c = {x.designator: x for x in board.contacts}
    assert c["SW1"].contact_class == "toggle"
    assert c["SW9"].contact_class == "toggle" and c["SW9"].form == "SPST-NC"


def test_unknown_config_contact_class_is_a_config_error(board_of):
    with pytest.raises(ConfigError, match="no-such-class"):
        board_of("bad\nSW1 a 0\n", Config(contacts=(ContactConfig("SW1", "no-such-class"),)))


def test_simulated_switch_is_not_a_contact_unless_configured(board_of):
    text = """simulated
S1 a 0 ctl 0 SWMOD
"""
    assert board_of(text).contacts == []
    board = board_of(text, Config(contacts=(ContactConfig("S1", contact_class="relay-power"),)))
    assert [(c.designator, c.terminals, c.origin) for c in board.contacts] == \
        [("S1", ("a", "0"), "config")]


def test_subcircuit_contacts_spst_and_spdt_common_first(board_of):
    board = board_of("""subcircuit contacts
XRL1 a 0 RELAY_POWER
XSW20 0 nc no TOGGLE_SPDT
""")
    c = {x.designator: x for x in board.contacts}
    assert c["RL1"].contact_class == "relay-power" and c["RL1"].form == "SPST-NO"
    assert c["RL1"].wetting_a is not None  # the power-relay class sets a wetting current
    assert c["SW20"].form == "SPDT"
    assert c["SW20"].terminals == ("0", "nc", "no")
    assert c["SW20"].origin == "subcircuit"


def test_dip_pack_gives_one_contact_per_pole(board_of):
    # A DIP package numbers pins around the body: position k joins pin k and
    # pin 2N+1-k (common practice, no source).
    board = board_of("""dip pack
XSW3 a1 a2 a3 0 0 0 DIP_SW3
""", Config(contacts=(ContactConfig("SW3", contact_class="dip"),)))
    poles = [(c.designator, c.terminals) for c in board.contacts]
    assert poles == [("SW3.1", ("a1", "0")), ("SW3.2", ("a2", "0")), ("SW3.3", ("a3", "0"))]
    assert {c.contact_class for c in board.contacts} == {"dip"}


def test_config_promotes_other_designators_to_contacts(board_of):
    board = board_of("""relay from config
XK1 a 0 ALIEN_RELAY
""", Config(contacts=(ContactConfig("K1", contact_class="relay-power"),)))
    assert [(c.designator, c.contact_class, c.origin) for c in board.contacts] == \
        [("K1", "relay-power", "config")]
    assert not board.diagnostics


# ---------------------------------------------------------------- parts

def test_part_receivers_one_per_input_pin(board_of):
    board = board_of("parts\nV1 +5V 0 DC 5\n" + HC14.format(vcc="+5V") + "\n")
    part = board.parts["u1"]
    assert part.part_type == "14" and part.family == "HC"
    inputs = sorted(r.pin for r in board.receivers)
    assert inputs == [1, 3, 5, 9, 11, 13]  # the '14's six A inputs
    r1 = next(r for r in board.receivers if r.pin == 1)
    assert (r1.part, r1.net, r1.schmitt, r1.supply_v, r1.ref) == ("U1", "in1", True, 5.0, "U1:1")
    assert not r1.dedicated_debounce
    assert r1.gate is not None


def test_flip_flop_clock_is_edge_sensitive(board_of):
    board = board_of("""ff
V1 +5V 0 DC 5
XU2 +5V d clk +5V q qn 0 n8 n9 +5V 0 0 +5V +5V 74HC74
""")
    by_pin = {r.pin: r for r in board.receivers}
    assert by_pin[3].edge_sensitive and by_pin[3].function == "clock"
    assert not by_pin[2].edge_sensitive


def test_unknown_part_reported_once_per_name(board_of):
    board = board_of("""unknown
V1 +5V 0 DC 5
XA1 a b MYSTERY
XA2 c d MYSTERY
XA3 e f OTHER_THING
""")
    messages = [d.message for d in board.diagnostics]
    assert sum("MYSTERY" in m for m in messages) == 1
    assert sum("OTHER_THING" in m for m in messages) == 1
    assert board.parts == {} and board.receivers == []


def test_supply_not_on_a_rail_gives_no_receivers(board_of):
    board = board_of("no rail\n" + HC14.format(vcc="floating_supply") + "\n")
    assert board.receivers == []
    assert any("supply" in d.message for d in board.diagnostics)


def test_config_part_mapping(board_of):
    board = board_of("""mapped
V1 +5V 0 DC 5
XU7 in1 o1 0 o2 0 o3 0 o4 0 o5 0 o6 0 +5V CUSTOM_HEX
""", Config(parts=(PartConfig("U7", part_number="74HC14", family="HCT"),)))
    assert board.parts["u7"].family == "HCT"
    assert {r.family for r in board.receivers} == {"HCT"}


def test_mcu_pins_from_config(board_of):
    config = Config(mcus=(McuConfig("U9", "MCU-3V3", supply_pins=(1,), ground_pins=(2,), pins=(
        McuPinConfig("U9", 3, "MCU-3V3", pull="up", pull_min_ohms=20e3, pull_max_ohms=60e3,
                     debounce_s=20e-3),
        McuPinConfig("U9", 4, "MCU-3V3", schmitt=False)),),))
    board = board_of("""mcu
V2 +3V3 0 DC 3.3
XU9 +3V3 0 KEY1 KEY2 n5 CTRL_CHIP
""", config)
    assert not board.diagnostics  # a configured MCU is not an unknown part
    by_pin = {r.pin: r for r in board.receivers}
    assert set(by_pin) == {3, 4}
    key1 = by_pin[3]
    assert (key1.net, key1.supply_v, key1.firmware_debounce_s) == ("KEY1", 3.3, 20e-3)
    assert (key1.internal_pull.direction, key1.internal_pull.r_min,
            key1.internal_pull.r_max) == ("up", 20e3, 60e3)
    assert not by_pin[4].schmitt and by_pin[4].internal_pull is None
    assert board.parts["u9"].part_type == "mcu"


def test_annotation_debounces_are_applied_during_classification(board_of):
    # `*@drc debounce PART:PIN TIME` reaches classify as "part:pin" (case-folded) -> seconds;
    # it wins over the config's debounce and also applies to a logic part's pin.
    config = Config(mcus=(McuConfig("U9", "MCU-3V3", supply_pins=(1,), ground_pins=(2,), pins=(
        McuPinConfig("U9", 3, "MCU-3V3", debounce_s=20e-3),
        McuPinConfig("U9", 4, "MCU-3V3")),),))
    board = board_of("""debounce
V1 +5V 0 DC 5
V2 +3V3 0 DC 3.3
XU9 +3V3 0 KEY1 KEY2 CTRL_CHIP
""" + HC14.format(vcc="+5V") + "\n", config, debounces={"u9:3": 30e-3, "u1:1": 5e-3})
    by_ref = {r.ref: r.firmware_debounce_s for r in board.receivers}
    assert by_ref["U9:3"] == 30e-3 and by_ref["U9:4"] is None
    assert by_ref["U1:1"] == 5e-3 and by_ref["U1:3"] is None


def test_annotation_debounce_makes_a_firmware_stage(tmp_path):
    from drc.pipeline import CheckOptions, check_board_in_memory
    board = tmp_path / "b.cir"
    board.write_text("annotated\n*@drc debounce U1:1 20ms\nV1 +5V 0 DC 5\nR1 +5V in1 10k\n"
                     "SW1 in1 0 SW_PUSH\n" + HC14.format(vcc="+5V") + "\n.end\n")
    check = check_board_in_memory(board, CheckOptions(propose_fixes=False))
    [result] = check.results
    assert result.stage.kind == "firmware"
    assert result.stage.receiver.firmware_debounce_s == pytest.approx(20e-3)
