"""Rule selection, severity order and the exit status, as tables of cases.

The exit-status convention (0 clean, 1 findings at or above the fail level,
2 for errors, decided by the caller) is common practice among command-line
checkers, no source (reference/ci-formats.md).
"""

from dataclasses import replace

import pytest

from drc.errors import ConfigError, UsageError
from drc.gate.decision import exit_status, resolve_selection, severity_at_least
from tests.gate.builders import RULE_IDS, finding

ALL = set(RULE_IDS)


@pytest.mark.parametrize("select, ignore, expected", [
    ((), (), ALL),
    (("bounce-window",), (), {"bounce-window"}),
    (("bounce-window", "slow-edge"), ("slow-edge",), {"bounce-window"}),
    ((), ("resistance-range", "ambiguous-value"), ALL - {"resistance-range", "ambiguous-value"}),
    (("pullup-waste",), ("pullup-waste",), set()),
])
def test_resolve_selection(select, ignore, expected):
    assert resolve_selection(RULE_IDS, select, ignore) == expected


@pytest.mark.parametrize("select, ignore, suggestion", [
    (("bounce-windw",), (), "bounce-window"),
    ((), ("slowedge",), "slow-edge"),
    (("pullup_waste",), (), "pullup-waste"),
])
def test_unknown_rule_ids_suggest(select, ignore, suggestion):
    with pytest.raises(ConfigError) as caught:
        resolve_selection(RULE_IDS, select, ignore)
    assert f"did you mean {suggestion!r}" in str(caught.value)


def test_unknown_rule_id_error_type_is_the_callers():
    with pytest.raises(UsageError):
        resolve_selection(RULE_IDS, ("nothing-like-it",), (), error=UsageError)


@pytest.mark.parametrize("severity, level, expected", [
    ("note", "note", True), ("warning", "note", True), ("error", "note", True),
    ("note", "warning", False), ("warning", "warning", True), ("error", "warning", True),
    ("note", "error", False), ("warning", "error", False), ("error", "error", True),
])
def test_severity_at_least(severity, level, expected):
    assert severity_at_least(severity, level) is expected


ERROR, WARNING, NOTE = (finding(severity=s) for s in ("error", "warning", "note"))
WAIVED_ERROR = replace(ERROR, suppression="waiver", justification="ok")
BASELINED_ERROR = replace(ERROR, suppression="baseline", justification="old")


@pytest.mark.parametrize("findings, fail_level, never_fail, status", [
    ([], None, False, 0),
    ([ERROR], None, False, 1),  # default fail level is error
    ([WARNING], None, False, 0),
    ([WARNING], "warning", False, 1),
    ([NOTE], "warning", False, 0),
    ([NOTE], "note", False, 1),
    ([ERROR], "error", True, 0),  # report-only mode
    ([WAIVED_ERROR], "note", False, 0),  # suppressed findings never fail
    ([BASELINED_ERROR, WARNING], "error", False, 0),
    ([BASELINED_ERROR, WARNING], "warning", False, 1),
])
def test_exit_status(findings, fail_level, never_fail, status):
    assert exit_status(findings, fail_level, never_fail) == status


def test_exit_status_refuses_unknown_level():
    with pytest.raises(ConfigError):
        exit_status([], "fatal", False)
