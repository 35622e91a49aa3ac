"""The SARIF 2.1.0 report, for code-scanning services and other SARIF readers.

One run per report. `driver.rules[]` is generated from the rule
documentation (the same text as `drc handbook`). Each result points at the
netlist line of its first part (physical location, relative to the working
folder), names its contact, receiver and nets as logical locations, carries
a versioned fingerprint made of board, rule and designators (so it survives
line shifts), and, when anything in the run is suppressed, a `suppressions`
array on every result (empty when the result is not suppressed), as SARIF
asks. The fix is prose, so it goes in the message and properties, not in
SARIF `fixes` (which need concrete text edits).
"""

from __future__ import annotations

import hashlib
import json
import os
import re
from pathlib import Path
from urllib.parse import quote

from drc import __version__
from drc.checks.findings import Finding, Suppression
from drc.checks.ruledoc import RuleDoc
from drc.errors import SourceLocation
from drc.gate.baseline import board_key
from drc.report.formats import RenderOptions
from drc.report.json_report import figure_json
from drc.report.run_report import RunReport

SARIF_SCHEMA = "https://docs.oasis-open.org/sarif/sarif/v2.1.0/errata01/os/schemas/sarif-schema-2.1.0.json"
FINGERPRINT_KEY = "drcFinding/v1"
_SUPPRESSION_KIND = {Suppression.WAIVER: "external", Suppression.BASELINE: "external",
                     Suppression.ANNOTATION: "inSource"}
_EXPIRY = re.compile(r"until (\d{4}-\d{2}-\d{2})\)$")


def artifact_uri(file: str, working_dir: str | os.PathLike) -> str:
    """The file as a URI relative to `working_dir` (posix, percent-encoded), else an absolute file URI."""
    path = Path(file).resolve()
    try:
        relative = path.relative_to(Path(working_dir).resolve())
    except ValueError:
        return path.as_uri()
    return quote(os.fsencode(relative.as_posix()), safe="/")  # the name's own bytes, %-encoded


def fingerprint(finding: Finding, working_dir: str | os.PathLike) -> str:
    """Stable across line shifts: board (relative), rule, contact, receiver, sorted parts."""
    rule, contact, receiver, parts = finding.identity()
    text = "\x1f".join((board_key(finding.board, working_dir), rule, contact, receiver, *parts))
    return hashlib.sha256(text.encode("utf-8", "surrogateescape")).hexdigest()[:32]


def rule_name(rule_id: str) -> str:
    """"bounce-window" -> "BounceWindow" (SARIF's suggested form for reportingDescriptor.name)."""
    return "".join(part.capitalize() for part in re.split(r"[^A-Za-z0-9]+", rule_id) if part)


def rule_json(doc: RuleDoc) -> dict:
    return {
        "id": doc.id,
        "name": rule_name(doc.id),
        "shortDescription": {"text": doc.title},
        "fullDescription": {"text": doc.what},
        "help": {"text": doc.full_text()},
        "defaultConfiguration": {"level": doc.severity},
        "properties": {"limits": list(doc.limits)},
    }


def physical_location(location: SourceLocation | None, board: str,
                      working_dir: str | os.PathLike) -> dict:
    if location is None or not location.file:
        return {"artifactLocation": {"uri": artifact_uri(board, working_dir)}}
    physical: dict = {"artifactLocation": {"uri": artifact_uri(location.file, working_dir)}}
    if location.line >= 1:
        region = {"startLine": location.line}
        if location.column >= 1:
            region["startColumn"] = location.column
        physical["region"] = region
    return physical


def logical_locations(finding: Finding) -> list[dict]:
    out = []
    if finding.contact:
        out.append({"name": finding.contact, "kind": "component"})
    if finding.receiver:
        out.append({"name": finding.receiver, "kind": "component"})
    out += [{"name": net, "kind": "net"} for net in finding.nets]
    return out


def suppression_json(finding: Finding) -> list[dict]:
    if finding.suppression is None:
        return []
    entry: dict = {"kind": _SUPPRESSION_KIND.get(finding.suppression, "external"),
                   "status": "accepted", "justification": finding.justification or ""}
    properties: dict = {"drcSuppression": finding.suppression}
    expiry = _EXPIRY.search(finding.justification or "")
    if finding.suppression == Suppression.WAIVER and expiry:
        properties["expires"] = expiry.group(1)  # SARIF has no expiry field
    entry["properties"] = properties
    return [entry]


