"""The closure-and-opening reading on the exact trajectories (first_edge's exact rows over
physics.flows and physics.oneport), against figures worked outside the tool.

The reading's model (drc/analysis/first_edge.py, module docstring): from the
steady start, the contact closes for the least closure (1 µs); if the
receiver has crossed the edge's threshold by then, the capacitors are left
where the closure took them, else (a slow path) where the receiver sits at
the crossing threshold; then the contact bounces open and the bounce state
pulls the receiver back towards the opposite threshold. The thresholds may
sit anywhere in their ranges but never closer than the least hysteresis
(VT+ - VT- >= VH min); the fastest pull back is the least over them and
over every vertex of the tolerance box.

Check values:
- two capacitors: Kirchhoff's current law with the capacitor voltages as
  states, C du/dt = b - G u, solved in closed form
  u(t) = u_inf + V exp(L t) V^-1 (u0 - u_inf) (numpy's eigen-decomposition of
  -C^-1 G, G and b written by hand below), a level's first time found by
  scipy.optimize.brentq;
- one capacitor: the RC law v(t) = Vf + (V0 - Vf) exp(-t/RC) and its inverse
  with the Thevenin equivalents worked by hand (*Lessons In Electric
  Circuits*, Vol. I, ch. 16, open textbook);
- card diodes: the Shockley equation with series resistance,
  V = N Vt ln(I/IS + 1) + I RS (the diode model of SPICE's manual; two equal
  diodes in series are one with 2N and 2RS), solved for I with Lambert's W
  (scipy.special.lambertw); the capacitor's discharge by separation of
  variables (scipy.integrate.quad), the level after a time by brentq on it;
- the thresholds: brute force over a grid of their ranges along the least
  hysteresis bound, and every vertex of the tolerance box.
"""

from __future__ import annotations

import itertools
import math
from dataclasses import replace

import numpy as np
import pytest
from scipy.integrate import quad
from scipy.optimize import brentq
from scipy.special import lambertw

from drc.analysis.first_edge import pull_back
from drc.analysis.stage_analysis import analyse_stage, edge_solution
from drc.board.stage import Capacitor, Diode, DiodeCard, RailSource, Resistor, ResistorRole, Throw
from tests.analysis.builders import receiver_electrical, stage

NO_LEAK = {"leak_high": (0.0, 0.0), "leak_low": (0.0, 0.0)}
RX = receiver_electrical(**NO_LEAK)  # VT+ 2.0 / 2.9 / 3.5 V, VT- 0.9 / 1.6 / 2.2 V, no VH min
RX_VH = replace(RX, hysteresis_min_v=0.4)
RC = 0.1  # the closed contact
CLOSURE = 1e-6  # the least closure (limits.toml min_closure)
GMIN = 1e-12  # SPICE's gmin, as the card-diode path keeps it ("from memory")
VT = 1.380649e-23 * 300.15 / 1.602176634e-19  # kT/q at 27 °C (CODATA constants)


def ends(nominal: float, tol: float) -> tuple[float, float]:
    return nominal * (1 - tol), nominal * (1 + tol)


# ---------------------------------------------------------------- two capacitors, by hand

class Linear:
    """C du/dt = b - G u: the exact trajectory from any u0 (eigen-decomposition)."""

    def __init__(self, G: np.ndarray, b: np.ndarray, C: np.ndarray) -> None:
        self.u_inf = np.linalg.solve(G, b)
        lam, V = np.linalg.eig(-G / C[:, None])
        self.lam, self.V, self.Vi = lam, V, np.linalg.inv(V)

    def at(self, u0: np.ndarray, t) -> np.ndarray:
        """u at the times t (array: one row per time)."""
        t = np.atleast_1d(np.asarray(t, dtype=float))
        modes = self.Vi @ (np.asarray(u0) - self.u_inf)
        return self.u_inf + (np.exp(np.outer(t, self.lam)) * modes) @ self.V.T.real

    def first(self, u0: np.ndarray, level: float, direction: int, pin: int = 0,
              t_end: float = 1.0) -> float | None:
        """The first time the pin (state `pin`) gets to `level` from the `direction` side."""
        if direction * (u0[pin] - level) >= 0:
            return 0.0
        ts = np.concatenate([[0.0], np.geomspace(1e-12, t_end, 6000)])
        v = self.at(u0, ts)[:, pin]
        past = np.flatnonzero(direction * (v - level) >= 0)
        if past.size == 0:
            return None
        k = int(past[0])
        return brentq(lambda t: float(self.at(u0, t)[0, pin]) - level, ts[k - 1], ts[k], xtol=1e-18, rtol=1e-13)


