"""recognise: stage kinds, resistor roles, throws and circuits of small netlists.

Each netlist is one of the textbook switch-input topologies (pull-up or
pull-down resistor, RC filter into a Schmitt or plain input, SR-latch
debouncer with a changeover contact and a cross-coupled NAND pair, firmware
debounce behind an MCU pin's internal pull-up; common practice, no source).
The expected kind, roles and throws follow from the topology as drawn.
Pinouts are the usual 14-pin DIP pinouts (from memory, as in rules/parts.toml).
"""

from __future__ import annotations

import pytest

from drc.board.recognise import recognise, stages_for_board
from drc.board.stage import STAGE_KINDS
from drc.board.trace import trace_paths
from drc.config.settings import Config, McuConfig, McuPinConfig, Tolerances

# '14 hex Schmitt inverter and '04 hex inverter: inputs 1 3 5 9 11 13, GND 7, VCC 14.
HC14 = "XU1 {a} o1 0 o2 0 o3 0 o4 0 o5 0 o6 0 +5V 74HC14\n"
HC04 = "XU1 {a} o1 0 o2 0 o3 0 o4 0 o5 0 o6 0 +5V 74HC04\n"
SUPPLY = "V1 +5V 0 DC 5\n"


@pytest.fixture
def stages(board_of):
    def make(text: str, config: Config | None = None):
        config = config or Config()
        return stages_for_board(board_of(text, config), config)
    return make


def roles(stage) -> dict[str, str]:
    return {r.designator: r.role for r in stage.circuit.resistors}


def throws(stage) -> list[tuple[str, str, str]]:
    return [(t.a, t.b, t.closed_when) for t in stage.circuit.throws]


def test_rc_into_schmitt_with_pull_up_and_series_resistor(stages):
    [stage] = stages("rc schmitt\n" + SUPPLY + HC14.format(a="IN") + """
R1 +5V SWN 10k
R2 SWN IN 47k
C1 IN 0 470n
SW1 SWN 0 TACTILE
""")
    assert stage.kind == "rc-schmitt"
    assert stage.receiver.ref == "U1:1"
    assert stage.parts == ("C1", "R1", "R2")
    assert roles(stage) == {"R1": "pull", "R2": "series"}
    assert throws(stage) == [("SWN", "0", "pressed")]
    assert stage.circuit.receiver_node == "IN"
    assert [(s.net, s.volts) for s in stage.circuit.rails] == [("+5V", 5.0)]
    assert set(stage.nets) == {"+5V", "SWN", "IN"}
    cap = stage.circuit.capacitors[0]
    assert cap.farads == pytest.approx(470e-9)
    assert cap.tol_minus == Tolerances().capacitor  # default where neither netlist nor config says
    assert stage.circuit.resistors[0].tol_plus == Tolerances().resistor


def test_rc_into_plain_input(stages):
    [stage] = stages("rc plain\n" + SUPPLY + HC04.format(a="IN") + """
R1 +5V SWN 10k
R2 SWN IN 4.7k
C1 IN 0 220n
SW1 SWN 0 TACTILE
""")
    assert stage.kind == "rc"


def test_capacitor_straight_across_contact_is_still_rc(stages):
    # Charged through the pull-up, dumped through the bare contact: an RC
    # stage whose press edge the analysis finds too fast.
    [stage] = stages("cap across contact\n" + SUPPLY + HC14.format(a="IN") + """
R1 +5V IN 10k
C1 IN 0 100n
SW1 IN 0 TACTILE
""")
    assert stage.kind == "rc-schmitt"
    assert roles(stage) == {"R1": "pull"}


def test_pull_only_into_flip_flop_clock(stages):
    [stage] = stages("pull only\n" + SUPPLY + """
XU2 +5V d CLK +5V q qn 0 n8 n9 +5V 0 0 +5V +5V 74HC74
R10 +5V CLK 10k
SW4 CLK 0 TOGGLE
""")
    assert stage.kind == "pull-only"
    assert stage.receiver.ref == "U2:3" and stage.receiver.edge_sensitive
    assert roles(stage) == {"R10": "pull"}


def test_direct_contact_into_nand_input(stages):
    [stage] = stages("direct\n" + SUPPLY + """
XU13 TEST_EN +5V n3 0 0 n6 0 n8 0 0 n11 0 0 +5V 74HC00
SW15 TEST_EN 0 SLIDE
""")
    assert stage.kind == "direct"
    assert stage.parts == ()
    assert stage.circuit.resistors == ()


