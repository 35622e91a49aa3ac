"""Closed-form RC checks against published and computed values.

Sources:
- LIEC: the open textbook *Lessons In Electric Circuits*, Vol. I (DC),
  chapter 16 "RC and L/R Time Constants" (Design Science License).
- CC: /work/shared/reference/components-and-contacts.md, values marked
  "computed" (closed form, confirmed there by an ODE solver).
"""

import math

import numpy as np
import pytest

from drc.analysis.physics.compiled import compile_circuit
from drc.analysis.physics.mna import dc_solve
from drc.analysis.physics.transient import rc_time_to_threshold, rc_voltage
from drc.analysis.stage_analysis import analyse_stage, edge_solution
from drc.board.stage import Capacitor, RailSource, Resistor, Throw
from tests.analysis.builders import pullup_c_at_pin, receiver_electrical, stage

# LIEC ch. 16: 15 V, 10 kΩ, 100 µF (tau = 1 s), from 0 V.
LIEC_TABLE = [(0.5, 5.902), (1.0, 9.482), (2.0, 12.970), (3.0, 14.253), (5.0, 14.899)]


@pytest.mark.parametrize("t, vc", LIEC_TABLE)
def test_rc_voltage_textbook_table(t, vc):
    # LIEC ch. 16 table; printed to 4 significant figures.
    assert rc_voltage(t, 0.0, 15.0, 10e3 * 100e-6) == pytest.approx(vc, abs=6e-4)


def test_rc_time_to_threshold_textbook():
    # LIEC ch. 16: reaching 12.970 V takes 2 s (the table value is rounded).
    assert rc_time_to_threshold(0.0, 15.0, 12.970, 1.0) == pytest.approx(2.0, rel=2e-4)


def test_rc_time_to_threshold_never_reached_is_none():
    # Closed form defined only for vth strictly between v0 and vf (CC, RC timing).
    assert rc_time_to_threshold(0.0, 5.0, 5.0, 1e-3) is None
    assert rc_time_to_threshold(0.0, 5.0, 6.0, 1e-3) is None
    assert rc_time_to_threshold(0.0, 5.0, 0.0, 1e-3) is None
    assert rc_time_to_threshold(5.0, 0.0, 2.0, 1e-3) == pytest.approx(1e-3 * math.log(5 / 2))


def _liec_stage():
    # LIEC ch. 16 circuit as a stage: 15 V rail, 10 kΩ to the pin, 100 µF at the pin,
    # a near-ideal contact discharges it while pressed (the release edge starts at 0 V).
    return stage(resistors=(Resistor("R1", "vcc", "rx", 10e3, 0.0, 0.0, "pull"),),
                 capacitors=(Capacitor("C1", "rx", "0", 100e-6, 0.0, 0.0),),
                 rails=(RailSource("vcc", 15.0, 0.0),),
                 throws=(Throw("rx", "0", "pressed", 1e-6),))


def test_stage_waveform_matches_textbook_table():
    # LIEC ch. 16 table, through the whole engine (MNA + modal solution).
    rx = receiver_electrical(vcc=15.0, rising=(12.0, 12.970, 13.0), leak_high=(0.0, 0.0), leak_low=(0.0, 0.0))
    sol = edge_solution(_liec_stage(), rx, "release")
    t = np.array([x for x, _ in LIEC_TABLE])
    assert sol.voltage(t) == pytest.approx([v for _, v in LIEC_TABLE], abs=6e-4)
    # LIEC ch. 16: 12.970 V is reached at 2 s.
    assert analyse_stage(_liec_stage(), rx).edges["release"].nominal_s == pytest.approx(2.0, rel=2e-4)


def test_thevenin_textbook_example():
    # LIEC ch. 16 Thevenin example: 20 V; 2 kΩ, 500 Ω, 3 kΩ in series; 100 µF across
    # the 500 Ω. The series loop is reordered (2 kΩ, 3 kΩ, then 500 Ω to ground), which
    # leaves the Thevenin equivalent across the 500 Ω unchanged, so the capacitor's
    # far end is ground. A near-ideal contact in the loop starts the charge from 0 V.
    st = stage(resistors=(Resistor("R1", "v20", "m", 2e3, 0.0, 0.0), Resistor("R3", "s", "rx", 3e3, 0.0, 0.0),
                          Resistor("R2", "rx", "0", 500.0, 0.0, 0.0)),
               capacitors=(Capacitor("C1", "rx", "0", 100e-6, 0.0, 0.0),),
               rails=(RailSource("v20", 20.0, 0.0),), throws=(Throw("m", "s", "pressed", 1e-6),))
    model = compile_circuit(st.circuit)
    dc = dc_solve(model, "pressed", model.nominal[None, :])
    assert dc.thevenin_v[0] == pytest.approx(1.8182, abs=1e-4)
    assert dc.thevenin_ohms[0] == pytest.approx(454.545, abs=1e-3)
    rx = receiver_electrical(vcc=20.0, rising=(1.0, 1.2, 1.4), leak_high=(0.0, 0.0), leak_low=(0.0, 0.0))
    sol = edge_solution(st, rx, "press")
    assert sol.time_constants[0] == pytest.approx(45.4545e-3, rel=1e-5)
    assert sol.voltage(np.array([60e-3]))[0] == pytest.approx(1.3325, abs=1e-4)


def test_reference_rising_695us():
    # CC (computed): 5 V, 10 kΩ pull-up, 100 nF, IIH 1 µA, from 0 V to 2.5 V: 695.15 µs.
    rx = receiver_electrical(rising=(2.5, 2.5, 2.5), leak_high=(1e-6, 1e-6))
    res = analyse_stage(pullup_c_at_pin(closed_ohms=1e-6), rx)
    assert res.edges["release"].nominal_s == pytest.approx(695.15e-6, abs=0.006e-6)


def test_reference_falling_through_100_ohm():
    # CC (computed): falling through 100 Ω contact resistance, same parts, to 1.5 V: 12.134 µs.
    rx = receiver_electrical(falling=(1.5, 1.5, 1.5), leak_low=(1e-6, 1e-6))
    res = analyse_stage(pullup_c_at_pin(closed_ohms=100.0), rx)
    assert res.edges["press"].nominal_s == pytest.approx(12.134e-6, abs=0.0006e-6)


@pytest.mark.parametrize("leak, level, passes", [(1e-6, 2.53, True), (5e-6, 0.65, False)])
def test_reference_headroom(leak, level, passes):
    # CC (computed): 3.0 V, 470 kΩ pull-up, VIH 2.0 V: passes at IIH 1 µA (2.53 V),
    # fails at 5 µA (0.65 V). The worst corner of IIH 0..leak gives those levels.
    rx = receiver_electrical(vcc=3.0, schmitt=False, rising=(1.0, 1.5, 2.0), falling=(1.0, 1.5, 2.0),
                             vih=2.0, vil=0.8, leak_high=(0.0, leak))
    st = stage(resistors=(Resistor("R1", "vcc", "rx", 470e3, 0.0, 0.0, "pull"),),
               rails=(RailSource("vcc", 3.0, 0.0),), throws=(Throw("rx", "0", "pressed", 0.1),))
    lvl = analyse_stage(st, rx).levels["released"]
    assert lvl.logic == "high"
    assert lvl.worst_v == pytest.approx(level, abs=1e-9)
    assert lvl.required_v == 2.0
    assert (lvl.margin_v > 0) is passes
