"""A diode from its .model card (the numerical path): levels and edges against scipy by hand.

The stage (a diode-OR input, as on a scanned keypad): R1 from the rail to
the pin `rx`, C1 from the pin to ground, D1 from the pin (anode) to the
contact node `sw` (cathode), the contact from `sw` to ground. Pressed, the
pin sits a diode drop above ground and the press empties C1 through the
diode; released, `sw` floats and the pin charges through R1.

Sources:
- the Shockley equation with series resistance, V = N·Vt·ln(I/IS + 1) + I·RS,
  Vt = kT/q at 27 °C (CODATA constants), the diode model of SPICE's manual;
  each steady level is that equation and Kirchhoff's current law at the pin,
  solved here for the diode current with scipy.optimize.brentq;
- the press: C dV/dt = (Vcc − V)/R1 − I_leak − I_D(V), integrated here with
  scipy.integrate.solve_ivp (Radau, rtol 1e-10) with an event at each
  threshold; every corner of the tolerance box brute-forced;
- the release: the first-order RC law t = R1·C·ln((Vf − V0)/(Vf − Vth))
  (*Lessons In Electric Circuits*, Vol. I, ch. 16), the diode carrying no
  current once `sw` floats;
- SPICE's gmin (1e-12 S from every node to ground), "from memory", kept in
  the equations here as the tool keeps it.
"""

from __future__ import annotations

import itertools
import math
from dataclasses import replace

import numpy as np
import pytest
from scipy.integrate import quad, solve_ivp
from scipy.optimize import brentq
from scipy.special import lambertw

from drc.analysis.stage_analysis import analyse_stage, edge_solution
from drc.board.stage import Capacitor, Diode, DiodeCard, InputLoad, RailSource, Resistor, ResistorRole, Throw
from tests.analysis.builders import receiver_electrical, stage

IS, N, RS = 4e-9, 1.9, 0.6
NVT = N * 1.380649e-23 * 300.15 / 1.602176634e-19
GMIN = 1e-12
VCC, V_TOL = 5.0, 0.05
R1, R_TOL = 10e3, 0.05
C1, C_TOL = 100e-9, 0.20
RC = 0.1
LEAK_HIGH, LEAK_LOW = (0.0, 1e-6), (-1e-6, 0.0)
RX = receiver_electrical(leak_high=LEAK_HIGH, leak_low=LEAK_LOW)
R_SW = 1.0 / (1.0 / RC + GMIN)  # the closed contact beside sw's gmin


def diode_or():
    return stage(resistors=(Resistor("R1", "vcc", "rx", R1, R_TOL, R_TOL, role=ResistorRole.PULL),),
                 capacitors=(Capacitor("C1", "rx", "0", C1, C_TOL, C_TOL),),
                 diodes=(Diode("D1", "rx", "sw", card=DiodeCard(IS, N, RS)),),
                 rails=(RailSource("vcc", VCC, V_TOL),), throws=(Throw("sw", "0", "pressed", RC),))


def v_diode(i: float) -> float:
    """The diode and the closed contact in series at current i (Shockley with RS)."""
    return NVT * math.log(i / IS + 1.0) + i * RS + i * R_SW


def i_diode(v: float) -> float:
    """The current the pin at v drives through the diode and the closed contact: `v_diode`
    solved for i in closed form with Lambert's W (scipy.special.lambertw), checked by `v_diode`."""
    rt = RS + R_SW
    i = NVT / rt * float(np.real(lambertw(IS * rt / NVT * math.exp((v + IS * rt) / NVT)))) - IS
    assert abs(v_diode(i) - v) < 1e-9 * max(1.0, v)
    return i


def pressed_level(vcc: float, r1: float, leak: float) -> float:
    """KCL at the pin: (vcc - V)/r1 = leak + gmin·V + I_D(V)."""
    return brentq(lambda v: (vcc - v) / r1 - leak - GMIN * v - i_diode(v), 0.0, vcc + 1.0,
                  xtol=1e-15, rtol=1e-14)


def released_level(vcc: float, r1: float, leak: float) -> float:
    """KCL at the pin: (vcc - V)/r1 = leak + gmin·V + the diode's current into the floating sw,
    which is sw's own gmin current (sw a few tens of microvolts under the pin: left out)."""
    return (vcc - r1 * leak) / (1.0 + 2.0 * GMIN * r1)


