"""The closure-and-opening reading of stages with diodes or several capacitors, against ngspice.

Oracle: ngspice (Debian package `ngspice`) on the stage's own deck
(drc.simulation.spice_deck: the card diode as ngspice's own diode from its
`.model` card, throws as switches) with the contact closed for the least
closure (1 µs) from the released steady state and then opened: the time from
the opening to the receiver crossing the opposite threshold is the pull back
the reading computes. Agreement within 0.5 % (DESIGN.md section 10).
Hand figures for the same stages: tests/analysis/test_first_edge_exact.py and
the footswitch board's comments.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from drc.analysis.first_edge import pull_back
from drc.board.stage import Capacitor, RailSource, Resistor, Throw
from drc.pipeline import CheckOptions, check_board_in_memory
from drc.simulation.spice_deck import stage_deck
from tests.analysis.builders import receiver_electrical, stage
from tests.support.ngspice import measure

pytestmark = pytest.mark.ngspice

FOOTSWITCH = Path(__file__).resolve().parents[2] / "boards" / "lx24" / "footswitch_unit.cir"


def spice_pull_back(st, rx, corner, hold: float) -> float:
    """ngspice: press, hold the contact closed for `hold`, open it; the time from the
    opening to the receiver crossing the release edge's threshold (the corner's)."""
    deck = stage_deck(st, rx, corner=corner, hold=hold)
    return measure(deck, ["t_release"])["t_release"]


def test_footswitch_work_light_key_recharge_agrees_with_ngspice():
    check = check_board_in_memory(FOOTSWITCH, CheckOptions(propose_fixes=False))
    result = next(r for r in check.results if r.stage.contact.designator == "SW31")
    rx = result.receiver_electrical
    pb = pull_back(result.stage, rx, "press")
    assert pb is not None and not pb.at_threshold
    # At the fastest corner, to VT+ at its least (the pull back's opposite threshold).
    fastest = spice_pull_back(result.stage, rx, dict(pb.corner_fastest, threshold=pb.opposite_v),
                              pb.min_closure_s)
    assert fastest == pytest.approx(pb.fastest_s, rel=5e-3)
    # The hand figure in the board's comments: about 28 ms, far over the 10 ms bounce.
    assert 27e-3 < fastest < 29e-3 and result.stage.contact.bounce_s == 10e-3
    # At the nominal corner, to VT+ typ (the deck's nominal release threshold).
    assert spice_pull_back(result.stage, rx, "nominal", pb.min_closure_s) == pytest.approx(pb.nominal_s, rel=5e-3)


def test_two_capacitors_recharge_agrees_with_ngspice():
    # C1 across the contact at the pin, C2 behind R2 = 1k: after a 1 µs closure C2 still
    # holds most of its charge and speeds the recharge of C1 through R2.
    two = stage(resistors=(Resistor("R1", "vcc", "rx", 10e3, role="pull"),
                           Resistor("R2", "rx", "n2", 1e3, role="other")),
                capacitors=(Capacitor("C1", "rx", "0", 100e-9), Capacitor("C2", "n2", "0", 100e-9)),
                rails=(RailSource("vcc", 5.0, 0.05),), throws=(Throw("rx", "0", "pressed", 0.1),))
    rx = receiver_electrical()
    pb = pull_back(two, rx, "press")
    assert pb is not None and not pb.at_threshold
    assert spice_pull_back(two, rx, "nominal", pb.min_closure_s) == pytest.approx(pb.nominal_s, rel=5e-3)
    fastest = spice_pull_back(two, rx, dict(pb.corner_fastest, threshold=pb.opposite_v), pb.min_closure_s)
    assert fastest == pytest.approx(pb.fastest_s, rel=5e-3)
