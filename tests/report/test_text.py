"""Terminal report at 80 columns, recorded through rich's Console.

No external reference exists for a terminal layout; these checks are about
the contract: every finding's figures and fix are shown, lines fit 80
columns, colour codes only when the console is a terminal (ECMA-48 CSI
sequences start with ESC '[').
"""

import io
from dataclasses import replace

from rich.console import Console

from drc.report.run_report import BaselineInfo
from drc.report.text import render_folder_summary, render_text
from tests.gate.builders import board_report, finding, run_report, sample_findings, stage_result


def recorded(render, *args, terminal=False, **kw) -> str:
    stream = io.StringIO()
    console = Console(file=stream, width=80, force_terminal=terminal, color_system="standard" if terminal else None)
    render(*args, console, **kw)
    return stream.getvalue()


def long_run():
    long = replace(finding("response-latency", "SW12", "U14:13", ("R31", "C17"), "warning"),
                   message="The release edge reaches VT+ max in 62.3 ms at the slowest corner "
                           "(R31 +5 %, C17 +20 %, rail -5 %), longer than the 50 ms latency limit.",
                   fix="Lower C17 to 47 nF (E24) or R31 to 33 kΩ; both keep the bounce window.")
    waived = replace(finding("slow-edge"), suppression="waiver", justification="ok")
    findings = sample_findings() + [long, waived]
    return run_report([board_report(findings=findings)], waiver_notes=["waiver at drc.toml:9 expired"],
                      baseline=BaselineInfo("baseline.json", 2, 5))


def test_plain_text_at_80_columns():
    text = recorded(render_text, long_run())
    assert "\x1b[" not in text  # not a terminal: no colour codes
    lines = text.splitlines()
    assert max(len(line) for line in lines) <= 80, max(lines, key=len)
    assert "SW1 → U1:1" in text and "0.72 ms (limit 7.5 ms)" in text
    assert "fix: Raise R1 to 47 kΩ" in text
    assert "bounce-window" in text and "response-latency" in text
    assert "slow-edge" not in text  # waived: counted, not listed
    assert "3 contacts, 2 stages (rc-schmitt 2): 1 error, 4 warnings, 1 note, 1 suppressed" in text
    assert "1 board: 1 error, 4 warnings, 1 note (1 suppressed); fail level: error" in text
    assert "waiver at drc.toml:9 expired" in text
    assert "baseline baseline.json applied: 2 accepted, 5 new" in text
    assert "safety-rated design" in " ".join(text.split())


def test_terminal_gets_colour():
    assert "\x1b[" in recorded(render_text, long_run(), terminal=True)


def test_quiet_shows_only_errors_and_summary():
    text = recorded(render_text, long_run(), quiet=True)
    assert "bounce-window" in text
    assert "response-latency" not in text and "pullup-waste" not in text
    assert "1 board: 1 error" in text


def test_board_error_is_shown():
    run = run_report([board_report("bad.cir", findings=[], stages=[], error="bad.cir:3:1: unreadable line")])
    text = recorded(render_text, run)
    assert "cannot check: bad.cir:3:1: unreadable line" in text


def test_folder_summary_table():
    boards = [board_report("boards/a.cir"),
              board_report("boards/b.cir", findings=[], stages=[stage_result(margin=-0.35)]),
              board_report("boards/c.cir", findings=[], stages=[], error="broken")]
    text = recorded(render_folder_summary, run_report(boards))
    assert "\x1b[" not in text
    assert max(len(line) for line in text.splitlines()) <= 80
    rows = {line.split()[0]: line.split()[1:] for line in text.splitlines() if line.strip().startswith("boards/")}
    assert rows["boards/a.cir"] == ["3", "2", "1", "3", "0.9", "V"]
    assert rows["boards/b.cir"][-2:] == ["-0.35", "V"]
    assert "not" in rows["boards/c.cir"]
