"""The complete search screens pairs of resistors only up to the cost it needs, and all of them.

drc/design/complete.py states how it stays cheap: "pairs of resistors only up
to the cost of the best two-part change already found", and
`CompleteSearch._pairs` states what it returns: "pairs of resistors whose
change costs more than `above` and at most `bound`", dropping only cells of
the pair plane where one figure fails its limit at all four corners. A spy
on `_pairs` records the bounds it is given and the blocks it returns (no
timing, no count of analyses). References: the brute force of
test_fix_completeness.py (every one- and two-part change judged by node
equations and the RC law at every vertex; its passing resistor-and-capacitor
changes are options before any pair is screened, so the best two-part option
then costs at most the cheapest of them), costs by hand (the sum of
|ln(new/old)| over the parts changed), the pair plane enumerated by hand
(E24 x E24 in the 1 kOhm-50 kOhm window, IEC 60063 through `eseries`). The
cases are test_fix_completeness.py's stages whose answer moves two parts
(their answers are checked there).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from drc.design.complete import CompleteSearch
from drc.design.screen import Request, screen_all
from tests.checks.builders import LIMITS
from tests.design.test_fix_completeness import BOUNCE, MARGIN, R_VALUES, RX, _stage, brute_force
from tests.design.test_fix_search_refuted import complete_search

TWO_PART = [  # (R1, R2, C1, pull-up, bounce) of test_fix_completeness.CASES answered by two parts
    (10e3, 1e3, 100e-9, True, BOUNCE),
    (4.7e3, 4.7e3, 1e-6, True, BOUNCE),
    (43e3, 4.3e3, 1.8e-6, True, 0.005),
    (3.9e3, 1.5e3, 3.3e-6, True, 0.005),
    (15e3, 3.6e3, 3.9e-6, False, 0.005),
]


def _run(stage, limits=LIMITS):
    return complete_search(stage, RX, limits)


def _cost(change, present):
    return sum(abs(math.log(v / present[k])) for k, v in change.items())


def _spied(monkeypatch):
    calls = []
    original = CompleteSearch._pairs

    def spy(self, bound, above):
        block = yield from original(self, bound, above)
        calls.append((bound, above, block))
        return block

    monkeypatch.setattr(CompleteSearch, "_pairs", spy)
    return calls


@pytest.mark.parametrize("r1, r2, c, pull_up, bounce", TWO_PART)
def test_pairs_are_screened_only_up_to_the_cost_of_a_two_part_change_found(r1, r2, c, pull_up, bounce,
                                                                         monkeypatch):
    # Every passing change of one resistor with the capacitor is an option of the search
    # before any pair is screened (the screen is optimistic, and the full analysis refutes
    # no passing change), so the best two-part option when pairs are screened costs at most
    # the cheapest of them: no pair costing more is asked for or held in a block.
    # Reference: the brute force of test_fix_completeness.py (node equations and the RC law
    # at every vertex, every one- and two-part change), costs by hand (sum of |ln(new/old)|).
    calls = _spied(monkeypatch)
    s = _run(_stage(r1, r2, c, pull_up, bounce))
    present = {"R1": r1, "R2": r2, "C1": c}
    with_cap = [ch for _key, ch in brute_force(r1, r2, c, pull_up, bounce, slack=-MARGIN)
                if len(ch) == 2 and "C1" in ch]
    assert with_cap and calls  # the cases need pairs screened and have such a change
    limit = min(_cost(ch, present) for ch in with_cap)
    for bound, _above, _block in calls:
        assert bound <= limit + 1e-9, (bound, limit)
    names = [v.designator for v in s.rvars]
    for b in s.blocks:
        for (i, j), (x, y) in zip(b.var, b.val, strict=True):
            if i >= 0 and j >= 0:
                cost = _cost({names[i]: x, names[j]: y}, present)
                assert cost <= limit + 1e-9, (names[i], x, names[j], y, cost, limit)


@pytest.mark.parametrize("r1, r2, c, pull_up, bounce", TWO_PART)
def test_a_pair_block_holds_every_pair_in_its_cost_range_the_screen_passes(r1, r2, c, pull_up, bounce,
                                                                           monkeypatch):
    # `_pairs(bound, above)`: every pair of window values costing more than `above` and at
    # most `bound` is in the block unless a figure fails its limit in its cell (then it fails
    # at the pair itself too, the figures being monotonic in each value); and no other pair.
    # Reference: the pair plane enumerated by hand (E24 x E24 in the window, costs by hand),
    # each pair screened on its own with the vertices the screen holds at the search's end
    # (a superset of those it held then: a pair that passes them passed then).
    calls = _spied(monkeypatch)
    s = _run(_stage(r1, r2, c, pull_up, bounce))
    assert calls
    present = {"R1": r1, "R2": r2}
    a, b = np.meshgrid(R_VALUES[R_VALUES != r1], R_VALUES[R_VALUES != r2], indexing="ij")
    a, b = a.ravel(), b.ravel()
    cost = np.abs(np.log(a / r1)) + np.abs(np.log(b / r2))
    X = s.screen.rows(a.size)
    X[:, s.screen.column["R1"]], X[:, s.screen.column["R2"]] = a, b
    fails = screen_all([Request(s.screen, X, every_figure=True)])[0].verdicts.fails
    checked = 0
    for bound, above, block in calls:
        got = {(float(x), float(y)) for x, y in block.val}
        inside = (cost <= bound - 1e-9) & (cost > above + 1e-9)
        for k in np.flatnonzero(inside & ~fails.any(axis=1)):
            assert (a[k], b[k]) in got, (a[k], b[k], cost[k], bound, above)
            checked += 1
        for x, y in got:
            c2 = _cost({"R1": x, "R2": y}, present)
            assert above - 1e-9 < c2 <= bound + 1e-9, (x, y, c2, bound, above)
    if all(m.unit == "Ω" for m in s.found.moves):  # a resistor pair passes: some pairs pass every figure
        assert checked