def press_times(vcc, r1, c, leak, thresholds):
    """Time from the released level to each threshold: the pin's equation C dV/dt = f(V) is
    one-dimensional, so t = C·∫ dV / (−f(V)) from the threshold up to the start
    (separation of variables), by scipy.integrate.quad."""
    v0 = released_level(vcc, r1, leak)

    def outflow(v):
        return leak + GMIN * v + i_diode(v) - (vcc - v) / r1

    return [c * quad(lambda v: 1.0 / outflow(v), vth, v0, epsabs=0.0, epsrel=1e-11, limit=200)[0]
            for vth in thresholds]


def press_times_ivp(vcc, r1, c, leak, thresholds):
    """The same times by integrating in time (scipy.integrate.solve_ivp, Radau) with an event
    at each threshold."""
    v0 = released_level(vcc, r1, leak)

    def rhs(_t, y):
        v = y[0]
        return [((vcc - v) / r1 - leak - GMIN * v - i_diode(v)) / c]

    events = []
    for vth in thresholds:
        def ev(_t, y, vth=vth):
            return y[0] - vth
        ev.direction = -1.0
        events.append(ev)
    sol = solve_ivp(rhs, (0.0, 50 * r1 * c), [v0], method="Radau", rtol=1e-10, atol=1e-13, events=events)
    return [float(t[0]) for t in sol.t_events]


def corners():
    return itertools.product((R1 * (1 - R_TOL), R1 * (1 + R_TOL)), (C1 * (1 - C_TOL), C1 * (1 + C_TOL)),
                             (VCC * (1 - V_TOL), VCC * (1 + V_TOL)))


@pytest.fixture(scope="module")
def result():
    return analyse_stage(diode_or(), RX)


def test_pressed_level_is_the_diode_drop_at_its_current(result):
    lev = result.levels["pressed"]
    assert lev.logic == "low"
    i_mid = sum(LEAK_LOW) / 2
    assert lev.nominal_v == pytest.approx(pressed_level(VCC, R1, i_mid), rel=1e-7)
    # Worst (highest) low level over the corners: brute force over R1, rail and the leakage.
    worst = max(pressed_level(v, r, i) for r, _c, v in corners() for i in LEAK_LOW)
    assert lev.worst_v == pytest.approx(worst, rel=1e-7)
    # About 0.58 V: a diode drop, far from the piecewise-linear 0.6 V + 10 ohm stand-in's 0.605 V.
    assert 0.5 < worst < 0.6


def test_the_contact_carries_the_diode_current(result):
    # Pressed, the contact carries what the diode does: I_D at the pressed level, over the corners.
    currents = [i_diode(pressed_level(v, r, i)) for r, _c, v in corners() for i in LEAK_LOW]
    assert result.closed_current_a == pytest.approx(max(currents), rel=1e-6)
    assert result.contact_current_a == pytest.approx(min(currents), rel=1e-6)


def test_released_level_and_the_release_by_the_rc_law(result):
    lev = result.levels["released"]
    worst = min(released_level(v, r, i) for r, _c, v in corners() for i in LEAK_HIGH)
    assert lev.worst_v == pytest.approx(worst, rel=1e-7)
    e = result.edges["release"]
    rows = [(r, c, v, i) for r, c, v in corners() for i in LEAK_HIGH]

    def t(r, c, v, i, vth):
        v0, vf = pressed_level(v, r, i), released_level(v, r, i)
        return r * c * math.log((vf - v0) / (vf - vth))

    # The integrator's own tolerance (rtol 1e-8) bounds the agreement.
    assert e.fastest_s == pytest.approx(min(t(*x, RX.rising_threshold[0]) for x in rows), rel=1e-5)
    assert e.slowest_s == pytest.approx(max(t(*x, RX.rising_threshold[2]) for x in rows), rel=1e-5)
    i_mid = sum(LEAK_HIGH) / 2
    assert e.nominal_s == pytest.approx(t(R1, C1, VCC, i_mid, RX.rising_threshold[1]), rel=1e-5)


