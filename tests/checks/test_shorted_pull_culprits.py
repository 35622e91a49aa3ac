"""shorted-pull: which pull resistors it names as the short, at the boundary and with no rail.

Sources:
- The rule's definition (its handbook text; tests/checks/test_rail_and_short_rules.py):
  a held current that reaches `short_current` (0.1 A here) is a short, reported
  once per contact; the culprits it names are the pull resistors that alone
  would pass that current from the rail at its maximum, by Ohm's law
  V·(1 + tol) / (R·(1 - tol)) ≥ I, i.e. R·(1 - tol)·I ≤ V·(1 + tol) (the
  boundary included: a resistor that passes exactly the limit reaches it).
- With no rail source in the circuit there is no voltage to drive a resistor:
  I = 0 V / R = 0 A, so no pull resistor alone passes the limit and none is
  named; the held current over the limit is still the finding (a short the
  rule cannot pin on a part is reported, not dropped). From a netlist every
  stage has a rail (its receiver's supply); a result built by hand and run
  through run_stage_rules (the fix search's entry) may have none.
"""

from __future__ import annotations

from dataclasses import replace

import pytest

from drc.checks import run_stage_rules
from tests.checks.builders import LIMITS, rc_stage, result

SHORT = LIMITS["short_current"]  # 0.1 A


def fired(res):
    return run_stage_rules(res, LIMITS, selected_ids={"shorted-pull"})


def with_tolerance(stage, designator: str, tol: float):
    resistors = tuple(replace(r, tol_minus=tol, tol_plus=tol) if r.designator == designator else r
                      for r in stage.circuit.resistors)
    return replace(stage, circuit=replace(stage.circuit, resistors=resistors))


def test_a_pull_resistor_that_passes_exactly_the_short_current_is_named():
    # 12 V rail at +5 % = 12.6 V; 140 Ω at -10 % = 126 Ω; 12.6 V / 126 Ω = 0.1 A, the limit exactly.
    # The figures are exact in binary floating point as the rule multiplies them (checked here),
    # so this is the boundary itself, not a neighbour of it.
    assert 140.0 * (1 - 0.10) * SHORT == 12.0 * (1 + 0.05)
    stage = with_tolerance(rc_stage(r1=140.0, rail_v=12.0), "R1", 0.10)
    assert stage.circuit.rails[0].volts == 12.0 and stage.circuit.rails[0].tolerance == 0.05
    [f] = fired(replace(result(stage), closed_current_a=0.2))
    assert f.parts == ("SW1", "R1", "U1")
    assert f.measured.value == pytest.approx(0.2) and f.limit.value == pytest.approx(SHORT)


def test_with_no_rail_the_short_is_reported_and_no_pull_resistor_is_named():
    # A 5 Ω pull resistor would pass 5.25 V / 4.75 Ω = 1.1 A from a 5 V rail, but the circuit
    # has no rail: 0 V across it, 0 A (Ohm's law), so it is not the culprit.
    stage = rc_stage(r1=5.0)
    stage = replace(stage, circuit=replace(stage.circuit, rails=()))
    [f] = fired(replace(result(stage), closed_current_a=0.2))
    assert f.parts == ("SW1", "U1")
    assert f.measured.value == pytest.approx(0.2) and f.measured.unit == "A"
    assert f.limit.value == pytest.approx(SHORT) and f.limit.unit == "A"


def _shorted_pull_parts(deck: str) -> set[str]:
    from drc.pipeline import check_netlist_text
    _, _, findings = check_netlist_text(deck)
    [f] = [f for f in findings if f.rule == "shorted-pull"]
    return set(f.parts)


def test_a_pull_up_is_named_by_the_current_from_its_own_rail():
    # Two pull-ups on the contact node, from two rails; rules/limits.toml's short_current is
    # 0.1 A. Ohm's law at the worst corner: R2 10 ohm from 5 V: 5.25 / 9.5 = 553 mA, a short;
    # R1 47 ohm from 3.3 V: 3.465 / 44.65 = 77.6 mA, under the limit alone, so not a culprit
    # (from the 5 V rail it would be 5.25 / 44.65 = 118 mA: the rail it hangs from decides).
    deck = ("* two pull-ups from two rails\nV1 vcc 0 DC 5\nV2 v33 0 DC 3.3\nR1 v33 n1 47\nR2 vcc n1 10\n"
            "SW1 n1 0 TACTILE\nXU1 n1 y1 0 y2 0 y3 0 y4 0 y5 0 y6 0 vcc 74HC14\n.end\n")
    parts = _shorted_pull_parts(deck)
    assert "R2" in parts and "R1" not in parts


@pytest.mark.parametrize("ground, source", [("0", ""), ("agnd", "V3 agnd 0 DC 0\n")])
def test_a_pull_down_is_named_by_the_rail_its_contact_closes_to(ground, source):
    # A 10 ohm pull-down, the contact to 5 V: 5.25 / 9.5 = 553 mA through it when closed
    # (Ohm's law); the ground it hangs from (the node 0, or a separate ground written as a
    # 0 V source, as exports write an analog ground) is not the rail that drives it.
    deck = (f"* a pull-down that reads as a short\nV1 vcc 0 DC 5\n{source}R1 n1 {ground} 10\n"
            "SW1 vcc n1 TACTILE\nXU1 n1 y1 0 y2 0 y3 0 y4 0 y5 0 y6 0 vcc 74HC14\n.end\n")
    assert "R1" in _shorted_pull_parts(deck)
