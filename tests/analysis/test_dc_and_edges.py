"""DC levels, currents, floating nodes, never-reached edges, solver agreement.

Sources: Ohm's and Kirchhoff's laws with hand arithmetic (textbook circuit
theory; each expected value is computed in the test from the formula named
beside it), and the RC closed form of components-and-contacts.md (CC).
"""

import math

import numpy as np
import pytest

from drc.analysis.physics.compiled import compile_circuit
from drc.analysis.physics.mna import dc_solve
from drc.analysis.physics.transient import edge_batch, solve_edge
from drc.analysis.stage_analysis import analyse_stage, edge_solution, edge_waveform
from drc.board.stage import Capacitor, Diode, Resistor, Throw
from tests.analysis.builders import pullup_c_at_pin, pullup_series_rc, receiver_electrical, stage

RX = receiver_electrical()


def test_floating_receiver_is_undefined():
    # A contact to the rail with no pull-down: released, the pin has no DC path.
    st = stage(resistors=(Resistor("R1", "sw", "rx", 1e3, role="series"),),
               throws=(Throw("vcc", "sw", "pressed", 0.1),))
    res = analyse_stage(st, RX)
    assert res.levels["released"].logic == "undefined"
    assert res.levels["released"].nominal_v is None and res.levels["released"].thevenin_ohms is None
    assert res.levels["pressed"].logic == "high"
    assert res.edges == {}  # no edge is timed from or into an undefined level
    assert any("no DC path" in n for n in res.notes)


def test_never_reached_is_none():
    # Divider (Ohm's law): 5 V * 10k / (10k + 10k) = 2.5 V pressed level, which never
    # falls below a VT- band of 0.9..2.2 V: the press edge never crosses.
    st = stage(resistors=(Resistor("R1", "vcc", "rx", 10e3, role="pull"), Resistor("R2", "rx", "sw", 10e3)),
               capacitors=(Capacitor("C1", "rx", "0", 100e-9),))
    e = analyse_stage(st, RX).edges["press"]
    assert e.nominal_s is None and e.slowest_s is None and e.slope_v_per_s is None
    assert e.final_v == pytest.approx(2.5 - 0.5 * (-0.5e-6) * 5e3 * 2 / 2, rel=1e-3)


def test_no_capacitor_switches_instantly():
    st = stage(resistors=(Resistor("R1", "vcc", "rx", 10e3, role="pull"),), throws=(Throw("rx", "0", "pressed", 0.1),))
    res = analyse_stage(st, RX)
    for e in res.edges.values():
        assert e.nominal_s == 0.0 and e.fastest_s == 0.0 and e.slowest_s == 0.0
        assert e.slope_v_per_s == math.inf


def test_currents_pull_contact_and_max_input():
    # Ohm's law: pull current while pressed, rail max / (R min + contact):
    # 5.25 / (9500 + 0.1); contact current at rail min, R max: 4.75 / (10500 + 0.1)
    # less the leakage the pin takes (it leaves the node).
    st = pullup_c_at_pin(r_pu=10e3, c=100e-9, closed_ohms=0.1)
    res = analyse_stage(st, RX)
    assert res.pull_current_a == pytest.approx(5.25 / 9500.1, rel=1e-6)
    assert res.contact_current_a == pytest.approx(4.75 / 10500.1, rel=1e-4)
    # Highest steady pin voltage: rail max with the most negative low-level leakage
    # impossible while high; released at 5.25 V and leakage 0: 5.25 V.
    assert res.max_input_v == pytest.approx(5.25, abs=1e-9)


def test_surge_cap_at_pin_and_none_with_series_resistor():
    # CC: capacitor straight across bare contacts: peak ≈ V / R_contact. Rail max 5.25 V
    # charges the pin capacitor; the 0.1 Ω contact then carries 5.25 / 0.1 = 52.5 A.
    res = analyse_stage(pullup_c_at_pin(closed_ohms=0.1), RX)
    assert res.surge_peak_a == pytest.approx(5.25 / 0.1, rel=1e-9)
    # With the capacitor behind a series resistor nothing discharges through the contact.
    assert analyse_stage(pullup_series_rc(), RX).surge_peak_a is None


def test_dc_thevenin_and_branch_currents():
    # Thevenin of a divider: V = 5 * 20k / 30k, R = 10k || 20k; KCL through R1.
    st = stage(resistors=(Resistor("R1", "vcc", "rx", 10e3), Resistor("R2", "rx", "0", 20e3)),
               throws=(Throw("rx", "x", "pressed", 0.1),))
    model = compile_circuit(st.circuit)
    P = model.nominal.copy()
    P[model.leak_col] = 1e-6
    dc = dc_solve(model, "released", P[None, :])
    assert dc.thevenin_v[0] == pytest.approx(5 * 20 / 30, rel=1e-12)
    assert dc.thevenin_ohms[0] == pytest.approx(1 / (1 / 10e3 + 1 / 20e3), rel=1e-12)
    v = 5 * 20 / 30 - 1e-6 * dc.thevenin_ohms[0]
    assert dc.rx_v[0] == pytest.approx(v, rel=1e-12)
    assert dc.i_res[0, 0] == pytest.approx((5 - v) / 10e3, rel=1e-12)
    assert dc.i_res[0, 1] == pytest.approx(v / 20e3, rel=1e-12)


