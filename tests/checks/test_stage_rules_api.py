"""The stage rules run alone (what the fix search re-runs) give what the board run gives.

Source: the contract of drc.checks (DEVELOPERS.md, "How to add a rule"):
`run_stage_rules` is the stage rules of `run_rules` on one result, with the
same limits and selection; given the board, its findings carry the same
netlist locations. Two ways into one registry must agree.
"""

from __future__ import annotations

from drc.checks import get_rule, run_rules, run_stage_rules
from drc.checks.registry import RuleKind
from drc.config.settings import Config
from drc.pipeline import check_netlist_text, effective_limits

BOARD = """two keys
V1 +5V 0 DC 5
XU1 IN o1 IN2 o2 0 o3 0 o4 0 o5 0 o6 0 +5V 74HC14
R1 +5V SWN 10k
R2 SWN IN 39k
C1 IN 0 100n
SW1 SWN 0 TACTILE
R3 +5V IN2 330
SW2 IN2 0 TACTILE
"""


def stage_ids(findings):
    return [(f.rule, f.board, f.contact, f.receiver, f.parts, f.location, f.related) for f in findings
            if get_rule(f.rule).kind == RuleKind.STAGE]


def test_stage_rules_alone_equal_the_board_run():
    board, results, _findings = check_netlist_text(BOARD, "two.cir")
    limits = effective_limits(Config())
    for selected in (None, {"bounce-window"}, {"pullup-waste", "resistance-range"}, set()):
        whole = run_rules(board, results, limits, selected)
        alone = [f for r in results for f in run_stage_rules(r, limits, selected, board=board)]
        assert stage_ids(alone) == stage_ids(whole)
        bare = [f for r in results for f in run_stage_rules(r, limits, selected)]
        assert [(f.rule, f.contact, f.parts) for f in bare] == [(f.rule, f.contact, f.parts) for f in alone]
        assert all(f.location is not None for f in alone)
    assert {f.rule for r in results for f in run_stage_rules(r, limits)} >= {"bounce-window", "pullup-waste"}


def test_limits_are_read_per_call():
    board, results, _findings = check_netlist_text(BOARD, "two.cir")
    limits = effective_limits(Config())
    strict = dict(limits, pull_current_budget=1e-9)
    loose = dict(limits, pull_current_budget=1.0)
    count = [len([f for r in results for f in run_stage_rules(r, lim, {"pullup-waste"})]) for lim in (strict, loose)]
    assert count == [2, 0]


def test_without_a_board_both_ways_give_the_same_findings():
    # No board: no board name and no netlist locations, the same through either way in.
    board, results, _findings = check_netlist_text(BOARD, "two.cir")
    limits = effective_limits(Config())
    for selected in (None, {"bounce-window", "pullup-waste"}):
        whole = run_rules(None, results, limits, selected)
        alone = [f for r in results for f in run_stage_rules(r, limits, selected)]
        assert alone == whole and whole
        assert all(f.board == "" for f in whole)


def test_a_board_without_a_path_has_no_name():
    from dataclasses import replace
    board, results, _findings = check_netlist_text(BOARD, "two.cir")
    limits = effective_limits(Config())
    nameless = replace(board, path="")
    whole = run_rules(nameless, results, limits, {"pullup-waste"})
    alone = [f for r in results for f in run_stage_rules(r, limits, {"pullup-waste"}, board=nameless)]
    assert whole and stage_ids(alone) == stage_ids(whole) and all(f.board == "" for f in alone)