def across_two(r1: float, r2: float, c1: float, c2: float, v: float) -> tuple[Linear, Linear]:
    """(transit, pressed) of `_across_two`: u = (C1 at the pin, C2 at n2).
    KCL at the pin: C1 u1' = (V - u1)/R1 + (u2 - u1)/R2 [- u1/Rc pressed]; at n2: C2 u2' = (u1 - u2)/R2."""
    G = np.array([[1 / r1 + 1 / r2, -1 / r2], [-1 / r2, 1 / r2]])
    b = np.array([v / r1, 0.0])
    C = np.array([c1, c2])
    pressed = G.copy()
    pressed[0, 0] += 1 / RC
    return Linear(G, b, C), Linear(pressed, b, C)


def _across_two() -> object:
    """C1 across the contact at the pin, C2 behind R2 = 1k (tests/oracle/test_first_edge_exact.py
    has ngspice's figures for the same stage)."""
    return stage(resistors=(Resistor("R1", "vcc", "rx", 10e3, role="pull"),
                            Resistor("R2", "rx", "n2", 1e3, role="other")),
                 capacitors=(Capacitor("C1", "rx", "0", 100e-9), Capacitor("C2", "n2", "0", 100e-9)),
                 rails=(RailSource("vcc", 5.0, 0.05),), throws=(Throw("rx", "0", "pressed", RC),))


def test_two_capacitors_fast_closure_every_corner_by_the_state_equations():
    pb = pull_back(_across_two(), RX, "press")
    assert pb is not None and pb.bounce_state == "transit" and not pb.at_threshold

    def reading(r1, r2, c1, c2, v, vt_plus):
        transit, pressed = across_two(r1, r2, c1, c2, v)
        start = np.array([v, v])  # released: no current flows, both at the rail
        after = pressed.at(start, CLOSURE)[0]
        return after, transit.first(after, vt_plus, +1)

    # Nominal: VT- typ 1.6 V is crossed within nanoseconds (0.1 ohm), back to VT+ typ 2.9 V.
    after, t_nom = reading(10e3, 1e3, 100e-9, 100e-9, 5.0, 2.9)
    _tr, pressed = across_two(10e3, 1e3, 100e-9, 100e-9, 5.0)
    assert pressed.first(np.array([5.0, 5.0]), 1.6, -1) < 1e-7
    assert pb.nominal_s == pytest.approx(t_nom, rel=1e-7)
    assert pb.first_crossing_s == pytest.approx(pressed.first(np.array([5.0, 5.0]), 1.6, -1), rel=1e-6)
    # Fastest: every VT- is crossed as fast, so the soonest is back to VT+ at its least, 2.0 V,
    # at the vertex where that is quickest (all 32 vertices of R1, R2, C1, C2 and the rail).
    rows = [(reading(*x, 2.0), x) for x in itertools.product(ends(10e3, 0.05), ends(1e3, 0.05),
                                                             ends(100e-9, 0.2), ends(100e-9, 0.2),
                                                             ends(5.0, 0.05))]
    (left, t_fast), x = min(rows, key=lambda r: r[0][1])
    assert pb.fastest_s == pytest.approx(t_fast, rel=1e-7)
    assert pb.left_v == pytest.approx(left[0], rel=1e-6, abs=1e-12)
    assert pb.opposite_v == 2.0
    corner = pb.corner_fastest
    assert (corner["R1"], corner["R2"], corner["C1"], corner["C2"], corner["rail:vcc"]) == pytest.approx(x)


def _slow_two(c1_to: str = "0") -> object:
    """10k pull-up to the contact node sw, C2 = 10 nF from sw to ground, 1k series to the pin,
    C1 from the pin to ground or to the rail (the same for the pin: the rail is a fixed voltage):
    a closure empties C2 in nanoseconds but C1 only through the 1k (100 µs)."""
    return stage(resistors=(Resistor("R1", "vcc", "sw", 10e3, role="pull"),
                            Resistor("R2", "sw", "rx", 1e3, role="series")),
                 capacitors=(Capacitor("C1", "rx", c1_to, 100e-9), Capacitor("C2", "sw", "0", 10e-9)),
                 rails=(RailSource("vcc", 5.0, 0.05),), throws=(Throw("sw", "0", "pressed", RC),))


def slow_two(r1: float, r2: float, c1: float, c2: float, v: float) -> tuple[Linear, Linear]:
    """(open, pressed) of `_slow_two`, u = (the pin, C2 at sw).
    KCL at the pin: C1 u1' = (u2 - u1)/R2; at sw: C2 u2' = (V - u2)/R1 + (u1 - u2)/R2 [- u2/Rc pressed]."""
    G = np.array([[1 / r2, -1 / r2], [-1 / r2, 1 / r1 + 1 / r2]])
    b = np.array([0.0, v / r1])
    C = np.array([c1, c2])
    pressed = G.copy()
    pressed[1, 1] += 1 / RC
    return Linear(G, b, C), Linear(pressed, b, C)


def _grid(lo: float, hi: float) -> np.ndarray:
    return np.round(np.arange(lo, hi + 1e-9, 0.05), 10)


