"""Worst-case steady levels and the closing surge, by hand, on both solvers.

The stage: pull-up R1 from the rail to the pin node `sw` (the receiver's
pin), the contact from `sw` to `x`, R4 from `x` to ground, C1 from `sw` to
ground. The same stage with a reverse-biased diode from ground to `sw`
(it never conducts at these levels) goes down the per-stage path instead
of the batch (physics.batch takes no diodes); both must give the figures.

Sources, worked here with numpy over every corner of the tolerance box
(the corners bound a linear network's levels: each level is monotonic in
each value, Lessons In Electric Circuits Vol. I ch. 10, Thevenin):
- released: V = Vr − I_leak × R1 (the leakage into the pin drops across
  R1); its worst (lowest) is the smallest over the corners;
- pressed: Thevenin of R1 against Rc + R4: Vth = Vr·(Rc+R4)/(R1+Rc+R4),
  Rth = R1 ∥ (Rc+R4), V = Vth − I_leak × Rth; its worst (highest) is the
  largest over the corners;
- the closing surge (DESIGN.md section 4, contact-surge; CC "capacitor
  across the contact"): C1 holds the released level, so at the instant of
  closure the contact carries V_C1 / (Rc + R4); at rail maximum and R4 at
  its minimum (no leakage) this is the largest over the corners.
"""

from __future__ import annotations

import itertools

import numpy as np
import pytest

from drc.analysis.physics.batch import analyse_group, structure_key, template
from drc.analysis.stage_analysis import _analyse_one
from drc.board.stage import Capacitor, Diode, RailSource, Resistor, ResistorRole, Throw
from tests.analysis.builders import receiver_electrical, stage

V, V_TOL = 5.0, 0.05
R1, R1_TOL = 470e3, 0.05
R4, R4_TOL = 100.0, 0.10
RC = 0.1
LEAK_HIGH, LEAK_LOW = (0.0, 1e-6), (-1e-6, 0.0)  # into the pin; negative: out of it
RX = receiver_electrical(leak_high=LEAK_HIGH, leak_low=LEAK_LOW)


def build(with_diode: bool):
    return stage(resistors=(Resistor("R1", "vcc", "sw", R1, R1_TOL, R1_TOL, role=ResistorRole.PULL),
                            Resistor("R4", "x", "0", R4, R4_TOL, R4_TOL)),
                 capacitors=(Capacitor("C1", "sw", "0", 1e-6),),
                 diodes=(Diode("D1", "0", "sw"),) if with_diode else (),
                 rails=(RailSource("vcc", V, V_TOL),), throws=(Throw("sw", "x", "pressed", RC),),
                 receiver_node="sw")


def both(st):
    [batch] = analyse_group(template(structure_key(st.circuit), st.circuit), [st], [RX]) if not st.circuit.diodes \
        else [None]
    return [r for r in (batch, _analyse_one(st, RX)) if r is not None]


def corners():
    yield from itertools.product((V * (1 - V_TOL), V * (1 + V_TOL)), (R1 * (1 - R1_TOL), R1 * (1 + R1_TOL)),
                                 (R4 * (1 - R4_TOL), R4 * (1 + R4_TOL)))


def released_worst():
    return min(vr - leak * r1 for vr, r1, _ in corners() for leak in LEAK_HIGH)


def pressed_worst():
    out = []
    for vr, r1, r4 in corners():
        rb = RC + r4
        vth, rth = vr * rb / (r1 + rb), r1 * rb / (r1 + rb)
        out += [vth - leak * rth for leak in LEAK_LOW]
    return max(out)


def surge_worst():
    return max(vr / (RC + r4) for vr, _r1, r4 in corners())


@pytest.mark.parametrize("with_diode", [False, True], ids=["linear", "blocking-diode"])
def test_worst_levels_are_the_corners_worst(with_diode):
    results = both(build(with_diode))
    assert len(results) == (1 if with_diode else 2)
    for res in results:
        hi, lo = res.levels["released"], res.levels["pressed"]
        assert hi.logic == "high" and lo.logic == "low"
        assert hi.worst_v == pytest.approx(released_worst(), rel=1e-9)
        assert lo.worst_v == pytest.approx(pressed_worst(), rel=1e-6)
        # The margins against the thresholds the level must clear (VT+ max, VT- min).
        assert hi.margin_v == pytest.approx(hi.worst_v - RX.rising_threshold[2], rel=1e-9)
        assert lo.margin_v == pytest.approx(RX.falling_threshold[0] - lo.worst_v, rel=1e-9)
        # Nominal: the rail and values as written, the leakage at the middle of its range.
        assert hi.nominal_v == pytest.approx(V - np.mean(LEAK_HIGH) * R1, rel=1e-9)


