"""The fix search finds the preferred passing change whenever one exists (brute force).

Outside reference: the same stages worked by hand, in numpy, written here
without drc's solver: node equations of the two-node stage (a pull resistor
R1 and the contact at node n1, a series resistor R2 to the capacitor C1 at the
pin, the pin's input current I), the first-order RC law
v(t) = v_inf + (v0 - v_inf) exp(-t / tau) with tau = C1 x the resistance the
capacitor sees (*Lessons In Electric Circuits*, Vol. I, ch. 16), every vertex
of the tolerance box (R +-5 %, C +-20 %, rail +-5 %, the input current's
range), thresholds at their inner and outer limits, and the rules' conditions
as their documentation states them (drc explain). E-series values come from
IEC 60063 through the `eseries` package. Every one- and two-part change in the
stated ranges (resistors E24 within the 1 kOhm-50 kOhm window, the capacitor
E12 from 1 pF to 10 mF) is evaluated, the passing ones ordered as the search
states (fewest parts, then the sum of |ln(new/old)|, then stage order and lower
values), and the first is compared with the search's answer.

Boundary cases: a change passing the reference by less than 1e-6 (relative)
may fall either way in two implementations; the search's answer must pass the
reference at least marginally, and no change passing it robustly may come
before the answer in the stated order.
"""

from __future__ import annotations

import itertools
import math

import eseries as iec
import numpy as np
import pytest

from drc.board.stage import Capacitor, RailSource, Resistor, Throw
from drc.design.fixes import search
from tests.checks.builders import LIMITS, contact, hc, rc_stage, receiver

VCC, RC_OHMS, BOUNCE = 5.0, 0.1, 0.010
R_TOL, C_TOL, V_TOL = 0.05, 0.20, 0.05
RX = hc()  # a 74HC Schmitt input at 5 V (tests/checks/builders.py)
R_VALUES = np.array(list(iec.erange(iec.E24, 1e3, 50e3)))
C_VALUES = np.array(list(iec.erange(iec.E12, 1e-12, 10e-3)))
MARGIN = 1e-6


def _vertices(r1, r2, c, leak_range, vcc=VCC):
    """Every vertex of the tolerance box for each row: arrays of shape (N, 32)."""
    bits = np.array([[(i >> k) & 1 for k in range(5)] for i in range(32)], dtype=float)
    sign = 2 * bits - 1
    R1 = r1[:, None] * (1 + R_TOL * sign[None, :, 0])
    R2 = r2[:, None] * (1 + R_TOL * sign[None, :, 1])
    C = c[:, None] * (1 + C_TOL * sign[None, :, 2])
    V = vcc * (1 + V_TOL * sign[None, :, 3])
    lo, hi = min(leak_range), max(leak_range)
    current = np.where(bits[None, :, 4] == 1, hi, lo) + 0 * R1
    return R1, R2, C, V, current


def _node(R1, R2, V, current, pressed, pull_up):
    """Steady n1 and pin voltages, the pull current and the resistance the capacitor sees."""
    rail_pull = V if pull_up else 0 * V
    rail_contact = 0 * V if pull_up else V
    if pressed:
        n1 = (rail_pull / R1 + rail_contact / RC_OHMS - current) / (1 / R1 + 1 / RC_OHMS)
        seen = R1 * RC_OHMS / (R1 + RC_OHMS) + R2
    else:
        n1 = rail_pull - current * R1
        seen = R1 + R2
    pin = n1 - current * R2
    return pin, np.abs(rail_pull - n1) / R1, seen