@pytest.mark.parametrize("c1_to", ["0", "vcc"])
def test_two_capacitors_slow_closure_leaves_the_pin_at_the_threshold(c1_to):
    # The closure cannot take C1 (1k x 100 nF = 100 µs) past VT- within 1 µs: the state left is
    # C2 as the closure leaves it and C1 with the pin at VT- (the reading's bound for a slow path).
    pb = pull_back(_slow_two(c1_to), RX_VH, "press")
    assert pb is not None and pb.at_threshold and pb.bounce_state == "transit"

    def soonest(r1, r2, c1, c2, v):
        opened, pressed = slow_two(r1, r2, c1, c2, v)
        start = np.array([v, v])
        after = pressed.at(start, CLOSURE)[0]
        assert pressed.first(start, 2.2, -1) > CLOSURE  # not crossed: the slow path
        best = (math.inf, None)
        # VT- anywhere in 0.9-2.2 V, VT+ as near above it as VT+ >= 2.0 V and the 0.4 V least
        # hysteresis let it (a higher VT+ is only reached later: brute force along that bound).
        for vt_minus in _grid(0.9, 2.2):
            vt_plus = max(2.0, vt_minus + 0.4)
            left = np.array([vt_minus, after[1]])
            t = opened.first(left, vt_plus, +1, t_end=0.1)
            if t < best[0]:
                best = (t, (vt_minus, vt_plus))
        return best

    rows = [(soonest(*x), x) for x in itertools.product(ends(10e3, 0.05), ends(1e3, 0.05), ends(100e-9, 0.2),
                                                        ends(10e-9, 0.2), ends(5.0, 0.05))]
    (t_fast, (vt_minus, vt_plus)), _x = min(rows, key=lambda r: r[0][0])
    assert pb.fastest_s == pytest.approx(t_fast, rel=1e-7)
    assert pb.left_v == pytest.approx(vt_minus) and pb.opposite_v == pytest.approx(vt_plus)
    # Nominal: the pin left at VT- typ 1.6 V, back to VT+ typ 2.9 V; the first crossing is the
    # closure's own time to 1.6 V from the released state.
    opened, pressed = slow_two(10e3, 1e3, 100e-9, 10e-9, 5.0)
    after = pressed.at(np.array([5.0, 5.0]), CLOSURE)[0]
    assert pb.nominal_s == pytest.approx(opened.first(np.array([1.6, after[1]]), 2.9, +1, t_end=0.1), rel=1e-7)
    assert pb.first_crossing_s == pytest.approx(pressed.first(np.array([5.0, 5.0]), 1.6, -1), rel=1e-7)


def test_two_capacitors_release_pulled_back_by_a_re_closure():
    # The release charges C1 through 1k from C2 (slow): the pin is left at VT+, and a re-closure
    # (the pressed state, the old state itself) empties C1 through the 1k towards the contact.
    pb = pull_back(_slow_two(), RX_VH, "release")
    assert pb is not None and pb.at_threshold and pb.bounce_state == "pressed"

    def soonest(r1, r2, c1, c2, v):
        opened, pressed = slow_two(r1, r2, c1, c2, v)
        start = pressed.u_inf  # the pressed steady state
        after = opened.at(start, CLOSURE)[0]
        assert opened.first(start, 2.0, +1, t_end=0.1) > CLOSURE
        best = (math.inf, None)
        for vt_plus in _grid(2.0, 3.5):  # VT- as near under it as 2.2 V and the hysteresis let it
            vt_minus = min(2.2, vt_plus - 0.4)
            t = pressed.first(np.array([vt_plus, after[1]]), vt_minus, -1, t_end=0.1)
            if t < best[0]:
                best = (t, (vt_plus, vt_minus))
        return best

    rows = [soonest(*x) for x in itertools.product(ends(10e3, 0.05), ends(1e3, 0.05), ends(100e-9, 0.2),
                                                   ends(10e-9, 0.2), ends(5.0, 0.05))]
    t_fast, (vt_plus, vt_minus) = min(rows, key=lambda r: r[0])
    assert pb.fastest_s == pytest.approx(t_fast, rel=1e-7)
    assert pb.left_v == pytest.approx(vt_plus) and pb.opposite_v == pytest.approx(vt_minus)
    opened, pressed = slow_two(10e3, 1e3, 100e-9, 10e-9, 5.0)
    after = opened.at(pressed.u_inf, CLOSURE)[0]
    assert pb.nominal_s == pytest.approx(pressed.first(np.array([2.9, after[1]]), 1.6, -1, t_end=0.1), rel=1e-7)
    assert pb.first_crossing_s == pytest.approx(opened.first(pressed.u_inf, 2.9, +1, t_end=0.1), rel=1e-7)


def test_two_capacitors_not_each_to_a_rail_are_not_read():
    # C2 from the pin to n2 (neither end on a rail or ground): the reading's bound does not hold.
    st = stage(resistors=(Resistor("R1", "vcc", "rx", 10e3, role="pull"),
                          Resistor("R2", "n2", "0", 1e3, role="other")),
               capacitors=(Capacitor("C1", "rx", "0", 100e-9), Capacitor("C2", "rx", "n2", 100e-9)),
               rails=(RailSource("vcc", 5.0, 0.05),), throws=(Throw("rx", "0", "pressed", RC),))
    assert pull_back(st, RX, "press") is None


