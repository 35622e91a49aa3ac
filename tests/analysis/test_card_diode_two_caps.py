"""Several capacitors with a card diode (nonlinear.numeric_edge: Radau with Newton inside)
against the state equations integrated by hand.

The stage: the diode-OR input of tests/analysis/test_card_diodes.py (R1 from
the rail to the pin, C1 at the pin, D1 from the pin to the contact node sw,
the contact from sw to ground) with C2 = 10 nF (no tolerance) from sw to
ground: released, the diode keeps C2 charged to the pin; a press dumps C2
into the contact and empties C1 through the diode; a release charges C1
through R1 and C2 through the diode from it.

Sources:
- Kirchhoff's current law with the capacitor voltages as states,
  C1 u1' = (Vcc - u1)/R1 - gmin u1 - I(u1 - u2),
  C2 u2' = I(u1 - u2) - gmin u2 [- u2/Rc while pressed],
  integrated with scipy.integrate.solve_ivp (Radau, rtol 1e-11, the Jacobian
  by hand) with an event at the threshold; the steady states by
  scipy.optimize.brentq;
- the Shockley equation with series resistance, V = N Vt ln(I/IS + 1) + I RS
  (the diode model of SPICE's manual), solved for I with Lambert's W
  (scipy.special.lambertw); Vt = kT/q at 27 °C (CODATA constants); SPICE's
  gmin (1e-12 S from every node to ground), "from memory", kept as the tool
  keeps it.
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
RC = 0.1
C2 = 10e-9
RX = receiver_electrical(leak_high=(0.0, 0.0), leak_low=(0.0, 0.0))


def two_caps():
    return stage(resistors=(Resistor("R1", "vcc", "rx", 10e3, role=ResistorRole.PULL),),
                 capacitors=(Capacitor("C1", "rx", "0", 100e-9), Capacitor("C2", "sw", "0", C2, 0.0, 0.0)),
                 diodes=(Diode("D1", "rx", "sw", card=DiodeCard(IS, N, RS)),),
                 rails=(RailSource("vcc", 5.0, 0.05),), throws=(Throw("sw", "0", "pressed", RC),))


def i_d(v: float) -> float:
    """The diode's current at v across it: the Shockley equation with RS solved by Lambert's W."""
    if v < -20 * NVT:
        return -IS * (1 - math.exp(v / NVT))  # the reverse current (W's argument underflows)
    return NVT / RS * float(np.real(lambertw(IS * RS / NVT * math.exp((v + IS * RS) / NVT)))) - IS


def steady(r1: float, v: float, pressed: bool) -> np.ndarray:
    """KCL at both nodes: sw takes the diode's current to its gmin (and the contact, pressed)."""
    g_sw = GMIN + (1 / RC if pressed else 0.0)

    def sw_for(u1: float) -> float:
        return brentq(lambda u2: i_d(u1 - u2) - g_sw * u2, -1.0, u1 + 1.0, xtol=1e-18, rtol=1e-15)

    u1 = brentq(lambda u1: (v - u1) / r1 - GMIN * u1 - g_sw * sw_for(u1), 0.0, v, xtol=1e-15, rtol=1e-15)
    return np.array([u1, sw_for(u1)])


def di_d(v: float) -> float:
    """dI/dV of the diode, by implicit differentiation: 1 / (RS + N Vt / (I + IS))."""
    return 1.0 / (RS + NVT / (i_d(v) + IS))


def rhs_of(r1: float, c1: float, v: float, pressed: bool):
    g_sw = GMIN + (1 / RC if pressed else 0.0)

    def rhs(_t, u):
        i = i_d(u[0] - u[1])
        return [((v - u[0]) / r1 - GMIN * u[0] - i) / c1, (i - g_sw * u[1]) / C2]

    def jac(_t, u):
        g = di_d(u[0] - u[1])
        return [[(-1 / r1 - GMIN - g) / c1, g / c1], [g / C2, (-g - g_sw) / C2]]

    return rhs, jac


def edge_time(r1: float, c1: float, v: float, press: bool, level: float):
    """The time from the old steady state to `level` at the pin, and the solution to there."""
    start = steady(r1, v, not press)

    def ev(_t, u):
        return u[0] - level

    ev.direction = -1.0 if press else 1.0
    ev.terminal = True
    rhs, jac = rhs_of(r1, c1, v, press)
    sol = solve_ivp(rhs, (0.0, 50 * r1 * c1), start, method="Radau", jac=jac,
                    rtol=1e-11, atol=1e-14, events=ev, dense_output=True)
    return float(sol.t_events[0][0]), sol


