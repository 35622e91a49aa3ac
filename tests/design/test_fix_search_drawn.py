"""The fix search's answer is the brute-force optimum on stages drawn at random.

Outside reference: the brute force of tests/design/test_fix_completeness.py
(node equations and the RC law by hand, every corner, E-series values from
IEC 60063 through `eseries`), on stages hypothesis draws (E24 resistors
from 470 Ω to 220 kΩ, E12 capacitors from 1 nF to 22 µF, pull-up or
pull-down, a 5, 10 or 20 ms bounce) rather than the ten written there: the
search's order (fewest parts, then the sum of |ln(new/old)|, then stage
order and lower values) must give the first change the reference passes.
"""

from __future__ import annotations

import eseries as iec
import numpy as np
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from drc.design.fixes import search
from tests.checks.builders import LIMITS
from tests.design.test_fix_completeness import MARGIN, RX, _stage, assert_first_in_order, brute_force, reference_passes

RESISTORS = sorted(iec.erange(iec.E24, 470.0, 220e3))
CAPACITORS = sorted(iec.erange(iec.E12, 1e-9, 22e-6))


@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.sampled_from(RESISTORS), st.sampled_from(RESISTORS), st.sampled_from(CAPACITORS), st.booleans(),
       st.sampled_from([0.005, 0.010, 0.020]))
def test_the_search_answer_is_the_first_passing_change(r1, r2, c, pull_up, bounce):
    solution, _count = search(_stage(r1, r2, c, pull_up, bounce), RX, LIMITS, "E24")
    robust = brute_force(r1, r2, c, pull_up, bounce, slack=-MARGIN)
    present = {"R1": r1, "R2": r2, "C1": c}
    rows = {k: np.array([v]) for k, v in present.items()}
    if reference_passes(rows["R1"], rows["R2"], rows["C1"], pull_up, bounce, slack=-MARGIN)[0]:
        return  # passes as it is: nothing to fix
    if solution is None:
        assert not robust, f"the search found nothing, the reference passes {robust[0]}"
        return
    change = {ch.designator: ch.new for ch in solution.changes}
    rows = {k: np.array([change.get(k, v)]) for k, v in present.items()}
    assert reference_passes(rows["R1"], rows["R2"], rows["C1"], pull_up, bounce, slack=MARGIN)[0], change
    assert_first_in_order(change, present, robust)
