"""rail-mismatch and shorted-pull: which rail decides, which parts are named, which current is quoted.

Sources:
- rail-mismatch's definition (its handbook text): the pull rail's nominal
  voltage against the receiver's absolute maximum input (nominal against
  nominal); the pin sees at most the rail at its maximum, V·(1 + tol), when
  the analysis gives no figure. Absolute maximum of a 74HC input: VCC + 0.5 V
  (JEDEC JESD7A, from memory). Where the circuit has no clamp element, the
  current into the clamp is Ohm's law over the pull resistor at its minimum:
  (V_pin - V_absmax) / (R·(1 - tol)).
- shorted-pull's definition: a held current that reaches `short_current`
  (0.1 A) is a short; the culprits it names are the pull resistors that alone
  would pass that current from the rail at its maximum, R·(1 - tol)·I ≤
  V·(1 + tol) (Ohm's law), and the 0 Ω links on the path.
"""

from __future__ import annotations

import re
from dataclasses import replace

import pytest

from drc.checks import run_stage_rules
from tests.checks.builders import LIMITS, hc, rc_stage, result

OVER, UNDER = 1 + 1e-6, 1 - 1e-6


def fired(res, rule_id):
    return run_stage_rules(res, LIMITS, selected_ids={rule_id})


def amps(text: str) -> float:
    number, unit = text.split()
    return float(number) * {"A": 1.0, "mA": 1e-3, "µA": 1e-6}[unit]


# rail-mismatch ---------------------------------------------------------------------------

@pytest.mark.parametrize("factor, fires", [(UNDER, False), (1.0, False), (OVER, True)])
def test_rail_mismatch_compares_the_nominal_rail_with_the_absolute_maximum(factor, fires):
    absmax = 3.3 + 0.5
    res = result(rc_stage(rail_v=absmax * factor), max_in=None, rx=hc(vcc=3.3))
    found = fired(res, "rail-mismatch")
    assert len(found) == fires
    if fires:
        # no figure from the analysis: the rail at its maximum (5 % tolerance)
        assert found[0].measured.value == pytest.approx(absmax * factor * 1.05)
        assert found[0].measured.unit == "V" and found[0].limit.value == pytest.approx(absmax)


def test_rail_mismatch_quotes_the_clamp_current_through_the_pull_resistor_at_its_minimum():
    res = result(rc_stage(r1=8.2e3), max_in=None, rx=hc(vcc=3.3))
    [f] = fired(res, "rail-mismatch")
    assert f.parts == ("SW1", "R1", "U1")
    [clamp] = re.findall(r"about (\S+ \S+) flows into its clamp", f.message)
    assert amps(clamp) == pytest.approx((5.25 - 3.8) / (8.2e3 * 0.95), rel=2e-3)


def test_rail_mismatch_quotes_the_analysed_clamp_current_when_there_is_one():
    res = replace(result(max_in=3.9, rx=hc(vcc=3.3)), clamp_current_a=2.5e-4)
    [f] = fired(res, "rail-mismatch")
    assert f.measured.value == pytest.approx(3.9)
    [clamp] = re.findall(r"up to (\S+ \S+) flows into its clamp", f.message)
    assert amps(clamp) == pytest.approx(2.5e-4)


def test_a_tolerant_input_has_no_clamp_current():
    # A 5 V-tolerant input has no clamp to its supply: no current into it is quoted.
    res = result(max_in=None, rx=hc(vcc=3.3, abs_max=3.6, tolerant=True))
    [f] = fired(res, "rail-mismatch")
    assert "clamp" not in f.message


def test_no_rail_no_mismatch_and_no_receiver_data_no_mismatch():
    stage = rc_stage()
    railless = replace(stage, circuit=replace(stage.circuit, rails=()))
    assert fired(result(railless, rx=hc(vcc=3.3)), "rail-mismatch") == []
    assert fired(replace(result(rx=hc(vcc=3.3)), receiver_electrical=None), "rail-mismatch") == []


# shorted-pull ----------------------------------------------------------------------------

@pytest.mark.parametrize("factor, named", [(UNDER, True), (OVER, False)])
def test_shorted_pull_names_the_pull_resistors_that_alone_pass_the_short_current(factor, named):
    # 5 V rail at +5 %, resistor at -5 %: R alone passes 0.1 A up to 5.25 / (0.95 × 0.1) Ω.
    ohms = 5.25 / (0.95 * 0.1) * factor
    res = replace(result(rc_stage(r1=ohms)), closed_current_a=0.2)
    [f] = fired(res, "shorted-pull")
    assert ("R1" in f.parts) == named
    assert f.measured.value == pytest.approx(0.2) and f.measured.unit == "A" and f.limit.value == pytest.approx(0.1)


def test_shorted_pull_names_zero_ohm_links_and_the_rail():
    stage = replace(rc_stage(r1=10e3), links=("R7",))
    res = replace(result(stage), closed_current_a=0.3)
    [f] = fired(res, "shorted-pull")
    assert f.parts == ("SW1", "R7", "U1")
    assert "R7" in f.message and "vcc" in f.message


def test_the_held_current_is_the_larger_of_the_closed_and_the_pull_current():
    res = replace(result(pull_a=0.15), closed_current_a=0.05)
    [f] = fired(res, "shorted-pull")
    assert f.measured.value == pytest.approx(0.15)
    res = replace(result(pull_a=0.05), closed_current_a=0.15)
    [f] = fired(res, "shorted-pull")
    assert f.measured.value == pytest.approx(0.15)
