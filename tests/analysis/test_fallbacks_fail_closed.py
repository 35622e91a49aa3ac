"""The analysis's fallbacks for what its solvers cannot do, each driven on purpose.

No stage of the other tests reaches these paths: a vertex of the tolerance
box whose exact trajectory cannot be followed, a row whose edge never
crosses, a level asked for exactly at the steady state, a quadrature whose
refinement is cut short, diode states that never settle. The product's rule
is to fail closed (a reading the tool could not make is no reading, and the
rule that asked for it keeps its stricter finding); where a fallback gives a
figure, the figure is checked against a source outside the tool.

Sources:
- the RC law v(t) = Vf + (V0 - Vf) exp(-t/RC) and its state equation
  C du/dt = (Vf - u)/R (*Lessons In Electric Circuits*, Vol. I, ch. 16, open
  textbook): an exponential approach reaches its steady level only as
  t -> infinity;
- the Shockley equation I = IS (exp(V / (N Vt)) - 1), Vt = kT/q at 27 °C
  (CODATA constants), the diode model of SPICE's manual; a diode without a
  card is Vf in series with Ron while it conducts (the tool's documented
  piecewise-linear diode, rules/limits.toml); SPICE's gmin, 1e-12 S from
  every node to ground, as the card-diode path keeps it ("from memory");
- one capacitor: C du/dt = i(u), so the time between two levels is
  C * integral of du / i(u) (separation of variables), by scipy.integrate.quad.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.integrate import quad

from drc.analysis import first_edge
from drc.analysis.first_edge import _ExactRows, bounce_state, pull_back
from drc.analysis.physics import oneport, transient
from drc.analysis.physics.compiled import compile_circuit
from drc.analysis.physics.mna import dc_solve
from drc.analysis.physics.oneport import OnePort
from drc.analysis.physics.transient import settle_diodes
from drc.analysis.stage_analysis import edge_setup
from drc.board.stage import Capacitor, Diode, DiodeCard, RailSource, Resistor, ResistorRole, Throw
from drc.caching import clear_caches
from tests.analysis.builders import receiver_electrical, stage

NO_LEAK = {"leak_high": (0.0, 0.0), "leak_low": (0.0, 0.0)}
RX = receiver_electrical(**NO_LEAK)  # VT+ 2.0 / 2.9 / 3.5 V, VT- 0.9 / 1.6 / 2.2 V
RC = 0.1  # the closed contact
GMIN = 1e-12
VT = 1.380649e-23 * 300.15 / 1.602176634e-19  # kT/q at 27 °C


@pytest.fixture
def fresh_memos():
    """The readings a test makes with a solver broken on purpose must not be remembered
    for the tests after it (nor one remembered before hide the breakage)."""
    clear_caches()
    yield
    clear_caches()


def slow_closure():
    """10k pull-up to sw, 1k to the pin, 100 nF at the pin, contact from sw to ground; D1 from
    the pin to the rail never conducts but sends the stage down the exact path (one capacitor
    with a diode)."""
    return stage(resistors=(Resistor("R1", "vcc", "sw", 10e3, role=ResistorRole.PULL),
                            Resistor("R2", "sw", "rx", 1e3, role=ResistorRole.SERIES)),
                 capacitors=(Capacitor("C1", "rx", "0", 100e-9),),
                 diodes=(Diode("D1", "rx", "vcc"),),
                 rails=(RailSource("vcc", 5.0, 0.05),), throws=(Throw("sw", "0", "pressed", RC),))


# ---------------------------------------------------------------- the exact closure-and-opening reading

def test_a_vertex_the_exact_trajectories_cannot_follow_leaves_no_reading(monkeypatch, fresh_memos):
    st = slow_closure()
    # The stage is read as it stands (a reading of 1.1 ms nominal: (R1 + R2) C ln((5 - 1.6) / (5 - 2.9))).
    pb = pull_back(st, RX, "press")
    assert pb is not None
    assert pb.nominal_s == pytest.approx(11e3 * 100e-9 * math.log((5.0 - 1.6) / (5.0 - 2.9)), rel=1e-6)
    clear_caches()
    # The trajectory solver now fails wherever R1 is over its nominal value: the nominal corner
    # and the vertices with R1 at its low end are read, those with R1 at its high end are not. A
    # reading over the vertices that could be followed would be a silent pass for the ones that
    # could not: there is no reading at all (the rule then keeps its time finding,
    # drc/checks/bounce_window.py).
    real = first_edge.flow

    def failing(model, state, row):
        return None if row[model.column("R1")] > 10e3 else real(model, state, row)

    monkeypatch.setattr(first_edge, "flow", failing)
    assert pull_back(st, RX, "press") is None


def test_a_row_whose_edge_never_crosses_leaves_no_level():
    # The press drives the pin towards 5 * 0.1 / (10k + 0.1) = 50 µV (the closed contact under the
    # pull-up), never down to -1 V: no crossing (nan time back, no crossing time), no level left by
    # the closure, so none left at the crossing threshold either.
    st = slow_closure()
    model = compile_circuit(st.circuit)
    es = edge_setup(model, RX, "press")
    rows = _ExactRows(model, es, bounce_state(st, "press"), 1e-6)
    fig = rows.figures(es.box.nominal, -1.0, 2.9)
    assert fig is not None
    assert math.isnan(fig.pull_s) and math.isnan(fig.left_v) and fig.cross_s == math.inf
    assert fig.at_threshold is False
    # The same row with a threshold it does cross (VT- typ 1.6 V, the closure through
    # 1k + 10k // 0.1 ohm = 100 µs cannot get there in 1 µs): left at the threshold itself.
    crossing = rows.figures(es.box.nominal, 1.6, 2.9)
    assert crossing is not None and crossing.at_threshold is True
    assert crossing.left_v == pytest.approx(1.6, abs=1e-9)


# ---------------------------------------------------------------- the one-port quadrature

IS, N = 1e-14, 1.0
R1, R2, C1, VCC, V33 = 10e3, 1e3, 100e-9, 5.0, 3.3
KINK = V33 + 0.4  # where D2 (0.4 V, 100 ohm, no card) starts to conduct


def clamped():
    """Released: the pin charges through R1 + R2 from 5 V; D1 (a card: IS 10 fA, N 1) and D2
    (piecewise linear, 0.4 V and 100 ohm) clamp it to the 3.3 V rail. D2's corner at 3.7 V is a
    kink in the capacitor's current: a quadrature panel across it does not agree with its halves
    to the tolerance at once."""
    return stage(resistors=(Resistor("R1", "vcc", "sw", R1), Resistor("R2", "sw", "rx", R2)),
                 capacitors=(Capacitor("C1", "rx", "0", C1),),
                 diodes=(Diode("D1", "rx", "v33", card=DiodeCard(IS, N, 0.0)),
                         Diode("D2", "rx", "v33", 0.4, 100.0)),
                 rails=(RailSource("vcc", VCC, 0.05), RailSource("v33", V33, 0.05)),
                 throws=(Throw("sw", "0", "pressed", RC),))


def i_into_c1(u: float) -> float:
    """KCL with the pin at u: sw between R1 and R2 with its gmin, the pin's gmin, both diodes."""
    vs = (VCC / R1 + u / R2) / (1 / R1 + 1 / R2 + GMIN)
    v = u - V33
    return (vs - u) / R2 - GMIN * u - IS * math.expm1(v / (N * VT)) - max(0.0, (v - 0.4) / 100.0)