def _level(r1, r2, c, pressed, pull_up, rx=RX, limits=LIMITS):
    """Worst level margin, largest pull current and least contact current (Ohm's law over the
    closed contact, from the node n1 = pin + I x R2) of one state, per row."""
    vcc = rx.vcc
    nominal_high = _node(r1, r2, np.full_like(r1, vcc), np.mean(rx.leak_high_a), pressed, pull_up)[0]
    high = nominal_high > vcc / 2
    out_margin, out_pull, out_contact = np.empty_like(r1), np.empty_like(r1), np.empty_like(r1)
    for logic, sel in ((True, high), (False, ~high)):
        if not sel.any():
            continue
        rng = rx.leak_high_a if logic else rx.leak_low_a
        R1, R2, _C, V, current = _vertices(r1[sel], r2[sel], c[sel], rng, vcc)
        pin, pull, _ = _node(R1, R2, V, current, pressed, pull_up)
        if logic:
            worst, required = pin.min(axis=1), rx.rising_threshold[2]
            margin = worst - required
            room = vcc - required
        else:
            worst, required = pin.max(axis=1), rx.falling_threshold[0]
            margin = required - worst
            room = required
        needed = min(limits["leakage_headroom_margin"] * vcc, 0.5 * max(room, 0.0))
        out_margin[sel] = margin - needed
        out_pull[sel] = pull.max(axis=1)
        n1 = pin + current * R2
        out_contact[sel] = (np.abs(n1 - (0 * V if pull_up else V)) / RC_OHMS).min(axis=1)
    return out_margin, out_pull, high, out_contact


def _edge(r1, r2, c, press, pull_up, high_before, high_after, rx=RX):
    """(fastest, slowest, s/V at the slowest vertex's crossing) of one edge per row; times
    inf where not reached. The slope of v(t) = v_inf + (v0 - v_inf) exp(-t / tau) where it
    crosses vth is |v_inf - vth| / tau."""
    rising = high_after & ~high_before
    out = []
    rate = np.zeros_like(r1)
    for inner in (True, False):
        result = np.empty_like(r1)
        for up in (True, False):
            sel = rising == up
            if not sel.any():
                continue
            rng = rx.leak_high_a if up else rx.leak_low_a
            thr = rx.rising_threshold if up else rx.falling_threshold
            vth = (thr[0] if up else thr[2]) if inner else (thr[2] if up else thr[0])
            R1, R2, C, V, current = _vertices(r1[sel], r2[sel], c[sel], rng, rx.vcc)
            start = _node(R1, R2, V, current, not press, pull_up)[0]
            final, _, seen = _node(R1, R2, V, current, press, pull_up)
            direction = 1.0 if up else -1.0
            with np.errstate(divide="ignore", invalid="ignore"):
                t = seen * C * np.log((final - start) / (final - vth))
            ok = (direction * (vth - start) > 0) & (direction * (final - vth) > 0)
            t = np.where(ok, t, np.inf)
            result[sel] = t.min(axis=1) if inner else t.max(axis=1)
            if not inner:
                at = np.argmax(t, axis=1)
                rows = np.arange(at.size)
                rate[sel] = seen[rows, at] * C[rows, at] / np.abs(final[rows, at] - vth)
        out.append(result)
    return out[0], out[1], rate


def reference_passes(r1, r2, c, pull_up, bounce=BOUNCE, slack=0.0, rx=RX, limits=LIMITS, lead=True,
                     wetting=None):
    """Whether each row passes every stage rule (with a relative slack in its favour).

    rx: the receiver (a plain input adds slow-edge: the edge's s/V at the slowest
    vertex's crossing against its transition limit); limits: the rule limits; lead: the
    contact's first stage (on the others, the contact-level rules and the pull
    resistor's window are not checked: the rules' documentation).
    """
    ok = np.ones_like(r1, dtype=bool)
    for value in (r1, r2) if lead else (r2,):  # resistance-range
        ok &= (value >= limits["resistance_min"]) & (value <= limits["resistance_max"])
    levels = {}
    for pressed in (False, True):
        margin, pull, high, through = _level(r1, r2, c, pressed, pull_up, rx, limits)
        if pressed and lead and wetting is not None:  # contact-wetting: the least closed current
            ok &= through >= wetting * (1 - slack)
        ok &= margin >= -slack * rx.vcc  # leakage-headroom
        if lead:
            ok &= pull <= limits["pull_current_budget"] * (1 + slack)  # pullup-waste
        levels[pressed] = high
    for press in (True, False):
        before, after = levels[not press], levels[press]
        fast, slow, rate = _edge(r1, r2, c, press, pull_up, before, after, rx)
        need = bounce * limits["bounce_margin"]
        ok &= np.isinf(fast) | (fast >= need * (1 - slack))  # bounce-window
        ok &= np.isfinite(slow) & (slow <= limits["latency_limit"] * (1 + slack))  # response-latency
        if not rx.schmitt and rx.transition_limit_s_per_v is not None:  # slow-edge
            ok &= ~np.isfinite(slow) | (rate <= rx.transition_limit_s_per_v * (1 + slack))
    return ok


