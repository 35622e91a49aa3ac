"""What the rule bodies report, field by field: which parts, which location, how many findings.

Each case is a netlist of our own or a hand-built result (tests/checks/builders.py);
the expected parts are the ones the netlist was written with, the expected figures
are worked by hand in the comment beside them. The rules' own statements (their
RuleDoc `what`) say what each one looks at:
- ambiguous-value looks at resistor and capacitor values only, and reports a value
  written once (in a subcircuit expanded many times) once;
- leakage-headroom needs min(margin × VCC, half the room between the threshold and
  the rail the level heads for), VCC the receiver's supply;
- bounce-window fails an edge when no reading passes it, the closure-and-opening
  reading only on a Schmitt input;
- a finding about a contact names the parts its figure comes from.
"""

from __future__ import annotations

from dataclasses import replace

import pytest

from drc.analysis.first_edge import PullBack
from drc.board.stage import Resistor
from drc.checks import run_stage_rules
from drc.errors import SourceLocation
from drc.pipeline import check_netlist_text
from tests.checks.builders import LIMITS, contact, edge, level, rc_stage, result

U1 = "XU1 IN o1 0 o2 0 o3 0 o4 0 o5 0 o6 0 +5V 74HC14\n"


def fired(res, rule_id, limits=LIMITS):
    return list(run_stage_rules(res, limits, selected_ids={rule_id}))


def board_findings(text: str, rule_id: str, path: str = "board.cir"):
    _board, _results, findings = check_netlist_text(text, path)
    return [f for f in findings if f.rule == rule_id]


# ambiguous-value ----------------------------------------------------------------------

def test_ambiguous_value_reads_resistors_and_capacitors_only():
    # RuleDoc: "every resistor and capacitor value". The inductor L1 written in the
    # letter-digit code 4u7 and the DC source are not its business; R9's 4k7 is (IEC 60062).
    text = ("values\nV1 +5V 0 DC 5\n" + U1 + "R1 +5V IN 10k\nC1 IN 0 1u\nSW1 IN 0 TACTILE\n"
            "L1 +5V o1 4u7\nR9 o2 0 4k7\n")
    found = board_findings(text, "ambiguous-value")
    assert [f.parts for f in found] == [("R9",)]
    assert found[0].location == SourceLocation("board.cir", 8, 1)  # R9 is the file's 8th line


def test_ambiguous_value_goes_on_past_a_plain_value():
    # R1 10k and C1 1u (written before R9 and C9) are plain; R9 2R2 (IEC 60062: 2.2 Ω) and
    # C9 47F (SPICE: 47 fF) after them are each reported.
    text = ("values\nV1 +5V 0 DC 5\n" + U1 + "R1 +5V IN 10k\nC1 IN 0 1u\nSW1 IN 0 TACTILE\n"
            "R9 o1 0 2R2\nC9 o2 0 47F\n")
    assert [f.parts for f in board_findings(text, "ambiguous-value")] == [("R9",), ("C9",)]


def test_ambiguous_value_written_once_in_a_subcircuit_is_reported_once():
    # The subcircuit bleed writes R5 4k7 once (line 3); it is expanded twice (X1, X2): one
    # value as written, one finding at that line. C9 47F (line 12, SPICE: 47 fF), written
    # after the second copy, is a value of its own.
    text = ("keys\n.subckt bleed a\nR5 a 0 4k7\n.ends\nV1 +5V 0 DC 5\n" + U1 +
            "R1 +5V IN 10k\nC1 IN 0 1u\nSW1 IN 0 TACTILE\nX1 o1 bleed\nX2 o2 bleed\nC9 o3 0 47F\n")
    found = board_findings(text, "ambiguous-value")
    assert [f.location for f in found] == [SourceLocation("board.cir", 3, 1), SourceLocation("board.cir", 12, 1)]
    assert found[1].parts == ("C9",)


# empty-netlist --------------------------------------------------------------------------

def test_empty_netlist_points_at_the_start_of_the_file():
    # Nothing to point at but the file: its first line, first column (1-based, SourceLocation).
    [f] = board_findings("* LX-24 sheet: the export stopped here\n.end\n", "empty-netlist", "sheet3.cir")
    assert f.location == SourceLocation("sheet3.cir", 1, 1)
    assert f.parts == () and f.nets == () and f.related == ()  # no part, so no net and no other place


def test_empty_netlist_without_a_file_name_has_no_location():
    # A netlist given with no file name has no file to point at.
    [f] = board_findings("* nothing\n.end\n", "empty-netlist", "")
    assert f.location is None


# floating-input -------------------------------------------------------------------------

def test_floating_input_reports_a_later_state_after_a_defined_one():
    # Released, the pin reads high through the pull-up; pressed, nothing sets it (levels in
    # the analysis's order, released first): one finding, for the pressed state.
    levels = {"released": level("released", "high", 4.9, 3.5, 1.4), "pressed": level("pressed", "undefined")}
    found = fired(result(levels=levels), "floating-input")
    assert len(found) == 1 and "pressed" in found[0].message


# leakage-headroom -----------------------------------------------------------------------

def _tight_high():
    # released high: worst 3.6 V against VT+ max 3.5 V, margin 0.1 V < the 0.5 V needed
    # (0.1 × 5 V; half the room 0.5 × (5 - 3.5) = 0.75 V is larger).
    return {"released": level("released", "high", 3.6, 3.5, 0.1),
            "pressed": level("pressed", "low", 0.0, 0.9, 0.9)}