# ---------------------------------------------------------------- one capacitor on the exact path

CARDS = [None, DiodeCard(1e-14, 1.0, 0.0)]
CARD_IDS = ["piecewise-linear", "card"]


@pytest.mark.parametrize("card", CARDS, ids=CARD_IDS)
def test_a_slow_closure_path_with_a_diode_leaves_the_crossing_threshold(card):
    # 10k pull-up to sw, 1k to the pin, 100 nF at the pin, D1 from the pin to the rail (never
    # conducts: the pin never rises over the rail): the exact path, one capacitor. The closure
    # (through 1k + 10k // 0.1 ohm: 100 µs) cannot cross in 1 µs: the pin is left at VT-.
    st = stage(resistors=(Resistor("R1", "vcc", "sw", 10e3, role="pull"),
                          Resistor("R2", "sw", "rx", 1e3, role="series")),
               capacitors=(Capacitor("C1", "rx", "0", 100e-9),),
               diodes=(Diode("D1", "rx", "vcc", card=card),),
               rails=(RailSource("vcc", 5.0, 0.05),), throws=(Throw("sw", "0", "pressed", RC),))
    pb = pull_back(st, RX_VH, "press")
    assert pb is not None and pb.at_threshold
    # The pull back: the RC law through R1 + R2 towards the rail, from VT- to VT+. The two ends of
    # the least-hysteresis bound: (VT- 2.2, VT+ 2.6) and (VT- 1.6, VT+ 2.0); brute force over
    # the bound and the vertices of R1, R2, C1 and the rail.
    times = []
    for r1, r2, c, v in itertools.product(ends(10e3, 0.05), ends(1e3, 0.05), ends(100e-9, 0.2), ends(5.0, 0.05)):
        for vt_minus in _grid(0.9, 2.2):
            vt_plus = max(2.0, vt_minus + 0.4)
            times.append(((r1 + r2) * c * math.log((v - vt_minus) / (v - vt_plus)), vt_minus, vt_plus))
    t, vt_minus, vt_plus = min(times)
    # The card's reverse current (IS = 10 fA) and gmin move it by under 1e-8.
    assert pb.fastest_s == pytest.approx(t, rel=1e-6)
    assert pb.left_v == pytest.approx(vt_minus) and pb.opposite_v == pytest.approx(vt_plus)
    assert pb.nominal_s == pytest.approx(11e3 * 100e-9 * math.log((5.0 - 1.6) / (5.0 - 2.9)), rel=1e-6)
    # The first crossing: the closure's RC law from 5 V to VT- typ 1.6 V, towards the closed level
    # 5 * 0.1 / (10k + 0.1) through 1k + 10k // 0.1 ohm.
    v_closed = 5.0 * RC / (10e3 + RC)
    tau = (1e3 + 10e3 * RC / (10e3 + RC)) * 100e-9
    assert pb.first_crossing_s == pytest.approx(tau * math.log((5.0 - v_closed) / (1.6 - v_closed)), rel=1e-6)


def _changeover(card: DiodeCard | None) -> object:
    """A changeover contact: released, the NC throw grounds nc, and R4 = 10k from the pin to nc
    makes a divider with the 10k pull-up (the pin at half the rail); pressed, the NO throw grounds
    sw and R3 = 47 ohm from the pin empties C1 = 10 nF; in transit (no throw closed) the pull-up
    alone holds the pin at the rail. D1 from the pin to the rail never conducts."""
    return stage(resistors=(Resistor("R1", "vcc", "rx", 10e3, role="pull"),
                            Resistor("R3", "rx", "sw", 47.0, role="series"),
                            Resistor("R4", "rx", "nc", 10e3, role="other")),
                 capacitors=(Capacitor("C1", "rx", "0", 10e-9),),
                 diodes=(Diode("D1", "rx", "vcc", card=card),),
                 rails=(RailSource("vcc", 5.0, 0.05),),
                 throws=(Throw("sw", "0", "pressed", RC), Throw("nc", "0", "released", RC)))


