"""Timing fixes name only the parts an edge's capacitor charges through.

Outside reference: the time constant the capacitor sees, worked by hand
(Thevenin resistance seen from the capacitor, *Lessons In Electric
Circuits*, Vol. I, ch. 16 and ch. 10): a part is on the edge's charging path
when doubling it changes that time constant. For the reference stage (R1
pull-up to the contact node n1, R2 series to the pin, C1 at the pin, contact
n1 to ground with 0.1 Ohm) the press sees R2 + R1 || 0.1 Ohm, the release
R1 + R2; a resistor from C1 to the pin (which draws only its input current)
is in neither.
"""

from __future__ import annotations

import pytest

from drc.analysis.charging import charging_parts
from drc.board.stage import Resistor
from drc.checks import run_stage_rules
from tests.checks.builders import LIMITS, analysed, rc_stage

RC = 0.1  # closed contact (tests/checks/builders.py)


def parallel(a, b):
    return a * b / (a + b)


def tau(edge: str, r1: float, r2: float, c: float) -> float:
    """The hand-worked time constant of the reference stage."""
    return (r2 + parallel(r1, RC)) * c if edge == "press" else (r1 + r2) * c


@pytest.mark.parametrize("edge", ["press", "release"])
def test_named_parts_are_the_ones_that_move_the_time_constant(edge):
    values = {"R1": 10e3, "R2": 1e3, "C1": 100e-9}
    stage = rc_stage(r1=values["R1"], r2=values["R2"], c1=values["C1"])
    named = set(charging_parts(stage.circuit, edge))
    base = tau(edge, values["R1"], values["R2"], values["C1"])
    for part in values:
        doubled = dict(values, **{part: 2 * values[part]})
        moves = abs(tau(edge, doubled["R1"], doubled["R2"], doubled["C1"]) / base - 1) > 0.01
        assert (part in named) == moves, (edge, part)


def test_a_resistor_to_the_pin_carries_no_charging_current():
    stage = rc_stage()
    circuit = stage.circuit
    rp = Resistor("R3", "in", "pin", 100.0, role="series")
    circuit = type(circuit)(circuit.resistors + (rp,), circuit.capacitors, circuit.diodes, circuit.rails,
                            circuit.throws, "pin")
    for edge in ("press", "release"):
        assert "R3" not in charging_parts(circuit, edge)
        assert "C1" in charging_parts(circuit, edge)


def test_the_issue_example_fix_text_leaves_the_pull_up_out_of_the_press():
    # 10 kOhm / 1 kOhm / 100 nF: the press discharges through R2 and the bare contact.
    result = analysed(rc_stage(r1=10e3, r2=1e3, c1=100e-9))
    findings = {f.message.split()[0]: f for f in run_stage_rules(result, LIMITS) if f.rule == "bounce-window"}
    press, release = findings["press"], findings["release"]
    assert "R1" not in press.fix and "R2 1 kΩ" in press.fix and "C1 100 nF" in press.fix
    assert "R1" not in press.parts and "R2" in press.parts
    assert all(f"{p}" in release.fix for p in ("R1 10 kΩ", "R2 1 kΩ", "C1 100 nF"))


def test_a_capacitor_shorted_by_the_contact_falls_back_to_every_timing_part():
    # Contact straight across the capacitor: the press path is the bare contact, no part to name.
    stage = rc_stage(r1=10e3, r2=None, c1=100e-9)
    assert charging_parts(stage.circuit, "press") == ()
    assert charging_parts(stage.circuit, "release") == ("R1", "C1")
