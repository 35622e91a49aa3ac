"""The closure-and-opening reading on stages with diodes or several capacitors, by hand.

Check values:
- the first-order RC law v(t) = Vf + (V0 - Vf)·exp(-t/RC) and its inverse,
  *Lessons In Electric Circuits*, Vol. I, ch. 16 (open textbook), with the
  Thevenin equivalent of the pull-up and the closed contact worked by hand;
- the Shockley equation I = IS·(exp(V/(N·Vt)) - 1), Vt = kT/q at 27 °C
  (CODATA constants), for a capacitor emptied through a diode: C dV/dt =
  -IS·exp(V/(N·Vt)) separates to exp(-V/(N·Vt)) = exp(-V0/(N·Vt)) +
  IS·t/(C·N·Vt), worked by hand below.
ngspice's figures for the same readings are in tests/oracle/test_first_edge_exact.py.
"""

from __future__ import annotations

import math

import pytest
from scipy.optimize import brentq

from drc.analysis.first_edge import pull_back
from drc.board.stage import Capacitor, Diode, DiodeCard, RailSource, Resistor, Throw
from tests.analysis.builders import receiver_electrical, stage

NO_LEAK = {"leak_high": (0.0, 0.0), "leak_low": (0.0, 0.0)}
VT = 1.380649e-23 * 300.15 / 1.602176634e-19  # kT/q at 27 °C


def _across(diodes=()):
    """Pull-up at the pin, C straight across the contact (pin to ground), 0.1 Ω contact."""
    return stage(resistors=(Resistor("R1", "vcc", "rx", 10e3, role="pull"),),
                 capacitors=(Capacitor("C1", "rx", "0", 100e-9),), diodes=diodes,
                 rails=(RailSource("vcc", 5.0, 0.05),), throws=(Throw("rx", "0", "pressed", 0.1),))


def _rc_law_figures():
    """The press of `_across` read by hand (as tests/analysis/test_first_edge.py works it)."""
    r_th = 10e3 * 0.1 / (10e3 + 0.1)
    v1 = 5.0 * 0.1 / (10e3 + 0.1)
    v1 += (5.0 - v1) * math.exp(-1e-6 / (r_th * 100e-9))
    nominal = 10e3 * 100e-9 * math.log((5.0 - v1) / (5.0 - 2.9))
    fastest = []
    for r in (9.5e3, 10.5e3):
        for c in (80e-9, 120e-9):
            for v in (4.75, 5.25):
                lv = v * 0.1 / (r + 0.1)
                lv += (v - lv) * math.exp(-1e-6 / (r * 0.1 / (r + 0.1) * c))
                fastest.append(r * c * math.log((v - lv) / (v - 2.0)))
    return nominal, min(fastest)


@pytest.mark.parametrize("card", [None, DiodeCard(1e-14, 1.0, 0.0)], ids=["piecewise-linear", "card"])
def test_a_diode_that_never_conducts_leaves_the_rc_law(card):
    # D1 from the pin to the rail: the pin never rises 0.6 V above it, so the diode
    # only moves the stage onto the exact path (event solver, or quadrature with a card).
    st = _across((Diode("D1", "rx", "vcc", card=card),))
    pb = pull_back(st, receiver_electrical(**NO_LEAK), "press")
    nominal, fastest = _rc_law_figures()
    assert pb is not None and not pb.at_threshold and pb.opposite_v == 2.0
    # The card's reverse current (IS = 10 fA through 10 kΩ: 1e-10 V) is far below 1e-6.
    assert pb.nominal_s == pytest.approx(nominal, rel=1e-6)
    assert pb.fastest_s == pytest.approx(fastest, rel=1e-6)


