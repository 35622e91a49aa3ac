"""Where a finding points: `RuleContext.location` (checks/context.Locations.find) gives what
the definition gives, without folding every designator of a large board.

Source of truth: the definition written out plainly here: the first netlist
element whose designator equals the name case-insensitively, else the part or
contact of that name (board.parts, board.contacts). The boards: the demo boards
and a generated one (contacts written as X instances, so contact names are not
element designators), asked every element's, part's and contact's name, as
written and in other cases, and a name the board does not have.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from drc.checks.context import RuleContext, locations_of
from drc.pipeline import CheckOptions, check_board_in_memory
from drc.severity import Severity
from tests.analysis.test_reuse import generate

ROOT = Path(__file__).resolve().parents[2]


def _plain(board, name):
    for element in board.netlist.elements:
        if element.designator.casefold() == name.casefold():
            return element.location
    for part in board.parts.values():
        if part.designator.casefold() == name.casefold():
            return part.location
    for contact in board.contacts:
        if contact.designator.casefold() == name.casefold():
            return contact.location
    return None


def _names(board):
    names = [e.designator for e in board.netlist.elements]
    names += [p.designator for p in board.parts.values()] + [c.designator for c in board.contacts]
    return names[:400] + [n.lower() for n in names[:50]] + [n.upper() for n in names[:50]] + ["NOSUCH9"]


def _context(board, near=()):
    return RuleContext(rule_id="x", default_severity=Severity.ERROR, board_name="b", limits={},
                       locations=locations_of(board, near))


@pytest.mark.parametrize("name", ["front_panel.cir", "remote_pod.cir", "generated"])
def test_a_finding_is_located_as_the_definition_says(name, tmp_path):
    if name == "generated":
        path = tmp_path / "generated.cir"
        path.write_text(generate(600, 3, ngspice_safe=True), encoding="utf-8")
    else:
        path = ROOT / "boards" / "lx24" / name
    board = check_board_in_memory(path, CheckOptions(propose_fixes=False)).board
    names = _names(board)
    plain = [_plain(board, n) for n in names]
    assert [_context(board).location(n) for n in names] == plain
    # With the elements of the checked paths found first (what the pipeline passes).
    near = [e for e in board.netlist.elements[::3]]
    assert [_context(board, near).location(n) for n in names] == plain
    assert any(c.designator not in {e.designator for e in board.netlist.elements} for c in board.contacts) \
        or name != "generated"  # contacts named apart from their X instance: the part of the lookup that scans