@pytest.mark.parametrize("edge", ["press", "release"])
def test_an_edge_with_two_capacitors_and_a_card_diode_follows_the_integration(edge):
    press = edge == "press"
    vth = 1.6 if press else 2.9  # the typical thresholds at the nominal corner
    sol = edge_solution(two_caps(), RX, edge, "nominal")
    t_c, ref = edge_time(10e3, 100e-9, 5.0, press, vth)
    # The integrator inside the tool (Radau, rtol 1e-8) bounds the agreement.
    assert sol.crossing_s == pytest.approx(t_c, rel=1e-5)
    assert sol.start_v == pytest.approx(steady(10e3, 5.0, not press)[0], rel=1e-7)
    assert sol.final_v == pytest.approx(steady(10e3, 5.0, press)[0], rel=1e-7)
    # The slope at the crossing: the pin's equation there (its right-hand side).
    slope = abs(rhs_of(10e3, 100e-9, 5.0, press)[0](t_c, ref.sol(t_c))[0])
    assert sol.slope_v_per_s == pytest.approx(slope, rel=1e-3)
    # The samples lie on the integrated curve, the crossing among them.
    t, v = sol.samples
    assert np.all(np.diff(t) >= 0) and t[0] == 0.0
    inside = t <= t_c
    assert inside.sum() > 5
    np.testing.assert_allclose(v[inside], ref.sol(t[inside])[0], rtol=1e-4, atol=1e-6)
    assert t[v.tolist().index(vth)] == sol.crossing_s


@pytest.mark.parametrize("pressed", [False, True], ids=["released", "pressed"])
def test_the_capacitor_system_gives_the_state_equations(pressed):
    # CapacitorSystem.rhs is C du/dt of the capacitor voltages u, the rest of the network solved
    # by Newton: at any u it must equal the state equations by Kirchhoff (rhs_of, with the
    # diode's current by Lambert's W), at the nominal values, leakage zero as in RX.
    from drc.analysis.physics.compiled import compile_circuit
    from drc.analysis.physics.nonlinear import CapacitorSystem

    model = compile_circuit(two_caps().circuit)
    row = model.nominal.copy()
    row[model.param_names.index("leakage")] = 0.0
    system = CapacitorSystem(model, "pressed" if pressed else "released", row, np.zeros(model.n))
    rhs, _jac = rhs_of(10e3, 100e-9, 5.0, pressed)
    for u in ([0.0, 0.0], [2.0, 1.6], [4.9, 4.5], [1.0, 0.2], [3.0, 3.2]):
        np.testing.assert_allclose(system.rhs(0.0, np.array(u)), rhs(0.0, u), rtol=1e-9, atol=1e-6)


@pytest.mark.parametrize("edge", ["press", "release"])
def test_the_time_scales_of_an_edge_are_those_of_its_new_state(edge):
    # _numeric_solution's docstring: the time constants reported are those of the edge's
    # piecewise-linear stand-in (D1 conducting at its stand-in, Vf 0.6 V and 10 ohm, the
    # Diode record's defaults, stage.py), with the crossing time joined to them. The stand-in's
    # state equations by hand, C du/dt = -Y u + b, D1 on: pressed, sw also has the contact's
    # 0.1 ohm; the time constants are 1 / eigenvalues of C^-1 Y (numpy): about 0.99 ns and
    # 1.01 us pressed, 90.9 ns and 1.10 ms released.
    press = edge == "press"
    g_d, g_sw = 1 / 10.0, 1 / RC if press else 0.0
    Y = np.array([[1 / 10e3 + g_d, -g_d], [-g_d, g_d + g_sw]])
    taus = sorted(1.0 / np.linalg.eigvals(np.linalg.solve(np.diag([100e-9, C2]), Y)).real)
    sol = edge_solution(two_caps(), RX, edge, "nominal")
    assert sol.crossing_s is not None
    scales = sorted(t for t in sol.time_constants if t != sol.crossing_s)
    assert scales == pytest.approx(taus, rel=1e-9)
