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
    text = text.rstrip(",;")  # "16 kΩ, ..." in a list of changes: the value without its comma
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


# ---------------------------------------------------------------- held-current fixes

HELD_RULES = ("pullup-waste", "shorted-pull")


def held_current_fixes():
    for board in sorted((ROOT / "boards").rglob("*.cir")):
        check = check_board_in_memory(board, CheckOptions())
        limits = effective_limits(check.config)
        results = {(r.stage.contact.designator, r.stage.receiver.ref): r for r in check.results}
        for f in check.findings:
            changes = CHANGE.findall(f.fix.split("(")[0])
            if f.rule in HELD_RULES and changes:
                yield (board.name, f, results[(f.contact, f.receiver)],
                       {d: _value(new) for d, _old, new in changes}, limits)


HELD = list(held_current_fixes())


def _dc_deck(stage, state: str) -> str:
    """The stage in one contact state at the held-current corner (rails at maximum,
    resistors at minimum; capacitors open at DC), a 0 V source in series with each pull
    resistor to read its current."""
    c = stage.circuit
    names = {net: f"n{i}" for i, net in enumerate(sorted(c.nodes()), start=1)}
    names["0"] = "0"
    lines = [f"* held current of {stage.name}, {state}"]
    for k, rail in enumerate(c.rails):
        if rail.net != "0":
            lines.append(f"V{k} {names[rail.net]} 0 DC {rail.volts * (1 + rail.tolerance):.12g}")
    for r in c.resistors:
        ohms = r.ohms * (1 - r.tol_minus)
        if r.role == "pull":
            lines.append(f"Vs_{r.designator} {names[r.a]} ns_{r.designator} DC 0")
            lines.append(f"R_{r.designator} ns_{r.designator} {names[r.b]} {ohms:.12g}")
        else:
            lines.append(f"R_{r.designator} {names[r.a]} {names[r.b]} {ohms:.12g}")
    for k, t in enumerate(c.throws):
        if t.closed_when == state:
            lines.append(f"RT{k} {names[t.a]} {names[t.b]} {t.closed_ohms:.12g}")
    lines += [".tran 1u 10u"]
    lines += [f".meas tran i_{r.designator.lower()} FIND i(Vs_{r.designator}) AT=5u"
              for r in c.resistors if r.role == "pull"]
    return "\n".join(lines + [".end"]) + "\n"


def test_some_demo_boards_have_held_current_fixes():
    assert HELD, "footswitch_unit's R38 (10 ohm, a short) gets a value"


@pytest.mark.parametrize("board, finding, result, values, limits", HELD,
                         ids=[f"{c[0]}:{c[1].contact}:{c[1].rule}" for c in HELD])
def test_held_current_fix_holds_in_ngspice(board, finding, result, values, limits):
    stage = with_values(result.stage, values)
    fixed = analyse_stage(stage, result.receiver_electrical)
    pulls = [r.designator.lower() for r in stage.circuit.resistors if r.role == "pull"]
    held = 0.0
    for state in ("released", "pressed"):
        found = measure(_dc_deck(stage, state), [f"i_{p}" for p in pulls])
        held = max(held, *(abs(v) for v in found.values()))
    # The figure the fix claims (drc's worst-case pull current) is ngspice's at that corner
    # (the pin's microampere input current aside), and it is under the budget and no short.
    assert held == pytest.approx(fixed.pull_current_a, rel=1e-2)
    assert held <= limits["pull_current_budget"] and held < limits["short_current"]


def test_every_demo_board_with_a_proposed_value_is_cross_checked():
    proposed = set()
    for board in sorted((ROOT / "boards").rglob("*.cir")):
        for f in check_board_in_memory(board, CheckOptions()).findings:
            if CHANGE.findall(f.fix.split("(")[0]):
                proposed.add(board.name)
    checked = {c[0] for c in CASES} | {c[0] for c in HELD}
    assert proposed <= checked, proposed - checked
