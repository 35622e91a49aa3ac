"""Baselines: write, shift lines, still matched; a new finding fails; fixed ones are reported.

Matching by designators rather than line numbers follows the gate
conventions of reference/ci-formats.md (common practice, no source).
"""

import json
from dataclasses import replace

import pytest

from drc.errors import ConfigError, SourceLocation, UsageError
from drc.gate.baseline import load_baseline, write_baseline
from drc.gate.decision import apply_baseline, exit_status
from tests.gate.builders import board_report, finding, run_report, sample_findings


def astuple(on_board):
    """(findings, fixed) of one board's baseline outcome."""
    return on_board.findings, on_board.fixed


def shifted(f, lines=12):
    moved = SourceLocation(f.location.file, f.location.line + lines, 1)
    return replace(f, location=moved, message=f.message + " (figures changed)")


def test_round_trip_survives_line_shifts(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    board = "boards/panel.cir"
    run = run_report([board_report(board)])
    path = tmp_path / "baseline.json"
    write_baseline(path, run)
    baseline = load_baseline(path)
    assert len(baseline.entries) == len(sample_findings())

    later = [shifted(f) for f in sample_findings(board)]
    new = finding("slow-edge", "SW4", "U2:1", ("R8",), board=board)
    marked, fixed = astuple(apply_baseline(later + [new], baseline, board))
    suppressed = [f for f in marked if f.suppression == "baseline"]
    assert len(suppressed) == len(later)
    assert [f.rule for f in marked if f.suppression is None] == ["slow-edge"]
    assert fixed == ()
    assert exit_status(marked, "error", False) == 1  # the new finding fails
    assert exit_status([f for f in marked if f.rule != "slow-edge"], "note", False) == 0


def test_fixed_entries_are_reported(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    run = run_report([board_report("boards/panel.cir")])
    write_baseline(tmp_path / "b.json", run)
    remaining = [f for f in sample_findings() if f.rule != "bounce-window"]
    marked, fixed = astuple(apply_baseline(remaining, load_baseline(tmp_path / "b.json"), "boards/panel.cir"))
    assert [e.rule for e in fixed] == ["bounce-window"]
    assert all(f.suppression == "baseline" for f in marked)


def test_baseline_matches_from_another_working_folder(tmp_path, monkeypatch):
    (tmp_path / "boards").mkdir()
    monkeypatch.chdir(tmp_path)
    write_baseline(tmp_path / "b.json", run_report([board_report("boards/panel.cir")]))
    monkeypatch.chdir(tmp_path / "boards")
    marked, fixed = astuple(apply_baseline(sample_findings("panel.cir"), load_baseline(tmp_path / "b.json"),
                                           "panel.cir"))
    assert all(f.suppression == "baseline" for f in marked) and fixed == ()


def test_identical_findings_count(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    write_baseline(tmp_path / "b.json", run_report([board_report(findings=[finding()])]))
    marked, _ = astuple(apply_baseline([finding(), finding()], load_baseline(tmp_path / "b.json"), "boards/panel.cir"))
    assert sorted(str(f.suppression) for f in marked) == ["None", "baseline"]


def test_a_waived_finding_in_the_baseline_is_waived_not_fixed(tmp_path, monkeypatch):
    """Fixed means gone: a finding still there but now waived keeps its waiver and its
    baseline entry is reported as waived."""
    monkeypatch.chdir(tmp_path)
    write_baseline(tmp_path / "b.json", run_report([board_report()]))
    now_waived = [replace(f, suppression="waiver", justification="x") if f.rule == "bounce-window" else f
                  for f in sample_findings()]
    outcome = apply_baseline(now_waived, load_baseline(tmp_path / "b.json"), "boards/panel.cir")
    assert outcome.fixed == ()
    assert [e.rule for e in outcome.waived] == ["bounce-window"]
    assert [f.suppression for f in outcome.findings if f.rule == "bounce-window"] == ["waiver"]
    gone = [f for f in now_waived if f.rule != "bounce-window"]
    outcome = apply_baseline(gone, load_baseline(tmp_path / "b.json"), "boards/panel.cir")
    assert [e.rule for e in outcome.fixed] == ["bounce-window"] and outcome.waived == ()


def test_waived_findings_are_not_baselined(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    waived = replace(finding(), suppression="waiver", justification="x")
    write_baseline(tmp_path / "b.json", run_report([board_report(findings=[waived, finding("slow-edge")])]))
    document = json.loads((tmp_path / "b.json").read_text())
    assert [e["rule"] for e in document["entries"]] == ["slow-edge"]


def test_write_is_deterministic(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    write_baseline(tmp_path / "a.json", run_report([board_report()]))
    write_baseline(tmp_path / "b.json", run_report([board_report(findings=sample_findings()[::-1])]))
    assert (tmp_path / "a.json").read_bytes() == (tmp_path / "b.json").read_bytes()


def test_refuses_to_overwrite_an_input(tmp_path):
    netlist = tmp_path / "panel.cir"
    netlist.write_text("* input\n")
    with pytest.raises(UsageError, match="input file"):
        write_baseline(netlist, run_report(), inputs=[netlist])
    assert netlist.read_text() == "* input\n"


@pytest.mark.parametrize("text, says, line", [
    ('{"format": "drc-baseline/1", "entries": [\n  {"board": "a"\n', "not valid JSON", 3),
    ('{"format": "other/2", "entries": []}', "drc-baseline/1", 0),
    ('{"format": "drc-baseline/1", "entries": {}}', "must be a list", 0),
    ('{"format": "drc-baseline/1", "entries": [{"board": "a", "rule": "r"}]}', "entries[0]: missing parts", 0),
    ('{"format": "drc-baseline/1", "entries": [{"board": "a", "rule": "r", "parts": [1]}]}', "entries[0].parts", 0),
    ('{"format": "drc-baseline/1", "entries": [{"board": "a", "rule": "r", "parts": [], "x": 1}]}',
     "unknown key 'x'", 0),
])
def test_bad_baseline_is_a_located_config_error(tmp_path, text, says, line):
    path = tmp_path / "b.json"
    path.write_text(text)
    with pytest.raises(ConfigError) as caught:
        load_baseline(path)
    assert says in str(caught.value)
    assert caught.value.location.file == str(path) and caught.value.location.line == line


def test_missing_baseline_file(tmp_path):
    with pytest.raises(ConfigError, match="cannot read"):
        load_baseline(tmp_path / "none.json")
