"""The fix search on first-edge stages: a change that passes by the closure-and-opening reading is found.

bounce-window passes an edge into an input with hysteresis when its own time
reaches the bounce, or when, after its first crossing, the bounce cannot bring
the input back across the other threshold within the bounce (the rule's
documentation, `drc handbook bounce-window`). A capacitor straight across the
contact crosses at once, so its press passes only the second way; a search
that screened the first way alone said "no change passes" on such stages.

Outside reference, written here without drc's solver: the stage is a pull-up
R1 from the rail to the pin, the capacitor C1 at the pin and the contact (0.1
ohm) from the pin to ground, the pin drawing its input current I. Node
equations give the levels, the first-order RC law
v(t) = v_inf + (v0 - v_inf) exp(-t / tau) every time (*Lessons In Electric
Circuits*, Vol. I, ch. 16); the closure-and-opening reading as the rule states
it: a closure of at least `min_closure` (1 us) from the released level, the
recharge from the level it leaves (the crossing threshold itself if it has not
crossed by then) to the opposite threshold, each threshold anywhere in its
range (a 0.1 V grid) but VT+ never below VT- (no least hysteresis is given for
this input, so the two may meet), at every vertex of the tolerance
box (R +-5 %, C +-20 %, rail +-5 %, the input current over both levels'
ranges). The time-to-threshold figures come from test_fix_completeness's
reference (the same stage with no series resistor). Every one- and two-part
change of R1 (E24, 1 kOhm-50 kOhm) and C1 (E12, 1 pF-10 mF, IEC 60063 through
`eseries`) is judged and the first passing one in the stated order (fewest
parts, least sum of |ln(new/old)|, stage order, lower values) is compared with
the search's answer.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from drc.design.fixes import search
from tests.checks.builders import LIMITS, contact, rc_stage
from tests.design.test_fix_completeness import (
    C_VALUES,
    MARGIN,
    R_VALUES,
    RC_OHMS,
    RX,
    _edge,
    _level,
    assert_first_in_order,
    passing_changes,
)

C_TOL, R_TOL, V_TOL = 0.20, 0.05, 0.05


def _box(r1, c):
    """Every vertex per row (R1, C, rail, input current over both levels' ranges): (N, 16) arrays."""
    bits = np.array([[(i >> k) & 1 for k in range(4)] for i in range(16)], dtype=float)
    sign = 2 * bits - 1
    leak = sorted(RX.leak_low_a + RX.leak_high_a)
    R1 = r1[:, None] * (1 + R_TOL * sign[None, :, 0])
    C = c[:, None] * (1 + C_TOL * sign[None, :, 1])
    V = RX.vcc * (1 + V_TOL * sign[None, :, 2])
    current = np.where(bits[None, :, 3] == 1, leak[-1], leak[0]) + 0 * R1
    return R1, C, V, current


def _pairs(d):
    """Every (crossing, opposite) threshold pair on a 0.1 V grid over their ranges (the
    ranges' ends and the point where they meet are on it) with VT+ >= VT- (no least
    hysteresis is given, so the two may meet); d: the edge's direction, +1 rising."""
    rise = np.round(np.arange(RX.rising_threshold[0], RX.rising_threshold[2] + 1e-9, 0.1), 9)
    fall = np.round(np.arange(RX.falling_threshold[0], RX.falling_threshold[2] + 1e-9, 0.1), 9)
    return [((up, down) if d > 0 else (down, up)) for up in rise for down in fall if up >= down]


def pull_back_fastest(r1, c, press, min_closure=1e-6):
    """The closure-and-opening reading's fastest pull back per row (inf: never back)."""
    R1, C, V, current = _box(r1, c)
    released = V - current * R1  # pin level, contact open
    pressed = (V / R1 - current) / (1 / R1 + 1 / RC_OHMS)  # contact closed
    tau_r, tau_p = R1 * C, R1 * RC_OHMS / (R1 + RC_OHMS) * C
    # Press: from released to pressed, bouncing open (released); release: the other way round.
    start, new, tau_new, back, tau_back = ((released, pressed, tau_p, released, tau_r) if press
                                           else (pressed, released, tau_r, pressed, tau_p))
    d = -1.0 if press else 1.0
    best = np.full(R1.shape, np.inf)
    with np.errstate(divide="ignore", invalid="ignore"):
        for cross, opp in _pairs(d):
            after = new + (start - new) * np.exp(-min_closure / tau_new)
            left = np.where(d * (after - cross) >= 0, after, cross)
            t = np.where(-d * (left - opp) >= 0, 0.0,
                         np.where(-d * (back - opp) > 0, tau_back * np.log((back - left) / (back - opp)), np.inf))
            t = np.where(d * (new - cross) > 0, t, np.inf)  # an edge that never crosses is not read
            best = np.minimum(best, t)
    return best.min(axis=1)


def reference_passes(r1, c, bounce, slack=0.0):
    """Whether each row passes every stage rule of the pull-up stage with C1 at the pin."""
    r2 = np.zeros_like(r1)
    ok = (r1 >= LIMITS["resistance_min"]) & (r1 <= LIMITS["resistance_max"])  # resistance-range
    levels = {}
    for pressed in (False, True):
        margin, pull, high, _ = _level(r1, r2, c, pressed, True, RX, LIMITS)
        ok &= margin >= -slack * RX.vcc  # leakage-headroom
        ok &= pull <= LIMITS["pull_current_budget"] * (1 + slack)  # pullup-waste
        levels[pressed] = high
    need = bounce * LIMITS["bounce_margin"] * (1 - slack)
    for press in (True, False):
        fast, slow, _ = _edge(r1, r2, c, press, True, levels[not press], levels[press], RX)
        back = pull_back_fastest(r1, c, press, LIMITS["min_closure"])
        ok &= np.isinf(fast) | (fast >= need) | (back >= need)  # bounce-window, either reading
        ok &= np.isfinite(slow) & (slow <= LIMITS["latency_limit"] * (1 + slack))  # response-latency
    return ok


def brute_force(r1, c, bounce, slack=0.0):
    return passing_changes({"R1": r1, "C1": c}, {"R1": R_VALUES, "C1": C_VALUES},
                           lambda rows: reference_passes(rows["R1"], rows["C1"], bounce, slack))


CASES = [
    # (R1, C1, bounce): a capacitor straight across the contact, each failing bounce-window today
    (10e3, 100e-9, 0.010),
    (4.7e3, 470e-9, 0.010),
    (22e3, 47e-9, 0.005),
    (47e3, 10e-9, 0.002),
]


@pytest.mark.parametrize("r1, c, bounce", CASES)
def test_search_answer_is_the_brute_force_optimum_with_both_readings(r1, c, bounce):
    stage = rc_stage(r1=r1, r2=None, c1=c, contact_=contact(bounce_s=bounce))
    assert not reference_passes(np.array([r1]), np.array([c]), bounce)[0]  # a finding to fix
    # contact-surge fires on every value here (the rail over the contact's 0.1 ohm onto the
    # capacitor) and no value of R1 or C1 changes it: tolerated, as a board check tolerates it
    solution, _count = search(stage, RX, LIMITS, "E24", tolerated={"contact-surge"})
    robust = brute_force(r1, c, bounce, slack=-MARGIN)
    assert robust, "the case must have a passing change"
    assert solution is not None, f"the search found nothing, the reference passes {robust[0]}"
    change = {ch.designator: ch.new for ch in solution.changes}
    rows = {k: np.array([change.get(k, v)]) for k, v in {"R1": r1, "C1": c}.items()}
    assert reference_passes(rows["R1"], rows["C1"], bounce, slack=MARGIN)[0], change
    assert_first_in_order(change, {"R1": r1, "C1": c}, robust)


def test_the_press_passes_only_by_the_closure_and_opening_reading():
    # The reference's own check that these cases test the second reading: at the first
    # case's answer the press crosses within nanoseconds (tau = 0.1 ohm x C), so its own
    # time never reaches the bounce; the recharge through R1 does.
    r1, c = np.array([10e3]), np.array([3.9e-6])
    levels = {p: _level(r1, np.zeros(1), c, p, True, RX, LIMITS)[2] for p in (False, True)}
    fast, _, _ = _edge(r1, np.zeros(1), c, True, True, levels[False], levels[True], RX)
    assert fast[0] < 1e-6
    assert pull_back_fastest(r1, c, True)[0] >= 0.010
    # and the release is pulled back at once by a re-closure through the contact
    assert pull_back_fastest(r1, c, False)[0] < 1e-6


def test_reference_agrees_with_the_rules_on_the_present_values_and_the_answers():
    # The reference is the rule's maths: its verdict is the rules' on each case's present
    # values and on the changes it passes first.
    from drc.checks import run_stage_rules
    from tests.checks.builders import analysed
    for r1, c, bounce in CASES:
        rows = [(r1, c)] + [(ch.get("R1", r1), ch.get("C1", c)) for _, ch in brute_force(r1, c, bounce)[:3]]
        for rr, cc in rows:
            stage = rc_stage(r1=rr, r2=None, c1=cc, contact_=contact(bounce_s=bounce))
            fired = {f.rule for f in run_stage_rules(analysed(stage, RX), LIMITS)} - {"contact-surge"}
            assert reference_passes(np.array([rr]), np.array([cc]), bounce)[0] == (not fired), (rr, cc, fired)


@pytest.mark.parametrize("min_closure, c_range", [(1e-6, (1e-9, 10e-6)), (20e-6, (1e-6, 200e-6))])
def test_the_screen_never_fails_what_the_closure_and_opening_reading_passes(min_closure, c_range):
    # The screen must stay optimistic (drc/design/screen.py): wherever the rule's own reading
    # (drc.analysis.first_edge.pull_back, the figure bounce-window reads) passes an edge, the
    # screen's least capacitor factor for that reading is at most the present one. Seeded
    # draws of pull-up stages with and without a series resistor, with a least hysteresis.
    from dataclasses import replace

    from drc.analysis.first_edge import pull_back
    from drc.design.screen import Request, Screen, screen_all
    # The second draw: a least closure of 20 us and capacitors whose closure through the
    # contact's 0.1 ohm takes microseconds, so the closure regime turns on the limit.
    rx = replace(RX, hysteresis_min_v=0.4)
    limits = dict(LIMITS, min_closure=min_closure)
    rng = np.random.default_rng(13)
    checked = 0
    for _ in range(40):
        r1 = float(np.exp(rng.uniform(math.log(1e3), math.log(50e3))))
        r2 = None if rng.random() < 0.5 else float(np.exp(rng.uniform(math.log(1e3), math.log(50e3))))
        c = float(np.exp(rng.uniform(math.log(c_range[0]), math.log(c_range[1]))))
        probe = rc_stage(r1=r1, r2=r2, c1=c)
        for edge in ("press", "release"):
            back = pull_back(probe, rx, edge, min_closure)
            if back is None or back.fastest_s is None:
                continue
            bounce = float(back.fastest_s * rng.uniform(0.5, 1.0))  # the reading passes this edge
            stage = rc_stage(r1=r1, r2=r2, c1=c, contact_=contact(bounce_s=bounce))
            screen = Screen.build(stage, rx, limits, frozenset({"contact-surge"}))
            got = screen_all([Request(screen, screen.rows(1), full=True, all_edges=True)])[0]
            floor = got.figures.back[edge][0]
            assert floor <= 1.0 + 1e-9, (r1, r2, c, edge, back.fastest_s, bounce, floor)
            checked += 1
    assert checked >= 20


@pytest.mark.parametrize("min_closure", [1e-6, 20e-6])
def test_the_fix_figure_is_the_reading_it_passes_by(min_closure):
    # A board check's fix text for the first case: the press passes by the closure-and-opening
    # reading, and its figure is that reading's fastest pull back at the proposed value (the
    # reference above, to the three digits printed); the release passes by its own time (the
    # RC law of test_fix_completeness). The least closure is the rule's limit: a closure of
    # 20 us leaves the capacitor nearer the pressed level than one of 1 us does (its time
    # constant, 0.1 ohm x a few uF, is a fraction of a microsecond), so the pull back is
    # longer, and the figure must be the one read with the limit in force.
    import re

    from drc.checks import run_stage_rules
    from drc.design.fixes import propose_board_fixes
    from tests.checks.builders import analysed
    r1, c, bounce = CASES[0]
    limits = dict(LIMITS, min_closure=min_closure)
    result = analysed(rc_stage(r1=r1, r2=None, c1=c, contact_=contact(bounce_s=bounce)), RX)
    texts = list(propose_board_fixes([result], run_stage_rules(result, limits), limits).values())
    answer = {m.group(1) for t in texts for m in re.finditer(r"C1 100 nF → ([0-9.]+) µF", t)}
    assert len(answer) == 1, texts
    c_new = np.array([float(answer.pop()) * 1e-6])
    back = [float(m.group(1)) for t in texts
            for m in re.finditer(r"press back across in ([0-9.]+) ms ≥ 10 ms at fastest corner", t)]
    own = [float(m.group(1)) for t in texts for m in re.finditer(r"release ([0-9.]+) ms ≥ 10 ms", t)]
    assert back and own, texts
    expected_back = pull_back_fastest(np.array([r1]), c_new, True, min_closure)[0] * 1e3
    assert back[0] == pytest.approx(expected_back, rel=5e-3)
    levels = {p: _level(np.array([r1]), np.zeros(1), c_new, p, True, RX, LIMITS)[2] for p in (False, True)}
    fast, _, _ = _edge(np.array([r1]), np.zeros(1), c_new, False, True, levels[True], levels[False], RX)
    assert own[0] == pytest.approx(fast[0] * 1e3, rel=5e-3)
