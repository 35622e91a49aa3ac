"""What a person reads, through the installed console script as a pipe or a CI log sees it.

Outside references: the IEC 60062 letter code (from memory: the letter stands
for the decimal point, so `4k7` is 4.7 kΩ and `4u7` 4.7 µF); ngspice (Debian
package) reading back the netlist `drc design --netlist` prints; the JSON
report of the same run for the exact text of every finding.
"""

from __future__ import annotations

import json
import os
import re
import subprocess
import sys
from pathlib import Path

import pytest

from tests.cli.helpers import CLEAN, ROOT, console_script, drc_script
from tests.support.ngspice import run_deck

BOARDS = ROOT / "boards" / "lx24"
UNIT = re.compile(r"^(?:[TGMkmµnpf]?(?:Ω|F|V|A|s)(?:/V)?|%)(?![A-Za-z])")


def test_piped_report_prints_each_finding_whole():
    text = drc_script("check", str(BOARDS), "--no-fixes")
    data = json.loads(drc_script("check", str(BOARDS), "--no-fixes", "--format", "json").stdout)
    assert text.returncode == 1 and "Traceback" not in text.stderr
    lines = [line.strip() for line in text.stdout.splitlines()]
    findings = [f for board in data["boards"] for f in board["findings"] if not f.get("suppression")]
    assert findings
    for f in findings:
        # The message, the fix and the contact → receiver each sit whole on one line.
        assert f["message"] in lines, f["message"]
        assert f"fix: {f['fix']}" in lines, f["fix"]
        if f["contact"] and f["receiver"]:
            assert any(f"{f['contact']} → {f['receiver']}" in line for line in lines)
    # No line ends in a number whose unit went to the next line.
    for line, following in zip(lines, lines[1:], strict=False):
        assert not (re.search(r"\d$", line) and UNIT.match(following)), (line, following)


_ESCAPE = re.compile(r"\x1b\[[0-9;?]*[A-Za-z]")


def _on_a_terminal(*args: str, columns: int = 80) -> tuple[int, str]:
    """Run the console script on a pseudo-terminal `columns` wide; its screen as plain text."""
    if sys.platform == "win32":
        pytest.skip("pseudo-terminals are POSIX")
    import fcntl
    import pty
    import struct
    import termios
    leader, follower = pty.openpty()
    fcntl.ioctl(follower, termios.TIOCSWINSZ, struct.pack("HHHH", 50, columns, 0, 0))
    env = dict(os.environ, COLUMNS=str(columns), LINES="50", TERM="xterm-256color")
    env.pop("NO_COLOR", None)
    proc = subprocess.Popen([*console_script(), *args], cwd=ROOT, env=env, stdin=follower, stdout=follower,
                            stderr=follower)
    os.close(follower)
    chunks = []
    while True:
        try:
            chunk = os.read(leader, 65536)
        except OSError:  # the other end closed (Linux reports EIO)
            break
        if not chunk:
            break
        chunks.append(chunk)
    os.close(leader)
    status = proc.wait(timeout=120)
    text = _ESCAPE.sub("", b"".join(chunks).decode("utf-8", "replace")).replace("\r\n", "\n")
    # The progress bar redraws itself with carriage returns: keep what is left on each line.
    return status, "\n".join(line.rsplit("\r", 1)[-1] for line in text.split("\n"))


def test_terminal_rows_fit_80_columns_and_break_only_between_phrases():
    status, screen = _on_a_terminal("check", str(BOARDS), "--no-fixes")
    data = json.loads(drc_script("check", str(BOARDS), "--no-fixes", "--format", "json").stdout)
    assert status == 1 and "Traceback" not in screen
    rows = screen.splitlines()
    assert max(len(row) for row in rows) <= 80, max(rows, key=len)
    flat = " ".join(row.strip() for row in rows)
    findings = [f for board in data["boards"] for f in board["findings"] if not f.get("suppressed")]
    assert findings
    for f in findings:
        # Wrapped at phrase boundaries: joining the rows with single spaces gives the text back.
        assert f["message"] in flat, f["message"]
        # A contact → receiver and a part designator never straddle two rows.
        if f["contact"] and f["receiver"]:
            assert any(f"{f['contact']} → {f['receiver']}" in row for row in rows), f
    # No row ends in a number whose unit went to the next row; no row ends in a name whose value did.
    stripped = [row.strip() for row in rows]
    for row, following in zip(stripped, stripped[1:], strict=False):
        assert not (re.search(r"\d$", row) and UNIT.match(following)), (row, following)
        assert not re.search(r"\b(?:VIL|VIH|VT[+-]|max|min)$", row), (row, following)
    # The archive table on a narrow terminal: each board's path whole on a row of its own.
    for board in data["boards"]:
        assert any(row.strip().lstrip("! ").strip() == board["path"] for row in rows), board["path"]