def test_contact_to_rail_with_pull_down(stages):
    [stage] = stages("pull down\n" + SUPPLY + HC04.format(a="ADDR0") + """
SW10 +5V ADDR0 DIP
R10 ADDR0 0 10k
""")
    assert stage.kind == "pull-only"
    assert roles(stage) == {"R10": "pull"}
    assert throws(stage) == [("+5V", "ADDR0", "pressed")]


def test_normally_closed_contact_closes_when_released(stages):
    [stage] = stages("nc\n" + SUPPLY + HC14.format(a="IN") + """
R1 +5V IN 10k
SW1 IN 0 TACTILE_NC
""")
    assert stage.contact.form == "SPST-NC"
    assert throws(stage) == [("IN", "0", "released")]


def test_diode_for_asymmetric_edges(stages, lib):
    [stage] = stages("diode\n" + SUPPLY + HC14.format(a="IN") + """
R31 +5V SWN 100k
R32 SWN IN 47k
D31 IN SWN 1N4148
C31 IN 0 470n
SW31 SWN 0 TACTILE
.model 1N4148 D(IS=2.5n N=1.75)
""")
    assert stage.kind == "rc-schmitt"
    assert stage.parts == ("C31", "D31", "R31", "R32")
    [diode] = stage.circuit.diodes
    assert (diode.anode, diode.cathode) == ("IN", "SWN")
    # The card's IS and N; RS left out, so the SPICE default of rules/limits.toml.
    assert diode.card is not None
    assert (diode.card.saturation_a, diode.card.emission) == (2.5e-9, 1.75)
    assert diode.card.series_ohms == lib.limits["diode_series_resistance"].value
    assert diode.card.defaulted == ("RS",)


def test_a_diode_without_a_card_is_piecewise_linear(stages, lib):
    [stage] = stages("diode\n" + SUPPLY + HC14.format(a="IN") + """
R31 +5V SWN 100k
R32 SWN IN 47k
D31 IN SWN 1N4148
C31 IN 0 470n
SW31 SWN 0 TACTILE
""")
    [diode] = stage.circuit.diodes
    assert diode.card is None
    assert diode.forward_v == lib.limits["diode_forward_voltage"].value
    assert diode.on_ohms == lib.limits["diode_on_resistance"].value


def test_two_rc_sections_in_series(stages):
    [stage] = stages("two sections\n" + SUPPLY + HC14.format(a="HAZE") + """
R33 +5V SWN 22k
R34 SWN MID 22k
C33 MID 0 220n
R35 MID HAZE 22k
C34 HAZE 0 220n
SW32 SWN 0 TACTILE
""")
    assert stage.kind == "rc-schmitt"
    assert roles(stage) == {"R33": "pull", "R34": "series", "R35": "series"}
    assert len(stage.circuit.capacitors) == 2


def test_resistor_off_the_route_is_other(stages):
    # R2 and C1 form a branch to ground; R2 is not between contact and input.
    [stage] = stages("branch\n" + SUPPLY + HC14.format(a="IN") + """
R1 +5V IN 10k
R2 IN MID 1k
C1 MID 0 100n
SW1 IN 0 TACTILE
""")
    assert roles(stage) == {"R1": "pull", "R2": "other"}


def test_several_receivers_on_one_net_each_get_a_stage(stages):
    result = stages("two receivers\n" + SUPPLY + """
XU1 IN o1 IN o2 0 o3 0 o4 0 o5 0 o6 0 +5V 74HC14
R1 +5V IN 10k
C1 IN 0 100n
SW1 IN 0 TACTILE
""")
    assert [s.receiver.ref for s in result] == ["U1:1", "U1:3"]
    assert all(s.kind == "rc-schmitt" and s.parts == ("C1", "R1") for s in result)


def test_tolerance_from_element_parameter_and_config(stages):
    text = "tolerances\n" + SUPPLY + HC14.format(a="IN") + """
R1 +5V IN 10k tol=1%
R2 IN X 1k
C1 X 0 100n
SW1 IN 0 TACTILE
"""
    [stage] = stages(text, Config(tolerances=Tolerances(resistor=0.02, capacitor=0.1)))
    by_name = {r.designator: r for r in stage.circuit.resistors}
    assert by_name["R1"].tol_minus == pytest.approx(0.01)
    assert by_name["R2"].tol_plus == pytest.approx(0.02)
    assert stage.circuit.capacitors[0].tol_minus == pytest.approx(0.1)


