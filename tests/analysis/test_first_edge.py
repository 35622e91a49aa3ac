"""The closure-and-opening reading of an edge (drc.analysis.first_edge) against the RC law by hand.

Check values: the first-order RC law v(t) = Vf + (V0 - Vf)·exp(-t/RC) and its
inverse t = RC·ln((Vf - V0)/(Vf - Vth)), from *Lessons In Electric Circuits*,
Vol. I, ch. 16 (open textbook), with the Thevenin equivalent of the pull-up
and the closed contact (same chapter set, ch. 10), worked by hand below.
"""

from __future__ import annotations

import math
from dataclasses import replace

import pytest

from drc.analysis.first_edge import bounce_state, pull_back
from drc.board.stage import Capacitor, RailSource, Resistor, Throw
from tests.analysis.builders import pullup_series_rc, receiver_electrical, stage

NO_LEAK = {"leak_high": (0.0, 0.0), "leak_low": (0.0, 0.0)}


def _across(r=10e3, c=100e-9):
    """Pull-up at the pin, C straight across the contact (pin to ground), 0.1 Ω contact."""
    return stage(resistors=(Resistor("R1", "vcc", "rx", r, role="pull"),),
                 capacitors=(Capacitor("C1", "rx", "0", c),),
                 rails=(RailSource("vcc", 5.0, 0.05),), throws=(Throw("rx", "0", "pressed", 0.1),))


def test_fast_closure_recharges_from_the_level_a_minimum_closure_leaves():
    st, rx = _across(), receiver_electrical(**NO_LEAK)
    pb = pull_back(st, rx, "press")
    assert pb is not None and pb.bounce_state == "transit" and not pb.at_threshold
    # Nominal: the closure is the Thevenin source 5·0.1/(10k + 0.1) behind 10k || 0.1 ohm.
    r_th = 10e3 * 0.1 / (10e3 + 0.1)
    v_th = 5.0 * 0.1 / (10e3 + 0.1)
    tau_c = r_th * 100e-9  # 10 ns
    assert pb.closure_tau_s == pytest.approx(tau_c, rel=1e-9)
    v1 = v_th + (5.0 - v_th) * math.exp(-1e-6 / tau_c)  # after the 1 us minimum closure
    # Then the opening recharges through 10k towards 5 V, to VT+ typ 2.9 V.
    assert pb.nominal_s == pytest.approx(10e3 * 100e-9 * math.log((5.0 - v1) / (5.0 - 2.9)), rel=1e-9)
    # Fastest corner: R -5 %, C -20 %, rail +5 % (5.25 V: the threshold does not follow it here),
    # VT+ at its minimum 2.0 V (VT- max 2.2 V is crossed at once, so it does not matter).
    rf, cf, vf = 9.5e3, 80e-9, 5.25
    v_closed = vf * 0.1 / (rf + 0.1)  # the closed level at that corner, behind rf || 0.1 ohm
    left = v_closed + (vf - v_closed) * math.exp(-1e-6 / (rf * 0.1 / (rf + 0.1) * cf))
    assert pb.left_v == pytest.approx(left, rel=1e-6)
    assert pb.fastest_s == pytest.approx(rf * cf * math.log((vf - left) / (vf - 2.0)), rel=1e-9)
    # and no other vertex is faster (every R, C and rail end, worked the same way)
    others = []
    for r in (rf, 10.5e3):
        for c in (cf, 120e-9):
            for v in (4.75, vf):
                lv = v * 0.1 / (r + 0.1)
                lv += (v - lv) * math.exp(-1e-6 / (r * 0.1 / (r + 0.1) * c))
                others.append(r * c * math.log((v - lv) / (v - 2.0)))
    assert pb.fastest_s == pytest.approx(min(others), rel=1e-9)
    assert pb.opposite_v == 2.0


def test_slow_closure_path_leaves_the_crossing_threshold_itself():
    # 10k pull-up at the contact, 1k series to the pin, 100 nF at the pin: the closure path's
    # time constant is about 1k x 100n = 100 us, far over the 1 us minimum closure.
    st = pullup_series_rc(r_pu=10e3, r_s=1e3, c=100e-9)
    rx = replace(receiver_electrical(**NO_LEAK), hysteresis_min_v=0.4)
    pb = pull_back(st, rx, "press")
    assert pb is not None and pb.at_threshold
    assert pb.closure_tau_s == pytest.approx((1e3 + 10e3 * 0.1 / (10e3 + 0.1)) * 100e-9, rel=1e-9)
    # Nominal: from VT- typ 1.6 V back to VT+ typ 2.9 V through 11k towards 5 V.
    assert pb.nominal_s == pytest.approx(11e3 * 100e-9 * math.log((5.0 - 1.6) / (5.0 - 2.9)), rel=1e-9)
    # Fastest: VT+ at its minimum 2.0 V, VT- as close as the 0.4 V least hysteresis lets it
    # (1.6 V, inside its 0.9-2.2 V range); R -5 %, C -20 %, rail 5.25 V.
    fast = (10.45e3) * 80e-9 * math.log((5.25 - 1.6) / (5.25 - 2.0))
    assert pb.fastest_s == pytest.approx(fast, rel=1e-6)
    assert pb.left_v == pytest.approx(1.6) and pb.opposite_v == pytest.approx(2.0)


