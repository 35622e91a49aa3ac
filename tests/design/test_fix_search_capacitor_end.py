"""The complete search where the capacitor a candidate needs lies beyond the searched range.

The capacitors are searched from the series between 1 pF and 10 mF
(drc/design/complete.py, CAPACITOR_BOUNDS; DEVELOPERS.md "fix search"). A stage
whose capacitor sits near the top of that range, with a bounce long enough
that its present resistors would need a capacitor above 10 mF, has no
capacitor option for that row: the search must go on to the other changes and
answer the first passing one in the stated order.

Outside reference: the brute force of tests/design/test_fix_completeness.py
(node equations and the RC law v(t) = v_inf + (v0 - v_inf) exp(-t / tau) by
hand at every vertex of the tolerance box, *Lessons In Electric Circuits*,
Vol. I, ch. 16; E24 resistors 1 kOhm-50 kOhm and E12 capacitors 1 pF-10 mF
from IEC 60063 through `eseries`), with the test's own limits: a bounce of
10 s or 20 s against a latency limit of 10 000 s (so that slow edges pass).
The cases: 10 kOhm / 1 kOhm / 4.7 mF pull-ups into the 74HC Schmitt input
(C1 can grow by 10 / 4.7 = 2.13 at most); their present row's screened
capacitor interval starts above that (the press, discharged through the
contact's 0.1 ohm, passes bounce-window only by the closure-and-opening
reading, which needs a larger capacitor), which the test checks first. The
reference's verdicts on the present values and on its first passing change
are the rules' (second test).
"""

from __future__ import annotations

import numpy as np
import pytest

from drc.checks import run_stage_rules
from tests.checks.builders import LIMITS, analysed
from tests.design.test_fix_completeness import MARGIN, RX, _stage, brute_force, order_key, reference_passes
from tests.design.test_fix_search_pairs import _run

LIMITS_SLOW = {**LIMITS, "latency_limit": 1e4}
CASES = [(10e3, 1e3, 4.7e-3, 10.0), (10e3, 1e3, 4.7e-3, 20.0)]


@pytest.mark.parametrize("r1, r2, c, bounce", CASES)
def test_a_row_whose_capacitor_lies_beyond_the_range_has_no_capacitor_option(r1, r2, c, bounce):
    s = _run(_stage(r1, r2, c, True, bounce), LIMITS_SLOW)
    # The present row needs more capacitance than the range holds (its screened interval
    # starts above 10 mF / C1).
    assert s.verdicts[0].scale_lo[0] * c > 10e-3
    robust = brute_force(r1, r2, c, True, bounce, slack=-MARGIN, limits=LIMITS_SLOW)
    assert robust
    present = {"R1": r1, "R2": r2, "C1": c}
    change = {m.designator: m.new for m in s.found.moves}
    assert change == robust[0][1], (change, robust[0])
    assert order_key(change, present) == robust[0][0]


@pytest.mark.parametrize("r1, r2, c, bounce", CASES)
def test_the_reference_is_the_rules_on_these_stages(r1, r2, c, bounce):
    # The reference's verdict on the present values and on its first passing change is the rules'.
    robust = brute_force(r1, r2, c, True, bounce, slack=-MARGIN, limits=LIMITS_SLOW)
    for v in ({"R1": r1, "R2": r2, "C1": c}, {"R1": r1, "R2": r2, "C1": c, **robust[0][1]}):
        fired = run_stage_rules(analysed(_stage(v["R1"], v["R2"], v["C1"], True, bounce), RX), LIMITS_SLOW)
        rows = (np.array([v[k]]) for k in ("R1", "R2", "C1"))
        assert reference_passes(*rows, True, bounce, limits=LIMITS_SLOW)[0] == (not fired), (v, fired)
