"""A capacitor with no DC path during an edge (a mode that never decays), against scipy.

The stage: R1 pulls the pin `rx` up; a changeover contact grounds the node
`m` while released and connects the pin to ground through R3 while pressed;
C1 from the pin to `m`, C2 from `m` to ground, and a diode D1 from ground
(anode) to `m`. Pressed, `m` has no DC path: C1 and C2 in series keep the
charge on `m` (the exact solver's zero-eigenvalue mode), so the press
pushes `m` below ground until D1 conducts and clamps it; then the pin falls
with another time constant. The crossing depends on when D1 turns on, so on
how `m` moves with its kept charge.

Sources:
- Kirchhoff's current law at the pin and at `m` with the capacitor voltages
  as states (C1 du1/dt = i1, C2 du2/dt = i1 + i_D, pin = u1 + u2), the diode
  piecewise linear as rules/limits.toml states it for a diode without a
  card (0.6 V, 10 ohm): written here by hand and integrated with
  scipy.integrate.solve_ivp (LSODA, rtol 1e-11) with events at the
  thresholds;
- the released start: the pin at Vcc − I·R1, `m` grounded (Ohm's law);
- every corner of the tolerance box brute-forced with the same integration.
"""

from __future__ import annotations

import itertools

import pytest
from scipy.integrate import solve_ivp

from drc.analysis.stage_analysis import analyse_stage, edge_solution
from drc.board.stage import Capacitor, Diode, RailSource, Resistor, ResistorRole, Throw
from tests.analysis.builders import receiver_electrical, stage

VCC, V_TOL = 5.0, 0.05
R1, R_TOL = 10e3, 0.05
R3 = 1e3
C1, C_TOL = 100e-9, 0.20
C2 = 100e-9
RC = 0.1
VF, RON = 0.6, 10.0  # rules/limits.toml: a diode without a card
LEAK_HIGH, LEAK_LOW = (0.0, 1e-6), (-1e-6, 0.0)
RX = receiver_electrical(leak_high=LEAK_HIGH, leak_low=LEAK_LOW)


def island():
    return stage(resistors=(Resistor("R1", "vcc", "rx", R1, R_TOL, R_TOL, role=ResistorRole.PULL),
                            Resistor("R3", "n", "0", R3, 0.0, 0.0)),
                 capacitors=(Capacitor("C1", "rx", "m", C1, C_TOL, C_TOL), Capacitor("C2", "m", "0", C2, 0.0, 0.0)),
                 diodes=(Diode("D1", "0", "m", VF, RON),),
                 rails=(RailSource("vcc", VCC, V_TOL),),
                 throws=(Throw("m", "0", "released", RC), Throw("rx", "n", "pressed", RC)))


def press(vcc, r1, c1, leak, thresholds):
    """(crossing times of the pin, time D1 turns on) by integrating the press."""
    def rhs(_t, u):
        pin, m = u[0] + u[1], u[1]
        i1 = (vcc - pin) / r1 - pin / (RC + R3) - leak
        i_d = (-m - VF) / RON if -m > VF else 0.0
        return [i1 / c1, (i1 + i_d) / C2]

    events = []
    for vth in thresholds:
        def crossing(_t, u, vth=vth):
            return u[0] + u[1] - vth
        crossing.direction = -1.0
        crossing.terminal = vth == min(thresholds)  # the last one ends the run
        events.append(crossing)

    def diode_on(_t, u):
        return -u[1] - VF
    events.append(diode_on)
    start = [vcc - leak * r1, 0.0]  # released: the pin at vcc - I·R1, m grounded
    sol = solve_ivp(rhs, (0.0, 40 * r1 * c1), start, method="LSODA", rtol=1e-11, atol=1e-14, events=events)
    return [float(t[0]) for t in sol.t_events]


def test_press_at_nominal_follows_the_integration():
    corner = {"R1": R1, "C1": C1, "rail:vcc": VCC, "leakage": 0.0, "threshold": 1.6}
    sol = edge_solution(island(), RX, "press", corner)
    t_cross, t_diode = press(VCC, R1, C1, 0.0, (1.6,))
    assert t_diode < t_cross  # D1 clamps m before the pin crosses: the kept charge decides when
    assert sol.crossing_s == pytest.approx(t_cross, rel=1e-7)
    # The diode's turn-on is the event that ends the first segment.
    assert len(sol.segments) >= 2
    assert sol.segments[1].t0 == pytest.approx(t_diode, rel=1e-7)
    assert sol.start_v == pytest.approx(VCC, rel=1e-12)


def test_press_corners_are_the_brute_force_extremes():
    e = analyse_stage(island(), RX).edges["press"]
    inner, outer = RX.falling_threshold[2], RX.falling_threshold[0]
    fast, slow = [], []
    for r1, c1, vcc, leak in itertools.product((R1 * (1 - R_TOL), R1 * (1 + R_TOL)),
                                               (C1 * (1 - C_TOL), C1 * (1 + C_TOL)),
                                               (VCC * (1 - V_TOL), VCC * (1 + V_TOL)), LEAK_LOW):
        t_in, t_out, _t_diode = press(vcc, r1, c1, leak, (inner, outer))
        fast.append(t_in)
        slow.append(t_out)
    assert e.fastest_s == pytest.approx(min(fast), rel=1e-7)
    assert e.slowest_s == pytest.approx(max(slow), rel=1e-7)
    t_nom, _t_diode = press(VCC, R1, C1, sum(LEAK_LOW) / 2, (RX.falling_threshold[1],))
    assert e.nominal_s == pytest.approx(t_nom, rel=1e-7)