def test_headline_says_margin():
    text = drc_script("check", str(BOARDS / "dimmer_rack.cir"), "--no-fixes").stdout
    # With SW10 released the worst level is the LS input's open level, 1.5 V at most, 0.7 V on
    # the wrong side of VIL 0.8 V (the board's comments: a hand figure).
    assert re.search(r"leakage-headroom +SW10 → U10:1  margin -0\.7 V \(min 0\.4 V\)", text), text


def test_letter_digit_code_prints_the_value_meant(tmp_path: Path):
    board = tmp_path / "code.cir"
    board.write_text(CLEAN.replace("R1 vcc n1 10k", "R1 vcc n1 4k7").replace("C1 in 0 1.2u", "C1 in 0 1u2"))
    (tmp_path / ".git").mkdir()
    text = drc_script("check", str(board), "--no-fixes").stdout
    assert re.search(r"ambiguous-value +R1  value 4\.7 kΩ$", text, re.MULTILINE), text
    assert re.search(r"ambiguous-value +C1  value 1\.2 µF$", text, re.MULTILINE), text
    data = json.loads(drc_script("check", str(board), "--no-fixes", "--format", "json").stdout)
    measured = {f["parts"][0]: f["measured"]["text"] for f in data["boards"][0]["findings"]
                if f["rule"] == "ambiguous-value"}
    assert measured == {"R1": "4.7 kΩ", "C1": "1.2 µF"}
    page = drc_script("check", str(board), "--no-fixes", "--format", "html").stdout
    assert '<span class="measured">4.7 kΩ</span>' in page and '<span class="measured">4 kΩ</span>' not in page


# An export cut short inside a subcircuit definition: a board the reader cannot read.
TRUNCATED = "panel\n.subckt KEYS a b\nR1 a b 10k\n.end\n"


def _table_rows(report: str) -> list[str]:
    """The archive table's board rows (after its header line, before the total)."""
    lines = report.splitlines()
    start = next(i for i, line in enumerate(lines) if line.split()[:2] == ["status", "contacts"])
    return [line for line in lines[start:] if line.rstrip().endswith(".cir")]


def _archive(tmp_path: Path) -> Path:
    folder = tmp_path / "archive"
    folder.mkdir()
    (tmp_path / ".git").mkdir()
    (folder / "a_good.cir").write_text(CLEAN)
    (folder / "b_unreadable.cir").write_text(TRUNCATED)  # cut short inside a .subckt: not read
    (folder / "c_empty.cir").write_text("")
    (folder / "d_comments.cir").write_text("* exported header only\n* nothing else\n")
    return folder


def test_archive_counts_boards_it_could_not_read_or_that_hold_nothing(tmp_path: Path):
    proc = drc_script("check", str(_archive(tmp_path)), "--no-fixes")
    assert proc.returncode == 2  # an unreadable board is bad input
    out = proc.stdout
    assert out.count("empty-netlist") == 2
    # Each file with no parts is an empty-netlist error: nothing was checked there.
    assert "4 boards, 1 checked, 1 not read, 2 with no parts: 2 errors, 0 warnings, 0 notes" in out
    rows = _table_rows(out)
    order = [row.split()[-1].rsplit("/", 1)[-1] for row in rows]
    # Worst first: not read, then boards with nothing checked, then the clean one.
    assert order == ["b_unreadable.cir", "c_empty.cir", "d_comments.cir", "a_good.cir"]
    assert rows[0].startswith("! not read") and rows[1].startswith("! no parts") and "clean" in rows[3]
    total = next(line for line in out.splitlines() if line.lstrip().startswith("total"))
    assert "4 boards, 3 need attention" in total
    data = json.loads(drc_script("check", str(tmp_path / "archive"), "--no-fixes", "--format", "json").stdout)
    assert {Path(b["path"]).name: b["status"] for b in data["boards"]} == {
        "a_good.cir": "clean", "b_unreadable.cir": "not read", "c_empty.cir": "no parts",
        "d_comments.cir": "no parts"}
    assert data["summary"]["boards_by_status"] == {"clean": 1, "not read": 1, "no parts": 2}
    by_path = drc_script("check", str(tmp_path / "archive"), "--no-fixes", "--sort", "path").stdout
    rows = [line.split()[-1].rsplit("/", 1)[-1] for line in _table_rows(by_path)]
    assert rows == sorted(rows)