@pytest.mark.parametrize("card", CARDS, ids=CARD_IDS)
def test_a_bounce_through_transit_starts_the_closure_from_the_transit_level(card):
    pb = pull_back(_changeover(card), RX, "press")
    assert pb is not None and pb.bounce_state == "transit" and not pb.at_threshold

    def closure(r1, r3, c, v):
        # The released level is v/2 but the transit level v lies farther from the pressed one:
        # a contact that bounced in transit starts the closure there (the reading's steady start).
        r_closed = r3 + RC
        v_p = v * r_closed / (r1 + r_closed)  # the pressed level (divider by hand)
        tau = c * r1 * r_closed / (r1 + r_closed)  # the Thevenin resistance seen by C1
        return v_p, tau, v_p + (v - v_p) * math.exp(-CLOSURE / tau)

    v_p, tau, left = closure(10e3, 47.0, 10e-9, 5.0)
    assert pb.first_crossing_s == pytest.approx(tau * math.log((5.0 - v_p) / (1.6 - v_p)), rel=1e-6)
    # Nominal: back to VT+ typ 2.9 V through R1 alone (transit), the RC law towards the rail.
    assert pb.nominal_s == pytest.approx(10e3 * 10e-9 * math.log((5.0 - left) / (5.0 - 2.9)), rel=1e-6)
    # Fastest: back to VT+ 2.0 V (every VT- is crossed within 0.4 µs), the least over the vertices.
    rows = []
    for r1, r3, c, v in itertools.product(ends(10e3, 0.05), ends(47.0, 0.05), ends(10e-9, 0.2), ends(5.0, 0.05)):
        _vp, tau_x, left_x = closure(r1, r3, c, v)
        assert tau_x * math.log((v - _vp) / (2.2 - _vp)) < CLOSURE
        rows.append((r1 * c * math.log((v - left_x) / (v - 2.0)), left_x))
    t, left_fast = min(rows)
    assert pb.fastest_s == pytest.approx(t, rel=1e-6)
    assert pb.left_v == pytest.approx(left_fast, rel=1e-6)


# ---------------------------------------------------------------- a chain of two card diodes

IS, N, RS = 4e-9, 1.9, 0.6
NVT2 = 2 * N * VT  # two equal diodes in series: one with twice N and twice RS
R_SW = 1.0 / (1.0 / RC + GMIN)  # the closed contact beside sw's gmin


def _chain() -> object:
    """The diode-OR input of tests/analysis/test_card_diodes.py with two card diodes in series
    (pin -> mid -> sw): the pressed pin sits two diode drops over ground."""
    card = DiodeCard(IS, N, RS)
    return stage(resistors=(Resistor("R1", "vcc", "rx", 10e3, role=ResistorRole.PULL),),
                 capacitors=(Capacitor("C1", "rx", "0", 100e-9),),
                 diodes=(Diode("D1", "rx", "mid", card=card), Diode("D2", "mid", "sw", card=card)),
                 rails=(RailSource("vcc", 5.0, 0.05),), throws=(Throw("sw", "0", "pressed", RC),))


def i_chain(v: float) -> float:
    """The current the pin at v drives through both diodes and the closed contact:
    v = 2 N Vt ln(I/IS + 1) + I (2 RS + Rc), solved with Lambert's W (checked by substitution)."""
    rt = 2 * RS + R_SW
    i = NVT2 / rt * float(np.real(lambertw(IS * rt / NVT2 * math.exp((v + IS * rt) / NVT2)))) - IS
    assert abs(NVT2 * math.log(i / IS + 1) + i * rt - v) < 1e-9 * max(1.0, v)
    return i


def chain_press(r1: float, c: float, v: float):
    """(time to a level, level after a time) of the press: C dV/dt = (v - V)/R1 - gmin V - I(V),
    separated, t = C * integral of dV / (I(V) + gmin V - (v - V)/R1) (scipy quad). The start
    is the released level, the rail less the gmin of three nodes through R1 (under 1e-7 V).
    (mid's own gmin, 1e-12 S at a diode drop, is under 1e-9 of these currents: left out.)"""
    v0 = v / (1 + 3 * GMIN * r1)

    def out(x: float) -> float:
        return i_chain(x) + GMIN * x - (v - x) / r1

    def time_to(level: float) -> float:
        return c * quad(lambda x: 1.0 / out(x), level, v0, epsabs=0.0, epsrel=1e-12, limit=200)[0]

    def level_after(t: float) -> float:
        return brentq(lambda x: time_to(x) - t, 1.3, v0 - 1e-9, xtol=1e-14, rtol=1e-13)

    return v0, time_to, level_after


def test_a_chain_of_card_diodes_press_edge_by_quadrature():
    # Several card diodes: the one-port's current by Newton on its nodes, not the closed form.
    res = analyse_stage(_chain(), RX)
    e = res.edges["press"]
    fast = []
    for r1, c, v in itertools.product(ends(10e3, 0.05), ends(100e-9, 0.2), ends(5.0, 0.05)):
        fast.append(chain_press(r1, c, v)[1](2.2))  # the inner VT-, nearest the start
    assert e.fastest_s == pytest.approx(min(fast), rel=1e-6)
    assert e.nominal_s == pytest.approx(chain_press(10e3, 100e-9, 5.0)[1](1.6), rel=1e-6)
    # The pressed level: KCL at the pin, (5 - V)/10k = I(V) + gmin V.
    level = brentq(lambda x: i_chain(x) + GMIN * x - (5.0 - x) / 10e3, 0.5, 2.0, xtol=1e-15)
    assert res.levels["pressed"].nominal_v == pytest.approx(level, rel=1e-7)
    assert e.final_v == pytest.approx(level, rel=1e-7)


