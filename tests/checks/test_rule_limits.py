"""Each rule fires exactly past its limit: just over fires, the limit itself and just under do not.

Source: each rule's own definition in its handbook text (`drc handbook ID`,
the RuleDoc "what" and "how"): the bounce window asks for *at least* the
bounce time × margin, latency for the slowest edge to *stay under* the
limit, a plain input's transition rate to stay within the family's limit,
the held pull current within its budget, the closed contact's current to
reach the wetting minimum, the closing surge to stay within the contact's
rating, pull and series resistors *within* the resistance window, a level's
margin to reach the needed margin; a held current that *reaches* the short
limit is a short. The figures below are inputs of hand-built StageResults
(the rules only read them), placed at the limit × (1 ± 1e-6).
"""

from __future__ import annotations

from dataclasses import replace

import pytest

from drc.board.stage import Resistor
from drc.checks import run_stage_rules
from tests.checks.builders import LIMITS, contact, edge, hc, level, rc_stage, result

OVER, AT, UNDER = 1 + 1e-6, 1.0, 1 - 1e-6


def fired(res, rule_id, limits=LIMITS):
    return run_stage_rules(res, limits, selected_ids={rule_id})


def not_lead(res):
    return replace(res, stage=replace(res.stage, lead=False))


@pytest.mark.parametrize("margin", [1.0, 1.5])
@pytest.mark.parametrize("factor, fires", [(UNDER, True), (AT, False), (OVER, False)])
def test_bounce_window_at_least_the_bounce_times_the_margin(factor, fires, margin):
    needed = 0.010 * margin
    res = result(edges={"press": edge("press", needed * factor, 0.05)})
    found = fired(res, "bounce-window", {**LIMITS, "bounce_margin": margin})
    assert len(found) == fires
    if fires:
        assert found[0].measured.value == needed * factor and found[0].limit.value == pytest.approx(needed)


@pytest.mark.parametrize("edge_name", ["press", "release"])
def test_bounce_window_checks_each_edge(edge_name):
    other = "release" if edge_name == "press" else "press"
    res = result(edges={edge_name: edge(edge_name, 0.001, 0.05), other: edge(other, 0.05, 0.06)})
    [f] = fired(res, "bounce-window")
    assert f.message.startswith(edge_name)


@pytest.mark.parametrize("factor, fires", [(OVER, True), (AT, False), (UNDER, False)])
def test_response_latency_stays_under_the_limit(factor, fires):
    res = result(edges={"press": edge("press", 0.01, 0.100 * factor)})
    found = fired(res, "response-latency")
    assert len(found) == fires
    if fires:
        assert found[0].measured.value == 0.100 * factor and found[0].limit.value == 0.100


@pytest.mark.parametrize("factor, fires", [(OVER, True), (AT, False), (UNDER, False)])
def test_slow_edge_within_the_transition_limit(factor, fires):
    rx = hc(schmitt=False)
    limit = rx.transition_limit_s_per_v
    slope = 1.0 / (limit * factor)  # V/s whose reciprocal is limit × factor s/V
    res = result(rc_stage(schmitt=False), rx=rx, edges={"release": edge("release", 0.01, 0.02, slowest_slope=slope)})
    found = fired(res, "slow-edge")
    assert len(found) == fires
    if fires:
        assert found[0].measured.value == pytest.approx(limit * factor, rel=1e-12)
        assert found[0].limit.value == limit


def test_slow_edge_reads_the_nominal_slope_when_no_slowest_one():
    rx = hc(schmitt=False)
    slope = 1.0 / (rx.transition_limit_s_per_v * OVER)
    res = result(rc_stage(schmitt=False), rx=rx, edges={"press": edge("press", 0.01, 0.02, slope=slope)})
    assert len(fired(res, "slow-edge")) == 1


@pytest.mark.parametrize("factor, fires", [(OVER, True), (AT, False), (UNDER, False)])
def test_pullup_waste_within_the_budget(factor, fires):
    res = result(pull_a=1e-3 * factor)
    found = fired(res, "pullup-waste")
    assert len(found) == fires
    assert fired(not_lead(res), "pullup-waste") == []  # one pull resistor, one finding: on the lead stage
    if fires:
        assert found[0].measured.value == 1e-3 * factor and found[0].limit.value == 1e-3