def test_a_closure_through_a_card_diode_leaves_the_shockley_level():
    # 100k pull-up to the contact node, 47k on to the pin, C at the pin, and a diode that
    # empties C into the closed contact (the footswitch's work-light key, at 5 V).
    i_s, n, c = 2.5e-9, 1.75, 470e-9
    st = stage(resistors=(Resistor("R1", "vcc", "sw", 100e3, role="pull"),
                          Resistor("R2", "sw", "rx", 47e3, role="series")),
               capacitors=(Capacitor("C1", "rx", "0", c),),
               diodes=(Diode("D1", "rx", "sw", card=DiodeCard(i_s, n, 0.0)),),
               rails=(RailSource("vcc", 5.0, 0.0),), throws=(Throw("sw", "0", "pressed", 0.1),))
    rx = receiver_electrical(**NO_LEAK)
    pb = pull_back(st, rx, "press")
    assert pb is not None and not pb.at_threshold and pb.first_crossing_s < 1e-6
    # By hand at nominal: C dV/dt = -I with V = I·R + N·Vt·ln(I/IS + 1) (the diode behind the
    # contact's R = 0.1 Ω). Separated in I: dt = -C (R/I + N·Vt/(I (I + IS))) dI, so
    # t(I) = C (R ln(I0/I) + (N·Vt/IS) (ln(I0/(I0 + IS)) - ln(I/(I + IS)))), I0 at V0 = 5 V.
    # The 47k beside the diode (0.7 V / 47k against ~20 mA) moves it by under 1e-4.
    nvt = n * VT

    def level_after(cap: float, t_closed: float = 1e-6, r: float = 0.1) -> float:
        def volts(i: float) -> float:
            return i * r + nvt * math.log(i / i_s + 1)

        i0 = brentq(lambda i: volts(i) - 5.0, 1e-12, 100.0, xtol=1e-15, rtol=1e-14)

        def t_of(i: float) -> float:
            return cap * (r * math.log(i0 / i) + nvt / i_s * (math.log(i0 / (i0 + i_s)) - math.log(i / (i + i_s))))

        return volts(brentq(lambda i: t_of(i) - t_closed, 1e-9, i0, xtol=1e-18, rtol=1e-14))

    left = level_after(c)
    # Without the contact's 0.1 Ω the level would be 21 mV lower (the pure Shockley law).
    assert left - (-nvt * math.log(i_s * 1e-6 / (c * nvt))) > 0.015
    # The recharge: RC law through 100k + 47k towards 5 V, from that level to VT+ typ 2.9 V.
    # The diode's reverse current (IS, 2.5 nA against ~20 µA) moves it by under 1e-3.
    t = 147e3 * c * math.log((5.0 - left) / (5.0 - 2.9))
    assert pb.nominal_s == pytest.approx(t, rel=1e-3)
    # The fastest corner's left level: the same with C at its minimum (-20 %).
    assert pb.left_v == pytest.approx(level_after(0.8 * c), rel=1e-3)


def test_two_capacitors_fast_closure_left_state_by_hand():
    # C1 across the contact at the pin, C2 behind R2 = 1k: a 1 µs closure empties C1
    # (0.1 Ω: 10 ns) and takes C2 down by 1 - exp(-1 µs / (1k · 100 nF)) = 1 %.
    two = stage(resistors=(Resistor("R1", "vcc", "rx", 10e3, role="pull"),
                           Resistor("R2", "rx", "n2", 1e3, role="other")),
                capacitors=(Capacitor("C1", "rx", "0", 100e-9), Capacitor("C2", "n2", "0", 100e-9)),
                rails=(RailSource("vcc", 5.0, 0.0),), throws=(Throw("rx", "0", "pressed", 0.1),))
    pb = pull_back(two, receiver_electrical(**NO_LEAK), "press")
    assert pb is not None and not pb.at_threshold
    # The pin is left near 0 V: the closure's level (C2 feeding 5 V · 0.1 / 1k = 0.5 mV).
    assert abs(pb.left_v) < 1e-3
    # The recharge is no faster than C1 alone from 0 V through R1 (C2 at 5 V helps it
    # along R2, so slower bounds: C1 through R1 || R2 towards 5 V is the fastest it can be).
    rf = 9.5e3 * 0.95e3 / (9.5e3 + 0.95e3)
    assert pb.fastest_s >= rf * 80e-9 * math.log(5.0 / (5.0 - 2.0)) * (1 - 1e-9)