def test_ferrite_bead_is_a_short(stages):
    [stage] = stages("ferrite\n" + SUPPLY + HC14.format(a="IN") + """
R1 +5V SWN 10k
L1 SWN IN 600n
C1 IN 0 100n
SW1 SWN 0 TACTILE
""")
    # The bead merges SWN into the receiver's net.
    assert stage.circuit.receiver_node == "IN"
    assert throws(stage) == [("IN", "0", "pressed")]
    assert roles(stage) == {"R1": "pull"}
    assert "L1" in stage.parts


def test_series_contact_rests_released(stages):
    # SW2 (normally closed) in series with SW1: it conducts at rest.
    result = stages("series contacts\n" + SUPPLY + HC14.format(a="IN") + """
R1 +5V IN 10k
SW1 IN MID TACTILE
SW2 MID 0 TACTILE_NC
""")
    stage = next(s for s in result if s.contact.designator == "SW1")
    assert roles(stage) == {"R1": "pull", "SW2": "other"}
    assert stage.circuit.resistors[1].ohms == stage.contact.closed_resistance


def test_latch_with_changeover_into_cross_coupled_nands(stages):
    # The SR-latch debouncer: NC and NO into one input of each NAND, each
    # gate's output into the other gate's second input.
    result = stages("latch\n" + SUPPLY + """
XU20 FOOT_NC FOOT_Q FOOT_QN FOOT_QN FOOT_NO FOOT_Q 0 n8 0 0 n11 0 0 +5V 74HC00
R20 +5V FOOT_NC 10k
R21 +5V FOOT_NO 10k
XSW20 0 FOOT_NC FOOT_NO TOGGLE_SPDT
""")
    assert [(s.receiver.ref, s.kind) for s in result] == [("U20:1", "latch"), ("U20:5", "latch")]
    assert throws(result[0]) == [("0", "FOOT_NC", "released"), ("0", "FOOT_NO", "pressed")]
    assert roles(result[0]) == {"R20": "pull", "R21": "pull"}


def test_changeover_into_two_unrelated_gates_is_not_a_latch(stages):
    result = stages("not a latch\n" + SUPPLY + """
XU20 A_NC +5V n3 A_NO +5V n6 0 n8 0 0 n11 0 0 +5V 74HC00
R20 +5V A_NC 10k
R21 +5V A_NO 10k
XSW20 0 A_NC A_NO TOGGLE_SPDT
""")
    assert {s.kind for s in result} == {"pull-only"}


def test_mcu_pin_with_firmware_debounce_and_internal_pull_up(stages):
    config = Config(mcus=(McuConfig("U9", "MCU-3V3", supply_pins=(1,), ground_pins=(2,), pins=(
        McuPinConfig("U9", 3, "MCU-3V3", pull="up", pull_min_ohms=20e3, pull_max_ohms=60e3,
                     debounce_s=20e-3),
        McuPinConfig("U9", 4, "MCU-3V3", pull="up", pull_min_ohms=20e3, pull_max_ohms=60e3)),),))
    fw, plain = stages("""mcu
V2 +3V3 0 DC 3.3
XU9 +3V3 0 CUE MARK CTRL_CHIP
SW21 CUE 0 TACTILE
SW22 MARK 0 TACTILE
""", config)
    assert fw.kind == "firmware" and plain.kind == "pull-only"
    [pull] = fw.circuit.resistors
    assert (pull.designator, pull.role, pull.a, pull.b) == ("U9:3/pull", "internal-pull", "+3V3", "CUE")
    # Nominal at mid-range, tolerance covering 20k..60k.
    assert pull.ohms == pytest.approx(40e3)
    assert pull.ohms * (1 - pull.tol_minus) == pytest.approx(20e3)
    assert pull.ohms * (1 + pull.tol_plus) == pytest.approx(60e3)
    assert [(s.net, s.volts) for s in fw.circuit.rails] == [("+3V3", 3.3)]


def test_dedicated_bouncer_part(stages):
    [stage] = stages("bouncer\n" + SUPPLY + """
XU30 PANEL 0 0 0 0 0 osc_in 0 osc_out 0 0 0 0 0 n15 +5V MC14490P
SW30 PANEL 0 KEY
""")
    assert stage.kind == "dedicated"
    assert stage.receiver.ref == "U30:1"


def test_every_kind_is_a_declared_kind(stages):
    [stage] = stages("kinds\n" + SUPPLY + HC14.format(a="IN") + "R1 +5V IN 10k\nSW1 IN 0\n")
    assert stage.kind in STAGE_KINDS


