"""The JUnit XML report, for CI systems that show test results.

There is no JUnit standard; this writes the common core those systems read:
`<testsuites>` holding one `<testsuite>` per board, one `<testcase>` per
stage (classname = board path, name = "contact → receiver", stable and
unique), and one `<failure>` per unsuppressed finding at or above the fail
level (message = rule id and message; the text gives figures, fix and
netlist location). Findings below the fail level, and suppressed ones, are
listed in the test case's `<system-out>` and do not fail it.

Findings that belong to no stage (a part or a contact on its own, such as an
ambiguous value) get a test case named after what they concern: "SW3
(contact)", "U2:5 (receiver)", "R7 (part)" (several parts joined with "+"),
or "(board)" when no designator is involved. A board that could not be read
is a "(board)" test case with an `<error>`. Counts follow the readers:
failures and errors count elements, tests count test cases. The report never
fails a job by itself: the exit status does.
"""

from __future__ import annotations

import xml.etree.ElementTree as ET

from drc.checks.findings import Finding
from drc.gate.decision import Decision, decide
from drc.report.formats import RenderOptions
from drc.report.run_report import BoardReport, RunReport, natural_key

ARROW = "→"


def case_name(finding: Finding) -> str:
    """The test case a finding belongs to (see the module docstring)."""
    if finding.contact and finding.receiver:
        return f"{finding.contact} {ARROW} {finding.receiver}"
    if finding.contact:
        return f"{finding.contact} (contact)"
    if finding.receiver:
        return f"{finding.receiver} (receiver)"
    if finding.parts:
        return f"{'+'.join(sorted(finding.parts, key=natural_key))} (part)"
    return "(board)"


def _failure_text(finding: Finding) -> str:
    lines = [f"{finding.severity} {finding.rule}: {finding.message}"]
    if finding.measured is not None:
        against = f" (limit {finding.limit.text})" if finding.limit is not None else ""
        lines.append(f"measured {finding.measured.text}{against}")
    if finding.fix:
        lines.append(f"fix: {finding.fix}")
    if finding.location is not None:
        lines.append(f"at {finding.location}")
    return "\n".join(lines)


def _board_cases(board: BoardReport) -> dict[str, list[Finding]]:
    cases: dict[str, list[Finding]] = {}
    for result in board.stages:
        cases.setdefault(f"{result.stage.contact.designator} {ARROW} {result.stage.receiver.ref}", [])
    for finding in board.findings:
        cases.setdefault(case_name(finding), []).append(finding)
    if board.error:
        cases.setdefault("(board)", [])
    return cases


def _suite(board: BoardReport, fail_level: str) -> tuple[ET.Element, dict[str, int]]:
    suite = ET.Element("testsuite", {"name": board.path})
    counts = {"tests": 0, "failures": 0, "errors": 0, "skipped": 0}
    cases = _board_cases(board)
    for name in sorted(cases, key=natural_key):
        case = ET.SubElement(suite, "testcase", {"classname": board.path, "name": name})
        counts["tests"] += 1
        if name == "(board)" and board.error:
            error = ET.SubElement(case, "error", {"message": board.error, "type": "input-error"})
            error.text = board.error
            counts["errors"] += 1
        quiet: list[str] = []
        for finding in cases[name]:
            decision = decide(finding, fail_level)
            if decision is Decision.COUNTS:
                failure = ET.SubElement(case, "failure", {
                    "message": f"{finding.rule}: {finding.message}", "type": finding.rule})
                failure.text = _failure_text(finding)
                counts["failures"] += 1
            else:
                why = "below the fail level" if decision is Decision.BELOW_FAIL_LEVEL \
                    else f"suppressed by {finding.suppression}: {finding.justification}"
                quiet.append(f"{_failure_text(finding)}\n({why})")
        if quiet:
            ET.SubElement(case, "system-out").text = "\n\n".join(quiet)
    for key, value in counts.items():
        suite.set(key, str(value))
    return suite, counts


def render_junit(run: RunReport, fail_level: str | None = None) -> str:
    """The JUnit XML text; fail_level defaults to the run's."""
    level = fail_level or run.fail_level
    root = ET.Element("testsuites", {"name": "drc"})
    totals = {"tests": 0, "failures": 0, "errors": 0, "skipped": 0}
    for board in run.boards:
        suite, counts = _suite(board, level)
        root.append(suite)
        for key in totals:
            totals[key] += counts[key]
    for key, value in totals.items():
        root.set(key, str(value))
    ET.indent(root)
    return '<?xml version="1.0" encoding="UTF-8"?>\n' + ET.tostring(root, encoding="unicode") + "\n"


class JunitFormatter:
    """The "junit" format of `drc check`, failing test cases at the run's fail level."""

    name = "junit"

    def render(self, run: RunReport, options: RenderOptions) -> str:
        return render_junit(run, run.fail_level)