def test_a_chain_of_card_diodes_closure_and_opening():
    pb = pull_back(_chain(), RX, "press")
    assert pb is not None and pb.bounce_state == "transit"

    def reading(r1, c, v, thresholds):
        # The level a 1 µs closure leaves (the crossing threshold itself when not past it by
        # then), and the RC law through R1 back up to VT+ once the contact is open (the diodes
        # then carry only the floating nodes' gmin: under 1e-7 of the current through R1).
        v0, _time_to, level_after = chain_press(r1, c, v)
        after = level_after(CLOSURE)
        out = []
        for vt_minus, vt_plus in thresholds:
            left = after if after <= vt_minus else vt_minus
            t = r1 * c * math.log((v0 - left) / (v0 - vt_plus)) if left < vt_plus else 0.0
            out.append((t, left, after > vt_minus))
        return out

    _v0, time_to, _after = chain_press(10e3, 100e-9, 5.0)
    [(t_nom, _left, _slow)] = reading(10e3, 100e-9, 5.0, [(1.6, 2.9)])
    assert pb.nominal_s == pytest.approx(t_nom, rel=1e-6)
    assert pb.first_crossing_s == pytest.approx(time_to(1.6), rel=1e-6)
    # Fastest: VT- over its range (0.9-2.2 V; the pressed level, about 1.1 V, is never crossed
    # lower than 1.2 V), VT+ no lower than VT- nor 2.0 V (no VH min), every vertex of R1, C1, rail.
    pairs = [(x, max(2.0, x)) for x in _grid(1.2, 2.2)]
    rows = []
    for r1, c, v in itertools.product(ends(10e3, 0.05), ends(100e-9, 0.2), ends(5.0, 0.05)):
        rows += reading(r1, c, v, pairs)
    t, left, at_threshold = min(rows)
    assert pb.fastest_s == pytest.approx(t, rel=1e-6)
    assert pb.left_v == pytest.approx(left, rel=1e-6)
    assert pb.at_threshold == at_threshold


def test_a_chain_of_card_diodes_plotted_press_lies_on_the_quadrature():
    # The samples a plot draws (edge_solution, full): each time is the separated integral's
    # time to its level, the crossing is one of them, and they run on to the steady level.
    sol = edge_solution(_chain(), RX, "press", "nominal")
    t, v = sol.samples
    v0, time_to, _after = chain_press(10e3, 100e-9, 5.0)
    level = brentq(lambda x: i_chain(x) + GMIN * x - (5.0 - x) / 10e3, 0.5, 2.0, xtol=1e-15)
    assert t[0] == 0.0 and v[0] == pytest.approx(v0, rel=1e-9) and np.all(np.diff(t) >= 0)
    away = v - level > 1e-3  # where the integral is well conditioned
    assert away.sum() > 5 and (~away).sum() > 5
    hand = np.array([time_to(x) for x in v[away]])
    np.testing.assert_allclose(t[away], hand, rtol=1e-6, atol=1e-15)
    assert sol.crossing_s == pytest.approx(time_to(1.6), rel=1e-6)
    assert 1.6 in v.tolist() and t[v.tolist().index(1.6)] == sol.crossing_s
    # The last sample: within a millionth of the way from the steady level.
    assert abs(v[-1] - level) < 1e-6 * (v0 - level)


def test_a_chain_whose_pressed_level_stays_over_the_thresholds_is_never_pulled_back():
    # Falling thresholds under the pressed level (two diode drops, about 1.13 V by KCL at the
    # pin): the press never crosses, so there is no reading; the release does cross VT+, but a
    # re-closure only takes the pin back to that level, never under VT- (0.9 V at most).
    rx = receiver_electrical(falling=(0.5, 0.7, 0.9), **NO_LEAK)
    for v, r1 in ((5.25, 9.5e3), (4.75, 10.5e3)):  # the highest and the lowest pressed level
        level = brentq(lambda x, v=v, r1=r1: i_chain(x) + GMIN * x - (v - x) / r1, 0.5, 2.0, xtol=1e-15)
        assert 0.9 < level < 1.2
    assert pull_back(_chain(), rx, "press") is None
    pb = pull_back(_chain(), rx, "release")
    assert pb is not None and pb.bounce_state == "pressed"
    assert pb.fastest_s is None and pb.nominal_s is None


