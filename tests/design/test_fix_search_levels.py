"""The complete search when a steady level's worst vertex moves: a level that changes logic.

The stage: a pull-up R1 from the rail to the pin, a series resistor R2 from
the pin to the contact, the contact to ground, C1 at the pin. Pressed, the pin
sits on the divider R1 / (R2 + contact): with R2 as large as R1 it reads high
in both states (leakage-headroom and response-latency fail). The screen's
vertices for the pressed level are then those that are worst for a high level
(low rail, R1 high, R2 low, the leakage at its top); a candidate with a small
R2 reads low there, and its worst vertex is the opposite one (high rail, R1
low, R2 high, the leakage out of the pin). The first refuted candidate teaches
the screen that vertex (a full screen of the refuted row: every vertex of its
steady levels); without it each candidate near the limit is refuted one
capacitor value at a time, and the search runs out of confirmations before the
answer.

Outside reference, written here without drc's solver: node equations of the
stage by hand (released: the pin at V - I R1, the capacitor sees R1; pressed:
the Thevenin source V (R2 + Rc) / (R1 + R2 + Rc) behind R1 || (R2 + Rc)), the
first-order RC law v(t) = v_inf + (v0 - v_inf) exp(-t / tau) (*Lessons In
Electric Circuits*, Vol. I, ch. 16) at every vertex of the tolerance box (R
+-5 %, C +-20 %, rail +-5 %, the input current's range), the thresholds at
their inner and outer limits, and the rules' conditions as their documentation
states them (drc explain), as tests/design/test_fix_completeness.py does for
the two-node stage. E-series values from IEC 60063 through `eseries`. Every
one- and two-part change in the stated ranges (resistors E24 1 kOhm-50 kOhm,
the capacitor E12 1 pF-10 mF) is evaluated and ordered as the search states.
"""

from __future__ import annotations

import numpy as np
import pytest

from drc.board.stage import Capacitor, RailSource, Resistor, Stage, StageCircuit, Throw
from drc.checks import run_stage_rules
from drc.design.fixes import search
from tests.checks.builders import LIMITS, analysed, contact, hc, receiver
from tests.design.test_fix_completeness import C_VALUES, MARGIN, R_VALUES, assert_first_in_order, passing_changes

VCC, RC_OHMS = 5.0, 0.1
R_TOL, C_TOL, V_TOL = 0.05, 0.20, 0.05
RX = hc()  # a 74HC Schmitt input at 5 V (tests/checks/builders.py)


def divider_stage(r1, r2, c, bounce):
    resistors = (Resistor("R1", "vcc", "in", r1, role="pull"), Resistor("R2", "in", "x", r2, role="series"))
    circuit = StageCircuit(resistors, (Capacitor("C1", "in", "0", c),), (), (RailSource("vcc", VCC, V_TOL),),
                           (Throw("x", "0", "pressed", RC_OHMS),), "in")
    return Stage(contact(bounce_s=bounce), receiver(True), "rc-schmitt", ("R1", "R2", "C1"), circuit,
                 circuit.nodes())


def _vertices(r1, r2, c, leak):
    """Every vertex of the tolerance box per row: arrays (N, 32) of R1, R2, C, V, I."""
    bits = np.array([[(i >> k) & 1 for k in range(5)] for i in range(32)], dtype=float)
    sign = 2 * bits - 1
    R1 = r1[:, None] * (1 + R_TOL * sign[None, :, 0])
    R2 = r2[:, None] * (1 + R_TOL * sign[None, :, 1])
    C = c[:, None] * (1 + C_TOL * sign[None, :, 2])
    V = VCC * (1 + V_TOL * sign[None, :, 3])
    current = np.where(bits[None, :, 4] == 1, max(leak), min(leak)) + 0 * R1
    return R1, R2, C, V, current


def _pin(R1, R2, V, current, pressed):
    """The pin's steady voltage and the resistance the capacitor sees (node equations)."""
    if pressed:
        lower = R2 + RC_OHMS
        source, ohms = V * lower / (R1 + lower), R1 * lower / (R1 + lower)
    else:
        source, ohms = V, R1
    return source - current * ohms, ohms


