"""The closure-and-opening reading (analysis.first_edge.pull_back) of a stage met
before under other names is the very reading of a fresh computation, renamed.

Source of truth: the computation itself with the memo emptied before each
stage (drc.caching.clear_caches); the keypad of test_reuse repeats one design
under three sets of designators and nets, plus a fourth with another capacitor.
"""

from __future__ import annotations

import pytest

from drc.analysis import first_edge
from drc.caching import clear_caches
from tests.analysis.test_reuse import KEYPAD, _stages


@pytest.mark.parametrize("edge", ["press", "release"])
def test_reused_reading_equals_a_fresh_one_renamed(edge):
    stages, rxs = _stages(KEYPAD)
    fresh = []
    for stage, rx in zip(stages, rxs, strict=True):
        clear_caches()
        fresh.append(first_edge.pull_back(stage, rx, edge))
    clear_caches()
    computed = []
    real = first_edge._read

    def counting(wanted, which, min_closure_s):
        computed.extend(wanted[i][0].contact.designator for i in which)
        return real(wanted, which, min_closure_s)

    first_edge._read = counting
    try:
        again = [first_edge.pull_back(stage, rx, edge) for stage, rx in zip(stages, rxs, strict=True)]
    finally:
        first_edge._read = real
    assert again == fresh
    assert any(back is not None for back in fresh)
    assert len(computed) == 2  # one per design: SW1's (shared by SW2, SW3) and SW4's
    names = {k.partition(":")[2] or k for back in again if back is not None for k in back.corner_fastest}
    assert names & {"R11", "R21"}  # the reused readings carry their own stage's designators
