"""One fixture that triggers each rule and one that does not.

Hand-built StageResults carry the figures directly (the rules must only read
them); a few cases run the real analysis on the reference stage. Figures
asserted in messages are the inputs, re-read from the finding.
"""

from __future__ import annotations

import re
from dataclasses import replace

import pytest

from drc.board.board import Board
from drc.board.stage import Capacitor
from drc.checks import run_rules, run_stage_rules
from drc.errors import SourceLocation
from drc.netlist.elements import Element, Netlist
from drc.netlist.values import parse_value
from tests.checks.builders import LIMITS, contact, edge, hc, level, rc_stage, receiver, result


def fired(res, rule_id):
    return [f for f in run_stage_rules(res, LIMITS, selected_ids={rule_id})]


# undebounced-input ------------------------------------------------------------------

def test_undebounced_fires_on_pull_only_and_names_an_edge_sensitive_input():
    stage = rc_stage(r2=None, c1=None)
    assert stage.kind == "pull-only"
    clocked = replace(stage, receiver=receiver(edge_sensitive=True, function="clock"))
    [plain] = fired(result(stage), "undebounced-input")
    [edgy] = fired(result(clocked), "undebounced-input")
    assert plain.severity == "error" and plain.contact == "SW1" and plain.receiver == "U1:1"
    assert "edge-sensitive" in edgy.message and "clock" in edgy.message
    assert "edge-sensitive" not in plain.message


def test_undebounced_is_silent_on_rc_latch_firmware_dedicated():
    for kind in ("rc-schmitt", "rc", "latch", "firmware", "dedicated"):
        assert fired(result(rc_stage(kind=kind)), "undebounced-input") == []


# floating-input --------------------------------------------------------------------

def test_floating_fires_per_undefined_state():
    res = result(rc_stage(r1=None), levels={
        "released": level("released", "undefined"), "pressed": level("pressed", "low", 0.0, 0.9, 0.9)})
    [f] = fired(res, "floating-input")
    assert "released" in f.message and "pull-up" in f.fix


def test_floating_from_real_analysis_and_silent_with_pull():
    from tests.checks.builders import analysed
    assert [f.rule for f in fired(analysed(rc_stage(r1=None)), "floating-input")] == ["floating-input"]
    assert fired(analysed(rc_stage()), "floating-input") == []


# bounce-window ---------------------------------------------------------------------

def test_bounce_window_fires_under_the_bounce_and_quotes_figures():
    res = result(edges={"press": edge("press", 0.0021, 0.01), "release": edge("release", 0.012, 0.05, "rising")})
    [f] = fired(res, "bounce-window")
    assert f.measured.value == pytest.approx(0.0021) and f.limit.value == pytest.approx(0.010)
    assert "press edge reaches VT- 2.2 V in 2.1 ms" in f.message and "10 ms bounce of SW1 (tactile)" in f.message
    assert f.parts[0] == "SW1" and f.parts[-1] == "U1" and "C1" in f.parts


def test_bounce_window_respects_margin_and_kind():
    res = result(edges={"press": edge("press", 0.012, 0.05), "release": edge("release", 0.012, 0.05, "rising")})
    assert fired(res, "bounce-window") == []
    stricter = run_stage_rules(res, {**LIMITS, "bounce_margin": 1.5}, selected_ids={"bounce-window"})
    assert len(stricter) == 2
    slow = result(rc_stage(kind="latch"), edges={"press": edge("press", 0.001, 0.01)})
    assert fired(slow, "bounce-window") == []


def test_bounce_window_few_millisecond_bounce():
    # Common practice, no source: a small switch bounces for a few milliseconds, so a
    # 10 kΩ × 100 nF (τ = 1 ms) filter cannot cover a 5 ms bounce.
    from tests.checks.builders import analysed
    stage = replace(rc_stage(r1=10e3, r2=10e3, c1=100e-9), contact=contact(bounce_s=0.005))
    assert len(fired(analysed(stage), "bounce-window")) == 2


# slow-edge --------------------------------------------------------------------------

