"""Every demo board gives exactly the findings written in the file beside it.

`boards/**/NAME.expected` lists one finding per line: severity, rule id and
where (`CONTACT -> RECEIVER`, or the parts of a part-level finding). The
boards are our own scenario; each expectation was reviewed against the
figures in the board's comments and `drc trace`. Regenerate a file only
after checking the change: `python tests/boards/test_demo_boards.py --write`.
"""

from __future__ import annotations

import sys
from collections import Counter
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]
BOARDS = sorted((ROOT / "boards").rglob("*.cir"))


def finding_line(f) -> str:
    where = f"{f.contact} -> {f.receiver}" if f.contact and f.receiver else " ".join(f.parts)
    return f"{f.severity} {f.rule} {where}"


def read_expected(path: Path) -> Counter:
    lines = [line.split("#", 1)[0].strip() for line in path.read_text().splitlines()]
    return Counter(" ".join(line.split()) for line in lines if line)


def produced(board: Path) -> Counter:
    from drc.pipeline import CheckOptions, check_board
    outcome = check_board(board, CheckOptions(propose_fixes=False))
    assert outcome.report.error is None, outcome.report.error
    return Counter(finding_line(f) for f in outcome.report.findings if f.suppression is None)


@pytest.mark.parametrize("board", BOARDS, ids=lambda p: p.name)
def test_demo_board_findings(board: Path):
    expected_file = board.with_suffix(".expected")
    assert expected_file.is_file(), f"{board.name} has no expected-findings file"
    want, got = read_expected(expected_file), produced(board)
    missing, unexpected = want - got, got - want
    assert not missing and not unexpected, (
        f"{board.name}\nmissing:\n  " + "\n  ".join(sorted(missing.elements())) +
        "\nunexpected:\n  " + "\n  ".join(sorted(unexpected.elements())))


def test_every_stage_kind_and_rule_is_exercised():
    """The demo set covers every stage kind and every rule, and has a clean board."""
    from drc.checks import all_rules
    from drc.pipeline import CheckOptions, check_board
    kinds, rules, clean = set(), set(), 0
    for board in BOARDS:
        report = check_board(board, CheckOptions(propose_fixes=False)).report
        kinds.update(r.stage.kind for r in report.stages)
        rules.update(f.rule for f in report.findings)
        clean += not report.findings
    from drc.board.stage import STAGE_KINDS
    assert set(STAGE_KINDS) <= kinds, set(STAGE_KINDS) - kinds
    # empty-netlist fires only on a file with no parts, which is no demo board: its
    # handbook examples and tests/cli/test_screens.py exercise it.
    expected = {r.id for r in all_rules()} - {"empty-netlist"}
    assert expected <= rules, expected - rules
    assert clean >= 1


if __name__ == "__main__" and "--write" in sys.argv:
    for board in BOARDS:
        lines = sorted(produced(board).elements())
        header = f"# Expected findings of {board.name} (default limits). severity rule where\n"
        board.with_suffix(".expected").write_text(header + "\n".join(lines) + "\n")
        print(board.with_suffix(".expected"), len(lines))