@pytest.mark.parametrize("with_diode", [False, True], ids=["linear", "blocking-diode"])
def test_closing_surge_at_rail_maximum_and_resistance_minimum(with_diode):
    for res in both(build(with_diode)):
        assert res.surge_peak_a == pytest.approx(surge_worst(), rel=1e-9)
        assert res.surge_peak_a == pytest.approx(V * (1 + V_TOL) / (RC + R4 * (1 - R4_TOL)), rel=1e-9)


def pressed_currents():
    """(current through R1, current through the contact) at every corner, pressed."""
    for vr, r1, r4 in corners():
        rb = RC + r4
        for leak in LEAK_LOW:
            v = vr * rb / (r1 + rb) - leak * r1 * rb / (r1 + rb)
            yield (vr - v) / r1, v / rb


@pytest.mark.parametrize("with_diode", [False, True], ids=["linear", "blocking-diode"])
def test_pull_and_contact_currents_at_their_corners(with_diode):
    # Ohm's law at the pressed level above: the held current through R1 at its largest,
    # the contact's current at its smallest (the wetting check reads the smallest).
    for res in both(build(with_diode)):
        assert res.pull_current_a == pytest.approx(max(i for i, _ in pressed_currents()), rel=1e-9)
        assert res.contact_current_a == pytest.approx(min(c for _, c in pressed_currents()), rel=1e-9)
        assert res.closed_current_a == pytest.approx(max(c for _, c in pressed_currents()), rel=1e-9)


@pytest.mark.parametrize("with_diode", [False, True], ids=["linear", "blocking-diode"])
def test_a_second_input_loads_each_level_with_its_own_range(with_diode):
    # A second input on the pin with a TTL-like data of this test's own (into the pin: 0 to
    # 20 µA high, -400 µA to 0 low) beside the receiver (no leakage). By hand (Ohm's law,
    # every corner of R1 = 10k, the rail and the load's range at that level): released
    # (high), V = Vr - I R1, worst at 4.75 V, 10.5k, 20 µA; pressed (low), the Thevenin level
    # of R1 against Rc less I (R1 // Rc), worst at 5.25 V, 9.5k, -400 µA (out of the pin).
    from dataclasses import replace

    from drc.board.stage import InputLoad

    own = InputLoad("U1:1", "rx", "TEST", "vcc", (0.0, 0.0), (0.0, 0.0))
    other = InputLoad("U2:1", "rx", "TEST", "vcc", (0.0, 20e-6), (-400e-6, 0.0))
    diodes = (Diode("D1", "0", "rx"),) if with_diode else ()
    st = stage(resistors=(Resistor("R1", "vcc", "rx", 10e3, role=ResistorRole.PULL),), diodes=diodes,
               rails=(RailSource("vcc", V, V_TOL),), throws=(Throw("rx", "0", "pressed", RC),))
    st = replace(st, circuit=replace(st.circuit, loads=(own, other)))
    res = _analyse_one(st, receiver_electrical(leak_high=(0.0, 0.0), leak_low=(0.0, 0.0)))
    assert res.levels["released"].worst_v == pytest.approx(4.75 - 20e-6 * 10.5e3, rel=1e-9)
    pressed = max((v * RC / (r + RC) - i * r * RC / (r + RC))
                  for v in (4.75, 5.25) for r in (9.5e3, 10.5e3) for i in (-400e-6, 0.0))
    assert res.levels["pressed"].worst_v == pytest.approx(pressed, rel=1e-9)


def test_a_receiver_on_its_rail_sits_at_the_rail():
    # The pin tied to the 5 V ± 5 % rail (the contact only switches a filter beside it): both
    # levels are the rail itself, nominal 5 V and worst (lowest, a high level) 4.75 V.
    st = stage(resistors=(Resistor("R1", "vcc", "sw", 10e3),), capacitors=(Capacitor("C1", "sw", "0", 10e-9),),
               rails=(RailSource("vcc", 5.0, 0.05),), throws=(Throw("sw", "0", "pressed", RC),), receiver_node="vcc")
    res = _analyse_one(st, receiver_electrical(leak_high=(0.0, 0.0), leak_low=(0.0, 0.0)))
    for state in ("released", "pressed"):
        assert res.levels[state].nominal_v == 5.0 and res.levels[state].worst_v == pytest.approx(4.75, rel=1e-12)
