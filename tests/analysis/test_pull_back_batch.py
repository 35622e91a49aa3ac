"""The closure-and-opening readings of many edges read together (first_edge.pull_backs,
one stacked solve per circuit structure) are the readings of each edge read alone.

Source of truth: `first_edge.pull_back` of each edge on its own, with every memo
emptied first (a batch of one, its own rows only). The stages: hypothesis draws
them in every batchable shape (tests/analysis/test_batch_agreement.py), with
values, tolerances, receivers and hysteresis of their own, so that one batch
holds stages of several structures, both edge directions, readings that apply
and readings that do not; and the stages of the demo boards and of a generated
board. The bounce-window rule's batch step (`prepare`) must leave every finding
as the rule finds it without it.
"""

from __future__ import annotations

import math
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from drc.analysis import first_edge
from drc.caching import clear_caches
from drc.checks import bounce_window
from drc.pipeline import CheckOptions, check_board_in_memory, check_netlist_in_memory
from tests.analysis.test_batch_agreement import batchable_stages, receivers
from tests.analysis.test_reuse import generate

ROOT = Path(__file__).resolve().parents[2]
# The demo boards with closure-and-opening readings that check quickly (footswitch_unit
# has some too, but its exact-solver stages take seconds).
QUICK_DEMOS = [ROOT / "boards" / "lx24" / name for name in ("front_panel.cir", "remote_pod.cir")]
REL = 1e-9  # rows solved in stacks of other sizes: agreement to the last bits is expected


def _same(a, b) -> bool:
    if a is None or b is None:
        return a is None and b is None
    for name in a.__slots__:
        x, y = getattr(a, name), getattr(b, name)
        if isinstance(x, dict):
            if x.keys() != y.keys() or not all(_close(x[k], y[k]) for k in x):
                return False
        elif isinstance(x, float) and not _close(x, y):
            return False
        elif not isinstance(x, float) and x != y:
            return False
    return True


def _close(x, y) -> bool:
    if x is None or y is None:
        return x is None and y is None
    return x == y or math.isclose(x, y, rel_tol=REL, abs_tol=1e-15)


def _alone(wanted, min_closure_s=first_edge.MIN_CLOSURE_S):
    out = []
    for stage, rx, edge in wanted:
        clear_caches()
        out.append(first_edge.pull_back(stage, rx, edge, min_closure_s))
    return out


def _together(wanted, min_closure_s=first_edge.MIN_CLOSURE_S):
    clear_caches()
    return first_edge.pull_backs(wanted, min_closure_s)


def _assert_same(together, alone):
    assert len(together) == len(alone)
    differ = [(i, x, y) for i, (x, y) in enumerate(zip(together, alone, strict=True)) if not _same(x, y)]
    assert not differ, differ[:3]


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.lists(st.tuples(batchable_stages(), receivers(), st.sampled_from(["press", "release"])),
                min_size=1, max_size=8),
       st.sampled_from([0.0, 1e-6, 5e-5]))
def test_a_batch_gives_each_edge_its_own_reading(drawn, closure):
    wanted = [(stage, rx, edge) for stage, rx, edge in drawn]
    _assert_same(_together(wanted, closure), _alone(wanted, closure))


def _board_wanted(path):
    check = check_board_in_memory(path, CheckOptions(propose_fixes=False))
    return [(r.stage, r.receiver_electrical, e) for r in check.results if r.receiver_electrical is not None
            for e in ("press", "release")]


def test_demo_and_generated_boards_read_alike_together_and_alone(tmp_path):
    board = tmp_path / "generated.cir"
    board.write_text(generate(2000, 7), encoding="utf-8")
    wanted = [w for path in [*QUICK_DEMOS, board] for w in _board_wanted(path)]
    together = _together(wanted)
    assert sum(b is not None for b in together) >= 20  # readings that apply, of several designs
    _assert_same(together, _alone(wanted))


@pytest.mark.parametrize("board", QUICK_DEMOS, ids=lambda p: p.name)
def test_the_rule_finds_the_same_with_and_without_its_batch_step(board, monkeypatch):
    clear_caches()
    with_batch = check_board_in_memory(board, CheckOptions(propose_fixes=False)).findings
    clear_caches()
    monkeypatch.setattr(bounce_window, "pull_backs", lambda *args, **kwargs: None)
    without = check_board_in_memory(board, CheckOptions(propose_fixes=False)).findings
    assert with_batch == without


def test_the_rule_on_a_generated_board_with_and_without_its_batch_step(monkeypatch):
    from drc.config.settings import Config
    from drc.netlist.reader import read_netlist_text
    from drc.pipeline import library
    text = generate(2000, 11)
    options = CheckOptions(propose_fixes=False)

    def findings():
        clear_caches()
        netlist = read_netlist_text(text, "<generated>", keep_as_part=library().is_known_subcircuit)
        return check_netlist_in_memory(netlist, Config(), options, "<generated>").findings

    with_batch = findings()
    assert any(f.rule == "bounce-window" for f in with_batch)
    monkeypatch.setattr(bounce_window, "pull_backs", lambda *args, **kwargs: None)
    assert findings() == with_batch
