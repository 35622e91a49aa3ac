"""JSON report: determinism, and agreement with the documented schema (docs/report-schema.md)."""

import json
import re
from dataclasses import replace
from pathlib import Path

import pytest

from drc.checks.findings import Severity, Suppression
from drc.errors import ExitStatus
from drc.report.json_report import REPORT_FORMAT, render_json
from drc.report.run_report import BaselineInfo
from tests.gate.builders import board_report, finding, run_report, sample_findings, stage_result

SCHEMA_DOC = Path(__file__).resolve().parents[2] / "docs" / "report-schema.md"


def full_run(order=1):
    waived = replace(finding("slow-edge", "SW2", "U1:3", ("R2",)), suppression="waiver",
                     justification="r (a, until 2030-01-01)")
    boards = [board_report("boards/b.cir", findings=(sample_findings("boards/b.cir") + [waived])[::order],
                           stages=[stage_result(board="boards/b.cir"),
                                   stage_result("SW2", "U1", 3, board="boards/b.cir")][::order]),
              board_report("boards/a.cir", findings=sample_findings("boards/a.cir")[::order]),
              board_report("boards/c.cir", findings=[], stages=[], error="boards/c.cir:3:1: bad line")]
    from drc.gate.baseline import BaselineEntry
    fixed = [BaselineEntry("boards/a.cir", "slow-edge", "SW9", "U3:2", ("R9",), "error", "m"),
             BaselineEntry("boards/a.cir", "floating-input", "SW8", "U3:1", (), "error", "m")]
    return run_report(boards[::order], waiver_notes=["b note", "a note"][::order],
                      baseline=BaselineInfo("baseline.json", 3, 2), fixed=fixed[::order])


def test_two_renders_are_byte_identical():
    assert render_json(full_run()) == render_json(full_run())


def test_input_order_does_not_change_the_output():
    assert render_json(full_run(1)).encode() == render_json(full_run(-1)).encode()


def test_content():
    document = json.loads(render_json(full_run()))
    assert document["format"] == REPORT_FORMAT
    assert "safety-rated" in document["caution"]
    assert [b["path"] for b in document["boards"]] == ["boards/a.cir", "boards/b.cir", "boards/c.cir"]
    stage = document["boards"][0]["stages"][0]
    assert (stage["contact"], stage["receiver"], stage["kind"]) == ("SW1", "U1:1", "rc-schmitt")
    press, release = stage["edges"]["press"], stage["edges"]["release"]
    assert press["threshold_v"] == 1.8 and press["fastest_s"] == 0.00072
    assert release["slowest_s"] is None  # never reached: null, not a number
    findings = document["boards"][1]["findings"]
    assert sum(f["suppressed"] is not None for f in findings) == 1
    assert document["boards"][1]["summary"]["suppressed"] == 1
    assert document["summary"]["boards"] == 3
    assert document["boards"][2]["error"].endswith("bad line")


def documented_tables() -> dict[str, set[str]]:
    """Object name -> keys, from the `### Name object` sections of the schema doc."""
    tables: dict[str, set[str]] = {}
    current = None
    for line in SCHEMA_DOC.read_text(encoding="utf-8").splitlines():
        heading = re.match(r"^### (.+) object$", line)
        if heading:
            current = heading.group(1)
            tables[current] = set()
        elif current and line.startswith("| `"):
            tables[current].add(re.match(r"^\| `([^`]+)`", line).group(1))
    return tables


def written_tables(document: dict) -> dict[str, set[str]]:
    board = document["boards"][1]
    stage = board["stages"][0]
    suppressed = next(f for f in board["findings"] if f["suppressed"])
    return {
        "Report": set(document),
        "Tool": set(document["tool"]),
        "Board": set(board),
        "Inventory": set(board["inventory"]),
        "Coverage": set(board["coverage"]),
        "Stage": set(stage),
        "Edge": set(stage["edges"]["press"]),
        "Level": set(stage["levels"]["pressed"]),
        "Currents": set(stage["currents"]),
        "Finding": set(board["findings"][0]),
        "Figure": set(board["findings"][0]["measured"]),
        "Location": set(board["findings"][0]["location"]),
        "Suppression": set(suppressed["suppressed"]),
        "Baseline": set(document["baseline"]),
        "Baseline entry": set(document["baseline"]["fixed"][0]),
        "Board summary": set(board["summary"]),
        "Run summary": set(document["summary"]),
    }


def test_schema_doc_and_output_agree():
    documented = documented_tables()
    written = written_tables(json.loads(render_json(full_run())))
    assert set(documented) == set(written), "an object is documented but not checked, or the reverse"
    for name, keys in written.items():
        assert documented[name] == keys, (name, sorted(documented[name] ^ keys))
    assert f"`{REPORT_FORMAT}`" in SCHEMA_DOC.read_text(encoding="utf-8")


def standard(value) -> str:
    return json.dumps(value, indent=2, sort_keys=True, ensure_ascii=False, allow_nan=False)


def test_the_writer_writes_the_document_json_reads_back():
    """The standard library's reader (the outside check) reads back the very document."""
    from drc.report.json_report import report_document
    run = full_run()
    text = render_json(run)
    assert text.endswith("}\n") and not text.endswith("\n\n")
    assert json.loads(text) == json.loads(standard(report_document(run)))


@pytest.mark.parametrize("value", [
    {}, [], {"a": []}, {"b": {}, "a": [{}]}, [1, 2.5, -0.0, 0.0, True, False, None, "x"],
    {"é": "ü\n\"\\", "a": {"c": 1e-300, "b": [1e21, 12345678.9, 2.2e-6]}},
    {"nested": [[1, [2, [3]]], {"k": ("tuple", 1)}]},
    {"enum": Severity.ERROR, "int enum": ExitStatus.FINDINGS, "kind": Suppression.WAIVER},
    ["\u2028 separators \x00 and \t tabs"],
])
def test_dump_indented_reads_back_as_json_dumps_writes(value):
    """Same data as json.dumps (the standard library as the outside reference), keys
    sorted in the same order, two-space indent, characters kept as UTF-8."""
    from drc.report.json_report import dump_indented
    text = dump_indented(value)
    assert json.loads(text) == json.loads(standard(value))
    ours = [line.strip().split('"')[1] for line in text.splitlines() if '": ' in line]
    theirs = [line.strip().split('"')[1] for line in standard(value).splitlines() if '": ' in line]
    assert ours == theirs
    assert [len(line) - len(line.lstrip()) for line in text.splitlines()] == \
        [len(line) - len(line.lstrip()) for line in standard(value).splitlines()]
    assert "\\u00e9" not in text


def test_dump_indented_writes_non_string_keys_as_strings():
    from drc.report.json_report import dump_indented
    assert json.loads(dump_indented({Severity.ERROR: 1, 2: "x"})) == {"error": 1, "2": "x"}
