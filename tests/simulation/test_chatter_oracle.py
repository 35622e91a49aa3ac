"""One recorded chatter trial: our event integration against ngspice.

Oracle: ngspice (Debian package `ngspice`) runs the deck `chatter_deck`
writes. At every switching instant the receiver voltage just before the
toggle (ngspice's `.meas ... FIND ... AT=`) must agree with our exact
integration within 0.5 % (DESIGN.md section 10's agreement). Where the node
sits near 0 V (a contact of 0.1 Ω closed against a pull resistor holds the
pin at tens of µV) a relative figure means nothing, so the tolerance there is
an absolute 3 mV: ngspice's switch model (ROFF 1e12, its own tolerances) moves
such a level by far less, and a logic threshold is more than 0.8 V away. The
output-edge count is compared too: the same hysteresis (VT+/VT- or one
switching point) is applied to ngspice's own waveform (.print of every time
point; linear between points).
"""

from __future__ import annotations

import re

import pytest

from drc.simulation.injection import chatter_deck, replay_trial, simulate_stage
from tests.simulation.demo import demo_result
from tests.support.ngspice import measurements, run_deck
from tests.support.waveforms import count_edges

pytestmark = pytest.mark.ngspice

CASES = [
    ("front_panel.cir", "SW1", 11),  # RC into a Schmitt input, slower than the bounce
    ("front_panel.cir", "SW3", 4),  # RC into a Schmitt input, faster than the bounce
    ("front_panel.cir", "SW4", 2),  # pull-up only, into a clock input
    ("front_panel.cir", "SW5", 9),  # RC into a plain input
]
_ROW = re.compile(r"^\d+\s+(\S+)\s+(\S+)\s*$", re.MULTILINE)


@pytest.mark.parametrize("board, contact, seed", CASES, ids=[c[1] for c in CASES])
def test_chatter_trial_agrees_with_ngspice(board, contact, seed):
    result = demo_result(board, contact)
    rx = result.receiver_electrical
    sim = simulate_stage(result.stage, rx, trials=40, seed=seed)
    trial = sim.trial(sim.worst_trial)
    deck = chatter_deck(result.stage, rx, trial)
    replay = replay_trial(result.stage, rx, trial)
    node = re.search(r"FIND (v\(\w+\))", deck).group(1)
    proc = run_deck(deck.replace("\n.end\n", f"\n.print tran {node}\n.end\n"), timeout=300)
    found = measurements(proc.stdout)
    names = [f"v{i:03d}" for i in range(len(replay.instants))]
    missing = [n for n in names if n not in found]
    assert not missing, (missing[:5], proc.stdout[-2000:], proc.stderr[-2000:])
    worst = []
    for name, t, ours in zip(names, replay.instants, replay.v_before, strict=False):
        theirs = found[name]
        tol = max(5e-3 * abs(ours), 3e-3)
        worst.append(abs(theirs - ours) / tol)
        assert abs(theirs - ours) <= tol, (name, t, theirs, ours)
    assert found["vend"] == pytest.approx(replay.v_end, rel=5e-3, abs=3e-3)
    # The same trial, counted on ngspice's waveform with the same receiver model.
    rows = [(float(a), float(b)) for a, b in _ROW.findall(proc.stdout)]
    assert len(rows) > 100, proc.stdout[-2000:]
    times, volts = zip(*rows, strict=True)
    for edge, start, stop in (("press", 0.0, replay.leak_switch_s), ("release", replay.leak_switch_s, replay.t_stop)):
        spice_edges = count_edges(times, volts, start, stop, replay.upper_v, replay.lower_v, rx.vcc)
        assert spice_edges == replay.edges[edge], (edge, spice_edges, replay.edges)
    # The recorded trial is the one the simulation counted as its worst.
    assert replay.edges == sim.worst_edges
