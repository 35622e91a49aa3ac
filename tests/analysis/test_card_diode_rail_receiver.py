"""A receiver input tied to its rail on a stage with card diodes: the pin is the rail.

The stages: the pin wired straight to the 5 V rail (a board error the tool
must read, not trip over), the contact switching a filter beside it: R1 from
the rail to `a`, C1 from `a` to ground, the contact from `a` to ground; a
card diode clamps the filter to the rail. With C2 behind R3 the edges go
through the Radau path of several capacitors (nonlinear.numeric_edge); with
C1 alone and two card clamps (to the rail and to ground) through the
one-port quadrature (oneport), its network solved by Newton.

Sources:
- Kirchhoff's voltage law: a node tied to an ideal source sits at the
  source's voltage, 5 V at the nominal corner, whatever the rest does; so it
  never crosses a threshold below the rail and its slope is zero;
- the one-port's current into C1 by Kirchhoff's current law at `a`, with
  the Shockley equation (I = IS (exp(V / (N Vt)) - 1), RS = 0 here, the diode
  model of SPICE's manual, Vt = kT/q at 27 °C from CODATA constants) and
  SPICE's gmin of 1e-12 S at every free node ("from memory", kept as the
  tool keeps it): i(u) = (V - u)/R1 - gmin u - I_D(u - V) + I_D(-u), and its
  derivative by hand.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.optimize import brentq

from drc.analysis.physics.compiled import compile_circuit
from drc.analysis.physics.mna import dc_solve
from drc.analysis.physics.oneport import OnePort
from drc.analysis.stage_analysis import edge_solution
from drc.board.stage import Capacitor, Diode, DiodeCard, RailSource, Resistor, ResistorRole, Throw
from tests.analysis.builders import receiver_electrical, stage

IS, N = 4e-9, 1.9
NVT = N * 1.380649e-23 * 300.15 / 1.602176634e-19
GMIN = 1e-12
RX = receiver_electrical(leak_high=(0.0, 0.0), leak_low=(0.0, 0.0))  # VT+ 2.0/2.9/3.5 V, VT- 0.9/1.6/2.2 V
CARD = DiodeCard(IS, N, 0.0)


def _tied(two_caps: bool):
    resistors = [Resistor("R1", "vcc", "a", 10e3, role=ResistorRole.PULL)]
    capacitors = [Capacitor("C1", "a", "0", 100e-9)]
    diodes = [Diode("D1", "a", "vcc", card=CARD)]
    if two_caps:
        resistors.append(Resistor("R3", "a", "b", 1e3))
        capacitors.append(Capacitor("C2", "b", "0", 10e-9))
    else:
        diodes.append(Diode("D2", "0", "a", card=CARD))
    return stage(resistors=resistors, capacitors=capacitors, diodes=diodes,
                 rails=(RailSource("vcc", 5.0, 0.05),), throws=(Throw("a", "0", "pressed", 0.1),),
                 receiver_node="vcc")


@pytest.mark.parametrize("two_caps", [True, False], ids=["radau", "quadrature"])
@pytest.mark.parametrize("edge", ["press", "release"])
def test_a_pin_tied_to_its_rail_stays_there_through_every_edge(edge, two_caps):
    st = _tied(two_caps)
    assert compile_circuit(st.circuit).rx < 0  # the pin is a rail of the circuit
    sol = edge_solution(st, RX, edge, "nominal")
    # KVL: the pin is the rail (5 V nominal) before, during and after the edge.
    assert sol.start_v == 5.0 and sol.final_v == 5.0
    assert sol.crossing_s is None and sol.slope_v_per_s is None
    t, v = sol.samples
    assert t.size >= 1 and np.all(v == 5.0)


def i_d(v: np.ndarray) -> np.ndarray:
    return IS * np.expm1(v / NVT)


def g_d(v: np.ndarray) -> np.ndarray:
    return IS / NVT * np.exp(v / NVT)


def test_the_one_port_of_a_pin_tied_to_its_rail_has_a_flat_receiver():
    # Two card diodes beside one capacitor: the one-port's Newton path (not the closed form
    # of a single diode). At the nominal corner, released (the contact open).
    model = compile_circuit(_tied(False).circuit)
    row = model.nominal
    port = OnePort(model, "released", row, dc_solve(model, "released", row[None, :], exact=False).v[0])
    u = np.array([-0.3, 1.0, 2.5, 4.9, 5.3])
    ic, vrx, d = port.solve(u, slopes=True)
    v, r1 = 5.0, 10e3
    # KCL at a, by hand: R1 from the rail, gmin, D1 (a -> rail) out of a, D2 (ground -> a) into it.
    want_i = (v - u) / r1 - GMIN * u - i_d(u - v) + i_d(-u)
    want_di = -1 / r1 - GMIN - g_d(u - v) - g_d(-u)
    np.testing.assert_allclose(ic, want_i, rtol=1e-9, atol=1e-15)
    np.testing.assert_allclose(vrx, v, rtol=0, atol=0)
    assert d is not None
    np.testing.assert_allclose(d[:, 0], want_di, rtol=1e-7)
    assert np.all(d[:, 1] == 0.0)  # the rail does not move with the capacitor
    # The steady level: i(u) = 0, by brentq on the same KCL.
    u_inf = brentq(lambda x: float((v - x) / r1 - GMIN * x - i_d(np.array(x - v)) + i_d(np.array(-x))),
                   0.0, 5.5, xtol=1e-15, rtol=1e-15)
    assert port.u_inf == pytest.approx(u_inf, abs=1e-9)
