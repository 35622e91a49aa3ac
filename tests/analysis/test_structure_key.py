"""Stages grouped by circuit structure, and a capacitor left floating on an island.

The batch path (physics/batch.py) solves the stages of one structure with
one compiled template: the structure key must tell apart two stages whose
elements sit on different nets, also when the difference is a second rail
against a free node. And a capacitor whose both ends float in a state (no
path to a rail, ground or the rest of the network) keeps its charge there:
it must not enter that state's equations.

Sources: the RC law v(t) = Vf + (V0 - Vf) exp(-t/RC) with each state's
Thevenin equivalent worked by hand (series and parallel resistances, the
voltage divider; *Lessons In Electric Circuits*, Vol. I, ch. 5 and 16, open
textbook), so t = tau ln((V0 - Vf) / (Vth - Vf)); and each state's equations
C du/dt = h - Y u written by hand from Kirchhoff's current law.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from drc.analysis.physics.compiled import compile_circuit
from drc.analysis.physics.mna import reduce_dynamic
from drc.analysis.stage_analysis import analyse_stage, analyse_stages
from drc.board.stage import Capacitor, RailSource, Resistor, Throw
from tests.analysis.builders import receiver_electrical, stage

RX = receiver_electrical(leak_high=(0.0, 0.0), leak_low=(0.0, 0.0))  # VT- typ 1.6 V, VT+ typ 2.9 V
RC = 0.1  # the closed contact
C = 100e-9
RAILS = (RailSource("vcc", 5.0, 0.05), RailSource("vb", 3.3, 0.05))


def at_pin():
    """A: the contact grounds sw, R1 = 10k from sw to the pin, R2 = 100k pull-up from the
    5 V rail at the pin, C at the pin (the 3.3 V rail unused)."""
    return stage(resistors=(Resistor("R1", "sw", "rx", 10e3), Resistor("R2", "vcc", "rx", 100e3)),
                 capacitors=(Capacitor("C1", "rx", "0", C),), rails=RAILS,
                 throws=(Throw("sw", "0", "pressed", RC),))


def at_contact():
    """B: the same but R2 = 10k pulls sw up to the 3.3 V rail (the 5 V rail unused). Elements
    in the same order, each on other nets: only the codes of the rails tell A and B apart."""
    return stage(resistors=(Resistor("R1", "sw", "rx", 10e3), Resistor("R2", "sw", "vb", 10e3)),
                 capacitors=(Capacitor("C1", "rx", "0", C),), rails=RAILS,
                 throws=(Throw("sw", "0", "pressed", RC),))


def rc_time(v0: float, vf: float, vth: float, tau: float) -> float:
    return tau * math.log((v0 - vf) / (vth - vf))


def hand_figures():
    """(released, pressed, press time, release time) of A and B at nominal, typical thresholds."""
    # A released: sw floats, no current in R1 or R2: the pin at 5 V. Pressed: the divider
    # R2 over R1 + RC; tau = C (R2 // (R1 + RC)). Released again: tau = C R2.
    a_p = 5.0 * (10e3 + RC) / (110e3 + RC)
    a = (5.0, a_p, rc_time(5.0, a_p, 1.6, C * 100e3 * (10e3 + RC) / (110e3 + RC)),
         rc_time(a_p, 5.0, 2.9, C * 100e3))
    # B released: the pin at 3.3 V. Pressed: sw at 3.3 RC / (10k + RC), seen through
    # R1 + (10k // RC). Released again: tau = C (R1 + R2).
    b_p = 3.3 * RC / (10e3 + RC)
    b = (3.3, b_p, rc_time(3.3, b_p, 1.6, C * (10e3 + 10e3 * RC / (10e3 + RC))),
         rc_time(b_p, 3.3, 2.9, C * 20e3))
    return a, b


def assert_figures(result, figures):
    released, pressed, press_s, release_s = figures
    assert result.levels["released"].nominal_v == pytest.approx(released, rel=1e-9)
    assert result.levels["pressed"].nominal_v == pytest.approx(pressed, rel=1e-6)
    assert result.edges["press"].threshold_v == 1.6 and result.edges["release"].threshold_v == 2.9
    assert result.edges["press"].nominal_s == pytest.approx(press_s, rel=1e-9)
    assert result.edges["release"].nominal_s == pytest.approx(release_s, rel=1e-9)


@pytest.mark.parametrize("order", ["A first", "B first"])
def test_a_pull_up_at_the_pin_and_one_at_the_contact_to_another_rail_are_two_structures(order):
    a_fig, b_fig = hand_figures()
    stages = [at_pin(), at_contact()]
    figures = [a_fig, b_fig]
    if order == "B first":
        stages, figures = stages[::-1], figures[::-1]
    for result, fig in zip(analyse_stages(stages, [RX, RX]), figures, strict=True):
        assert_figures(result, fig)
    for st, fig in zip(stages, figures, strict=True):  # each alone, too
        assert_figures(analyse_stage(st, RX), fig)


# ---------------------------------------------------------------- a capacitor on a floating island

R1, RX_OHMS, C1, C2 = 10e3, 2.2e3, 100e-9, 1e-6


def island():
    """R1 = 10k pull-up at the pin, C1 = 100 nF at the pin; a two-pole contact that, pressed,
    connects the pin to y and x to ground; between x and y RX = 2.2k and C2 = 1 µF. Released,
    x and y (and C2) float on their own: C2 keeps its charge. x is the network's first node."""
    return stage(resistors=(Resistor("RX", "x", "y", RX_OHMS), Resistor("R1", "vcc", "rx", R1)),
                 capacitors=(Capacitor("C1", "rx", "0", C1), Capacitor("C2", "x", "y", C2)),
                 rails=(RailSource("vcc", 5.0, 0.05),),
                 throws=(Throw("rx", "y", "pressed", RC), Throw("x", "0", "pressed", RC)))


def test_a_capacitor_floating_on_an_island_keeps_its_charge():
    model = compile_circuit(island().circuit)
    assert model.free[0] == "x"
    red = reduce_dynamic(model, model.topology("released", ()), model.nominal[None, :])
    # Released, by KCL: C1 du1/dt = (5 - u1) / R1; C2 du2/dt = 0 (no current can reach it).
    # The capacitors in the model's order: C1, then C2.
    np.testing.assert_allclose(red.C[0], [C1, C2], rtol=1e-12)
    np.testing.assert_allclose(red.Y[0], [[1 / R1, 0.0], [0.0, 0.0]], rtol=1e-12, atol=1e-18)
    np.testing.assert_allclose(red.h[0], [5.0 / R1, 0.0], rtol=1e-12, atol=1e-18)


def test_the_release_of_a_stage_with_a_floating_island_is_the_rc_law():
    result = analyse_stage(island(), RX)
    # Pressed (steady): the pin divides 5 V over R1 and RC + RX + RC (C2 carries nothing).
    v0 = 5.0 * (RX_OHMS + 2 * RC) / (R1 + RX_OHMS + 2 * RC)
    assert result.levels["pressed"].nominal_v == pytest.approx(v0, rel=1e-9)
    # Released: C1 charges through R1 alone to 5 V (C2 floats off the network), to VT+ typ 2.9 V.
    assert result.edges["release"].nominal_s == pytest.approx(rc_time(v0, 5.0, 2.9, R1 * C1), rel=1e-9)
