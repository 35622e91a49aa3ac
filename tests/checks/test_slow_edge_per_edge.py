"""slow-edge judges each edge on its own: which edges fire, with which parts and unit.

Two sources outside the tool:
- the netlists written here: which resistor each edge's capacitor current flows
  through is read off the schematic (pressed, SW1 grounds n1, so C1 discharges
  through R2 alone; released, C1 charges from vcc through R1 and then R2);
- the RC law by hand (*Lessons In Electric Circuits*, Vol. I, ch. 16): a capacitor
  charging through R towards Vf crosses a threshold Vth at dV/dt = (Vf - Vth) / (R C),
  so the edge's rate is R C / |Vf - Vth| in s/V (the reciprocal of the slope).
Tolerances as rules/limits.toml states them (R ±5 %, C ±20 %, rails ±5 %).
"""

from __future__ import annotations

from dataclasses import replace

import pytest

from drc.checks import run_stage_rules
from drc.pipeline import check_netlist_text
from tests.checks.builders import LIMITS, edge, hc, rc_stage, result

UNKNOWN = 8e-9  # transition_limit_unknown in rules/limits.toml (8 ns/V: AC/ACT, the strictest)
OVER, AT, UNDER = 1 + 1e-6, 1.0, 1 - 1e-6


def _deck(part: str, vcc: str) -> str:
    """Pull-up R1, contact SW1 to ground, series R2, C1 at the plain input: both edges slow."""
    return (f"* pull-up, series resistor and a capacitor at a plain input\nV1 vcc 0 DC {vcc}\n"
            f"R1 vcc n1 10k\nSW1 n1 0 TACTILE\nR2 n1 in 10k\nC1 in 0 100n\n"
            f"XU1 in y1 0 y2 0 y3 0 y4 0 y5 0 y6 0 vcc {part}\n.end\n")


def _by_edge(findings):
    slow = [f for f in findings if f.rule == "slow-edge"]
    return {f.message.split(" ", 1)[0]: f for f in slow}, len(slow)


# What the schematic says: the contact first, the receiver's part last, and between them the
# parts the edge's capacitor current flows through.
PRESS_PARTS = ("SW1", "R2", "C1", "U1")  # C1 discharges through R2 into the closed contact
RELEASE_PARTS = ("SW1", "R1", "R2", "C1", "U1")  # C1 charges from vcc through R1 and R2


@pytest.mark.parametrize("part, vcc, has_limit", [("74LVX04", "3.3", False), ("74HC04", "5", True)])
def test_each_slow_edge_is_a_finding_naming_the_parts_it_charges_through(part, vcc, has_limit):
    # LVX records no transition limit (the fail-closed branch), HC does (the limit branch):
    # either way both edges are thousands of times slower than 8 ns/V, so both fire.
    _, results, findings = check_netlist_text(_deck(part, vcc))
    assert (results[0].receiver_electrical.transition_limit_s_per_v is not None) == has_limit
    got, count = _by_edge(findings)
    assert count == 2 and set(got) == {"press", "release"}
    assert got["press"].parts == PRESS_PARTS
    assert got["release"].parts == RELEASE_PARTS
    for f in got.values():
        assert f.measured.unit == "s/V"  # a rate: seconds per volt
        assert (f.limit is not None) == has_limit
        if has_limit:
            assert f.limit.unit == "s/V"
    # Hand bounds, any threshold between 0.5 V and Vcc - 0.5 V: the press discharges C1
    # from the rail towards 0 V through R2, rate R2 C1 / Vth; at 3.3 V:
    # 9.5k x 80n / 2.8 V = 0.271 ms/V .. 10.5k x 120n / 0.5 V = 2.52 ms/V.
    if part == "74LVX04":
        assert 0.271e-3 <= got["press"].measured.value <= 2.52e-3


def _plain_without_limit():
    return replace(hc(schmitt=False), family="LVX", transition_limit_s_per_v=None)