@pytest.mark.parametrize("factor, fires", [(UNDER, True), (AT, False), (OVER, False)])
def test_contact_wetting_reaches_the_minimum(factor, fires):
    stage = replace(rc_stage(), contact=contact(wetting_a=1e-3))
    res = result(stage, contact_a=1e-3 * factor)
    found = fired(res, "contact-wetting")
    assert len(found) == fires
    assert fired(not_lead(res), "contact-wetting") == []
    if fires:
        assert found[0].measured.value == 1e-3 * factor and found[0].limit.value == 1e-3
        assert found[0].parts[:2] == ("SW1", "R1")


@pytest.mark.parametrize("factor, fires", [(OVER, True), (AT, False), (UNDER, False)])
def test_contact_surge_within_the_rating(factor, fires):
    res = result(surge_a=0.050 * factor)
    found = fired(res, "contact-surge")
    assert len(found) == fires
    assert fired(not_lead(res), "contact-surge") == []
    if fires:
        assert found[0].measured.value == 0.050 * factor and found[0].limit.value == 0.050
        assert "C1" in found[0].parts


@pytest.mark.parametrize("factor, fires", [(OVER, True), (AT, True), (UNDER, False)])
def test_shorted_pull_reaches_the_short_limit(factor, fires):
    res = replace(result(), closed_current_a=0.1 * factor)
    found = fired(res, "shorted-pull")
    assert len(found) == fires
    assert fired(not_lead(res), "shorted-pull") == []
    if fires:
        assert found[0].measured.value == 0.1 * factor and found[0].limit.value == 0.1


def test_a_short_is_not_also_waste():
    # Held current past the short limit through the pull resistor: shorted-pull only.
    res = result(pull_a=0.1)
    assert [f.rule for f in fired(res, "shorted-pull")] == ["shorted-pull"]
    assert fired(res, "pullup-waste") == []
    assert len(fired(result(pull_a=0.1 * UNDER), "pullup-waste")) == 1


@pytest.mark.parametrize("ohms, fires", [(1e3 * UNDER, True), (1e3, False), (50e3, False),
                                         (50e3 * OVER, True), (10e3, False)])
@pytest.mark.parametrize("role", ["pull", "series"])
def test_resistance_range_within_the_window(ohms, fires, role):
    stage = rc_stage(r1=ohms if role == "pull" else 10e3, r2=ohms if role == "series" else 10e3)
    found = fired(result(stage), "resistance-range")
    assert len(found) == fires
    if fires:
        bound = 1e3 if ohms < 1e3 else 50e3
        assert found[0].measured.value == ohms and found[0].limit.value == bound
        named = {"R1", "R2"} & set(found[0].parts)
        assert named == {"R1" if role == "pull" else "R2"}


def test_resistance_range_skips_other_roles_and_non_lead_pulls():
    stage = rc_stage(r1=100.0, r2=10e3)
    odd = replace(stage, circuit=replace(stage.circuit, resistors=stage.circuit.resistors + (
        Resistor("R9", "in", "0", 10.0, role="other"),)))
    assert [{"R1", "R9"} & set(f.parts) for f in fired(result(odd), "resistance-range")] == [{"R1"}]
    assert fired(not_lead(result(stage)), "resistance-range") == []
    series = rc_stage(r1=10e3, r2=100.0)
    assert len(fired(not_lead(result(series)), "resistance-range")) == 1  # a series resistor is the stage's own


@pytest.mark.parametrize("factor, fires", [(UNDER, True), (AT, False), (OVER, False)])
@pytest.mark.parametrize("logic", ["high", "low"])
def test_leakage_headroom_reaches_the_needed_margin(factor, fires, logic):
    # Needed margin: min(margin × VCC, half the room between the threshold and the rail it faces).
    vcc, required = 5.0, (3.5 if logic == "high" else 0.9)
    room = vcc - required if logic == "high" else required
    needed = min(0.1 * vcc, 0.5 * room)
    worst = required + needed * factor if logic == "high" else required - needed * factor
    state = "released" if logic == "high" else "pressed"
    other = {"released": level("released", "high", 4.9, 3.5, 1.4), "pressed": level("pressed", "low", 0.0, 0.9, 0.9)}
    other[state] = level(state, logic, worst, required, needed * factor)
    found = fired(result(levels=other), "leakage-headroom")
    assert len(found) == fires
    if fires:
        assert found[0].measured.value == needed * factor and found[0].limit.value == pytest.approx(needed)
