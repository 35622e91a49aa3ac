"""Fail closed, through the real console script: one board per cause, each exits 1
with an `unchecked-input` finding carrying its reason.

The boards are tests/board/exports/failclosed/*.cir (our LX-24 scenario); each
names its cause in an `* expect:` line. Before issue 12 several of these
passed the gate silently (`1 contact, 0 stages: 0 errors`, exit 0) or
stopped it with exit 2.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from drc.board.board import UncheckedReason
from tests.cli.helpers import drc

FAILCLOSED = Path(__file__).resolve().parents[1] / "board" / "exports" / "failclosed"
BOARDS = sorted(FAILCLOSED.glob("*.cir"))


def expected(path: Path) -> tuple[str, str, str]:
    """(contact, receiver or "-", reason) from the board's `* expect:` line."""
    line = next(line for line in path.read_text().splitlines() if line.startswith("* expect:"))
    rule, contact, receiver, reason = line.split(":", 1)[1].split()
    assert rule == "unchecked-input"
    return contact, receiver, reason


def test_every_cause_has_a_board():
    causes = {expected(path)[2] for path in BOARDS}
    # the causes the issue names, plus the supply case of issue 13 and the
    # other reasons a contact cannot be checked; unevaluable-element is
    # tested where the reader marks an element (tests/board/test_coverage.py)
    assert causes >= {"unknown-receiver", "unknown-pin-order", "no-path", "isolated-input",
                      "supply-out-of-range", "discrete-input", "analog-input"}
    assert causes <= {reason.value for reason in UncheckedReason}


@pytest.mark.parametrize("path", BOARDS, ids=lambda p: p.stem)
def test_unchecked_input_fails_the_gate(path: Path):
    contact, receiver, reason = expected(path)
    proc = drc("check", str(path), "--format", "json", "--no-fixes")
    assert proc.returncode == 1, proc.stdout[-2000:] + proc.stderr[-2000:]
    doc = json.loads(proc.stdout)
    (board,) = doc["boards"]
    assert board["error"] is None
    found = [f for f in board["findings"] if f["rule"] == "unchecked-input"]
    assert [(f["contact"], f["receiver"] or "-", f["reason"], f["severity"]) for f in found] == \
        [(contact, receiver, reason, "error")]
    assert board["coverage"]["not_checked"] == 1 and board["coverage"]["checked"] == 0
    assert doc["summary"]["contacts_not_checked"] == 1


@pytest.mark.parametrize("path", BOARDS, ids=lambda p: p.stem)
def test_text_report_says_not_checked(path: Path):
    contact, _receiver, reason = expected(path)
    proc = drc("check", str(path), "--no-fixes")
    assert proc.returncode == 1
    assert "unchecked-input" in proc.stdout and f"({reason})" in proc.stdout
    assert "contacts: 0 checked, 1 not checked" in proc.stdout