def test_press_edge_corners_by_integration(result):
    e = result.edges["press"]
    inner, typ, outer = RX.falling_threshold[2], RX.falling_threshold[1], RX.falling_threshold[0]
    fast, slow = [], []
    for r, c, v in corners():
        for i in LEAK_LOW:
            t_in, t_out = press_times(v, r, c, i, (inner, outer))
            fast.append(t_in)
            slow.append(t_out)
    assert e.fastest_s == pytest.approx(min(fast), rel=1e-4)
    assert e.slowest_s == pytest.approx(max(slow), rel=1e-4)
    [t_nom] = press_times(VCC, R1, C1, sum(LEAK_LOW) / 2, (typ,))
    assert e.nominal_s == pytest.approx(t_nom, rel=1e-4)
    # The diode empties the capacitor in well under a microsecond (R1·C1 is a millisecond).
    assert e.slowest_s < 2e-6


def test_press_waveform_follows_the_integration():
    # The samples of one edge (what a plot shows) lie on the integrated curve.
    sol = edge_solution(diode_or(), RX, "press", {"R1": R1, "C1": C1, "rail:vcc": VCC, "leakage": 0.0,
                                                   "threshold": 1.6})
    [t_cross] = press_times_ivp(VCC, R1, C1, 0.0, (1.6,))
    assert press_times(VCC, R1, C1, 0.0, (1.6,))[0] == pytest.approx(t_cross, rel=1e-6)  # both ways agree
    assert sol.crossing_s == pytest.approx(t_cross, rel=1e-4)
    assert sol.start_v == pytest.approx(released_level(VCC, R1, 0.0), rel=1e-9)
    assert sol.final_v == pytest.approx(pressed_level(VCC, R1, 0.0), rel=1e-7)
    # The slope at the crossing: the pin's equation at 1.6 V.
    slope = abs((VCC - 1.6) / R1 - GMIN * 1.6 - i_diode(1.6)) / C1
    assert sol.slope_v_per_s == pytest.approx(slope, rel=1e-3)


def test_without_a_capacitor_both_edges_are_immediate():
    # The same diode-OR input with no capacitor: each edge is there as the contact moves
    # (nothing holds the pin), from one steady level to the other.
    st = stage(resistors=(Resistor("R1", "vcc", "rx", R1, R_TOL, R_TOL, role=ResistorRole.PULL),),
               diodes=(Diode("D1", "rx", "sw", card=DiodeCard(IS, N, RS)),),
               rails=(RailSource("vcc", VCC, V_TOL),), throws=(Throw("sw", "0", "pressed", RC),))
    res = analyse_stage(st, RX)
    for edge in ("press", "release"):
        e = res.edges[edge]
        assert (e.nominal_s, e.fastest_s, e.slowest_s) == (0.0, 0.0, 0.0)
        assert e.slope_v_per_s == math.inf
    press = res.edges["press"]
    assert press.start_v == pytest.approx(released_level(VCC, R1, sum(LEAK_LOW) / 2), rel=1e-9)
    assert press.final_v == pytest.approx(pressed_level(VCC, R1, sum(LEAK_LOW) / 2), rel=1e-7)


# The pin switched directly, the capacitor behind the diode: R1 from the rail to the pin, the
# contact from the pin to ground, D1 from the pin (anode) to m, C1 from m to ground. Pressed, the
# pin drops at once (C1 is held off by the diode); released, R1 charges C1 through the diode and
# the pin sits a diode drop over C1.

def behind_the_diode(bleed=None):
    """bleed: a resistor from m to ground, listed first (so m is the network's first node)."""
    bleeder = (Resistor("R2", "m", "0", bleed, 0.0, 0.0),) if bleed else ()
    return stage(resistors=bleeder + (Resistor("R1", "vcc", "rx", R1, R_TOL, R_TOL, role=ResistorRole.PULL),),
                 capacitors=(Capacitor("C1", "m", "0", C1, C_TOL, C_TOL),),
                 diodes=(Diode("D1", "rx", "m", card=DiodeCard(IS, N, RS)),),
                 rails=(RailSource("vcc", VCC, V_TOL),), throws=(Throw("rx", "0", "pressed", RC),))


def charge_current(vcc, r1, leak, u):
    """The diode's current into C1 at capacitor voltage u: KCL at the pin,
    (vcc − V)/r1 = leak + gmin·V + I with V = u + N·Vt·ln(I/IS + 1) + I·RS."""
    def pin(i):
        return u + NVT * math.log(i / IS + 1.0) + i * RS

    i = brentq(lambda i: (vcc - pin(i)) / r1 - leak - GMIN * pin(i) - i, 0.0, vcc / r1, xtol=1e-20, rtol=1e-14)
    return i, pin(i)


