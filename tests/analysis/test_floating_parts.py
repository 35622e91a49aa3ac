"""Parts with no DC path: a receiver that floats, a capacitor that floats after an edge.

Sources (Ohm's law and the Thevenin divider, *Lessons In Electric Circuits*,
Vol. I, ch. 2 and ch. 10; a capacitor whose far end floats carries no
current, ch. 13), worked by hand over every corner of the tolerance box.
"""

from __future__ import annotations

import itertools

import pytest

from drc.analysis.stage_analysis import _analyse_one, analyse_stage
from drc.board.stage import Capacitor, Resistor, ResistorRole, Throw
from tests.analysis.builders import receiver_electrical, stage

RX = receiver_electrical()
RC = 0.1


def test_a_floating_receiver_still_has_its_contact_current():
    # An AC-coupled input with no bias resistor: the pin has no DC path in either state, but the
    # closed contact carries Vcc / (R1 + Rc) through the pull-up (no leakage reaches it).
    st = stage(resistors=(Resistor("R1", "vcc", "sw", 10e3, role=ResistorRole.PULL),),
               capacitors=(Capacitor("C1", "sw", "rx", 100e-9),), throws=(Throw("sw", "0", "pressed", RC),))
    currents = [v / (r + RC) for v, r in itertools.product((4.75, 5.25), (9.5e3, 10.5e3))]
    for res in (analyse_stage(st, RX), _analyse_one(st, RX)):
        assert {lev.logic for lev in res.levels.values()} == {"undefined"}
        assert res.edges == {}
        assert res.contact_current_a == pytest.approx(min(currents), rel=1e-9)
        assert res.closed_current_a == pytest.approx(max(currents), rel=1e-9)


def test_a_capacitor_whose_far_end_floats_does_not_slow_the_pin():
    # A changeover: released, the pin is divided by R1 and R2 (through the closed throw); pressed,
    # C1's far end m is grounded and R2 is off. On release m floats, C1 carries no current, so the
    # pin is at the divider level at once: the release crosses every threshold at t = 0.
    st = stage(resistors=(Resistor("R1", "vcc", "rx", 10e3, role=ResistorRole.PULL), Resistor("R2", "n", "0", 1e3)),
               capacitors=(Capacitor("C1", "rx", "m", 100e-9),),
               throws=(Throw("rx", "n", "released", RC), Throw("m", "0", "pressed", RC)))
    res = analyse_stage(st, RX)
    e = res.edges["release"]
    assert e.direction == "falling"
    assert e.nominal_s == 0.0 and e.fastest_s == 0.0 and e.slowest_s == 0.0
    # The level it jumps to: the divider, at its highest over the corners still under VT- min.
    high = max(v * (r2 + RC) / (r1 + r2 + RC) for v, r1, r2 in
               itertools.product((4.75, 5.25), (9.5e3, 10.5e3), (0.95e3, 1.05e3)))
    assert high < RX.falling_threshold[0]
    # At nominal: the Thevenin divider less the leakage (mid-range of the low level's, into the pin)
    # through its resistance.
    r_low = 1e3 + RC
    v_th, r_th = 5.0 * r_low / (10e3 + r_low), 10e3 * r_low / (10e3 + r_low)
    i_mid = sum(RX.leak_low_a) / 2
    assert e.final_v == pytest.approx(v_th - i_mid * r_th, rel=1e-9)


def test_a_floating_receiver_beside_another_input_on_the_contact_node():
    # The same AC-coupled pin, and a second input (CMOS, at most 1 µA either way) on the contact
    # node, which has a DC path. The contact still carries Vcc / (R1 + Rc), give or take that
    # input's leakage: within 1 µA of the hand figure at every corner.
    from dataclasses import replace

    from drc.board.stage import InputLoad

    st = stage(resistors=(Resistor("R1", "vcc", "sw", 10e3, role=ResistorRole.PULL),),
               capacitors=(Capacitor("C1", "sw", "rx", 100e-9),), throws=(Throw("sw", "0", "pressed", RC),))
    loads = (InputLoad("U1:1", "rx", "TEST", "vcc", RX.leak_high_a, RX.leak_low_a),
             InputLoad("U2:1", "sw", "TEST", "vcc", (0.0, 1e-6), (-1e-6, 0.0)))
    st = replace(st, circuit=replace(st.circuit, loads=loads))
    currents = [v / (r + RC) for v, r in itertools.product((4.75, 5.25), (9.5e3, 10.5e3))]
    res = _analyse_one(st, RX)
    assert res.levels["pressed"].logic == "undefined"
    assert res.contact_current_a == pytest.approx(min(currents), abs=1e-6)
    assert res.closed_current_a == pytest.approx(max(currents), abs=1e-6)


def test_floating_receivers_solved_together_keep_their_own_contact_currents():
    # Two AC-coupled pins of one structure, 10k and 2.2k pull-ups, in one batch: each contact
    # carries its own Vcc / (R1 + Rc).
    from drc.analysis.stage_analysis import analyse_stages

    def coupled(r1):
        return stage(resistors=(Resistor("R1", "vcc", "sw", r1, role=ResistorRole.PULL),),
                     capacitors=(Capacitor("C1", "sw", "rx", 100e-9),), throws=(Throw("sw", "0", "pressed", RC),))

    values = (10e3, 2.2e3)
    for r1, res in zip(values, analyse_stages([coupled(r) for r in values], [RX, RX]), strict=True):
        currents = [v / (r + RC) for v, r in itertools.product((4.75, 5.25), (r1 * 0.95, r1 * 1.05))]
        assert res.contact_current_a == pytest.approx(min(currents), rel=1e-9)
        assert res.closed_current_a == pytest.approx(max(currents), rel=1e-9)