def reference_passes(r1, r2, c, bounce, slack=0.0, limits=LIMITS):
    """Whether each row passes every stage rule (with a relative slack in its favour)."""
    r1, r2, c = (np.atleast_1d(np.asarray(a, dtype=float)) for a in (r1, r2, c))
    ok = np.ones_like(r1, dtype=bool)
    for value in (r1, r2):  # resistance-range
        ok &= (value >= limits["resistance_min"]) & (value <= limits["resistance_max"])
    high = {}
    for pressed in (False, True):
        # The logic a level reads: its no-leakage nominal value against half the rail.
        logic = _pin(r1, r2, VCC, 0.0, pressed)[0] > VCC / 2
        high[pressed] = logic
        for is_high in (True, False):
            sel = logic == is_high
            if not sel.any():
                continue
            R1, R2, _C, V, current = _vertices(r1[sel], r2[sel], c[sel], RX.leak_high_a if is_high else RX.leak_low_a)
            pin, _ = _pin(R1, R2, V, current, pressed)
            if is_high:  # leakage-headroom: the worst level against VT+ max, or VT- min
                required = RX.rising_threshold[2]
                margin, room = pin.min(axis=1) - required, VCC - required
            else:
                required = RX.falling_threshold[0]
                margin, room = required - pin.max(axis=1), required
            needed = min(limits["leakage_headroom_margin"] * VCC, 0.5 * room)
            ok[sel] &= margin >= needed - slack * VCC
            pull = (np.abs(V - pin) / R1).max(axis=1)  # pullup-waste: the current in R1
            ok[sel] &= pull <= limits["pull_current_budget"] * (1 + slack)
    for press in (True, False):
        before, after = high[not press], high[press]
        rising = after & ~before
        fast, slow = np.empty_like(r1), np.empty_like(r1)
        for up in (True, False):
            sel = rising == up
            if not sel.any():
                continue
            R1, R2, C, V, current = _vertices(r1[sel], r2[sel], c[sel], RX.leak_high_a if up else RX.leak_low_a)
            start, _ = _pin(R1, R2, V, current, not press)
            final, ohms = _pin(R1, R2, V, current, press)
            thr = RX.rising_threshold if up else RX.falling_threshold
            direction = 1.0 if up else -1.0
            for inner, out in ((True, fast), (False, slow)):
                vth = (thr[0] if up else thr[2]) if inner else (thr[2] if up else thr[0])
                with np.errstate(divide="ignore", invalid="ignore"):
                    t = ohms * C * np.log((final - start) / (final - vth))
                t = np.where((direction * (vth - start) > 0) & (direction * (final - vth) > 0), t, np.inf)
                out[sel] = t.min(axis=1) if inner else t.max(axis=1)
        need = bounce * limits["bounce_margin"]
        ok &= np.isinf(fast) | (fast >= need * (1 - slack))  # bounce-window
        ok &= np.isfinite(slow) & (slow <= limits["latency_limit"] * (1 + slack))  # response-latency
    return ok


def brute_force(r1, r2, c, bounce, slack):
    """Every passing one- and two-part change, in the stated order."""
    return passing_changes({"R1": r1, "R2": r2, "C1": c}, {"R1": R_VALUES, "R2": R_VALUES, "C1": C_VALUES},
                           lambda rows: reference_passes(rows["R1"], rows["R2"], rows["C1"], bounce, slack))


CASES = [
    # (R1, R2, C1, bounce): pressed, the pin reads high (R2 at least twice R1); the answer moves
    # both resistors (R2 well under R1 and the capacitor kept: the press edge's time constant
    # R1 || R2 x C1 stays above the bounce).
    (2.2e3, 10e3, 1.8e-6, 0.5e-3),
    (1.6e3, 4.3e3, 1.2e-6, 0.5e-3),
    (1.1e3, 15e3, 1e-6, 0.5e-3),
    (3.9e3, 33e3, 1.8e-6, 1e-3),
]


@pytest.mark.parametrize("r1, r2, c, bounce", CASES)
def test_a_level_that_changes_logic_keeps_the_first_passing_change(r1, r2, c, bounce):
    # The present values read high when pressed (the no-leakage divider level over half the
    # rail), and the reference's first passing change reads low: the worst vertex moves.
    present = {"R1": r1, "R2": r2, "C1": c}
    assert _pin(np.array(r1), np.array(r2), VCC, 0.0, True)[0] > VCC / 2
    robust = brute_force(r1, r2, c, bounce, slack=-MARGIN)
    assert robust, "the reference finds a passing change"
    first = {**present, **robust[0][1]}
    assert _pin(np.array(first["R1"]), np.array(first["R2"]), VCC, 0.0, True)[0] < VCC / 2
    solution, _count = search(divider_stage(r1, r2, c, bounce), RX, LIMITS, "E24")
    assert solution is not None, f"the search found nothing, the reference passes {robust[0]}"
    change = {ch.designator: ch.new for ch in solution.changes}
    rows = {k: np.array([change.get(k, v)]) for k, v in present.items()}
    assert reference_passes(rows["R1"], rows["R2"], rows["C1"], bounce, MARGIN)[0], change
    assert_first_in_order(change, present, robust)


@pytest.mark.parametrize("r1, r2, c, bounce", CASES)
def test_the_reference_agrees_with_the_analysis_on_the_divider(r1, r2, c, bounce):
    # The reference's verdict on the present values and on its first passing changes, and on
    # those with R2 one E24 step up (which the pressed level fails), is the rules' own.
    present = {"R1": r1, "R2": r2, "C1": c}
    robust = brute_force(r1, r2, c, bounce, slack=-MARGIN)
    values = [present] + [{**present, **change} for _k, change in robust[:3]]
    values += [{**v, "R2": float(R_VALUES[np.searchsorted(R_VALUES, v["R2"]) + 1])} for v in values[1:]]
    verdicts = set()
    for v in values:
        passes = not run_stage_rules(analysed(divider_stage(v["R1"], v["R2"], v["C1"], bounce), RX), LIMITS)
        assert reference_passes(v["R1"], v["R2"], v["C1"], bounce)[0] == passes, v
        verdicts.add(passes)
    assert verdicts == {True, False}