def test_a_closure_that_settles_within_the_least_closure_leaves_the_pressed_level():
    # C1 = 100 pF: about the pressed level the diodes' slope resistance N Vt / I (2 x 49 mV /
    # 0.39 mA, 250 ohm) with R1 gives a time constant of 25 ns, so a 1 µs closure leaves the pin
    # at the pressed level (KCL at the pin), and the RC law through R1 brings it back to VT+.
    st = _chain()
    st = stage(resistors=st.circuit.resistors, capacitors=(Capacitor("C1", "rx", "0", 100e-12),),
               diodes=st.circuit.diodes, rails=st.circuit.rails, throws=st.circuit.throws)
    pb = pull_back(st, RX, "press")
    assert pb is not None and not pb.at_threshold
    level = brentq(lambda x: i_chain(x) + GMIN * x - (5.0 - x) / 10e3, 0.5, 2.0, xtol=1e-15)
    v0 = 5.0 / (1 + 3 * GMIN * 10e3)
    assert pb.nominal_s == pytest.approx(10e3 * 100e-12 * math.log((v0 - level) / (v0 - 2.9)), rel=1e-6)


def test_several_capacitors_with_a_card_diode_are_not_read():
    # No exact trajectory from any capacitor voltages here (physics.flows gives none).
    st = _across_two()
    st = stage(resistors=st.circuit.resistors, capacitors=st.circuit.capacitors,
               diodes=(Diode("D1", "rx", "vcc", card=DiodeCard(1e-14, 1.0, 0.0)),), rails=st.circuit.rails,
               throws=st.circuit.throws)
    assert pull_back(st, RX, "press") is None


def test_several_capacitors_bouncing_through_a_state_of_their_own_are_not_read():
    # A changeover whose transit level (the rail) is not the released one (half the rail):
    # with several capacitors the reading's bound needs the bounce state to be the old state.
    st = _changeover(None)
    st = stage(resistors=st.circuit.resistors + (Resistor("R5", "rx", "n2", 1e3),),
               capacitors=st.circuit.capacitors + (Capacitor("C2", "n2", "0", 10e-9),),
               rails=st.circuit.rails, throws=st.circuit.throws)
    assert pull_back(st, RX, "press") is None


def _clamped(r3: float = 47.0) -> object:
    """10k pull-up to 5 V, C1 = 10 nF at the pin, a clamp D1 (0.6 V + 1k, piecewise linear)
    from the pin to a 3.3 V rail, and the contact through R3 to ground: released, the clamp
    holds the pin at about 4.0 V; a closure first drains the clamp's current (the diode turns
    off at 3.9 V: an event on the way), then empties C1 through R3."""
    return stage(resistors=(Resistor("R1", "vcc", "rx", 10e3, role="pull"),
                            Resistor("R3", "rx", "sw", r3, role="series")),
                 capacitors=(Capacitor("C1", "rx", "0", 10e-9),),
                 diodes=(Diode("D1", "rx", "v33", 0.6, 1e3),),
                 rails=(RailSource("vcc", 5.0, 0.05), RailSource("v33", 3.3, 0.05)),
                 throws=(Throw("sw", "0", "pressed", RC),))


def clamped_closure(r1: float, r3: float, c: float, v: float, v33: float, t: float) -> float:
    """The pin a time t into the closure, two RC stretches by hand (Thevenin at the pin):
    with the clamp on (0.6 V + 1k to v33) until the pin falls to v33 + 0.6 V, then without."""
    r_closed, on = r3 + RC, v33 + 0.6
    v0 = (v / r1 + on / 1e3) / (1 / r1 + 1 / 1e3)  # released: the pull-up against the clamp
    g1 = 1 / r1 + 1 / 1e3 + 1 / r_closed
    v_inf1, tau1 = (v / r1 + on / 1e3) / g1, c / g1
    t1 = tau1 * math.log((v0 - v_inf1) / (on - v_inf1))  # the clamp's current falls to zero
    v_inf2 = v * r_closed / (r1 + r_closed)
    tau2 = c * r1 * r_closed / (r1 + r_closed)
    if t <= t1:
        return v_inf1 + (v0 - v_inf1) * math.exp(-t / tau1)
    return v_inf2 + (on - v_inf2) * math.exp(-(t - t1) / tau2)


def test_a_closure_through_a_diode_event_by_two_rc_stretches():
    pb = pull_back(_clamped(), RX, "press")
    assert pb is not None and not pb.at_threshold
    left = clamped_closure(10e3, 47.0, 10e-9, 5.0, 3.3, CLOSURE)
    # The opening: the RC law through R1 from there to VT+ (the clamp stays off under 3.9 V).
    assert pb.nominal_s == pytest.approx(10e3 * 10e-9 * math.log((5.0 - left) / (5.0 - 2.9)), rel=1e-7)
    rows = []
    for r1, r3, c, v, v33 in itertools.product(ends(10e3, 0.05), ends(47.0, 0.05), ends(10e-9, 0.2),
                                               ends(5.0, 0.05), ends(3.3, 0.05)):
        lv = clamped_closure(r1, r3, c, v, v33, CLOSURE)
        assert lv < 1.6  # every VT- is crossed within the closure: the soonest is back to 2.0 V
        rows.append((r1 * c * math.log((v - lv) / (v - 2.0)), lv))
    t, lv = min(rows)
    assert pb.fastest_s == pytest.approx(t, rel=1e-7)
    assert pb.left_v == pytest.approx(lv, rel=1e-7)
    # The first crossing of VT- typ 1.6 V, in the second stretch.
    r_closed = 47.0 + RC
    v_inf2, tau2 = 5.0 * r_closed / (10e3 + r_closed), 10e-9 * 10e3 * r_closed / (10e3 + r_closed)
    t1 = brentq(lambda x: clamped_closure(10e3, 47.0, 10e-9, 5.0, 3.3, x) - 3.9, 0.0, 1e-6, xtol=1e-18)
    assert pb.first_crossing_s == pytest.approx(t1 + tau2 * math.log((3.9 - v_inf2) / (1.6 - v_inf2)), rel=1e-7)