def test_diode_steady_state_piecewise_linear():
    # Diode-OR into a pull-down: 5 V -> D (0.6 V, 10 Ω) -> pin -> 10 kΩ -> ground:
    # I = (5 - 0.6) / 10010, pin = I * 10k. Reversed, the diode blocks: pin at 0 V.
    fwd = stage(resistors=(Resistor("R1", "rx", "0", 10e3),), diodes=(Diode("D1", "vcc", "rx"),),
                throws=(Throw("rx", "x", "pressed", 0.1),))
    m = compile_circuit(fwd.circuit)
    dc = dc_solve(m, "released", m.nominal[None, :])
    assert dc.rx_v[0] == pytest.approx(4.4 / 10010 * 10e3, rel=1e-12)
    assert dc.diodes_on[0, 0]
    rev = stage(resistors=(Resistor("R1", "rx", "0", 10e3),), diodes=(Diode("D1", "rx", "vcc"),),
                throws=(Throw("rx", "x", "pressed", 0.1),))
    m = compile_circuit(rev.circuit)
    dc = dc_solve(m, "released", m.nominal[None, :])
    assert dc.rx_v[0] == 0.0 and not dc.diodes_on[0, 0]


def test_modal_path_agrees_with_closed_form_batch():
    # The eigen-decomposition path and the one-capacitor closed form must agree.
    st = pullup_series_rc()
    m = compile_circuit(st.circuit)
    rng = np.random.default_rng(3)
    P = m.lo + rng.uniform(size=(50, m.lo.size)) * (m.hi - m.lo)
    P[:, m.leak_col] = rng.uniform(0, 1e-6, 50)
    vth = rng.uniform(2.0, 3.5, 50)
    fast = edge_batch(m, "pressed", "released", P, vth, +1)
    for i in range(50):
        sol = solve_edge(m, "pressed", "released", P[i], vth[i], +1)
        assert sol.crossing_s == pytest.approx(fast.t[i], rel=1e-11)
        assert sol.slope_v_per_s == pytest.approx(fast.slope[i], rel=1e-9)


def test_diode_edge_is_asymmetric_and_event_driven():
    # Diode across the series resistor: the press discharges C through the diode
    # (fast), the release charges it through R1 + R2 (slow, diode blocking).
    st = stage(resistors=(Resistor("R1", "vcc", "sw", 10e3, role="pull"),
                          Resistor("R2", "sw", "rx", 47e3, role="series")),
               capacitors=(Capacitor("C1", "rx", "0", 100e-9),), diodes=(Diode("D1", "rx", "sw", 0.6, 10.0),))
    res = analyse_stage(st, RX)
    assert res.edges["press"].nominal_s < res.edges["release"].nominal_s / 100
    # Release with the diode blocking: closed form, tau = (R1 + R2) C towards the
    # Thevenin level (leakage as a current source), from the pressed level.
    e = res.edges["release"]
    tau = 57e3 * 100e-9
    assert e.nominal_s == pytest.approx(tau * math.log((e.final_v - e.start_v) / (e.final_v - 2.9)), rel=1e-9)
    # The press starts with the diode blocking, then it conducts: at least two segments.
    sol = edge_solution(st, RX, "press")
    assert len(sol.segments) >= 2


def test_waveform_is_the_analysis_solution():
    st = pullup_series_rc()
    res = analyse_stage(st, RX)
    for edge in ("press", "release"):
        for corner, key, vkey in (("nominal", "nominal_s", "threshold_v"),
                                  ("slowest", "slowest_s", "threshold_slowest_v"),
                                  ("fastest", "fastest_s", "threshold_fastest_v")):
            t, v = edge_waveform(st, RX, edge, corner)
            e = res.edges[edge]
            assert np.all(np.diff(t) >= 0) and t.size > 500
            tc = getattr(e, key)
            vth = getattr(e, vkey)
            # the plotted trace crosses the threshold where the analysis says
            before, after = v[t < tc * 0.999][-1], v[t > tc * 1.001][0]
            assert (before - vth) * (after - vth) < 0
            assert np.interp(tc, t[1:], v[1:]) == pytest.approx(vth, abs=1e-9)


def test_edge_batch_marks_a_threshold_never_reached_with_nan():
    # EdgeBatch's docstring: edge timing at N corners, nan where the threshold is never reached.
    # A diode from the pin to the rail that never conducts sends the batch down its per-row path
    # (not the one-capacitor closed form); the release then follows the RC law with tau = R1 C1
    # from the pressed divider towards 5 V: 3.0 V is reached, t = tau ln((Vf - V0)/(Vf - Vth)),
    # slope (Vf - Vth)/tau there; 5.5 V, over the rail, never.
    r1, c1, rc, vcc = 10e3, 100e-9, 0.1, 5.0
    st = stage(resistors=(Resistor("R1", "vcc", "rx", r1, role="pull"),),
               capacitors=(Capacitor("C1", "rx", "0", c1),), diodes=(Diode("D1", "rx", "vcc"),),
               throws=(Throw("rx", "0", "pressed", rc),))
    m = compile_circuit(st.circuit)
    P = np.repeat(m.nominal[None, :], 2, axis=0)
    P[:, m.leak_col] = 0.0
    got = edge_batch(m, "pressed", "released", P, np.array([3.0, 5.5]), +1)
    v0, tau = vcc * rc / (r1 + rc), r1 * c1
    assert got.t[0] == pytest.approx(tau * math.log((vcc - v0) / (vcc - 3.0)), rel=1e-9)
    assert got.slope[0] == pytest.approx((vcc - 3.0) / tau, rel=1e-9)
    assert math.isnan(got.t[1]) and math.isnan(got.slope[1])
