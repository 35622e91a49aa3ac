"""The complete search when a refuted option teaches the screen new vertices.

The numpy screen (drc.design.screen) judges a candidate at the vertices of
the tolerance box that were worst for values already analysed. Where the
worst vertex moves with the values, the screen passes a candidate the full
analysis refutes; that candidate's worst vertices then join the screen and
every block of candidates is screened again (`CompleteSearch._receive`,
`complete._split_verdicts`). The answer must still be the first passing
change in the stated order.

Where the worst vertex moves: a CMOS input's leakage is two-sided, +-1 uA over
temperature (JESD7A for 74HC, as rules/families.toml's HC entry quotes it), and
with resistors of hundreds of kilohms to megohms the leakage times the
resistance is a good part of a volt. An edge's time
t = tau ln((v_inf - v0) / (v_inf - vth)) (the RC law) then no longer falls
monotonically with the rail: the sign of its slope in V is that of
-(vth + I R2), so the fastest vertex sits at the high rail for small
resistors and at the low rail for large ones. The window is widened to 10 MOhm
(the test's own limits) so the search may reach such values.

Outside reference: the brute force of tests/design/test_fix_completeness.py
(node equations and the RC law v(t) = v_inf + (v0 - v_inf) exp(-t / tau) by
hand at every vertex of the tolerance box, *Lessons In Electric Circuits*,
Vol. I, ch. 16; E-series values from IEC 60063 through `eseries`), over the
same grid: resistors E24 1 kOhm-10 MOhm, capacitors E12 1 pF-10 mF.
"""

from __future__ import annotations

from dataclasses import replace

import eseries as iec
import numpy as np
import pytest

import drc.design.complete as complete
from drc.design.fixes import search
from tests.checks.builders import LIMITS, hc
from tests.design.test_fix_completeness import (
    C_VALUES,
    MARGIN,
    _stage,
    assert_first_in_order,
    passing_changes,
    reference_passes,
)

LIMITS_WIDE = {**LIMITS, "resistance_max": 10e6}
R_WIDE = np.array(list(iec.erange(iec.E24, 1e3, 10e6)))
# 74HC Schmitt input (tests/checks/builders.py) with the two-sided leakage of JESD7A.
RX = replace(hc(), leak_high_a=(-1e-6, 1e-6), leak_low_a=(-1e-6, 1e-6))


def brute_force(r1, r2, c, pull_up, bounce, slack, rx=RX, limits=LIMITS_WIDE):
    """Every passing one- and two-part change on the wide grid, in the stated order."""
    return passing_changes(
        {"R1": r1, "R2": r2, "C1": c}, {"R1": R_WIDE, "R2": R_WIDE, "C1": C_VALUES},
        lambda rows: reference_passes(rows["R1"], rows["R2"], rows["C1"], pull_up, bounce, slack, rx, limits))


@pytest.fixture
def relearned(monkeypatch):
    """The sizes of the blocks screened again after a refutation taught the screen vertices."""
    seen: list[list[int]] = []
    original = complete._split_verdicts

    def spy(verdicts, sizes):
        seen.append(list(sizes))
        return original(verdicts, sizes)

    monkeypatch.setattr(complete, "_split_verdicts", spy)
    return seen


CASES = [
    # (R1, R2, C1, pull-up, bounce): megohm parts the search moves into the kilohms
    (18e3, 1.6e6, 150e-9, True, 0.001),      # the series resistor alone
    (43e3, 5.6e6, 3.3e-6, True, 0.010),      # the series resistor and the capacitor
    (2.0e6, 9.1e3, 4.7e-9, True, 0.005),     # the pull-up and the capacitor
    (1.1e6, 75e3, 68e-9, False, 0.005),      # pull-down stage
    (680e3, 750e3, 3.9e-6, True, 0.005),     # a resistor pair, after pairs are screened
    (4.3e6, 680e3, 150e-9, False, 0.001),    # a resistor pair on a pull-down stage
    (15e3, 2.2e6, 330e-9, False, 0.010),     # nothing passes
]


@pytest.mark.parametrize("r1, r2, c, pull_up, bounce", CASES)
def test_a_refutation_that_teaches_vertices_keeps_the_first_passing_change(r1, r2, c, pull_up, bounce,
                                                                          relearned):
    stage = _stage(r1, r2, c, pull_up, bounce)
    solution, _count = search(stage, RX, LIMITS_WIDE, "E24")
    assert relearned, "the case reaches what it is for: a refutation that teaches the screen"
    robust = brute_force(r1, r2, c, pull_up, bounce, slack=-MARGIN)
    if solution is None:
        assert not robust, f"the search found nothing, the reference passes {robust[0]}"
        return
    present = {"R1": r1, "R2": r2, "C1": c}
    change = {ch.designator: ch.new for ch in solution.changes}
    rows = {k: np.array([change.get(k, v)]) for k, v in present.items()}
    with np.errstate(divide="ignore", invalid="ignore"):
        assert reference_passes(rows["R1"], rows["R2"], rows["C1"], pull_up, bounce, MARGIN, RX, LIMITS_WIDE)[0]
    assert_first_in_order(change, present, robust)