def test_slow_edge_fires_on_plain_input_rc():
    # families.md note 3: 10 kΩ / 100 nF at 5 V is about 400 µs/V, far over HC's ~139 ns/V.
    stage = rc_stage(schmitt=False)
    res = result(stage, edges={"press": edge("press", 0.02, 0.05, slowest_slope=2500.0)}, rx=hc(schmitt=False))
    [f] = fired(res, "slow-edge")
    assert f.measured.value == pytest.approx(1 / 2500.0) and f.limit.value == pytest.approx(500e-9 / 3.6)
    assert "Schmitt" in f.fix


def test_slow_edge_silent_on_schmitt_or_without_capacitor():
    res = result(edges={"press": edge("press", 0.02, 0.05, slowest_slope=2500.0)})
    assert fired(res, "slow-edge") == []
    fast = result(rc_stage(schmitt=False), rx=hc(schmitt=False),
                  edges={"press": edge("press", 1e-7, 1e-7, slowest_slope=1e9)})
    assert fired(fast, "slow-edge") == []


# response-latency -----------------------------------------------------------------

def test_latency_fires_over_limit_and_when_never_reached():
    # The release edge starts low and settles at 0.5 V, short of the 0.9 V threshold.
    res = result(edges={"press": edge("press", 0.05, 0.3),
                        "release": edge("release", 0.05, None, "rising", start_v=0.0, final_v=0.5)})
    found = fired(res, "response-latency")
    assert len(found) == 2 and all(f.severity == "warning" for f in found)
    assert "300 ms" in found[0].message and "never reaches" in found[1].message


def test_latency_silent_when_the_level_never_left_the_far_side():
    # A rising edge that starts above its threshold is no edge: the level rule reports the cause.
    res = result(edges={"press": edge("press", 0.02, 0.05),
                        "release": edge("release", None, None, "rising", start_v=2.6, final_v=5.0)})
    assert fired(res, "response-latency") == []


def test_latency_silent_under_limit_and_for_floating_states():
    assert fired(result(), "response-latency") == []
    floating = result(levels={"released": level("released", "undefined"),
                              "pressed": level("pressed", "low", 0.0, 0.9, 0.9)},
                      edges={"press": edge("press", None, None)})
    assert fired(floating, "response-latency") == []


# leakage-headroom ----------------------------------------------------------------

def test_headroom_fires_on_small_margin():
    res = result(levels={"released": level("released", "high", 3.8, 3.5, 0.3),
                         "pressed": level("pressed", "low", 0.0, 0.9, 0.9)})
    [f] = fired(res, "leakage-headroom")
    assert f.measured.value == pytest.approx(0.3) and f.limit.value == pytest.approx(0.5)
    assert "VT+ max" in f.message


def test_headroom_ttl_iil_through_series_resistor():
    # families.md note 4: with LS's IIL of 0.4 mA, a low path resistor R must keep
    # IIL·R < VIL max 0.8 V, i.e. R < 2 kΩ. 3.3 kΩ fails; real analysis.
    from tests.checks.builders import analysed
    ttl = replace(hc(schmitt=False, leak_low=(-0.4e-3, 0.0), family="LS"), vih_min=2.0, vil_max=0.8,
                  rising_threshold=(0.8, 1.4, 2.0), falling_threshold=(0.8, 1.4, 2.0))
    bad = analysed(rc_stage(r1=10e3, r2=3.3e3, c1=None, schmitt=False, kind="pull-only"), ttl)
    [f] = fired(bad, "leakage-headroom")
    assert "IIL" in f.message and "pressed" in f.message
    good = analysed(rc_stage(r1=10e3, r2=None, c1=None, schmitt=False, kind="pull-only"), ttl)
    assert fired(good, "leakage-headroom") == []


def _headroom(logic: str, rx):
    # A level 0.1 V inside its threshold (margin 0.1 V, under the 0.5 V needed).
    levels = {"released": level("released", "high", 4.9, 3.5, 1.4), "pressed": level("pressed", "low", 0.0, 0.9, 0.9)}
    if logic == "high":
        levels["released"] = level("released", "high", 3.6, 3.5, 0.1)
    else:
        levels["pressed"] = level("pressed", "low", 0.8, 0.9, 0.1)
    [f] = fired(result(levels=levels, rx=rx), "leakage-headroom")
    return f


