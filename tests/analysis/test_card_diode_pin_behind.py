"""A pin behind a card diode from several capacitors (the Radau path of
nonlinear.numeric_edge): the slope at the crossing, against the state equations
integrated by hand.

The stage: R1 = 10 kΩ from the 5 V rail to `a`, C1 = 100 nF from `a` to
ground, R3 = 1 kΩ from `a` to `b`, C2 = 10 nF from `b` to ground, the
contact from `a` to ground; the pin `rx` hangs behind the card diode D1
(anode `a`) with R2 = 100 kΩ to ground and no capacitor of its own. The pin
is no capacitor's voltage: it follows C1 through the diode's curve, so its
slope is that curve's derivative times C1's, not C1's own.

Sources:
- Kirchhoff's current law with the capacitor voltages as states,
  C1 u1' = (V - u1)/R1 - (u1 - u2)/R3 - gmin u1 - I_D(u1 - v) [- u1/Rc pressed],
  C2 u2' = (u1 - u2)/R3 - gmin u2,
  and at the pin I_D(u1 - v) = v/R2 + gmin v; integrated with
  scipy.integrate.solve_ivp (Radau, rtol 1e-11) with an event where u1
  reaches the level that puts the pin at the threshold (scipy.optimize.brentq);
- the Shockley equation with series resistance, V = N Vt ln(I/IS + 1) + I RS
  (the diode model of SPICE's manual), solved for I with Lambert's W
  (scipy.special.lambertw), dI/dV = 1/(RS + N Vt/(I + IS)); Vt = kT/q at
  27 °C (CODATA constants); SPICE's gmin (1e-12 S at every node), "from
  memory", kept as the tool keeps it;
- the chain rule: dv/dt = dv/du1 · u1', with dv/du1 = g_D/(g_D + 1/R2 + gmin)
  from differentiating the pin's equation.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.integrate import solve_ivp
from scipy.optimize import brentq
from scipy.special import lambertw

from drc.analysis.stage_analysis import edge_solution
from drc.board.stage import Capacitor, Diode, DiodeCard, RailSource, Resistor, ResistorRole, Throw
from tests.analysis.builders import receiver_electrical, stage

IS, N, RS = 4e-9, 1.9, 0.6
NVT = N * 1.380649e-23 * 300.15 / 1.602176634e-19
GMIN = 1e-12
V, R1, R2, R3, C1, C2, RC = 5.0, 10e3, 100e3, 1e3, 100e-9, 10e-9, 0.1
RX = receiver_electrical(leak_high=(0.0, 0.0), leak_low=(0.0, 0.0))  # VT+ typ 2.9 V, VT- typ 1.6 V


def behind():
    return stage(resistors=(Resistor("R1", "vcc", "a", R1, role=ResistorRole.PULL),
                            Resistor("R3", "a", "b", R3), Resistor("R2", "rx", "0", R2)),
                 capacitors=(Capacitor("C1", "a", "0", C1), Capacitor("C2", "b", "0", C2)),
                 diodes=(Diode("D1", "a", "rx", card=DiodeCard(IS, N, RS)),),
                 rails=(RailSource("vcc", V, 0.05),), throws=(Throw("a", "0", "pressed", RC),))


def i_d(v: float) -> float:
    if v < -20 * NVT:
        return -IS * (1 - math.exp(v / NVT))
    return NVT / RS * float(np.real(lambertw(IS * RS / NVT * math.exp((v + IS * RS) / NVT)))) - IS


def di_d(v: float) -> float:
    return 1.0 / (RS + NVT / (i_d(v) + IS))


def pin(u1: float) -> float:
    """The pin's voltage with C1 at u1: the diode's current into R2 and gmin."""
    if u1 <= 0:
        return brentq(lambda x: i_d(u1 - x) - (1 / R2 + GMIN) * x, u1 - 1.0, 1.0, xtol=1e-18, rtol=1e-15)
    return brentq(lambda x: i_d(u1 - x) - (1 / R2 + GMIN) * x, 0.0, u1, xtol=1e-18, rtol=1e-15)


def rhs_of(pressed: bool):
    g_a = 1 / R1 + 1 / R3 + GMIN + (1 / RC if pressed else 0.0)

    def rhs(_t, u):
        i1 = V / R1 + u[1] / R3 - g_a * u[0] - i_d(u[0] - pin(u[0]))
        return [i1 / C1, ((u[0] - u[1]) / R3 - GMIN * u[1]) / C2]

    return rhs


def steady(pressed: bool) -> np.ndarray:
    """KCL at a with b following it through R3 (b: u2 = u1 (1/R3) / (1/R3 + gmin))."""
    k = (1 / R3) / (1 / R3 + GMIN)
    u1 = brentq(lambda x: rhs_of(pressed)(0.0, [x, k * x])[0], 0.0, V, xtol=1e-15, rtol=1e-15)
    return np.array([u1, k * u1])


@pytest.mark.parametrize("edge", ["press", "release"])
def test_the_slope_of_a_pin_behind_a_diode_is_the_chain_rule_at_the_crossing(edge):
    press = edge == "press"
    vth = 1.6 if press else 2.9  # the typical thresholds at the nominal corner
    u1_th = brentq(lambda x: pin(x) - vth, vth, V, xtol=1e-15, rtol=1e-15)

    def event(_t, u):
        return u[0] - u1_th

    event.terminal, event.direction = True, (-1.0 if press else 1.0)
    rhs = rhs_of(press)
    ref = solve_ivp(rhs, (0.0, 0.05), steady(not press), method="Radau", rtol=1e-11, atol=1e-14,
                    events=event)
    t_c, u_c = float(ref.t_events[0][0]), ref.y_events[0][0]
    g = di_d(u_c[0] - vth)
    slope = g / (g + 1 / R2 + GMIN) * abs(rhs(t_c, u_c)[0])
    sol = edge_solution(behind(), RX, edge, "nominal")
    assert sol.start_v == pytest.approx(pin(steady(not press)[0]), abs=1e-9)
    assert sol.crossing_s == pytest.approx(t_c, rel=1e-5)  # the tool's Radau runs at rtol 1e-8
    assert sol.slope_v_per_s == pytest.approx(slope, rel=1e-4)
    # C1's own slope is not the pin's: the diode's curve takes its share (a few per cent here).
    assert abs(rhs(t_c, u_c)[0]) > slope * 1.01
