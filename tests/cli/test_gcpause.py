"""The collector pause of the command line (drc.cli.gcpause), checked against
the interpreter's own gc counters (the `gc` module's documented API): the
collector is off inside the block and back on after it; what the block made
is not left for the first young collection to walk (the generation-0 count
starts again near zero) and is not frozen for good (a cycle made inside is
collected by the next full collection, and nothing stays frozen).
"""

import gc
import weakref

from drc.cli.gcpause import collection_paused


class _Node:
    def __init__(self) -> None:
        self.other: object = None


def test_pause_and_resume_leave_nothing_frozen_and_nothing_to_walk():
    assert gc.isenabled()
    with collection_paused():
        assert not gc.isenabled()
        made = [[i] for i in range(20_000)]  # tracked containers, far above gen 0's threshold
        a, b = _Node(), _Node()
        a.other, b.other = b, a  # a cycle: only the collector frees it
        probe = weakref.ref(a)
        del a, b
    assert gc.isenabled()
    assert gc.get_freeze_count() == 0
    assert gc.get_count()[0] < gc.get_threshold()[0]  # the young generation does not hold the block's objects
    assert gc.is_tracked(made[0]) and any(x is made[0] for x in gc.get_objects(generation=2))
    gc.collect()
    assert probe() is None


def test_a_disabled_collector_stays_disabled():
    gc.disable()
    try:
        with collection_paused():
            assert not gc.isenabled()
        assert not gc.isenabled()
    finally:
        gc.enable()
