"""CI semantics through the installed console script, as a CI job runs it.

Writing a baseline is a successful act; a finding still present but now
waived is waived, never fixed; a waiver's parts key says any or all. The
gate conventions (a baseline matched by rule and designators, not line
numbers) follow reference/ci-formats.md (common practice, no source).
"""

from __future__ import annotations

import json
from pathlib import Path

from tests.cli.helpers import ERROR, drc_script

# The board's one error: a toggle straight into a flip-flop clock with only a pull-up.
WAIVER = """[[waivers]]
rule = "{rule}"
{key} = {parts}
reason = "clock input driven by the bench switch on purpose"
author = "A. Designer"
expires = 2099-12-31
"""


def _repository(tmp_path: Path) -> Path:
    (tmp_path / ".git").mkdir()
    (tmp_path / "panel.cir").write_text(ERROR)
    return tmp_path


def _error_findings(path: Path) -> list[dict]:
    data = json.loads(drc_script("check", "panel.cir", "--no-fixes", "--format", "json", cwd=path).stdout)
    return [f for f in data["boards"][0]["findings"] if f["severity"] == "error"]


def test_write_baseline_exits_0_with_one_line(tmp_path: Path):
    repo = _repository(tmp_path)
    errors = _error_findings(repo)
    assert errors  # the board fails on its own: exit 1 without a baseline
    assert drc_script("check", "panel.cir", "--no-fixes", cwd=repo).returncode == 1
    proc = drc_script("check", "panel.cir", "--no-fixes", "--write-baseline", "base.json", cwd=repo)
    assert proc.returncode == 0, proc.stdout + proc.stderr
    recorded = len(json.loads((repo / "base.json").read_text())["entries"])
    assert recorded >= len(errors)
    assert proc.stdout.splitlines() == [
        f"baseline base.json written: {recorded} finding{'s' if recorded != 1 else ''} recorded from 1 board"]
    assert proc.stderr == ""
    assert drc_script("check", "panel.cir", "--no-fixes", "--baseline", "base.json", cwd=repo).returncode == 0


def test_a_waived_finding_in_the_baseline_is_reported_as_waived(tmp_path: Path):
    repo = _repository(tmp_path)
    error = _error_findings(repo)[0]
    assert drc_script("check", "panel.cir", "--no-fixes", "--write-baseline", "base.json", cwd=repo).returncode == 0
    parts = json.dumps([error["contact"]])
    (repo / "drc.toml").write_text(WAIVER.format(rule=error["rule"], key="parts-any", parts=parts))
    proc = drc_script("check", "panel.cir", "--no-fixes", "--baseline", "base.json", cwd=repo)
    assert proc.returncode == 0, proc.stdout + proc.stderr
    summary = next(line for line in proc.stdout.splitlines() if line.startswith("baseline base.json applied"))
    assert "1 now waived" in summary and "0 fixed" in summary, summary
    assert not any(line.strip().startswith("fixed:") for line in proc.stdout.splitlines()), proc.stdout
    data = json.loads(drc_script("check", "panel.cir", "--no-fixes", "--baseline", "base.json",
                                 "--format", "json", cwd=repo).stdout)
    assert data["baseline"]["fixed"] == []
    assert [(e["rule"], e["contact"]) for e in data["baseline"]["waived"]] == [(error["rule"], error["contact"])]
    waived = [f for f in data["boards"][0]["findings"] if f["rule"] == error["rule"]]
    assert waived and all(f["suppressed"]["kind"] == "waiver" for f in waived)
    listed = [line.strip() for line in proc.stdout.splitlines() if line.strip().startswith("waived:")]
    assert listed == [f"waived: panel.cir {error['rule']} {error['contact']} → {error['receiver']}"], proc.stdout


def test_a_parts_key_that_does_not_say_any_or_all_is_refused(tmp_path: Path):
    repo = _repository(tmp_path)
    (repo / "drc.toml").write_text(WAIVER.format(rule="undebounced-input", key="parts", parts='["SW1", "SW4"]'))
    proc = drc_script("check", "panel.cir", "--no-fixes", cwd=repo)
    assert proc.returncode == 2 and "Traceback" not in proc.stderr
    assert "drc.toml:3" in proc.stderr and "parts-any" in proc.stderr and "parts-all" in proc.stderr, proc.stderr


def test_parts_any_waives_either_designator_and_parts_all_reports_its_near_miss(tmp_path: Path):
    repo = _repository(tmp_path)
    error = _error_findings(repo)[0]
    (repo / "drc.toml").write_text(WAIVER.format(rule=error["rule"], key="parts-any",
                                                 parts=json.dumps([error["contact"], "SW4"])))
    assert drc_script("check", "panel.cir", "--no-fixes", cwd=repo).returncode == 0
    (repo / "drc.toml").write_text(WAIVER.format(rule=error["rule"], key="parts-all",
                                                 parts=json.dumps([error["contact"], "SW4"])))
    proc = drc_script("check", "panel.cir", "--no-fixes", cwd=repo)
    assert proc.returncode == 1
    note = next(line for line in proc.stdout.splitlines() if line.startswith("waiver"))
    assert error["contact"] in note and "SW4" in note, proc.stdout