# ---------------------------------------------------------------- leakage over both levels

# A CMOS-like input: ±1 µA at a high level, ±0.1 µA at a low one (current into the pin,
# rules/families.toml's sign).
RX_LEAKY = receiver_electrical(leak_high=(-1e-6, 1e-6), leak_low=(-0.1e-6, 0.1e-6))


@pytest.mark.parametrize("diode", [False, True], ids=["closed-form", "exact-path"])
def test_the_pull_back_takes_the_leakage_over_both_levels_ranges(diode):
    # Pull-up at the pin, C across the contact; with D1 (never conducting, pin to rail) the same
    # stage takes the exact path. The capacitor crosses from one level towards the other and may
    # come back, so the leakage may be anywhere in the union of both ranges: -1 µA to +1 µA.
    st = stage(resistors=(Resistor("R1", "vcc", "rx", 10e3, role="pull"),),
               capacitors=(Capacitor("C1", "rx", "0", 100e-9),),
               diodes=(Diode("D1", "rx", "vcc"),) if diode else (),
               rails=(RailSource("vcc", 5.0, 0.05),), throws=(Throw("rx", "0", "pressed", RC),))
    pb = pull_back(st, RX_LEAKY, "press")
    assert pb is not None

    def reading(r, c, v, leak, vt_plus):
        # KCL at the node, the leakage into the pin leaving it: open, (v - x)/r = leak, so the level is v - leak r;
        # closed, (v - x)/r = leak + x/Rc, the Thevenin level (v/r - leak)/(1/r + 1/Rc).
        high = v - leak * r
        closed = (v / r - leak) / (1 / r + 1 / RC)
        left = closed + (high - closed) * math.exp(-CLOSURE * (1 / r + 1 / RC) / c)
        return r * c * math.log((high - left) / (high - vt_plus)), left

    rows = [reading(r, c, v, leak, 2.0) for r, c, v, leak in itertools.product(
        ends(10e3, 0.05), ends(100e-9, 0.2), ends(5.0, 0.05), (-1e-6, 1e-6))]
    t, left = min(rows)
    assert pb.fastest_s == pytest.approx(t, rel=1e-7)
    assert pb.left_v == pytest.approx(left, rel=1e-6)
    assert pb.corner_fastest["leakage"] == pytest.approx(-1e-6)  # out of the pin: the fastest rise


@pytest.mark.parametrize("diode", [False, True], ids=["closed-form", "exact-path"])
def test_a_falling_pull_back_takes_the_leakage_at_the_top_of_both_ranges(diode):
    # The mirror stage: R1 = 10k pull-down at the pin, C1 across the contact from the pin to the
    # rail. The press rises in nanoseconds; the opening pulls the pin down through R1, soonest
    # with the most leakage into the pin (+1 µA, the high range's top) and to VT- at its
    # highest, 2.2 V (no least hysteresis: VT+ may sit as low as VT-, so the crossing at
    # 2.2 V counts). KCL at the node: open, x / r = -leak, the level -leak r; closed,
    # (v - x)/Rc = x/r + leak.
    st = stage(resistors=(Resistor("R1", "rx", "0", 10e3, role="pull"),),
               capacitors=(Capacitor("C1", "rx", "vcc", 100e-9),),
               diodes=(Diode("D1", "0", "rx"),) if diode else (),
               rails=(RailSource("vcc", 5.0, 0.05),), throws=(Throw("rx", "vcc", "pressed", RC),))
    pb = pull_back(st, RX_LEAKY, "press")
    assert pb is not None and pb.opposite_v == pytest.approx(2.2)

    def reading(r, c, v, leak):
        low = -leak * r
        closed = (v / RC - leak) / (1 / r + 1 / RC)
        left = closed + (low - closed) * math.exp(-CLOSURE * (1 / r + 1 / RC) / c)
        return r * c * math.log((left - low) / (2.2 - low)), left

    rows = [reading(r, c, v, leak) for r, c, v, leak in itertools.product(
        ends(10e3, 0.05), ends(100e-9, 0.2), ends(5.0, 0.05), (-1e-6, 1e-6))]
    t, left = min(rows)
    assert pb.fastest_s == pytest.approx(t, rel=1e-7)
    assert pb.left_v == pytest.approx(left, rel=1e-6)
    assert pb.corner_fastest["leakage"] == pytest.approx(1e-6)
