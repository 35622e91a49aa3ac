"""An edge whose threshold lies exactly at the level it starts from.

solve_edge's contract (its docstring): "The crossing is None when the steady
level before the edge is not strictly on the near side of vth". A threshold
placed at the starting level itself is therefore no crossing, on each path an
edge can take: the exact linear path, one capacitor with a card diode (the
quadrature), several capacitors with a card diode (the Radau integration).
The starting level is the input here (the tool's own start figure, fed back
as the threshold); the expected answer, None, is the docstring's. A threshold
a millivolt inside the edge is crossed: for the linear stage at the time of
the RC law by hand, t = tau ln((V0 - Vf) / (Vth - Vf)) (*Lessons In Electric
Circuits*, Vol. I, ch. 16), tau = C (R1 // Rc); for the card-diode stages
sooner than the nominal threshold.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from drc.analysis.physics.compiled import compile_circuit
from drc.analysis.physics.transient import solve_edge
from drc.analysis.stage_analysis import edge_solution
from drc.board.stage import Capacitor, Diode, DiodeCard, RailSource, Resistor, ResistorRole, Throw
from tests.analysis.builders import pullup_c_at_pin, receiver_electrical, stage
from tests.analysis.test_card_diode_two_caps import two_caps

RX = receiver_electrical(leak_high=(0.0, 0.0), leak_low=(0.0, 0.0))
R1, C1, VCC, RC = 10e3, 100e-9, 5.0, 0.1


def one_cap_card_diode():
    """R1 from the rail to the pin, C1 at the pin, D1 (a card) from the pin to the contact."""
    return stage(resistors=(Resistor("R1", "vcc", "rx", R1, role=ResistorRole.PULL),),
                 capacitors=(Capacitor("C1", "rx", "0", C1),),
                 diodes=(Diode("D1", "rx", "sw", card=DiodeCard(4e-9, 1.9, 0.6)),),
                 rails=(RailSource("vcc", VCC, 0.05),), throws=(Throw("sw", "0", "pressed", RC),))


STAGES = {"linear": lambda: pullup_c_at_pin(r_pu=R1, c=C1, vcc=VCC, closed_ohms=RC),
          "one-cap-card-diode": one_cap_card_diode, "two-caps-card-diode": two_caps}


@pytest.mark.parametrize("edge", ["press", "release"])
@pytest.mark.parametrize("kind", sorted(STAGES))
def test_a_threshold_at_the_starting_level_is_no_crossing(kind, edge):
    st = STAGES[kind]()
    nominal = edge_solution(st, RX, edge, "nominal")
    assert nominal.crossing_s is not None and nominal.crossing_s > 0
    direction = 1 if nominal.final_v > nominal.start_v else -1
    at = edge_solution(st, RX, edge, {"threshold": nominal.start_v})
    assert at.crossing_s is None
    inside = edge_solution(st, RX, edge, {"threshold": nominal.start_v + direction * 1e-3})
    assert inside.crossing_s is not None and 0 < inside.crossing_s < nominal.crossing_s


def test_the_linear_press_a_millivolt_in_follows_the_rc_law():
    # Released the pin sits at VCC (no current flows); pressed it settles at the divider of R1 and
    # the closed contact, with tau = C1 (R1 // Rc).
    v0, vf, tau = VCC, VCC * RC / (R1 + RC), C1 * R1 * RC / (R1 + RC)
    st = pullup_c_at_pin(r_pu=R1, c=C1, vcc=VCC, closed_ohms=RC)
    assert edge_solution(st, RX, "press", "nominal").start_v == pytest.approx(v0, rel=1e-9)
    got = edge_solution(st, RX, "press", {"threshold": v0 - 1e-3}).crossing_s
    assert got == pytest.approx(tau * math.log((v0 - vf) / (v0 - 1e-3 - vf)), rel=1e-6)


@pytest.mark.parametrize("edge", ["press", "release"])
def test_a_timing_only_edge_that_never_crosses_is_still_a_waveform(edge):
    # solve_edge with full=False (timing alone) on the quadrature path, a threshold beyond the
    # level the edge settles to (0.3 V under the pressed level, 5.5 V over the rail): no
    # crossing, and the record still pairs each sample time with a voltage, so that
    # EdgeSolution.voltage answers; at t = 0 the pin is where it starts (a capacitor at the pin
    # does not jump): released at the rail within a microvolt (only gmin's picoamps flow
    # through R1), pressed below the 1.6 V it was timed to.
    model = compile_circuit(one_cap_card_diode().circuit)
    row = model.nominal.copy()
    row[model.leak_col] = 0.0
    states, vth, direction = ((("released", "pressed"), 0.3, -1) if edge == "press"
                              else (("pressed", "released"), 5.5, 1))
    sol = solve_edge(model, *states, row, vth, direction)
    assert sol.crossing_s is None and sol.samples is not None
    t, v = sol.samples
    assert t.shape == v.shape
    v0 = float(sol.voltage(np.array([0.0]))[0])
    if edge == "press":
        assert v0 == pytest.approx(VCC, abs=1e-6)
    else:
        assert 0.3 < v0 < 1.6