def released_port() -> OnePort:
    model = compile_circuit(clamped().circuit)
    row = model.nominal.copy()
    return OnePort(model, "released", row, dc_solve(model, "released", row[None, :], exact=False).v[0])


def test_the_steady_level_is_reached_only_after_forever():
    port = released_port()
    # The steady level: KCL i(u) = 0 (about 3.7117 V, D2 just conducting).
    assert i_into_c1(port.u_inf) == pytest.approx(0.0, abs=1e-12)
    assert port.time_between(3.0, port.u_inf) == math.inf
    assert port.level_after(port.u_inf, 1e-3) == port.u_inf  # nothing moves from the steady level
    assert port.reach(port.u_inf, 3.8, 1) is None  # nor does it ever get past it
    # Short of it the time is finite: the separation-of-variables integral.
    t = C1 * quad(lambda u: 1.0 / i_into_c1(u), 3.0, 3.711, points=[KINK], epsabs=0.0, epsrel=1e-12,
                  limit=200)[0]
    assert port.time_between(3.0, 3.711) == pytest.approx(t, rel=1e-8)


def test_a_level_off_the_way_to_the_steady_level_is_never_reached():
    # One capacitor moves monotonically towards its steady level: C du/dt = i(u) with i > 0 below
    # it and i < 0 above it (KCL by hand), so a level behind the start or past the steady level
    # is never reached (time_between: inf), and from above the time down to 3.8 V is the
    # separation-of-variables integral (no kink between 3.9 and 3.8 V).
    port = released_port()
    assert i_into_c1(2.5) > 0 and i_into_c1(3.8) < 0 and i_into_c1(3.9) < 0
    assert port.time_between(3.0, 2.5) == math.inf  # behind the start
    assert port.time_between(3.0, 3.8) == math.inf  # past the steady level (3.7117 V)
    assert port.time_between(3.9, 3.6) == math.inf  # past it from above
    assert port.time_between(3.0, 3.0) == 0.0
    t = C1 * quad(lambda u: 1.0 / i_into_c1(u), 3.9, 3.8, epsabs=0.0, epsrel=1e-12, limit=200)[0]
    assert port.time_between(3.9, 3.8) == pytest.approx(t, rel=1e-8)