def test_a_release_is_pulled_back_by_a_re_closure():
    st, rx = _across(), replace(receiver_electrical(**NO_LEAK), hysteresis_min_v=0.4)
    pb = pull_back(st, rx, "release")
    assert pb is not None and pb.bounce_state == "pressed" and pb.at_threshold
    # A re-closure empties C through 0.1 ohm (10 ns): back across VT- within nanoseconds.
    assert pb.fastest_s is not None and pb.fastest_s < 50e-9


def test_longer_minimum_closure_leaves_a_lower_level():
    st, rx = _across(), receiver_electrical(**NO_LEAK)
    short, long_ = pull_back(st, rx, "press", 1e-8), pull_back(st, rx, "press", 1e-6)
    assert short.left_v > long_.left_v and short.fastest_s < long_.fastest_s


def test_plain_inputs_are_not_read_this_way():
    # Several capacitors and diodes are: tests/analysis/test_first_edge_exact.py.
    assert pull_back(_across(), receiver_electrical(schmitt=False), "press") is None


def test_the_bounce_state_of_a_normally_open_contact_is_no_throw_closed():
    st = _across()
    assert bounce_state(st, "press") == "transit" and bounce_state(st, "release") == "pressed"


def test_a_closure_level_just_past_the_threshold_still_crosses():
    # Pull-up R1 = 10k at the pin, the contact through R3 = 3.3k: the closed level is the
    # divider 5 * 3.3k / 13.3k = 1.24 V, only 0.36 V under VT- typ 1.6 V. C1 = 10 nF at the pin:
    # the closure's time constant 10 nF * (10k // 3.3k) = 24.8 µs, far over 1 µs, so the pin is
    # left at VT- and pulled back through R1 by the RC law.
    st = stage(resistors=(Resistor("R1", "vcc", "rx", 10e3, role="pull"),
                          Resistor("R3", "rx", "sw", 3.3e3, role="series")),
               capacitors=(Capacitor("C1", "rx", "0", 10e-9),),
               rails=(RailSource("vcc", 5.0, 0.05),), throws=(Throw("sw", "0", "pressed", 0.1),))
    pb = pull_back(st, receiver_electrical(**NO_LEAK), "press")
    assert pb is not None and pb.at_threshold
    assert pb.nominal_s == pytest.approx(10e3 * 10e-9 * math.log((5.0 - 1.6) / (5.0 - 2.9)), rel=1e-9)
    r_closed = 3.3e3 + 0.1
    v_closed = 5.0 * r_closed / (10e3 + r_closed)
    tau = 10e-9 * 10e3 * r_closed / (10e3 + r_closed)
    assert pb.first_crossing_s == pytest.approx(tau * math.log((5.0 - v_closed) / (1.6 - v_closed)), rel=1e-9)
    # With VT- typ 1.1 V, under the closed level, the edge never crosses at nominal: no reading
    # (though VT- could be as high as 2.2 V at other corners).
    low = receiver_electrical(falling=(0.9, 1.1, 2.2), **NO_LEAK)
    assert pull_back(st, low, "press") is None


def test_a_pin_on_the_contact_is_back_across_as_the_contact_opens():
    # R1 = 10k pull-up at the pin, the contact from the pin to ground, and R2 = 10k with
    # C1 = 1 µF from the pin to ground (a snubber beside the contact). A closure pins the pin at
    # once; C1 loses only 1 - exp(-1 µs / (10k * 1 µF)) = 1e-4 of its charge, so as the contact
    # opens the pin is at the divider (5 V * R2 + u * R1) / (R1 + R2), about 5 V, far over VT+.
    st = stage(resistors=(Resistor("R1", "vcc", "rx", 10e3, role="pull"),
                          Resistor("R2", "rx", "n", 10e3, role="other")),
               capacitors=(Capacitor("C1", "n", "0", 1e-6),),
               rails=(RailSource("vcc", 5.0, 0.05),), throws=(Throw("rx", "0", "pressed", 0.1),))
    pb = pull_back(st, receiver_electrical(**NO_LEAK), "press")
    assert pb is not None and not pb.at_threshold
    assert pb.fastest_s == 0.0 and pb.nominal_s == 0.0