def test_leakage_headroom_names_the_resistors_that_set_the_level_not_the_capacitor():
    # Stage written: R1 pull-up, R2 series, R9 a bleeder ("other") from the pin to ground,
    # C1 at the pin. The level is set by R1, R2 and R9; C1 carries no DC current.
    stage = rc_stage()
    bleeder = Resistor("R9", "in", "0", 47e3, role="other")
    stage = replace(stage, circuit=replace(stage.circuit, resistors=stage.circuit.resistors + (bleeder,)),
                    parts=stage.parts + ("R9",))
    [f] = fired(result(stage, levels=_tight_high()), "leakage-headroom")
    assert f.parts == ("SW1", "R1", "R2", "R9", "U1")


def test_leakage_headroom_needs_half_the_room_near_the_rail():
    # A high whose threshold sits 0.4 V under VCC (required 4.6 V at 5 V): half the room is
    # 0.5 × 0.4 = 0.2 V, under 0.1 × 5 = 0.5 V, so 0.2 V is needed. A margin of 0.3 V passes,
    # 0.1 V fails with the limit 0.2 V.
    def levels(margin):
        return {"released": level("released", "high", 4.6 + margin, 4.6, margin),
                "pressed": level("pressed", "low", 0.0, 0.9, 0.9)}
    assert fired(result(levels=levels(0.3)), "leakage-headroom") == []
    [f] = fired(result(levels=levels(0.1)), "leakage-headroom")
    assert f.measured.value == pytest.approx(0.1) and f.limit.value == pytest.approx(0.2)


def test_leakage_headroom_without_receiver_data_takes_vcc_from_the_stage():
    # No receiver data in the result: VCC is the stage receiver's supply, 3.3 V here; needed
    # min(0.1 × 3.3, 0.5 × (3.3 - 2.3)) = min(0.33, 0.5) = 0.33 V.
    stage = replace(rc_stage(), receiver=replace(rc_stage().receiver, supply_v=3.3))
    levels = {"released": level("released", "high", 2.4, 2.3, 0.1),
              "pressed": level("pressed", "low", 0.0, 0.9, 0.9)}
    res = replace(result(stage, levels=levels), receiver_electrical=None)
    [f] = fired(res, "leakage-headroom")
    assert f.limit.value == pytest.approx(0.33)


def test_leakage_headroom_reads_a_later_state_after_a_floating_one():
    # Released floats (floating-input's business); pressed sits 0.1 V under VT- min 0.9 V,
    # under the 0.45 V needed (min(0.1 × 5, 0.5 × 0.9)): one finding.
    levels = {"released": level("released", "undefined"), "pressed": level("pressed", "low", 0.8, 0.9, 0.1)}
    [f] = fired(result(levels=levels), "leakage-headroom")
    assert f.limit.value == pytest.approx(0.45)


# contact-surge, contact-wetting -----------------------------------------------------------

def test_contact_surge_names_the_capacitor_it_discharges():
    # R1 pull-up, R2 series, C1 at the pin: the peak is C1's discharge; the parts are the
    # contact, C1 and the receiver, not the resistors.
    [f] = fired(result(surge_a=0.2), "contact-surge")
    assert f.parts == ("SW1", "C1", "U1")


def test_contact_wetting_names_the_pull_resistor_that_sets_the_current():
    # The closed current is R1's (vcc through R1 into the contact); R2 and C1 are behind the
    # contact node and carry none of it steadily.
    res = result(rc_stage(contact_=contact(wetting_a=1e-3)), contact_a=0.4e-3)
    [f] = fired(res, "contact-wetting")
    assert f.parts == ("SW1", "R1", "U1")


# resistance-range -------------------------------------------------------------------------

def test_resistance_range_reports_a_series_resistor_after_a_pull_left_to_the_lead():
    # Not the contact's first stage: R1's 100 Ω (under 1 kΩ) is reported on the lead stage
    # only; this stage's own series R2 100 Ω is still reported here.
    res = result(rc_stage(r1=100.0, r2=100.0))
    res = replace(res, stage=replace(res.stage, lead=False))
    [f] = fired(res, "resistance-range")
    assert f.parts == ("SW1", "R2", "U1") and f.limit.value == pytest.approx(1e3)


# bounce-window ----------------------------------------------------------------------------

def _fast_edges():
    # Both edges reach their threshold in 1 ms, under the 10 ms bounce × margin 1.
    return {"press": edge("press", 0.001, 0.004),
            "release": edge("release", 0.001, 0.004, "rising", start_v=0.0, final_v=5.0)}


def test_bounce_window_without_receiver_data_uses_the_time_reading():
    # No receiver data: the closure-and-opening reading cannot be made; both edges fail by
    # the time reading, each with its own 1 ms against the 10 ms needed.
    res = replace(result(edges=_fast_edges()), receiver_electrical=None)
    found = fired(res, "bounce-window")
    assert [(f.measured.value, f.limit.value) for f in found] == [(0.001, pytest.approx(0.010))] * 2


def test_bounce_window_checks_the_release_after_a_press_the_closure_reading_passes(monkeypatch):
    # The closure-and-opening reading (stubbed) passes the press (the bounce never brings it
    # back: fastest_s None) and does not apply to the release: the release still fails.
    import drc.analysis.first_edge as first_edge

    def reading(stage, rx, edge_name, min_closure_s):
        if str(edge_name) != "press":
            return None
        return PullBack(edge_name, "transit", min_closure_s, 1e-9, 1e-2, 0.0, False, 2.7, None, None, {})
    monkeypatch.setattr(first_edge, "pull_back", reading)
    found = fired(result(edges=_fast_edges()), "bounce-window")
    assert [f.message.split()[0] for f in found] == ["release"]
    assert found[0].measured.value == 0.001