def test_bad_input_message_appears_once_where_streams_meet(tmp_path: Path):
    bad = tmp_path / "bad.cir"
    (tmp_path / ".git").mkdir()
    bad.write_text(TRUNCATED)
    together = drc_script("check", str(bad), together=True)
    assert together.returncode == 2
    assert together.stdout.count("missing .ends for .subckt KEYS") == 1, together.stdout
    apart = drc_script("check", str(bad))
    message = "missing .ends for .subckt KEYS"
    assert apart.stderr.count(message) == 1 and apart.stdout.count(message) == 1


def test_one_arrow_in_every_screen():
    board = str(BOARDS / "front_panel.cir")
    screens = {
        "check": drc_script("check", board, "--no-fixes").stdout,
        "trace": drc_script("trace", board, "SW3").stdout,
        "simulate": drc_script("simulate", board, "SW3", "--trials", "20").stdout,
        "html": drc_script("check", board, "--no-fixes", "--format", "html").stdout,
    }
    for name, text in screens.items():
        assert "SW3 → U1:5" in text, name
        assert "SW3 -> U1:5" not in text and "SW3 -&gt; U1:5" not in text, name


def test_ascii_output_gets_the_ascii_arrow():
    board = str(BOARDS / "front_panel.cir")
    for args in (("check", board, "--no-fixes"), ("trace", board, "SW3")):
        proc = drc_script(*args, PYTHONIOENCODING="ascii")
        assert "SW3 -> U1:5" in proc.stdout and "Traceback" not in proc.stderr, proc.stderr
        assert proc.stdout.isascii()
        assert "internal error" not in proc.stderr


def test_times_that_do_not_apply_say_so():
    board = str(BOARDS / "footswitch_unit.cir")
    trace = drc_script("trace", board, "U9").stdout  # firmware and pull-only stages: no capacitor
    edge_rows = [line.split() for line in trace.splitlines() if line.split()[:1] in (["press"], ["release"])]
    assert edge_rows and all(row[-3:] == ["n/a", "n/a", "n/a"] for row in edge_rows), trace
    assert " 0 s" not in trace
    page = drc_script("check", board, "--no-fixes", "--format", "html").stdout
    assert '<td data-label="press fastest" class="num muted">n/a</td>' in page


def test_design_leads_with_the_verdict():
    passing = drc_script("design", "--rail", "5V", "--family", "HC", "--contact", "tactile")
    assert passing.returncode == 0 and passing.stdout.splitlines()[0] == "passes every rule at worst case"
    failing = drc_script("design", "--rail", "5V", "--family", "HC", "--plain", "--contact", "tactile")
    assert failing.returncode == 1 and failing.stdout.startswith("NOT PASSING: ")


