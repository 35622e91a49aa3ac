"""response-latency: which edges it judges, which parts it names, which limit it quotes.

Sources:
- The stage (tests/checks/builders.rc_stage, the documented reference stage):
  R1 pull-up vcc-n1, SW1 n1-0, R2 series n1-in, C1 in-0, U1 the receiver.
  On the press edge SW1 ties n1 to ground, so C1 discharges through R2 and
  the contact alone; R1 then hangs between the rail and ground and carries
  none of C1's current (Kirchhoff's current law on the netlist as written).
  On the release edge C1 charges from the rail through R1 and R2 in series.
  A timing finding names the parts its edge's time depends on.
- RC law: t = R·C·ln((V0 - Vf) / (Vth - Vf)) for an RC discharging from V0
  towards Vf through the threshold Vth.
- The rule's definition (its handbook text): both edges are judged, each on
  its own; an edge that never reaches its threshold at the slowest corner
  is reported against `latency_limit` (a time, in seconds).
- An edge whose steady level before it is not strictly on the near side of
  its threshold has no crossing to be late (the edge solver's stated
  contract, drc.analysis.physics.transient.solve_edge: the crossing is None
  when the level before the edge is not strictly on the near side): the
  level rule reports that state, this rule stays silent. A level exactly at
  the threshold has reached it.
"""

from __future__ import annotations

import pytest

from drc.checks import run_stage_rules
from tests.checks.builders import LIMITS, analysed, edge, rc_stage, result

RULE = "response-latency"
LATENCY = LIMITS["latency_limit"]  # 100 ms, the input limit of these tests


def fired(res):
    return run_stage_rules(res, LIMITS, selected_ids={RULE})


def test_a_press_edge_that_never_reaches_its_threshold_names_the_discharge_path_and_the_limit():
    # Press edge (falling) from 5 V settling at 1.2 V, short of VT- min 0.9 V (builders.edge).
    res = result(edges={"press": edge("press", 0.05, None, start_v=5.0, final_v=1.2),
                        "release": edge("release", 0.015, 0.070, "rising", start_v=0.0, final_v=5.0)})
    [f] = fired(res)
    # Contact first, the parts of C1's discharge path (R2, C1: not the pull-up R1), receiver last.
    assert f.parts == ("SW1", "R2", "C1", "U1")
    assert f.measured is None  # no crossing: nothing measured
    assert f.limit is not None and f.limit.value == pytest.approx(LATENCY) and f.limit.unit == "s"


def test_a_late_press_edge_names_its_discharge_path_and_a_late_release_edge_its_charge_path():
    # Real analysis of the reference stage with C1 = 10 µF (R1 8.2 kΩ, R2 39 kΩ, 5 V ± 5 %).
    # Lower bounds on each edge's time from the RC law at its fastest corner (the slowest
    # corner, which the rule measures, takes at least as long):
    # press: C1 discharges through R2 only: R2·C1 at minimum 37.05 kΩ·8 µF = 0.296 s, from
    #   at least 4.70 V (4.75 V rail, less 1 µA of leakage across 47 kΩ) to VT- max 2.2 V:
    #   t >= 0.296·ln(4.70 / 2.2) = 0.225 s.
    # release: C1 charges through R1 + R2 at minimum 44.84 kΩ·8 µF = 0.359 s, from 0 V
    #   towards at most 5.25 V to VT+ min 1.7 V: t >= 0.359·ln(5.25 / 3.55) = 0.140 s.
    found = fired(analysed(rc_stage(c1=10e-6)))
    assert [f.parts for f in found] == [("SW1", "R2", "C1", "U1"), ("SW1", "R1", "R2", "C1", "U1")]
    for f, bound in zip(found, (0.225, 0.140), strict=True):
        assert f.measured.unit == "s" and f.measured.value >= bound
        assert f.limit.value == pytest.approx(LATENCY) and f.limit.unit == "s"


def test_an_edge_with_no_crossing_does_not_stop_the_other_edge_being_judged():
    # The press edge never left the far side (starts at 0.5 V, under VT- min 0.9 V): silent.
    # The release edge takes 300 ms at the slowest corner, over the 100 ms limit: one finding.
    res = result(edges={"press": edge("press", None, None, start_v=0.5, final_v=0.0),
                        "release": edge("release", 0.2, 0.3, "rising", start_v=0.0, final_v=5.0)})
    [f] = fired(res)
    assert f.measured.value == pytest.approx(0.3) and f.limit.value == pytest.approx(LATENCY)


@pytest.mark.parametrize("name, direction", [("press", "falling"), ("release", "rising")])
def test_a_level_exactly_at_the_threshold_has_no_edge_to_be_late(name, direction):
    # builders.edge: the slowest corner's threshold is 0.9 V; the level before the edge sits
    # exactly there, so it is not strictly on the near side: no crossing, no latency finding.
    on_time = {"press": edge("press", 0.020, 0.080),  # 80 ms: under the limit
               "release": edge("release", 0.015, 0.070, "rising", start_v=0.0, final_v=5.0)}
    res = result(edges={**on_time, name: edge(name, None, None, direction, start_v=0.9, final_v=0.9)})
    assert res.edges[name].threshold_slowest_v == 0.9
    assert fired(res) == []
