"""The gate's decisions as one table: severity overrides, the fail level and what each
finding counts for, the board judgement (annotations before waivers) and the
baseline over a run."""

from dataclasses import replace
from datetime import date

import pytest

from drc.checks import run_rules
from drc.checks.findings import SEVERITIES, Severity, Suppression
from drc.config.settings import Waiver
from drc.errors import ExitStatus, SourceLocation
from drc.gate.baseline import Baseline, BaselineEntry
from drc.gate.decision import (
    Decision,
    decide,
    exit_status,
    judge_against_baseline,
    judge_board,
    run_fail_level,
    with_severities,
)
from tests.checks.builders import LIMITS, result
from tests.gate.builders import BOARD, finding

TODAY = date(2026, 1, 15)


def test_severity_override():
    res = result(pull_a=5e-3)  # over the 1 mA budget: a pullup-waste warning
    overridden = with_severities(run_rules(None, [res], LIMITS), {"pullup-waste": "error"})
    assert overridden[0].severity == "error" and set(SEVERITIES) >= {overridden[0].severity}
    assert isinstance(overridden[0].severity, Severity)
    untouched = with_severities(run_rules(None, [res], LIMITS), {"bounce-window": "note"})
    assert untouched[0].severity == "warning"


def test_severities_are_strings_with_an_order():
    assert [str(s) for s in SEVERITIES] == ["note", "warning", "error"]
    assert Severity.ERROR == "error" and f"{Severity.WARNING}" == "warning"
    assert [s.rank for s in SEVERITIES] == [0, 1, 2]


@pytest.mark.parametrize("command_line, config, expected", [
    ("note", "warning", "note"), (None, "warning", "warning"), (None, None, "error"),
])
def test_fail_level_command_line_then_config_then_error(command_line, config, expected):
    assert run_fail_level(command_line, config) == expected


ERROR = finding(severity="error")


@pytest.mark.parametrize("one, fail_level, decision", [
    (ERROR, "error", Decision.COUNTS),
    (finding(severity="warning"), "error", Decision.BELOW_FAIL_LEVEL),
    (finding(severity="warning"), "warning", Decision.COUNTS),
    (replace(ERROR, suppression=Suppression.WAIVER), "note", Decision.WAIVED),
    (replace(ERROR, suppression=Suppression.ANNOTATION), "note", Decision.WAIVED_IN_NETLIST),
    (replace(ERROR, suppression=Suppression.BASELINE), "note", Decision.BASELINED),
])
def test_decide(one, fail_level, decision):
    assert decide(one, fail_level) is decision


def test_exit_status_is_an_exit_status():
    assert exit_status([ERROR], None, False) is ExitStatus.FINDINGS
    assert exit_status([ERROR], None, True) is ExitStatus.OK


def test_judge_board_annotation_wins_over_waiver_and_severities_apply():
    waiver = Waiver(rule="bounce-window", parts=("SW1",), reason="r", author="a",
                    expires=date(2026, 12, 31), board=None, origin="drc.toml:9")
    judged = judge_board([finding(severity="error")], BOARD, TODAY, severities={"bounce-window": "note"},
                         annotations=[("bounce-window", ["SW1"], "why", SourceLocation(BOARD, 4))],
                         waivers=[waiver])
    assert judged.findings[0].suppression == Suppression.ANNOTATION
    assert judged.findings[0].severity == "note"
    assert judged.annotation_notes == ()
    assert judged.waiver_outcome is not None and judged.waiver_outcome.used == frozenset({0})


def test_judge_against_baseline_over_boards():
    entry = BaselineEntry(BOARD, "bounce-window", "SW1", "U1:1", ("C1", "R1"), Severity.ERROR, "m")
    gone = BaselineEntry(BOARD, "slow-edge", "SW9", "U1:9", (), Severity.ERROR, "m")
    baseline = Baseline("b.json", None, (entry, gone))  # no root: board paths as given
    new = finding("slow-edge")
    judged = judge_against_baseline([(BOARD, [finding(), new]), ("other.cir", [finding(board="other.cir")])],
                                    baseline)
    assert [f.suppression for f in judged.findings[0]] == [Suppression.BASELINE, None]
    assert (judged.matched, judged.new, judged.fixed) == (1, 2, (gone,))