def test_design_netlist_reads_back(tmp_path: Path):
    proc = drc_script("design", "--rail", "5V", "--family", "HC", "--contact", "tactile", "--netlist")
    assert proc.returncode == 0 and proc.stderr == ""
    netlist = proc.stdout
    assert all(line.startswith(("*", ".")) or line.split()[0][0] in "RCVS" for line in netlist.splitlines())
    # Our reader: the designed stage, with a receiver on net 'in', is one clean rc-schmitt stage.
    (tmp_path / ".git").mkdir()
    board = tmp_path / "designed.cir"
    board.write_text(netlist.replace(".end\n", "XU1 in out 0 0 0 0 0 0 0 0 0 0 0 vcc 74HC14\n.end\n"))
    check = json.loads(drc_script("check", str(board), "--format", "json").stdout)["boards"][0]
    assert check["error"] is None
    assert [s["kind"] for s in check["stages"]] == ["rc-schmitt"]
    assert [f["rule"] for f in check["findings"]] == []
    # ngspice: the same text parses with no error (listing and equation count before any analysis).
    ngspice = run_deck(netlist.replace(".end\n", ".control\nlisting expand\nrusage equations\nquit\n.endc\n.end\n"))
    output = ngspice.stdout + ngspice.stderr
    assert ngspice.returncode == 0 and "error" not in output.lower(), output[-2000:]
    # Before any analysis, the equation count is the distinct nodes with ground: 0 vcc n1 sw1_ctl in.
    assert re.search(r"Circuit Equations = 5\b", output), output[-2000:]
    for part in ("r1 vcc n1", "r2 n1 in", "c1 in 0", "sw1 n1 0 sw1_ctl 0 tactile"):
        assert part in output.lower(), part


@pytest.mark.parametrize("rule_fix", ["resistance-range"])
def test_fix_wording_has_no_article_before_a_designator(rule_fix):
    from drc.checks import all_rules
    assert rule_fix in {r.id for r in all_rules()}
    text = drc_script("check", str(BOARDS / "dimmer_rack.cir"), "--no-fixes").stdout
    assert "use a R" not in text and "choose R20 within 1 kΩ-50 kΩ" in text


def test_trace_of_a_contact_not_checked_has_a_heading_not_a_rule():
    """On a pipe the unchecked contact's heading is one line with the one arrow (a rule
    drawn to the console's width would fill a CI log line with thousands of dashes)."""
    proc = drc_script("trace", str(BOARDS / "footswitch_unit.cir"), "SW35")
    assert proc.returncode == 0, proc.stderr
    lines = proc.stdout.splitlines()
    assert lines[:2] == ["SW35 → U36:1: not checked", "reason: isolated-input"], lines[:3]
    assert max(len(line) for line in lines) < 400


def test_html_board_sections_say_how_many_contacts_were_checked():
    """The survey's counts (the JSON report's coverage objects) on each board's section,
    marked where a contact was not checked (the footswitch's opto-isolated GO input)."""
    data = json.loads(drc_script("check", str(BOARDS), "--no-fixes", "--format", "json").stdout)
    page = drc_script("check", str(BOARDS), "--no-fixes", "--format", "html").stdout
    # Each board's section: its heading (the path), then its summary, then the coverage line.
    shown = {path: (bool(bad), text) for path, bad, text in re.findall(
        r'<h2>([^<]*)</h2>\s*<p class="summary">.*?</p>\s*<p class="summary coverage( bad)?">([^<]*)</p>', page)}
    expected = {b["path"]: (c["not_checked"] > 0, f"contacts: {c['checked']} checked, {c['not_checked']} not checked"
                            + (f", {c['non_logic_load']} non-logic load only" if c["non_logic_load"] else ""))
                for b in data["boards"] for c in [b["coverage"]]}
    assert {path: (bad, text.split(";")[0]) for path, (bad, text) in shown.items()} == expected
    assert any(bad for bad, _text in shown.values())
    # The config named as the text report names it: relative to the working folder.
    assert page.count('<p class="muted">config: boards/lx24/drc.toml</p>') == len(data["boards"])


def test_a_file_with_no_parts_never_passes_the_gate(tmp_path: Path):
    """An empty or comments-only export is an empty-netlist error (exit 1); a board with
    parts but no contacts stays a clean exit 0 (common practice, no source: a sheet with
    no switches is common)."""
    (tmp_path / ".git").mkdir()
    empty = tmp_path / "header_only.cir"
    empty.write_text("* LX-24 key sheet, export header only\n.end\n")
    proc = drc_script("check", str(empty), "--no-fixes")
    assert proc.returncode == 1, proc.stdout
    assert "empty-netlist" in proc.stdout
    no_contacts = tmp_path / "divider.cir"
    no_contacts.write_text("* LX-24 reference divider\nV1 vcc 0 DC 5\nR1 vcc mid 10k\nR2 mid 0 10k\n.end\n")
    proc = drc_script("check", str(no_contacts), "--no-fixes")
    assert proc.returncode == 0, proc.stdout
    assert "empty-netlist" not in proc.stdout
