"""The exact trajectory of an edge and the RC law helpers, against the RC law by hand.

Source: the first-order RC law v(t) = vf + (v0 - vf)·exp(-t/τ) (Lessons In
Electric Circuits, Vol. I, ch. 16), evaluated here with math/numpy; the
documented meaning of a corner mapping (stage_analysis.corner_row: values
not given stay nominal, no "threshold" key means the typical threshold).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from drc.analysis.physics.compiled import compile_circuit
from drc.analysis.physics.transient import rc_voltage
from drc.analysis.stage_analysis import corner_row, edge_setup, edge_solution
from tests.analysis.builders import pullup_c_at_pin, receiver_electrical

RX = receiver_electrical(leak_high=(0.0, 0.0), leak_low=(0.0, 0.0))


@pytest.mark.parametrize("t", [0.0, 1e-4, 1e-3, np.array([0.0, 5e-5, 2e-3])])
def test_rc_voltage_is_the_rc_law(t):
    tau, v0, vf = 1e-3, 0.2, 5.0
    want = vf + (v0 - vf) * np.exp(-np.asarray(t, dtype=float) / tau)
    np.testing.assert_allclose(rc_voltage(t, v0, vf, tau), want, rtol=1e-12)
    np.testing.assert_allclose(rc_voltage(t, v0, vf, np.array([tau, 2 * tau])[:1]), want, rtol=1e-12)


def test_the_release_trajectory_starts_at_its_level_and_follows_the_rc_law():
    # 10 kΩ pull-up to 5 V, 100 nF at the pin, the contact to ground (0.1 Ω): released from
    # the pressed level 5 V · 0.1 / (10 k + 0.1), towards 5 V with τ = 10 kΩ · 100 nF.
    st = pullup_c_at_pin(r_pu=10e3, c=100e-9, closed_ohms=0.1)
    sol = edge_solution(st, RX, "release")
    v0 = 5.0 * 0.1 / (10e3 + 0.1)
    t = np.array([0.0, 1e-4, 5e-4, 1e-3, 3e-3])
    np.testing.assert_allclose(sol.voltage(t), 5.0 + (v0 - 5.0) * np.exp(-t / 1e-3), rtol=1e-9, atol=1e-12)
    assert sol.voltage(np.array([0.0]))[0] == pytest.approx(v0, rel=1e-9)
    assert sol.crossing_s == pytest.approx(1e-3 * math.log((5.0 - v0) / (5.0 - RX.rising_threshold[1])), rel=1e-9)


def test_a_corner_mapping_keeps_what_it_does_not_name():
    st = pullup_c_at_pin(r_pu=10e3, c=100e-9)
    model = compile_circuit(st.circuit)
    es = edge_setup(model, RX, "release")
    row, vth = corner_row(model, es, {"R1": 9.5e3})
    assert vth == RX.rising_threshold[1]  # no "threshold": the typical one
    assert row[model.column("R1")] == 9.5e3 and row[model.column("C1")] == 100e-9
    row, vth = corner_row(model, es, {"threshold": 1.7, "C1": 80e-9, "not-a-part": 1.0})
    assert vth == 1.7 and row[model.column("C1")] == 80e-9 and row[model.column("R1")] == 10e3
    nominal_row, nominal_vth = corner_row(model, es, "nominal")
    assert nominal_vth == RX.rising_threshold[1] and nominal_row[model.column("R1")] == 10e3
    with pytest.raises(ValueError):
        corner_row(model, es, "sideways")