def _amps(text: str) -> float:
    number, prefix = text.split()[0], text.split()[1][:-1]
    return float(number) * {"": 1.0, "m": 1e-3, "µ": 1e-6, "n": 1e-9}[prefix]


def test_headroom_names_the_current_that_shifts_the_level():
    # The cause of a shifted level is the input current through the resistors (families.md
    # note 4: a TTL input's IIL flows out of the pin, 0.4 mA for LS, and lifts a low level;
    # a CMOS input's leakage, either way up to its maximum, moves a high one).
    ttl = hc(schmitt=False, leak_low=(-0.4e-3, 0.0), family="LS")
    low = _headroom("low", ttl)
    [iil] = re.findall(r"IIL (\S+ \S+) out of the pin", low.message)
    assert _amps(iil) == pytest.approx(0.4e-3)
    assert "IIL" in low.fix and "CMOS" in low.fix  # a CMOS input draws no IIL
    both_ways = replace(hc(), leak_high_a=(-2e-6, 1e-6))  # 2 µA out of the pin, 1 µA into it
    high = _headroom("high", both_ways)
    [leak] = re.findall(r"leakage up to (\S+ \S+)\)", high.message)
    assert _amps(leak) == pytest.approx(2e-6)  # the larger of the two directions
    assert "IIL" not in high.message and "IIL" not in high.fix


def test_headroom_names_no_iil_when_no_current_leaves_the_pin():
    into_pin = hc(leak_low=(0.0, 1e-6))  # the low level's leakage flows into the pin only
    low = _headroom("low", into_pin)
    assert "IIL" not in low.message and "IIL" not in low.fix


def test_headroom_silent_with_wide_margin():
    assert fired(result(), "leakage-headroom") == []


# pullup-waste ------------------------------------------------------------------------

def test_pullup_waste_over_and_under_budget():
    [f] = fired(result(pull_a=5.5e-3), "pullup-waste")
    assert f.measured.text == "5.5 mA" and f.parts == ("SW1", "R1", "U1")
    assert fired(result(pull_a=0.6e-3), "pullup-waste") == []


# resistance-range ------------------------------------------------------------------

def test_resistance_window():
    # Common practice, no source: pull/series resistances of about 1 kΩ to 50 kΩ.
    found = fired(result(rc_stage(r1=470e3, r2=680.0)), "resistance-range")
    assert {f.parts[1] for f in found} == {"R1", "R2"} and all(f.severity == "note" for f in found)
    assert fired(result(rc_stage(r1=10e3, r2=47e3)), "resistance-range") == []


# contact-wetting / contact-surge ---------------------------------------------------

def test_contact_wetting_only_for_classes_with_a_minimum():
    snap = rc_stage(contact_=contact(wetting_a=1e-3, cls="snap"))
    [f] = fired(result(snap, contact_a=0.55e-3), "contact-wetting")
    assert "1 mA" in f.message
    assert fired(result(snap, contact_a=2e-3), "contact-wetting") == []
    assert fired(result(rc_stage(), contact_a=0.55e-3), "contact-wetting") == []


def test_contact_surge_against_rating():
    [f] = fired(result(surge_a=52.0), "contact-surge")
    assert f.limit.value == pytest.approx(0.05) and "series" in f.fix
    assert fired(result(surge_a=1e-4), "contact-surge") == []


def test_contact_surge_from_analysis_with_a_bare_capacitor():
    # components-and-contacts.md: capacitor across bare contacts, peak ≈ V / R_contact.
    from tests.checks.builders import analysed
    bare = analysed(rc_stage(extra_caps=(Capacitor("C2", "n1", "0", 10e-9),)))
    assert [f.rule for f in fired(bare, "contact-surge")] == ["contact-surge"]
    assert fired(analysed(rc_stage()), "contact-surge") == []


# rail-mismatch ---------------------------------------------------------------------

