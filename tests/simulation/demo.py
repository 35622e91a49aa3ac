"""Demo stages (boards/lx24, through check_netlist_text) for the simulation tests."""

from __future__ import annotations

from functools import cache
from pathlib import Path

from drc.pipeline import check_netlist_text

BOARDS = Path(__file__).resolve().parents[2] / "boards" / "lx24"


@cache
def demo_result(board: str, contact: str):
    path = BOARDS / board
    _, results, _ = check_netlist_text(path.read_text(encoding="utf-8"), f"boards/lx24/{board}")
    return next(r for r in results if r.stage.contact.designator == contact)
