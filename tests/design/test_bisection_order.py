"""The bounded fallback search (drc.design.bisection) prefers the cheapest change it finds.

Outside reference: the brute force of tests/design/test_fix_completeness.py
(node equations and the RC law by hand over every corner, E-series values
from IEC 60063 through `eseries`). On stages where a one-part change passes,
the fallback's answer must be the cheapest passing one-part change in the
stated order (fewest parts, then the sum of |ln(new/old)|); where none does,
the fallback (bounded) need not find the cheapest two-part change, but its
answer must pass the reference.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from drc.analysis.stage_analysis import analyse_stage
from drc.design import bisection, fixes
from tests.checks.builders import LIMITS
from tests.design.test_fix_completeness import CASES, MARGIN, RX, _stage, brute_force, reference_passes

# Stages where more than one part passes alone (found with the brute force): the
# cheaper must win (C1 at a cost of 0.557 before R2 at 0.573, then R2 at 0.167 before C1 at 0.175).
SEVERAL = [(47e3, 22e3, 470e-9, True, 0.010), (47e3, 33e3, 470e-9, True, 0.010)]


@pytest.mark.parametrize("r1, r2, c, pull_up, bounce", CASES + SEVERAL)
def test_the_fallback_takes_the_cheapest_change_it_finds(r1, r2, c, pull_up, bounce):
    stage = _stage(r1, r2, c, pull_up, bounce)
    job = fixes._job(stage, RX, LIMITS, "E24", frozenset(), analyse_stage(stage, RX))
    moves, _result, _count = bisection.search(job.stage, job.rx, LIMITS, job.vars_, set(), 400)
    robust = brute_force(r1, r2, c, pull_up, bounce, slack=-MARGIN)
    singles = [item for item in robust if item[0][0] == 1]
    if moves is None:
        assert not singles
        return
    change = {m.designator: m.new for m in moves}
    present = {"R1": r1, "R2": r2, "C1": c}
    rows = {k: np.array([change.get(k, v)]) for k, v in present.items()}
    assert reference_passes(rows["R1"], rows["R2"], rows["C1"], pull_up, bounce, slack=MARGIN)[0], change
    if singles:
        assert len(change) == 1
        cost = sum(abs(math.log(v / present[k])) for k, v in change.items())
        assert cost <= singles[0][0][1] + 1e-9, (change, singles[0])
