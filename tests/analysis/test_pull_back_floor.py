"""first_edge.pull_back_floor against the closure-and-opening reading it bounds.

The floor is the fix search's restatement of bounce-window's second reading
(drc/design/screen.py): the least factor on the capacitor at which the reading
can take `need` or longer. Two implementations of one reading, compared at
every vertex of the reading's own box (as the batch and per-stage solvers are):

- below the floor no capacitor passes (the bound is from below, so the screen
  built on it never fails what the rule passes);
- where the closure path is slow (a series resistor: the level left is the
  crossing threshold itself), the reading is exactly the factor times the
  present one, so at the floor the reading equals `need` (relative 1e-6).

The reading itself is checked against hand figures and ngspice elsewhere
(test_first_edge_reading.py, tests/oracle).
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import pytest

from drc.analysis.first_edge import _setups, _threshold_pairs, bounce_state, pull_back, pull_back_floor
from drc.analysis.physics.batch import structure_key, template
from drc.board.stage import Capacitor, RailSource, Resistor, ResistorRole, Throw
from tests.analysis.builders import receiver_electrical, stage

RX = replace(receiver_electrical(), hysteresis_min_v=0.3)  # VT+ 2.0-3.5 V, VT- 0.9-2.2 V, VH >= 0.3 V
MIN_CLOSURE = 1e-6


def _stage(r1: float, r2: float | None, c: float):
    """Pull-up R1 to the contact node; with r2, a series resistor to the pin and C1 there,
    else C1 straight across the contact (the pin is the contact node)."""
    node = "sw" if r2 is not None else "rx"
    resistors = [Resistor("R1", "vcc", node, r1, role=ResistorRole.PULL)]
    if r2 is not None:
        resistors.append(Resistor("R2", "sw", "rx", r2, role=ResistorRole.SERIES))
    return stage(resistors=resistors, capacitors=[Capacitor("C1", "rx", "0", c)],
                 rails=(RailSource("vcc", 5.0, 0.05),), throws=(Throw(node, "0", "pressed", 0.1),))


def _divider_stage(c: float):
    """R1 10 kOhm up to the contact node, R4 4.7 kOhm from it to C1, and the pin behind a
    divider from C1 (R2 10 kOhm to the pin, R3 100 kOhm from the pin to ground): the pin is
    a fixed fraction of C1's voltage, not C1's voltage."""
    resistors = [Resistor("R1", "vcc", "sw", 10e3, role=ResistorRole.PULL),
                 Resistor("R4", "sw", "c", 4.7e3, role=ResistorRole.SERIES),
                 Resistor("R2", "c", "rx", 10e3, role=ResistorRole.SERIES),
                 Resistor("R3", "rx", "0", 100e3, role=ResistorRole.PULL)]
    return stage(resistors=resistors, capacitors=[Capacitor("C1", "c", "0", c)],
                 rails=(RailSource("vcc", 5.0, 0.05),), throws=(Throw("sw", "0", "pressed", 0.1),))


def test_a_pin_behind_a_divider_reaches_need_exactly_at_the_floor():
    # The reading's levels are the pin's, the floor's arithmetic is in C1's voltage: the
    # two must map through the divider alike (slow closure through R4: exact at the floor).
    c, need = 1e-6, 0.010
    floor = _floor(_divider_stage(c), "press", need)
    assert 0 < floor < np.inf
    back = pull_back(_divider_stage(c * floor), RX, "press", MIN_CLOSURE)
    assert back is not None and back.fastest_s == pytest.approx(need, rel=1e-6)


def _floor(st, edge: str, need: float) -> float:
    model = template(structure_key(st.circuit), st.circuit)
    (setup,) = _setups(model, [(st, RX)], edge)
    d = np.full(setup.V.shape[0], float(setup.es.direction))
    pairs = _threshold_pairs(setup.es, setup.opposite, setup.V, RX.hysteresis_min_v)
    floors = pull_back_floor(model, edge, bounce_state(st, edge), setup.V, d, pairs,
                             np.full(setup.V.shape[0], need), MIN_CLOSURE)
    return float(floors.max())


def _reading(r1, r2, c, edge):
    back = pull_back(_stage(r1, r2, c), RX, edge, MIN_CLOSURE)
    assert back is not None
    return back.fastest_s


@pytest.mark.parametrize("r1, r2, c, need", [
    (10e3, 22e3, 1e-6, 0.010),
    (4.7e3, 47e3, 220e-9, 0.005),
    (33e3, 1e3, 2.2e-6, 0.020),
])
def test_a_slow_closure_reaches_need_exactly_at_the_floor(r1, r2, c, need):
    floor = _floor(_stage(r1, r2, c), "press", need)
    assert 0 < floor < np.inf
    at = _reading(r1, r2, c * floor, "press")
    assert at == pytest.approx(need, rel=1e-6)
    assert _reading(r1, r2, c * floor * (1 - 1e-3), "press") < need


@pytest.mark.parametrize("r1, c, need", [(10e3, 100e-9, 0.010), (47e3, 10e-9, 0.002), (2.2e3, 1e-6, 0.005)])
def test_nothing_passes_below_the_floor_of_a_capacitor_across_the_contact(r1, c, need):
    # The closure through the bare contact crosses within the least closure: the floor is the
    # bound from the pressed level, and the reading, from the level the closure leaves (a
    # little above it), is never longer than that.
    floor = _floor(_stage(r1, None, c), "press", need)
    assert 0 < floor < np.inf
    assert _reading(r1, None, c * floor * (1 - 1e-6), "press") < need
    # (a bound, not the answer: where the larger capacitor slows the closure past the least
    # closure, the level left is the threshold itself and the reading falls to the hysteresis
    # recharge; the search's full analyses refute what the bound lets through)


def test_a_re_closure_through_the_bare_contact_is_never_long_enough():
    # The release of the same stage is pulled back by a re-closure (0.1 ohm x C): no factor
    # within reason brings it to 10 ms, and the floor says so by being huge.
    floor = _floor(_stage(10e3, None, 100e-9), "release", 0.010)
    assert floor > 1e6
    assert _reading(10e3, None, 100e-9 * 1e3, "release") < 0.010


def test_the_floor_of_a_capacitor_across_the_contact_by_hand():
    # C1 straight across the contact, R1 up to the 5 V rail, the pin on C1 drawing I. At each
    # vertex of the reading's box (R1 +-5 %, C1 +-20 %, rail +-5 %, I over both levels' ranges,
    # -1..+1 uA): released level ub = V - I R1 (tau_b = R1 C1), pressed level
    # un = (V / R1 - I) / (1 / R1 + 1 / 0.1 ohm); the closure (tau 0.1 ohm x C1, nanoseconds)
    # crosses within the least closure, so the floor is need over the recharge time from un,
    # tau_b ln((ub - un) / (ub - opp)) (RC law), at the worst vertex and threshold pair. The
    # pairs (the rule's documentation: each threshold anywhere in its range, never closer than
    # VH min = 0.3 V): VT- at its top, 2.2 V, with VT+ 0.3 V above it, 2.5 V; or VT+ at its
    # bottom, 2.0 V, with VT- 0.3 V below it, 1.7 V. Only the opposite one matters from un.
    r1, c, need = 10e3, 100e-9, 0.010
    worst = 0.0
    for R in (r1 * 0.95, r1 * 1.05):
        for C in (c * 0.8, c * 1.2):
            for V in (4.75, 5.25):
                for current in (-1e-6, 1e-6):
                    ub = V - current * R
                    un = (V / R - current) / (1 / R + 1 / 0.1)
                    # pair 1: crossing at VT- max 2.2 V, opposite as near as VH allows: 2.5 V;
                    # pair 2: opposite at VT+ min 2.0 V, crossing 0.3 V below it: 1.7 V
                    t = min(R * C * np.log((ub - un) / (ub - opp)) for opp in (2.5, 2.0))
                    worst = max(worst, need / t)
    assert _floor(_stage(r1, None, c), "press", need) == pytest.approx(worst, rel=1e-9)


def test_no_bounce_to_reach_means_any_capacitor_may():
    # need = 0 (bounce-window not asked): the floor is 0 whatever the stage
    assert _floor(_stage(10e3, None, 100e-9), "press", 0.0) == 0.0
    assert _floor(_stage(10e3, 22e3, 1e-6), "release", 0.0) == 0.0