def test_rail_mismatch_above_abs_max():
    # families.md table 3: HC abs-max input VCC + 0.5 V; a 5 V pull rail on a 3.3 V part.
    res = result(max_in=5.25, rx=hc(vcc=3.3))
    [f] = fired(res, "rail-mismatch")
    assert f.limit.value == pytest.approx(3.8) and "clamp" in f.message
    own_rail = result(rc_stage(rail_v=3.3), max_in=3.465, rx=hc(vcc=3.3))
    assert fired(own_rail, "rail-mismatch") == []
    # A rail that is the receiver's own supply moves with it (4000B at 12 V: abs max VDD + 0.5 V).
    same_supply = result(rc_stage(rail_v=12.0), max_in=12.6, rx=hc(vcc=12.0))
    assert fired(same_supply, "rail-mismatch") == []
    # Leakage lifting the pin a little above its own rail is not a rail mismatch.
    assert fired(result(max_in=5.75, rx=hc(vcc=5.0)), "rail-mismatch") == []
    tolerant = result(max_in=5.25, rx=hc(vcc=3.3, abs_max=6.5, tolerant=True))
    assert fired(tolerant, "rail-mismatch") == []


# ambiguous-value (board rule) ------------------------------------------------------

def _board(*values: tuple[str, str]) -> Board:
    elements = []
    for i, (kind, text) in enumerate(values, start=2):
        elements.append(Element(f"{kind}{i}", kind, ("a", "b"), parse_value(text), None,
                                SourceLocation("b.cir", i, 1), text=f"{kind}{i} a b {text}"))
    return Board(path="b.cir", netlist=Netlist(path="b.cir", title="t", elements=elements))


@pytest.mark.parametrize("kind,text,severity", [
    ("R", "1M", "warning"),   # SPICE scale table: M is milli
    ("R", "4.7m", "warning"),
    ("C", "1F", "warning"),   # F is femto
    ("C", "47f", "warning"),
    ("R", "4k7", "note"),     # IEC 60062 letter-digit code
    ("R", "2R2", "note"),
    ("C", "4n7", "note"),
])
def test_ambiguous_values_fire(kind, text, severity):
    [f] = run_rules(_board((kind, text)), [], LIMITS, selected_ids={"ambiguous-value"})
    assert f.severity == severity and f.contact is None and f.receiver is None
    assert f.parts == (f"{kind}2",) and f.location.line == 2


@pytest.mark.parametrize("kind,text", [("R", "1Meg"), ("R", "4.7k"), ("R", "10000"), ("C", "100nF"),
                                       ("C", "1uF"), ("C", "1e-6"), ("R", "1e3")])
def test_unambiguous_values_are_silent(kind, text):
    assert run_rules(_board((kind, text)), [], LIMITS, selected_ids={"ambiguous-value"}) == []


def test_locations_come_from_the_netlist():
    board = _board(("R", "8.2k"))
    stage = rc_stage()
    res = result(stage, pull_a=5e-3)
    [f] = run_rules(board, [res], LIMITS, selected_ids={"pullup-waste"})
    assert f.board == "b.cir" and f.location == stage.contact.location


# which states an edge joins -------------------------------------------------------

@pytest.mark.parametrize("edge_name, floating", [("press", "pressed"), ("press", "released"),
                                                 ("release", "released"), ("release", "pressed")])
def test_no_latency_for_an_edge_into_or_out_of_a_floating_state(edge_name, floating):
    # An edge joins its start state and the state it ends in (press: released -> pressed);
    # when either has no defined level there is no edge to time: floating-input reports it.
    direction = "falling" if edge_name == "press" else "rising"
    late = {edge_name: edge(edge_name, 0.2, 0.3, direction)}  # 300 ms: over the 100 ms limit
    defined = {"released": level("released", "high", 4.7, 3.5, 1.2), "pressed": level("pressed", "low", 0.0, 0.9, 0.9)}
    assert len(fired(result(levels=defined, edges=late), "response-latency")) == 1
    levels = {**defined, floating: level(floating, "undefined")}
    assert fired(result(levels=levels, edges=late), "response-latency") == []


@pytest.mark.parametrize("schmitt, kind", [(True, "Schmitt"), (False, "plain")])
def test_the_message_says_whether_the_input_has_hysteresis(schmitt, kind):
    stage = rc_stage(r2=None, c1=None, schmitt=schmitt)
    [f] = fired(result(stage, rx=hc(schmitt)), "undebounced-input")
    other = "plain" if schmitt else "Schmitt"
    assert re.search(rf"\b{kind}\b", f.message) and not re.search(rf"\b{other}\b", f.message.split(" with ")[0])