@pytest.mark.parametrize("r1, r2, c, pull_up, bounce", CASES)
def test_the_reference_agrees_with_the_analysis_with_two_sided_leakage(r1, r2, c, pull_up, bounce):
    # The reference is the same maths with the leakage of either sign: its verdict on the
    # present values and on the brute force's first answer is the rules'.
    from drc.checks import run_stage_rules
    from tests.checks.builders import analysed
    robust = brute_force(r1, r2, c, pull_up, bounce, slack=-MARGIN)
    values = [{"R1": r1, "R2": r2, "C1": c}] + ([{"R1": r1, "R2": r2, "C1": c, **robust[0][1]}] if robust else [])
    for v in values:
        passes = not run_stage_rules(analysed(_stage(v["R1"], v["R2"], v["C1"], pull_up, bounce), RX), LIMITS_WIDE)
        with np.errstate(divide="ignore", invalid="ignore"):
            got = reference_passes(np.array([v["R1"]]), np.array([v["R2"]]), np.array([v["C1"]]), pull_up, bounce,
                                   0.0, RX, LIMITS_WIDE)[0]
        assert got == passes, v


def test_verdicts_of_stacked_blocks_go_back_to_their_blocks():
    # After a refutation every live block is screened again in one request; each block gets
    # back its own rows: the stacked arrays cut at the cumulative sizes (numpy slicing by hand).
    from drc.design.screen import Verdicts
    sizes = [2, 3, 1, 4]
    n = sum(sizes)
    rng = np.random.default_rng(13)
    stacked = Verdicts(rng.random(n) < 0.5, rng.random(n), rng.random(n) + 1.0, rng.random((n, 5)) < 0.5)
    parts = complete._split_verdicts(stacked, sizes)
    assert len(parts) == len(sizes)
    start = 0
    for part, size in zip(parts, sizes, strict=True):
        rows = slice(start, start + size)
        assert np.array_equal(part.fixed_ok, stacked.fixed_ok[rows])
        assert np.array_equal(part.scale_lo, stacked.scale_lo[rows])
        assert np.array_equal(part.scale_hi, stacked.scale_hi[rows])
        assert np.array_equal(part.fails, stacked.fails[rows])
        start += size


# A plain input with the same two-sided leakage and a slow transition limit (the test's own
# receivers: 0.5 ms and 0.1 ms 10-90 % over 0.8 x 4.5 V, so that megohm stages can pass
# slow-edge at all). Here a round confirms several options: the first teaches the screen a
# vertex that rules out options still to come (its own row fails the screen afterwards), the
# others are refuted by slow-edge, which the screen does not restate, and teach nothing. The
# blocks must be screened again after such a round, whatever its last proposal taught: else
# the ruled-out options come back round after round (a row whose own full screen fails is
# not marked refuted) and the confirmations run out before the answer.
def _plain(transition_s):
    return replace(hc(schmitt=False), leak_high_a=RX.leak_high_a, leak_low_a=RX.leak_low_a,
                   transition_limit_s_per_v=transition_s / (0.8 * 4.5))


PLAIN_CASES = [
    # (R1, R2, C1, pull-up, bounce, latency limit, transition limit)
    (6.2e3, 3.9e6, 18e-12, False, 5e-6, 50e-6, 0.5e-3),
    (10e3, 5.1e6, 22e-12, False, 5e-6, 50e-6, 0.1e-3),
    (200e3, 2.7e6, 12e-12, True, 5e-6, 1e-3, 0.5e-3),
]


@pytest.mark.parametrize("r1, r2, c, pull_up, bounce, latency, transition", PLAIN_CASES)
def test_a_round_that_teaches_before_its_last_proposal_keeps_the_first_passing_change(
        r1, r2, c, pull_up, bounce, latency, transition):
    rx, limits = _plain(transition), {**LIMITS_WIDE, "latency_limit": latency}
    robust = brute_force(r1, r2, c, pull_up, bounce, -MARGIN, rx, limits)
    assert robust, "the reference finds a passing change"
    solution, _count = search(_stage(r1, r2, c, pull_up, bounce, schmitt=False), rx, limits, "E24")
    assert solution is not None, f"the search found nothing, the reference passes {robust[0]}"
    present = {"R1": r1, "R2": r2, "C1": c}
    change = {ch.designator: ch.new for ch in solution.changes}
    assert_first_in_order(change, present, robust)
    # The reference's verdicts on the present values and its first passing change are the rules'.
    from drc.checks import run_stage_rules
    from tests.checks.builders import analysed
    for v in (present, {**present, **robust[0][1]}):
        stage = _stage(v["R1"], v["R2"], v["C1"], pull_up, bounce, schmitt=False)
        passes = not run_stage_rules(analysed(stage, rx), limits)
        with np.errstate(divide="ignore", invalid="ignore"):
            got = reference_passes(*(np.array([v[k]]) for k in ("R1", "R2", "C1")), pull_up, bounce, 0.0, rx, limits)
        assert got[0] == passes, v