def _slow_edge(res, unknown=UNKNOWN):
    return run_stage_rules(res, {**LIMITS, "transition_limit_unknown": unknown}, selected_ids={"slow-edge"})


@pytest.mark.parametrize("factor, fires", [(OVER, True), (AT, False), (UNDER, False)])
def test_without_a_recorded_limit_an_edge_at_the_stand_in_limit_passes(factor, fires):
    # "An edge within the strictest recorded limit (8 ns/V) passes any family's" (the rule's
    # doc), as an edge at a recorded limit passes it: the finding starts strictly above.
    slope = 1.0 / (UNKNOWN * factor)  # V/s whose reciprocal is 8 ns/V x factor
    res = result(rc_stage(schmitt=False), rx=_plain_without_limit(),
                 edges={"release": edge("release", 0.01, 0.02, "rising", slowest_slope=slope)})
    found = _slow_edge(res)
    assert len(found) == fires
    if fires:
        assert found[0].limit is None
        assert found[0].measured.value == pytest.approx(UNKNOWN * factor, rel=1e-12)


def test_a_very_slow_edge_is_judged_however_small_its_slope():
    # 1 MOhm x 10 uF: tau = 10 s; at a 2.5 V threshold of a 5 V swing the rate is
    # tau / (Vf - Vth) = 10 s / 2.5 V = 4 s/V, a slope of 0.25 V/s; far over HC's
    # 500 ns / (0.8 x 4.5 V) = 139 ns/V (the builder's plain HC input).
    res = result(rc_stage(r1=1e6, r2=None, c1=10e-6, schmitt=False), rx=hc(schmitt=False),
                 edges={"release": edge("release", 5.0, 10.0, "rising", slowest_slope=0.25)})
    [f] = run_stage_rules(res, LIMITS, selected_ids={"slow-edge"})
    assert f.measured.value == pytest.approx(4.0, rel=1e-12)
    assert f.limit.value == pytest.approx(500e-9 / 3.6, rel=1e-12)


def test_an_edge_that_never_crosses_does_not_stop_the_next_one_being_judged():
    # The press never reaches the threshold (no crossing: no slope at all); the release
    # still crosses it at 1 / 2500 V/s = 0.4 ms/V, over HC's 139 ns/V.
    res = result(rc_stage(schmitt=False), rx=hc(schmitt=False),
                 edges={"press": edge("press", None, None),
                        "release": edge("release", 0.01, 0.02, "rising", slowest_slope=2500.0)})
    [f] = run_stage_rules(res, LIMITS, selected_ids={"slow-edge"})
    assert f.message.startswith("release")
    assert f.measured.value == pytest.approx(0.4e-3, rel=1e-12)


def test_without_a_recorded_limit_both_slow_edges_fire():
    # Press 1 / 2500 V/s = 0.4 ms/V, release 1 / 1000 V/s = 1 ms/V: both over 8 ns/V.
    res = result(rc_stage(schmitt=False), rx=_plain_without_limit(),
                 edges={"press": edge("press", 0.01, 0.02, slowest_slope=2500.0),
                        "release": edge("release", 0.01, 0.02, "rising", slowest_slope=1000.0)})
    found = _slow_edge(res)
    assert sorted(f.measured.value for f in found) == pytest.approx([0.4e-3, 1e-3], rel=1e-12)


def test_a_stage_without_a_capacitor_is_not_this_rules_to_judge():
    # The rule's scope (its doc): "stages with a capacitor feeding a plain input". A pull-up
    # alone (no C) into a plain HC input, whatever edge figures it is handed.
    stage = rc_stage(r2=None, c1=None, schmitt=False)
    assert not stage.circuit.capacitors and stage.kind == "pull-only"
    res = result(stage, rx=hc(schmitt=False),
                 edges={"release": edge("release", 0.01, 0.02, "rising", slowest_slope=2500.0)})
    assert run_stage_rules(res, LIMITS, selected_ids={"slow-edge"}) == []