def test_recognise_single_path_matches_board_pass(board_of):
    board = board_of("single\n" + SUPPLY + HC14.format(a="IN") + "R1 +5V IN 10k\nSW1 IN 0\n")
    [path] = trace_paths(board)
    stage = recognise(path, board, Config())
    [again] = stages_for_board(board, Config())
    assert stage == again


def test_latch_across_two_packages(stages):
    # The same SR latch built from gate 1 of two separate '00 packages.
    result = stages("two-package latch\n" + SUPPLY + """
XU1 S_N QB Q 0 0 n6 0 n8 0 0 n11 0 0 +5V 74HC00
XU2 R_N Q QB 0 0 m6 0 m8 0 0 m11 0 0 +5V 74HC00
R1 +5V S_N 4.7k
R2 +5V R_N 4.7k
XSW1 0 S_N R_N TOGGLE_SPDT
""")
    assert [(s.receiver.ref, s.kind) for s in result] == [("U1:1", "latch"), ("U2:1", "latch")]


def test_mcu_internal_pull_down_goes_to_ground(stages):
    config = Config(mcus=(McuConfig("U9", "MCU-3V3", supply_v=3.3, pins=(
        McuPinConfig("U9", 3, "MCU-3V3", pull="down", pull_min_ohms=30e3, pull_max_ohms=50e3),)),))
    [stage] = stages("""pull-down pin
V2 +3V3 0 DC 3.3
XU9 +3V3 0 KEY CTRL_CHIP
SW1 +3V3 KEY TACTILE
""", config)
    [pull] = stage.circuit.resistors
    assert (pull.a, pull.b, pull.role) == ("0", "KEY", "internal-pull")
    assert stage.kind == "pull-only"
    assert throws(stage) == [("+3V3", "KEY", "pressed")]


def test_zero_ohm_link_is_a_wire_and_is_recorded(stages):
    # A 0 Ω resistor is a link (a wire), common on real boards: never bad input.
    [stage] = stages("link\n" + SUPPLY + HC14.format(a="IN") + """
R1 +5V SWN 10k
R2 SWN MID 0
R3 MID IN 39k
C1 IN 0 1u
SW1 SWN 0 TACTILE
""")
    assert stage.links == ("R2",)
    assert roles(stage) == {"R1": "pull", "R3": "series"}
    assert "R2" in stage.parts and "R2" not in roles(stage)


def test_zero_farad_capacitor_is_not_fitted(stages):
    # A 0 F capacitor is an unfitted part: left out, with a note.
    [stage] = stages("unfitted\n" + SUPPLY + HC14.format(a="IN") + """
R1 +5V SWN 10k
R2 SWN IN 39k
C1 IN 0 1u
C2 IN 0 0
SW1 SWN 0 TACTILE
""")
    assert [c.designator for c in stage.circuit.capacitors] == ["C1"]
    assert any("C2 is 0 F" in n and "not fitted" in n for n in stage.notes)


@pytest.mark.parametrize("line, what", [("R2 SWN IN -39k", "negative resistance"),
                                        ("C1 IN 0 -1u", "negative capacitance")])
def test_negative_resistance_or_capacitance_is_a_located_input_error(stages, line, what):
    from drc.errors import NetlistError
    text = "negative\n" + SUPPLY + HC14.format(a="IN") + "R1 +5V SWN 10k\nR2 SWN IN 39k\nC1 IN 0 1u\n" \
        + "SW1 SWN 0 TACTILE\n"
    bad = text.replace(line.split()[0] + " " + " ".join(line.split()[1:3]), "@@", 1)
    bad = "\n".join(line if ln.startswith("@@") else ln for ln in bad.splitlines()) + "\n"
    with pytest.raises(NetlistError) as info:
        stages(bad)
    assert what in str(info.value)
    loc = info.value.location
    assert loc is not None and loc.line == bad.splitlines().index(line) + 1 and loc.column == 1


def test_the_first_stage_of_a_contact_is_its_lead(stages):
    # One contact, two receivers: contact-level findings are given once, on the first stage.
    result = stages("two receivers\n" + SUPPLY + """
XU1 IN o1 IN o2 0 o3 0 o4 0 o5 0 o6 0 +5V 74HC14
R1 +5V IN 10k
C1 IN 0 100n
SW1 IN 0 TACTILE
""")
    assert [s.lead for s in result] == [True, False]
