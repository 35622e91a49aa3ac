"""Demo-board runs for the HTML tests: check_netlist_text on boards/lx24, wrapped in the report model."""

from __future__ import annotations

from collections import Counter
from functools import cache
from pathlib import Path

from drc.pipeline import check_netlist_text
from drc.report.run_report import BoardReport, RunReport

BOARDS = Path(__file__).resolve().parents[2] / "boards" / "lx24"
ALL = ("dimmer_rack.cir", "footswitch_unit.cir", "front_panel.cir", "remote_pod.cir")


@cache
def board_report(name: str) -> BoardReport:
    path = BOARDS / name
    board, results, findings = check_netlist_text(path.read_text(encoding="utf-8"), f"boards/lx24/{name}")
    return BoardReport(path=f"boards/lx24/{name}", stages=tuple(results), findings=tuple(findings),
                       contacts=len(board.contacts),
                       stage_kinds=dict(Counter(r.stage.kind for r in results)))


def run_report(*names: str) -> RunReport:
    from drc.checks import all_rules
    return RunReport(boards=tuple(board_report(n) for n in names),
                     rule_docs=tuple(r.doc for r in all_rules()))
