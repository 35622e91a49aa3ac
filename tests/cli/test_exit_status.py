"""The exit-status table, through the real console script in a subprocess.

0: nothing at or above the fail level; 1: findings at or above it; 2: bad
input, bad config or usage. (Gate convention described in the project's
CI-format notes; the table is ours.)
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from tests.cli.helpers import CLEAN, ERROR, WARNING_ONLY, drc


@pytest.fixture
def boards(tmp_path: Path) -> Path:
    (tmp_path / ".git").mkdir()  # config discovery stops here
    for name, text in (("clean.cir", CLEAN), ("warning.cir", WARNING_ONLY), ("error.cir", ERROR)):
        (tmp_path / name).write_text(text)
    return tmp_path


def test_version():
    proc = drc("--version")
    assert proc.returncode == 0 and proc.stdout.startswith("drc ")


@pytest.mark.parametrize("board, args, status", [
    ("clean.cir", (), 0),
    ("warning.cir", (), 0),                           # warnings do not fail at the default level
    ("warning.cir", ("--fail-level", "warning"), 1),
    ("warning.cir", ("--fail-level", "note"), 1),
    ("error.cir", (), 1),
    ("error.cir", ("--report-only",), 0),
    ("error.cir", ("--skip-rules", "undebounced-input,floating-input"), 0),
    ("error.cir", ("--only-rules", "pullup-waste"), 0),
    ("clean.cir", ("--only-rules", "bounce-windw"), 2),    # unknown id: usage error
    ("clean.cir", ("--fail-level", "fatal"), 2),
    ("clean.cir", ("--bounce", "3V3"), 2),
    ("missing.cir", (), 2),
])
def test_exit_status_table(boards: Path, board, args, status):
    proc = drc("check", str(boards / board), "--no-fixes", *args)
    assert proc.returncode == status, proc.stdout + proc.stderr
    assert "Traceback" not in proc.stderr


def test_unknown_rule_suggests_the_nearest(boards: Path):
    proc = drc("check", str(boards / "clean.cir"), "--only-rules", "bounce-windw")
    assert "bounce-window" in proc.stderr


@pytest.mark.parametrize("args", [
    ("check", "clean.cir", "--select", "bounce-window"),
    ("check", "clean.cir", "--ignore", "bounce-window"),
    ("explain", "bounce-window"),
])
def test_old_spellings_are_not_aliases(boards: Path, args):
    """The rule-selection options and the handbook command have names of our own only."""
    proc = drc(*(str(boards / a) if a.endswith(".cir") else a for a in args))
    assert proc.returncode == 2 and "Traceback" not in proc.stderr, proc.stderr


def test_old_config_keys_are_refused(boards: Path):
    (boards / "drc.toml").write_text('select = ["bounce-window"]\n')
    proc = drc("check", str(boards / "clean.cir"))
    assert proc.returncode == 2 and "select" in proc.stderr, proc.stderr


def test_bad_netlist_is_located(boards: Path):
    bad = boards / "bad.cir"
    bad.write_text("bad board\nR1 a b 10k\n.subckt s a\nR2 a 0 1k\n.end\n")
    proc = drc("check", str(bad))
    assert proc.returncode == 2
    assert f"{bad}:3:" in proc.stderr, proc.stderr
    assert "Traceback" not in proc.stderr


def test_one_bad_line_is_a_located_warning_not_a_refusal(boards: Path):
    # issue 12: an element line that cannot be evaluated never sinks the board
    bad = boards / "bad.cir"
    bad.write_text("bad board\nR1 a b 10k\nR2 a\n.end\n")
    proc = drc("check", str(bad), "--format", "json")
    assert proc.returncode in (0, 1), proc.stderr
    diagnostics = json.loads(proc.stdout)["boards"][0]["diagnostics"]
    assert [d for d in diagnostics if d.startswith(f"{bad}:3:4: R2: missing value")], diagnostics


def test_bad_config_is_located(boards: Path):
    (boards / "drc.toml").write_text('fail-level = "error"\nbounse = "5 ms"\n')
    proc = drc("check", str(boards / "clean.cir"))
    assert proc.returncode == 2
    assert "drc.toml:2" in proc.stderr and "bounse" in proc.stderr, proc.stderr


def test_one_bad_board_in_a_folder_exits_2_but_reports_the_rest(boards: Path):
    (boards / "bad.cir").write_text("bad board\n.subckt X a\n")
    proc = drc("check", str(boards), "--format", "json", "--no-fixes")
    assert proc.returncode == 2
    doc = json.loads(proc.stdout)
    assert doc["format"] == "drc-report/1"
    paths = [b["path"] for b in doc["boards"]]
    assert len(paths) == 4


def test_output_files_and_no_overwrite_of_inputs(boards: Path):
    sarif = boards / "out" / "drc.sarif"
    sarif.parent.mkdir()
    proc = drc("check", str(boards / "error.cir"), "-o", f"sarif:{sarif}", "-o",
               f"junit:{boards / 'out' / 'junit.xml'}", "--no-fixes")
    assert proc.returncode == 1
    assert json.loads(sarif.read_text())["version"] == "2.1.0"
    assert (boards / "out" / "junit.xml").read_text().startswith("<?xml")
    before = (boards / "error.cir").read_bytes()
    proc = drc("check", str(boards / "error.cir"), "-o", f"json:{boards / 'error.cir'}")
    assert proc.returncode == 2 and (boards / "error.cir").read_bytes() == before


def test_json_is_deterministic(boards: Path):
    first = drc("check", str(boards), "--format", "json", "--no-fixes").stdout
    second = drc("check", str(boards), "--format", "json", "--no-fixes", "--jobs", "2").stdout
    assert first == second
    doc = json.loads(first)
    stage = next(s for b in doc["boards"] for s in b["stages"] if b["path"].endswith("clean.cir"))
    assert stage["contact"] == "SW1" and stage["receiver"] == "U1:1" and stage["kind"] == "rc-schmitt"
    assert set(stage["edges"]) == {"press", "release"}
    for edge in stage["edges"].values():
        assert edge["fastest_s"] <= edge["nominal_s"] <= edge["slowest_s"]


def test_baseline_flow(boards: Path):
    base = boards / "baseline.json"
    proc = drc("check", str(boards / "error.cir"), "--write-baseline", str(base), "--no-fixes")
    # Writing a baseline is a successful act: exit 0 and one line saying what it recorded.
    assert proc.returncode == 0 and base.is_file(), proc.stdout + proc.stderr
    recorded = len(json.loads(base.read_text())["entries"])
    assert recorded >= 1
    assert proc.stdout == (f"baseline {base} written: {recorded} finding{'s' if recorded != 1 else ''} "
                           f"recorded from 1 board\n")
    proc = drc("check", str(boards / "error.cir"), "--baseline", str(base), "--no-fixes")
    assert proc.returncode == 0, proc.stdout + proc.stderr
    # A line shift keeps the match (designators, not line numbers).
    shifted = boards / "error.cir"
    shifted.write_text(ERROR.replace("error board\n", "error board\n* a new comment\n* another\n"))
    assert drc("check", str(shifted), "--baseline", str(base), "--no-fixes").returncode == 0
    # A new finding fails.
    shifted.write_text(ERROR.replace(".end", "SW2 d2 0 TOGGLE\nR9 vcc d2 10k\n"
                                             "XU2 vcc d2 d2 vcc q2 d3 0 0 0 vcc 0 0 vcc vcc 74HC74\n.end"))
    proc = drc("check", str(shifted), "--baseline", str(base), "--no-fixes")
    assert proc.returncode == 1, proc.stdout


def test_waiver_flow(boards: Path):
    (boards / "drc.toml").write_text(
        '[[waivers]]\nrule = "undebounced-input"\nparts-all = ["SW1"]\nreason = "toggle read by a poll loop"\n'
        'author = "bench team"\nexpires = 2099-01-01\n'
        '[[waivers]]\nrule = "pullup-waste"\nparts-any = ["R77"]\nreason = "stale"\nauthor = "x"\n'
        'expires = 2099-01-01\n')
    proc = drc("check", str(boards / "error.cir"), "--no-fixes")
    assert proc.returncode == 0, proc.stdout + proc.stderr
    assert "R77" in proc.stdout and "matches no finding" in " ".join(proc.stdout.split())
    # An expired waiver stops suppressing.
    proc = drc("check", str(boards / "error.cir"), "--no-fixes", "--as-of", "2100-01-01")
    assert proc.returncode == 1
    assert "expired" in proc.stdout


def test_annotation_waiver(boards: Path):
    text = ERROR.replace(".end", "*@drc waive undebounced-input SW1 : toggle polled in firmware\n.end")
    (boards / "annotated.cir").write_text(text)
    proc = drc("check", str(boards / "annotated.cir"), "--no-fixes", "--format", "sarif")
    assert proc.returncode == 0, proc.stdout + proc.stderr
    results = json.loads(proc.stdout)["runs"][0]["results"]
    assert all(r.get("suppressions") for r in results)
    assert any(s["kind"] == "inSource" for r in results for s in r["suppressions"])


def test_rules_and_handbook():
    proc = drc("rules")
    assert proc.returncode == 0
    for rule_id in ("undebounced-input", "bounce-window", "ambiguous-value"):
        assert rule_id in proc.stdout
    proc = drc("handbook", "slow-edge")
    assert proc.returncode == 0 and "Failing example" in proc.stdout
    proc = drc("handbook", "slow-edg")
    assert proc.returncode == 2 and "slow-edge" in proc.stderr


def test_trace_prints_times(boards: Path):
    proc = drc("trace", str(boards / "clean.cir"), "SW1")
    assert proc.returncode == 0, proc.stderr
    for word in ("rc-schmitt", "press", "release", "fastest", "R2", "C1"):
        assert word in proc.stdout
    proc = drc("trace", str(boards / "clean.cir"), "SW9")
    assert proc.returncode == 2 and "SW1" in proc.stderr


def test_changed_files_recheck_the_boards_that_include_them(boards: Path):
    """`--changed` (what the pre-commit hook runs): a changed model file re-checks every
    board that includes it, at any depth, and nothing else."""
    (boards / "models").mkdir()
    (boards / "models" / "keys.lib").write_text(".include deeper.inc\n")
    (boards / "models" / "deeper.inc").write_text(".subckt KEYRC a b\nR1 a b 22k\n.ends\n")
    (boards / "panel.cir").write_text(CLEAN.replace("R2 n1 in 22k\n", "XR2 n1 in KEYRC\n")
                                      .replace(".end", ".include models/keys.lib\n.end"))
    proc = drc("check", "--changed", "models/deeper.inc", "--no-fixes", "--format", "json", cwd=boards)
    assert proc.returncode == 0, proc.stderr
    assert [b["path"] for b in json.loads(proc.stdout)["boards"]] == ["panel.cir"]
    proc = drc("check", "--changed", "error.cir", "models/keys.lib", "--no-fixes", "--format", "json",
               cwd=boards)
    assert sorted(b["path"] for b in json.loads(proc.stdout)["boards"]) == ["error.cir", "panel.cir"]
    assert proc.returncode == 1
    (boards / "notes.inc").write_text("* read by no board\n")
    proc = drc("check", "--changed", "notes.inc", cwd=boards)
    assert proc.returncode == 0 and "nothing to check" in proc.stdout
