"""The text report: whole plain lines off a terminal, phrase-wrapped colour on one.

No external reference exists for a terminal layout; these checks are about
the contract the issue states: a piped report prints whole lines (a CI log
has no width); on a terminal, rows fit its width and break only between
words, never between a value and its unit ("4.7 kΩ"), a name and its value
("VIL 0.8 V"), or inside a designator or a path; colour codes (ECMA-48 CSI
sequences start with ESC '[') only on a terminal. The archive table sorts
worst first, counts unread and empty boards, and totals.
"""

import io
import re
from dataclasses import replace

import pytest
from rich.console import Console

from drc.report.formats import BoardOrder, RenderOptions
from drc.report.layout import wrap_rows
from drc.report.run_report import BaselineInfo, BoardStatus, Inventory
from drc.report.text import TextFormatter, archive_lines, render_text
from tests.gate.builders import board_report, finding, run_report, sample_findings, stage_result

# A value and its unit, as the reports write them ("0.72 ms", "-3.7 V", "47 kΩ", "117 ns/V").
VALUE = re.compile(r"-?\d[\d,.]*\s(?:[TGMkmµnpf]?(?:Ω|F|V|A|s)(?:/V)?|%)(?![A-Za-z])")


def recorded(render, *args, terminal=False, width=80, **kw) -> str:
    stream = io.StringIO()
    console = Console(file=stream, width=width, force_terminal=terminal,
                      color_system="standard" if terminal else None)
    render(*args, console, **kw)
    return stream.getvalue()


def long_run():
    long = replace(finding("response-latency", "SW12", "U14:13", ("R31", "C17"), "warning"),
                   message="The release edge reaches VT+ max in 62.3 ms at the slowest corner "
                           "(R31 +5 %, C17 +20 %, rail -5 %), longer than the 50 ms latency limit; "
                           "the input threshold VIL 0.8 V is reached through R31 4.7 kΩ and "
                           "XK3/sheet_2/R17 1.2 kΩ after 117 ns/V edges.",
                   fix="Lower C17 to 47 nF (E24) or R31 to 33 kΩ; both keep the bounce window.")
    waived = replace(finding("slow-edge"), suppression="waiver", justification="ok")
    findings = sample_findings() + [long, waived]
    return run_report([board_report(findings=findings)], waiver_notes=["waiver at drc.toml:9 expired"],
                      baseline=BaselineInfo("baseline.json", 2, 5))


def plain_report(run, **options) -> str:
    return TextFormatter().render(run, RenderOptions(**options))


def test_plain_report_prints_whole_lines():
    text = plain_report(long_run())
    assert "\x1b[" not in text
    # The long message is one line, however long (a CI log has no width).
    assert any(line.strip().startswith("The release edge") and line.rstrip().endswith("117 ns/V edges.")
               for line in text.splitlines())
    assert "SW1 → U1:1  0.72 ms (limit 7.5 ms)" in text  # the builders' rule docs name no figure
    assert "fix: Raise R1 to 47 kΩ" in text
    assert "bounce-window" in text and "response-latency" in text
    assert "slow-edge" not in text  # waived: counted, not listed
    assert "3 contacts, 2 stages (rc-schmitt 2): 1 error, 4 warnings, 1 note, 1 suppressed" in text
    assert "1 board checked: 1 error, 4 warnings, 1 note (1 suppressed); fail level error" in text
    assert "waiver at drc.toml:9 expired" in text
    assert "baseline baseline.json applied: 2 accepted, 5 new" in text
    assert "safety-rated design" in text


@pytest.mark.parametrize("width", [40, 60, 80, 100])
def test_terminal_rows_break_only_between_words(width):
    run = long_run()
    plain = plain_report(run)
    text = recorded(render_text, run, terminal=False, width=width)
    rows = text.splitlines()
    words = set(plain.split())
    # Every row is whole words of the plain report: nothing is cut inside a word.
    assert all(set(row.split()) <= words for row in rows)
    # Rows fit the width unless one word alone is longer.
    assert all(len(row.rstrip()) <= width or max(map(len, row.split())) > width - 10 for row in rows), rows
    # Every value with its unit, and every designator or path, stays on one row.
    joined_rows = "\n".join(row.strip() for row in rows)
    for value in VALUE.findall(plain):
        assert value in joined_rows, (value, width)
    for name in ("XK3/sheet_2/R17 1.2 kΩ", "VIL 0.8 V", "R31 4.7 kΩ", "SW12 → U14:13", "boards/panel.cir"):
        assert name in joined_rows, (name, width)


def test_terminal_gets_colour():
    assert "\x1b[" in recorded(render_text, long_run(), terminal=True)


def test_quiet_shows_only_errors_and_summary():
    text = plain_report(long_run(), quiet=True)
    assert "bounce-window" in text
    assert "response-latency" not in text and "pullup-waste" not in text
    assert "1 board checked: 1 error" in text


