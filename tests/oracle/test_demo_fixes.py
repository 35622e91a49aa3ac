"""Proposed standard-value fixes hold in ngspice at the corner they claim.

For every bounce-window finding on the demo boards whose fix names new
values ("C1 470 nF → 560 nF (press 10.1 ms ≥ 10 ms at fastest corner)"),
the stage is rebuilt with those values, and ngspice (Debian package
`ngspice`, the independent simulator) runs it at the fastest-corner values
the analysis found: the edge must take at least the contact's bounce time
(× the bounce margin), and agree with our fastest time within 0.5 %
(DESIGN.md section 10). Values proposed are E-series members (checked
against the `eseries` package, IEC 60063, in tests/rules/test_fixes.py).
"""

from __future__ import annotations

import re
from pathlib import Path

import pytest

from drc.analysis.stage_analysis import analyse_stage
from drc.design.fixes import with_values
from drc.pipeline import CheckOptions, check_board_in_memory, effective_limits
from drc.simulation.spice_deck import MEASUREMENTS, stage_deck
from drc.units import parse_quantity
from tests.support.ngspice import measure

pytestmark = pytest.mark.ngspice

ROOT = Path(__file__).resolve().parents[2]
CHANGE = re.compile(r"(\S+) ([\d.]+ \S+) → ([\d.]+ \S+)")
CLAIM = re.compile(r"\((press|release) ")


def _value(text: str) -> float:
    unit = text.split()[-1]
    return parse_quantity(text, "capacitance" if unit.endswith("F") else "resistance", "fix")


def fixed_stages():
    for board in sorted((ROOT / "boards").rglob("*.cir")):
        check = check_board_in_memory(board, CheckOptions())
        limits = effective_limits(check.config)
        results = {(r.stage.contact.designator, r.stage.receiver.ref): r for r in check.results}
        for f in check.findings:
            claim = CLAIM.search(f.fix)
            changes = CHANGE.findall(f.fix.split("(")[0])
            if f.rule == "bounce-window" and claim and changes:
                yield (board.name, f, results[(f.contact, f.receiver)], claim.group(1),
                       {d: _value(new) for d, _old, new in changes}, limits)


CASES = list(fixed_stages())


def test_some_demo_fixes_are_concrete():
    assert len(CASES) >= 2


@pytest.mark.parametrize("board, finding, result, edge, values, limits", CASES,
                         ids=[f"{c[0]}:{c[1].contact}:{c[3]}" for c in CASES])
def test_fix_meets_the_bounce_window_in_ngspice(board, finding, result, edge, values, limits):
    stage = with_values(result.stage, values)
    fixed = analyse_stage(stage, result.receiver_electrical)
    corner = fixed.edges[edge].corner_fastest
    name = MEASUREMENTS[("press", "release").index(edge)]
    deck = stage_deck(stage, result.receiver_electrical, corner=corner, edges=(edge,))
    spice = measure(deck, [name])[name]
    needed = stage.contact.bounce_s * limits["bounce_margin"]
    assert spice >= needed, (board, finding.fix, spice, needed)
    assert spice == pytest.approx(fixed.edges[edge].fastest_s, rel=5e-3), (board, finding.fix)