def test_a_long_way_to_near_the_steady_level_keeps_the_quadratures_tolerance():
    # oneport's docstring: every time to 1e-10 relative (RTOL), or to rounding near the steady
    # level (1e-13 of the levels over the distance left: about 4e-10 at 1 mV from 3.7117 V).
    # From far below, across D2's kink, to 1 mV short of the steady level: the separation-of-
    # variables integral by scipy quad (its own error estimate about 1e-13), within 1e-8.
    port = released_port()
    for u_a in (0.5, 1.0, 2.0):
        t = C1 * quad(lambda u: 1.0 / i_into_c1(u), u_a, 3.7107, points=[KINK], epsabs=0.0, epsrel=1e-13,
                      limit=500)[0]
        assert port.time_between(u_a, 3.7107) == pytest.approx(t, rel=1e-8)


def test_a_quadrature_cut_short_keeps_every_panel_it_accepted(monkeypatch):
    # From 3.0 V to 3.711 V across D2's kink: the hand integral, with refinement as usual and with
    # no panel refined at all (the cap at 0 panels: every panel's finest estimate stands, those
    # accepted at once and the one across the kink alike).
    t = C1 * quad(lambda u: 1.0 / i_into_c1(u), 3.0, 3.711, points=[KINK], epsabs=0.0, epsrel=1e-12,
                  limit=200)[0]
    assert released_port().time_between(3.0, 3.711) == pytest.approx(t, rel=1e-8)
    monkeypatch.setattr(oneport, "_MAX_PANELS", 0)
    assert released_port().time_between(3.0, 3.711) == pytest.approx(t, rel=1e-8)


# ---------------------------------------------------------------- diode states that do not settle

def test_diode_states_that_do_not_settle_keep_the_network_of_the_states_given(monkeypatch):
    # 22k from a 4.5 V rail to the pin, 100 nF at the pin, D1 from the pin to ground. The diode's
    # test is fed a voltage that contradicts each state in turn (far forward while off, far reverse
    # while on), so the states never settle: after the bounded number of tries the segment is the
    # network of the states reached (off after an even number of flips), at the row asked for:
    # C du/dt = (4.5 - u) / 22k, so C = 100 nF, Y = 1/22k, h = 4.5 / 22k.
    st = stage(resistors=(Resistor("R1", "vcc", "rx", 10e3),), capacitors=(Capacitor("C1", "rx", "0", 100e-9),),
               diodes=(Diode("D1", "rx", "0"),), rails=(RailSource("vcc", 5.0, 0.05),),
               throws=(Throw("rx", "0", "pressed", RC),))
    model = compile_circuit(st.circuit)
    P = model.nominal.copy()[None, :]
    P[0, model.column("R1")] = 22e3
    P[0, model.column("rail:vcc")] = 4.5
    real = transient.node_voltage
    calls = []

    def contradicting(*args):
        v = real(*args)
        calls.append(1)
        n = len(calls) - 1  # two calls a try: the anode, then the cathode
        if n % 2 == 0:
            v = v + (100.0 if (n // 2) % 2 == 0 else -100.0)
        return v

    monkeypatch.setattr(transient, "node_voltage", contradicting)
    on, red = settle_diodes(model, "released", P, np.array([1.0]), (False,))
    assert len(calls) == 2 * (2 * 1 + 4)  # every try was made
    assert on == (False,)
    assert red.C[0, 0] == pytest.approx(100e-9, rel=1e-12)
    assert red.Y[0, 0, 0] == pytest.approx(1 / 22e3, rel=1e-12)
    assert red.h[0, 0] == pytest.approx(4.5 / 22e3, rel=1e-12)