def test_board_error_is_shown_with_its_caret_line_intact():
    error = "bad.cir:3:6: R2: missing value (a resistor needs two nodes and a value)\n    R2 a b\n         ^"
    run = run_report([board_report("bad.cir", findings=[], stages=[], error=error)])
    text = recorded(render_text, run, width=40)
    assert "cannot check: bad.cir:3:6: R2: missing value" in " ".join(text.split())
    lines = text.splitlines()
    assert lines[lines.index(next(line for line in lines if line.strip() == "R2 a b")) + 1].index("^") == \
        next(line for line in lines if line.strip() == "R2 a b").index("R2") + 5


def test_wrap_keeps_values_together():
    text = ("with SW5 released, U4:1 sits at 4.2 V at worst, 3.4 V on the wrong side of VIL max 0.8 V; "
            "XK3/C1 100 nF → 1.5 µF (release 11.7 ms ≥ 10 ms at fastest corner); a resistor (100 Ω-1 kΩ is usual)")
    for width in range(16, 60):
        rows = [text[a:b] for a, b in wrap_rows(text, width, width)]
        assert " ".join(rows) == text
        for kept in ("4.2 V", "3.4 V", "VIL max 0.8 V", "≥ 10 ms", "XK3/C1 100 nF", "100 Ω"):
            assert any(kept in row for row in rows), (width, rows)


# ------------------------------------------------------------------ the archive view

def archive_run():
    empty = Inventory(parts={}, nets=0, rails={}, instances=0)
    boards = [board_report("boards/a.cir", findings=[]),                                 # clean
              board_report("boards/b.cir", findings=[finding(board="boards/b.cir")],     # errors
                           stages=[stage_result(margin=-0.35, board="boards/b.cir")]),
              board_report("boards/c.cir", findings=[], stages=[], error="broken"),      # not read
              board_report("boards/d.cir", findings=[], stages=[], contacts=0, inventory=empty),
              board_report("boards/e.cir", findings=[replace(finding("pullup-waste", board="boards/e.cir"),
                                                             severity="warning")]),
              board_report("boards/f.cir", findings=[], stages=[], contacts=0)]          # no contacts
    return run_report(boards)


def archive_rows(text: str) -> dict[str, list[str]]:
    rows = {}
    for line in text.splitlines():
        if line.rstrip().endswith(".cir"):
            cells = line.split()
            rows[cells[-1]] = cells[:-1]
    return rows


def test_archive_sorts_worst_first_and_totals():
    text = "".join(line.text + "\n" for line in archive_lines(archive_run()))
    order = [path for path in archive_rows(text)]
    assert order == ["boards/c.cir", "boards/d.cir", "boards/f.cir", "boards/b.cir", "boards/e.cir",
                     "boards/a.cir"]
    rows = archive_rows(text)
    assert rows["boards/c.cir"][:3] == ["!", "not", "read"]
    assert rows["boards/d.cir"][:3] == ["!", "no", "parts"]
    assert rows["boards/b.cir"][0] == "!" and rows["boards/b.cir"][-2:] == ["-0.35", "V"]
    assert rows["boards/a.cir"][0] == "clean" and rows["boards/a.cir"][-2:] == ["0.9", "V"]
    total = next(line for line in text.splitlines() if "total" in line)
    assert "6 boards, 4 need attention" in total and "-0.35 V" in total
    assert "needs attention" in text


def test_archive_sort_by_path():
    text = "".join(line.text + "\n" for line in archive_lines(archive_run(), BoardOrder.PATH))
    assert list(archive_rows(text)) == sorted(archive_rows(text))


def test_summary_counts_unread_and_empty_boards():
    text = plain_report(archive_run())
    assert "6 boards, 3 checked, 1 not read, 1 with no parts, 1 with no contacts:" in text
    assert [b.status() for b in archive_run().boards].count(BoardStatus.NO_PARTS) == 1


def test_narrow_terminal_puts_paths_on_their_own_lines():
    text = recorded(render_text, archive_run(), width=80)
    table = text[text.index("status"):]
    assert all(len(row) <= 80 for row in table.splitlines() if "needs attention" not in row)
    assert "! boards/c.cir" in table and "  boards/a.cir" in table


@pytest.mark.parametrize("rule, measured, limit, expected", [
    ("leakage-headroom", "-3.7 V", "0.25 V", "margin -3.7 V (min 0.25 V)"),
    ("bounce-window", "1.25 µs", "2 ms", "fastest crossing 1.25 µs (min 2 ms)"),
    ("response-latency", None, "100 ms", "slowest crossing never (max 100 ms)"),
    ("pullup-waste", "2.76 mA", "1 mA", "held current 2.76 mA (max 1 mA)"),
    ("undebounced-input", None, None, ""),
])
def test_headline_names_the_figure(rule, measured, limit, expected):
    """The headline says what the number is: a negative margin does not read as a level."""
    from drc.checks import all_rules
    doc = {r.id: r.doc for r in all_rules()}[rule]
    assert doc.headline_figure(measured, limit) == expected