def pressed_start(vcc, r1, leak, g_m=GMIN):
    """C1's voltage while pressed: the pin at vcc·Rc/(r1 + Rc) (less the leakage through
    r1 ∥ Rc; the diode and gmin draw picoamps), and m where the diode's current equals m's gmin
    current, IS·(exp((V_pin − u)/(N·Vt)) − 1) = gmin·u (RS drops nothing at picoamps)."""
    pin = vcc * RC / (r1 + RC) - leak * r1 * RC / (r1 + RC)
    return brentq(lambda u: IS * math.expm1((pin - u) / NVT) - g_m * u, 0.0, pin, xtol=1e-18, rtol=1e-14)


def release_time(vcc, r1, c, leak, vth, bleed=None):
    """C1 du/dt = I(u) − (gmin + 1/bleed)·u from its pressed voltage until the pin reaches vth,
    by separation of variables (scipy.integrate.quad)."""
    g_m = GMIN + (1.0 / bleed if bleed else 0.0)
    u0 = pressed_start(vcc, r1, leak, g_m)
    u_th = brentq(lambda u: charge_current(vcc, r1, leak, u)[1] - vth, 0.0, vth, xtol=1e-15, rtol=1e-14)
    return c * quad(lambda u: 1.0 / (charge_current(vcc, r1, leak, u)[0] - g_m * u), u0, u_th,
                    epsabs=0.0, epsrel=1e-11, limit=200)[0]


@pytest.mark.parametrize("bleed", [None, 1e6])
def test_a_pin_switched_directly_crosses_at_once_and_recharges_through_the_diode(bleed):
    res = analyse_stage(behind_the_diode(bleed), RX)
    press = res.edges["press"]
    assert (press.nominal_s, press.fastest_s, press.slowest_s) == (0.0, 0.0, 0.0)
    assert press.slope_v_per_s == math.inf
    e = res.edges["release"]
    rows = [(v, r, c, i) for r, c, v in corners() for i in LEAK_HIGH]
    lo, typ, hi = RX.rising_threshold
    # The integrator's own tolerance (rtol 1e-8) bounds the agreement.
    assert e.fastest_s == pytest.approx(min(release_time(*x, lo, bleed) for x in rows), rel=1e-5)
    assert e.slowest_s == pytest.approx(max(release_time(*x, hi, bleed) for x in rows), rel=1e-5)
    assert e.nominal_s == pytest.approx(release_time(VCC, R1, C1, sum(LEAK_HIGH) / 2, typ, bleed), rel=1e-5)


@pytest.mark.parametrize("rs", [RS, 0.0])
def test_the_diode_current_and_its_slope_are_the_shockley_equation(rs):
    # I from V: the equation solved for V by hand at chosen currents; dI/dV by implicit
    # differentiation, 1 / (RS + N·Vt / (I + IS)). The transient's scalar form is the same.
    from drc.analysis.physics.nonlinear import _diode_scalar, diode_current

    d = Diode("D1", "a", "k", card=DiodeCard(IS, N, rs))
    for i_want in (1e-9, 1e-6, 1e-3, 0.1):
        v = NVT * math.log(i_want / IS + 1.0) + i_want * rs
        i, di = diode_current(d, np.array([v]))
        slope = 1.0 / (rs + NVT / (i_want + IS))
        assert float(i[0]) == pytest.approx(i_want, rel=1e-9)
        assert float(di[0]) == pytest.approx(slope, rel=1e-6)
        i_s, di_s = _diode_scalar(d, v)
        assert i_s == pytest.approx(i_want, rel=1e-9) and di_s == pytest.approx(slope, rel=1e-6)
    # Reverse: the saturation current, whatever the reverse voltage far beyond N·Vt.
    i, _di = diode_current(d, np.array([-5.0]))
    assert float(i[0]) == pytest.approx(-IS, rel=1e-9)


def test_a_diode_without_a_card_is_piecewise_linear_in_the_same_equations():
    # rules/limits.toml: 0.6 V in series with 10 ohm while conducting, open below.
    from drc.analysis.physics.nonlinear import _diode_scalar, diode_current

    d = Diode("D2", "a", "k", 0.6, 10.0)
    i, di = diode_current(d, np.array([0.3, 0.6, 0.85]))
    np.testing.assert_allclose(i, [0.0, 0.0, 0.025], rtol=1e-12)
    np.testing.assert_allclose(di, [0.0, 0.0, 0.1], rtol=1e-12)
    assert _diode_scalar(d, 0.85) == pytest.approx((0.025, 0.1), rel=1e-12)
    assert _diode_scalar(d, 0.3) == (0.0, 0.0)