def brute_force(r1, r2, c, pull_up, bounce=BOUNCE, slack=0.0, rx=RX, limits=LIMITS, lead=True, wetting=None):
    """Every passing one- and two-part change, as (sort key, {designator: value})."""
    return passing_changes(
        {"R1": r1, "R2": r2, "C1": c}, {"R1": R_VALUES, "R2": R_VALUES, "C1": C_VALUES},
        lambda rows: reference_passes(rows["R1"], rows["R2"], rows["C1"], pull_up, bounce, slack, rx, limits,
                                      lead, wetting))


def order_key(change, present):
    """The stated order of a change: fewest parts, the least sum of |ln(new/old)|, the parts
    first in the stage's order (that of `present`), the lower values."""
    order = {k: i for i, k in enumerate(present)}
    return (len(change), round(sum(abs(math.log(v / present[k])) for k, v in change.items()), 9),
            tuple((order[k], change[k]) for k in sorted(change, key=order.get)))


def assert_first_in_order(change, present, robust):
    """No passing change of the reference (`robust`, in order) comes before `change` in the
    stated order (`order_key`)."""
    earlier = [item for item in robust if item[0] < order_key(change, present)]
    assert not earlier, f"search proposed {change}, but {earlier[0][1]} passes and comes first"


def passing_changes(present, grids, passes):
    """Every one- and two-part change of the parts in `present` over their value `grids` that
    `passes` (rows of values by designator -> one verdict per row), in the stated order."""
    out = []
    for names in [*itertools.combinations(present, 1), *itertools.combinations(present, 2)]:
        axes = np.meshgrid(*(grids[n][grids[n] != present[n]] for n in names), indexing="ij")
        cols = {n: a.ravel() for n, a in zip(names, axes, strict=True)}
        n = next(iter(cols.values())).size
        rows = {k: cols.get(k, np.full(n, v)) for k, v in present.items()}
        with np.errstate(divide="ignore", invalid="ignore"):
            ok = passes(rows)
        for i in np.flatnonzero(ok):
            change = {k: float(cols[k][i]) for k in names}
            out.append((order_key(change, present), change))
    return sorted(out, key=lambda item: item[0])


def _stage(r1, r2, c, pull_up, bounce=BOUNCE, schmitt=True, wetting=None):
    if pull_up:
        return rc_stage(r1=r1, r2=r2, c1=c, contact_=contact(bounce_s=bounce, wetting_a=wetting), schmitt=schmitt)
    circuit_r = (Resistor("R1", "n1", "0", r1, role="pull"), Resistor("R2", "n1", "in", r2, role="series"))
    from drc.board.stage import Stage, StageCircuit
    circuit = StageCircuit(circuit_r, (Capacitor("C1", "in", "0", c),), (), (RailSource("vcc", VCC, V_TOL),),
                           (Throw("vcc", "n1", "pressed", RC_OHMS),), "in")
    return Stage(contact(bounce_s=bounce, wetting_a=wetting), receiver(schmitt), "rc-schmitt" if schmitt else "rc",
                 ("R1", "R2", "C1"), circuit, circuit.nodes())