def result_json(finding: Finding, rule_index: dict[str, int], working_dir: str | os.PathLike,
                with_suppressions: bool, with_baseline: bool) -> dict:
    message = finding.message if not finding.fix else f"{finding.message} Fix: {finding.fix}"
    location: dict[str, object] = {
        "physicalLocation": physical_location(finding.location, finding.board, working_dir)}
    logical = logical_locations(finding)
    if logical:
        location["logicalLocations"] = logical
    result: dict = {
        "ruleId": finding.rule,
        "level": finding.severity,
        "message": {"text": message},
        "locations": [location],
        "partialFingerprints": {FINGERPRINT_KEY: fingerprint(finding, working_dir)},
        "properties": {
            "board": board_key(finding.board, working_dir),
            "fix": finding.fix,
            "measured": figure_json(finding.measured),
            "limit": figure_json(finding.limit),
            "parts": list(finding.parts),
        },
    }
    if finding.rule in rule_index:
        result["ruleIndex"] = rule_index[finding.rule]
    if finding.related:
        result["relatedLocations"] = [
            {"id": i, "physicalLocation": physical_location(r, finding.board, working_dir)}
            for i, r in enumerate(finding.related, 1)]
    if with_suppressions:
        result["suppressions"] = suppression_json(finding)
    if with_baseline:
        result["baselineState"] = "unchanged" if finding.suppression == Suppression.BASELINE else "new"
    return result


def _notifications(run: RunReport, working_dir: str | os.PathLike) -> list[dict]:
    out = []
    for board in run.boards:
        where = [{"physicalLocation": {"artifactLocation": {"uri": artifact_uri(board.path, working_dir)}}}]
        if board.error:
            out.append({"level": "error", "message": {"text": board.error}, "locations": where})
        out += [{"level": "warning", "message": {"text": d}, "locations": where} for d in board.diagnostics]
        out += [{"level": "note", "message": {"text": n}, "locations": where} for n in board.notes]
    out += [{"level": "note", "message": {"text": note}} for note in run.waiver_notes]
    return out


def sarif_document(run: RunReport, working_dir: str | os.PathLike) -> dict:
    rule_index = {doc.id: i for i, doc in enumerate(run.rule_docs)}
    findings = list(run.findings())
    with_suppressions = any(f.suppression is not None for f in findings)
    with_baseline = run.baseline is not None and not run.baseline.written
    properties: dict = {"caution": run.caution, "failLevel": run.fail_level,
                        "waiverNotes": list(run.waiver_notes)}
    if run.baseline is not None:
        properties["baseline"] = {"path": run.baseline.path, "matched": run.baseline.matched,
                                  "new": run.baseline.new,
                                  "fixed": [e.as_json() for e in run.fixed]}
    return {
        "$schema": SARIF_SCHEMA,
        "version": "2.1.0",
        "runs": [{
            "tool": {"driver": {"name": "drc", "version": __version__,
                                "semanticVersion": __version__,
                                "rules": [rule_json(doc) for doc in run.rule_docs]}},
            "columnKind": "unicodeCodePoints",
            "invocations": [{
                "executionSuccessful": not any(b.error for b in run.boards),
                "toolExecutionNotifications": _notifications(run, working_dir),
            }],
            "results": [result_json(f, rule_index, working_dir, with_suppressions, with_baseline)
                        for f in findings],
            "properties": properties,
        }],
    }


def render_sarif(run: RunReport, working_dir: str | os.PathLike) -> str:
    """The SARIF 2.1.0 log text (deterministic: sorted keys, final newline)."""
    return json.dumps(sarif_document(run, working_dir), indent=2, sort_keys=True,
                      ensure_ascii=False, allow_nan=False) + "\n"


class SarifFormatter:
    """The "sarif" format of `drc check`; paths relative to the options' working folder."""

    name = "sarif"

    def render(self, run: RunReport, options: RenderOptions) -> str:
        return render_sarif(run, options.working_dir or Path.cwd())