def test_a_blocking_clamp_beside_the_card_diode_changes_nothing():
    # A diode without a card from ground to the pin (a clamp) never conducts at these levels
    # (the pin stays above ground): the levels are the hand figures of the card diode alone.
    st = diode_or()
    st = stage(resistors=st.circuit.resistors, capacitors=st.circuit.capacitors,
               diodes=st.circuit.diodes + (Diode("D2", "0", "rx"),), rails=st.circuit.rails,
               throws=st.circuit.throws)
    res = analyse_stage(st, RX)
    worst = max(pressed_level(v, r, i) for r, _c, v in corners() for i in LEAK_LOW)
    assert res.levels["pressed"].worst_v == pytest.approx(worst, rel=1e-7)
    worst_high = min(released_level(v, r, i) for r, _c, v in corners() for i in LEAK_HIGH)
    assert res.levels["released"].worst_v == pytest.approx(worst_high, rel=1e-7)


def test_the_slope_of_a_pin_behind_the_diode_from_its_capacitor():
    # The pin is not the capacitor's node: v_pin = u + N·Vt·ln(I/IS + 1) + I·RS, I the charging
    # current, so its slope is dv_pin/du · du/dt with du/dt = (I − gmin·u)/C1 (the pin's KCL in
    # `charge_current`); dv_pin/du by a central difference of that hand solution.
    corner = {"R1": R1, "C1": C1, "rail:vcc": VCC, "leakage": 0.0, "threshold": 2.9}
    sol = edge_solution(behind_the_diode(), RX, "release", corner)
    u_th = brentq(lambda u: charge_current(VCC, R1, 0.0, u)[1] - 2.9, 0.0, 2.9, xtol=1e-15, rtol=1e-14)
    h = 1e-5
    dpin = (charge_current(VCC, R1, 0.0, u_th + h)[1] - charge_current(VCC, R1, 0.0, u_th - h)[1]) / (2 * h)
    i, _pin = charge_current(VCC, R1, 0.0, u_th)
    assert 0.5 < dpin < 1.0  # the diode's drop falls as the charging current does
    assert sol.slope_v_per_s == pytest.approx(dpin * (i - GMIN * u_th) / C1, rel=1e-5)
    assert sol.crossing_s == pytest.approx(release_time(VCC, R1, C1, 0.0, 2.9), rel=1e-6)


@pytest.mark.parametrize("card", [True, False], ids=["card-diode", "piecewise-linear"])
def test_a_clamp_current_beside_a_card_diode_by_ohms_law(card):
    # The diode-OR input pulled up to a 12 V rail while its part is supplied from 5 V: released,
    # the input's clamp to its supply (0.6 V + 10 ohm, the family's clamp data of this test)
    # carries (V12 - V5 - 0.6) / (R1 + 10) by Ohm's law (the card diode's floating sw and gmin
    # draw picoamps); the worst is the 12 V rail high, the 5 V rail low and R1 at its least.
    # The same with D1 piecewise linear: the clamp is then the stage's only nonlinear part.
    load = InputLoad("U1:1", "rx", "TEST", "v5", (0.0, 0.0), (0.0, 0.0), clamp=(0.6, 10.0), clamp_to_supply=True)
    base = diode_or()
    diodes = base.circuit.diodes if card else (Diode("D1", "rx", "sw"),)
    pull = Resistor("R1", "v12", "rx", R1, R_TOL, R_TOL, role=ResistorRole.PULL)
    circuit = replace(base.circuit, diodes=diodes, resistors=(pull,),
                      rails=(RailSource("v12", 12.0, 0.05), RailSource("v5", 5.0, 0.05)), loads=(load,))
    st = replace(base, circuit=circuit, nets=circuit.nodes())
    res = analyse_stage(st, receiver_electrical(leak_high=(0.0, 0.0), leak_low=(0.0, 0.0)))
    worst = (12.0 * 1.05 - 5.0 * 0.95 - 0.6) / (R1 * (1 - R_TOL) + 10.0)
    assert res.clamp_current_a == pytest.approx(worst, rel=1e-6)