CASES = [
    # (R1, R2, C1, pull-up, bounce): the issue's example first, then stages needing each kind of change
    (10e3, 1e3, 100e-9, True, BOUNCE),
    (10e3, 22e3, 100e-9, True, BOUNCE),     # capacitor alone or a resistor alone
    (4.7e3, 4.7e3, 1e-6, True, BOUNCE),     # pull current over budget and bounce: two parts
    (100e3, 470.0, 1e-6, True, BOUNCE),     # both resistors outside the window: a resistor pair
    (100e3, 10e3, 10e-6, True, BOUNCE),     # latency too slow
    (2.2e3, 100e3, 220e-9, True, BOUNCE),   # pull-up wastes, series outside the window
    (10e3, 1e3, 10e-9, True, 0.020),        # a long bounce
    (8.2e3, 39e3, 1e-6, True, 0.200),       # a bounce longer than the latency limit: nothing passes
    (10e3, 1e3, 100e-9, False, BOUNCE),     # pull-down stage
    (1e3, 470.0, 47e-9, False, BOUNCE),
    (10e3, 100e3, 470e-9, True, BOUNCE),    # only the series resistor outside the window: it alone moves
    # A resistor pair cheaper than the cheapest resistor-and-capacitor change (0.636 against 0.871,
    # 0.950 against 1.085, 1.150 against 1.172): the pairs must be screened before a two-part answer.
    (43e3, 4.3e3, 1.8e-6, True, 0.005),
    (3.9e3, 1.5e3, 3.3e-6, True, 0.005),
    (15e3, 3.6e3, 3.9e-6, False, 0.005),
]


@pytest.mark.parametrize("r1, r2, c, pull_up, bounce", CASES)
def test_search_answer_is_the_brute_force_optimum(r1, r2, c, pull_up, bounce):
    stage = _stage(r1, r2, c, pull_up, bounce)
    solution, _count = search(stage, RX, LIMITS, "E24")
    robust = brute_force(r1, r2, c, pull_up, bounce, slack=-MARGIN)
    if solution is None:
        assert not robust, f"the search found nothing, the reference passes {robust[0]}"
        return
    change = {ch.designator: ch.new for ch in solution.changes}
    present = {"R1": r1, "R2": r2, "C1": c}
    rows = {k: np.array([change.get(k, v)]) for k, v in present.items()}
    assert reference_passes(rows["R1"], rows["R2"], rows["C1"], pull_up, bounce, slack=MARGIN)[0], change
    assert_first_in_order(change, present, robust)


def test_the_issue_example_is_found():
    # 10 kOhm / 1 kOhm / 100 nF into an HC14: a one- or two-part change exists (issue 13).
    stage = _stage(10e3, 1e3, 100e-9, True)
    solution, _ = search(stage, RX, LIMITS, "E24")
    assert solution is not None and len(solution.changes) == 2
    assert brute_force(10e3, 1e3, 100e-9, True)[0][1] == {ch.designator: ch.new for ch in solution.changes}


def test_reference_agrees_with_the_analysis_on_the_present_values():
    # The reference is the same maths: its verdict on each case's present values is the rules'.
    from drc.checks import run_stage_rules
    from tests.checks.builders import analysed
    for r1, r2, c, pull_up, bounce in CASES:
        result = analysed(_stage(r1, r2, c, pull_up, bounce), RX)
        passes = not run_stage_rules(result, LIMITS)
        assert reference_passes(np.array([r1]), np.array([r2]), np.array([c]), pull_up, bounce)[0] == passes


def test_a_held_part_outside_the_window_leaves_no_change():
    # R2 (100 kOhm) is outside the resistance-range window and held: every change of the other
    # parts fails that rule (the reference says so over the whole R1 x C1 plane), and so the
    # search proposes nothing rather than a change that moves the held part.
    stage = _stage(10e3, 100e3, 470e-9, True)
    r1, c = np.meshgrid(R_VALUES, C_VALUES, indexing="ij")
    assert not reference_passes(r1.ravel(), np.full(r1.size, 100e3), c.ravel(), True).any()
    solution, _count = search(stage, RX, LIMITS, "E24", fixed_parts=("R2",))
    assert solution is None


