"""Corner bounds against Monte Carlo runs (numpy random, seeded).

Sources:
- CC: /work/shared/reference/components-and-contacts.md, "corners vs Monte
  Carlo" (computed): 10 kΩ ±5 %, 100 nF ±10 %, 5 V ±10 %, VT+ 1.7-3.15 V,
  IIH 0-1 µA give corner bounds 316.13 µs and 1396.91 µs.
- The closed form t = R·C·ln((Vf − V0)/(Vf − Vth)) (handbook RC formula, CC),
  evaluated independently with numpy for every sample.
"""

import numpy as np
import pytest

from drc.analysis.physics.compiled import compile_circuit
from drc.analysis.physics.transient import edge_batch
from drc.analysis.stage_analysis import analyse_stage, edge_setup
from drc.board.stage import Capacitor, Resistor
from tests.analysis.builders import pullup_c_at_pin, pullup_series_rc, receiver_electrical, stage

RX_REF = receiver_electrical(rising=(1.7, 2.4, 3.15), leak_high=(0.0, 1e-6))


def _ref_stage():
    return pullup_c_at_pin(r_tol=0.05, c_tol=0.10, v_tol=0.10, closed_ohms=1e-6)


def test_reference_corner_bounds():
    # CC: corner bounds 316.13 µs and 1396.91 µs.
    e = analyse_stage(_ref_stage(), RX_REF).edges["release"]
    assert e.fastest_s == pytest.approx(316.13e-6, abs=0.006e-6)
    assert e.slowest_s == pytest.approx(1396.91e-6, abs=0.006e-6)
    assert e.corner_fastest["threshold"] == 1.7 and e.corner_slowest["threshold"] == 3.15
    assert e.corner_slowest["leakage"] == 1e-6 and e.corner_fastest["leakage"] == 0.0


def test_reference_monte_carlo_inside_corners():
    # CC: every sample of a Monte Carlo run lies within the corner bounds.
    e = analyse_stage(_ref_stage(), RX_REF).edges["release"]
    rng = np.random.default_rng(20240601)
    n = 200_000
    R = 10e3 * rng.uniform(0.95, 1.05, n)
    C = 100e-9 * rng.uniform(0.90, 1.10, n)
    V = 5.0 * rng.uniform(0.90, 1.10, n)
    vt = rng.uniform(1.7, 3.15, n)
    leak = rng.uniform(0.0, 1e-6, n)
    vf = V - leak * R  # Thevenin with leakage as a current source (CC)
    t_closed = R * C * np.log(vf / (vf - vt))  # handbook closed form, from 0 V
    assert t_closed.min() >= e.fastest_s * (1 - 1e-6)
    assert t_closed.max() <= e.slowest_s * (1 + 1e-6)
    # The engine itself, at the same samples, agrees with the closed form.
    model = compile_circuit(_ref_stage().circuit)
    P = np.column_stack([R, C, V, leak])
    assert model.param_names == ("R1", "C1", "rail:vcc", "leakage")
    t_engine = edge_batch(model, "pressed", "released", P, vt, +1).t
    np.testing.assert_allclose(t_engine, t_closed, rtol=1e-6)


@pytest.mark.parametrize("edge", ["press", "release"])
def test_series_rc_monte_carlo_inside_corners(edge):
    # Property: timing is bounded by the vertex extremes (CC: "vertices are exact bounds").
    st = pullup_series_rc(r_pu=10e3, r_s=4.7e3, c=1e-6, tol_minus=0.05, tol_plus=0.05)
    rx = receiver_electrical()
    res = analyse_stage(st, rx)
    e = res.edges[edge]
    model = compile_circuit(st.circuit)
    es = edge_setup(model, rx, edge)
    rng = np.random.default_rng(7)
    n = 20_000
    P = es.box.lo + rng.uniform(size=(n, es.box.lo.size)) * (es.box.hi - es.box.lo)
    lo_t, hi_t = es.threshold[0], es.threshold[2]
    vth = rng.uniform(lo_t, hi_t, n)
    t = edge_batch(model, es.from_state, es.to_state, P, vth, es.direction).t
    assert not np.isnan(t).any()
    assert t.min() >= e.fastest_s * (1 - 1e-9)
    assert t.max() <= e.slowest_s * (1 + 1e-9)
    assert e.fastest_s < e.nominal_s < e.slowest_s


def test_two_section_monte_carlo_inside_corners():
    # Property as above on the multi-capacitor (modal) path; fewer samples as each is a solve.
    st = stage(resistors=(Resistor("R1", "vcc", "sw", 10e3, role="pull"),
                          Resistor("R2", "sw", "a", 10e3, role="series"),
                          Resistor("R3", "a", "rx", 22e3, role="series")),
               capacitors=(Capacitor("C1", "a", "0", 100e-9, 0.1, 0.1), Capacitor("C2", "rx", "0", 47e-9, 0.1, 0.1)))
    rx = receiver_electrical()
    res = analyse_stage(st, rx)
    model = compile_circuit(st.circuit)
    rng = np.random.default_rng(11)
    for edge in ("press", "release"):
        e = res.edges[edge]
        es = edge_setup(model, rx, edge)
        n = 400
        P = es.box.lo + rng.uniform(size=(n, es.box.lo.size)) * (es.box.hi - es.box.lo)
        vth = rng.uniform(es.threshold[0], es.threshold[2], n)
        t = edge_batch(model, es.from_state, es.to_state, P, vth, es.direction).t
        assert t.min() >= e.fastest_s * (1 - 1e-9) and t.max() <= e.slowest_s * (1 + 1e-9)