@pytest.mark.parametrize("r1, r2, c, pull_up, bounce", [(4.7e3, 4.7e3, 1e-6, True, BOUNCE),
                                                        (2.2e3, 100e3, 220e-9, True, BOUNCE),
                                                        (100e3, 10e3, 470e-9, True, BOUNCE)])
def test_a_later_stage_of_a_contact_is_searched_without_the_contact_level_rules(r1, r2, c, pull_up, bounce):
    # The contact's second receiver (Stage.lead False): pullup-waste and the pull resistor's
    # window speak on the first stage only, so a wasteful or out-of-window pull resistor may stay.
    from dataclasses import replace
    stage = replace(_stage(r1, r2, c, pull_up, bounce), lead=False)
    solution, _count = search(stage, RX, LIMITS, "E24")
    robust = brute_force(r1, r2, c, pull_up, bounce, slack=-MARGIN, lead=False)
    assert solution is not None and robust
    present = {"R1": r1, "R2": r2, "C1": c}
    change = {ch.designator: ch.new for ch in solution.changes}
    rows = {k: np.array([change.get(k, v)]) for k, v in present.items()}
    assert reference_passes(rows["R1"], rows["R2"], rows["C1"], pull_up, bounce, slack=MARGIN, lead=False)[0]
    assert_first_in_order(change, present, robust)


@pytest.mark.parametrize("r1, r2, c, pull_up", [(22e3, 22e3, 470e-9, True), (22e3, 10e3, 1e-6, False)])
def test_a_contact_needing_wetting_current_gets_the_first_passing_change(r1, r2, c, pull_up):
    # A contact class with a 0.3 mA wetting minimum (contact-wetting: the least current through the
    # closed contact, Ohm's law at every vertex): the pull resistor must come down far enough.
    wetting = 0.3e-3
    stage = _stage(r1, r2, c, pull_up, wetting=wetting)
    solution, _count = search(stage, RX, LIMITS, "E24")
    robust = brute_force(r1, r2, c, pull_up, slack=-MARGIN, wetting=wetting)
    assert solution is not None and robust
    present = {"R1": r1, "R2": r2, "C1": c}
    change = {ch.designator: ch.new for ch in solution.changes}
    rows = {k: np.array([change.get(k, v)]) for k, v in present.items()}
    assert reference_passes(rows["R1"], rows["R2"], rows["C1"], pull_up, slack=MARGIN, wetting=wetting)[0]
    assert_first_in_order(change, present, robust)
    # The reference's least closed current is the analysis' on the present values (Ohm's law).
    from tests.checks.builders import analysed
    through = _level(np.array([r1]), np.array([r2]), np.array([c]), True, pull_up)[3][0]
    assert analysed(stage, RX).contact_current_a == pytest.approx(through, rel=1e-9)


def test_without_a_window_the_resistors_come_from_10_ohm_to_10_megohm():
    # DEVELOPERS.md ("fix search"): resistors from the series inside the resistance-range
    # window, 10 Ohm-10 MOhm when the limits set none; capacitors E12 1 pF-10 mF. The values
    # are IEC 60063's, through `eseries`.
    from drc.design.complete import search_vars
    limits = {k: v for k, v in LIMITS.items() if k not in ("resistance_min", "resistance_max")}
    found = {v.designator: v.candidates for v in search_vars(_stage(10e3, 1e3, 100e-9, True), "E24", "E12", limits)}
    assert list(found) == ["R1", "R2", "C1"]
    for name in ("R1", "R2"):
        assert np.allclose(found[name], list(iec.erange(iec.E24, 10.0, 10e6)), rtol=1e-12)
    assert np.allclose(found["C1"], C_VALUES, rtol=1e-12)
    # With a window set, the window's values only.
    found = {v.designator: v.candidates for v in search_vars(_stage(10e3, 1e3, 100e-9, True), "E24", "E12", LIMITS)}
    assert np.allclose(found["R2"], R_VALUES, rtol=1e-12)
