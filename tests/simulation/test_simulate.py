"""Bounce injection: random chatter trains and the receiver's output edges.

Check values: the first-order RC law v(t) = Vf + (V0 - Vf)·exp(-t/RC) from
*Lessons In Electric Circuits*, Vol. I, ch. 16 (reference/components-and-
contacts.md), evaluated by hand for a press interrupted by one break; and
the behaviour the trade expects of a filter slower than the bounce (one
output edge per actuation) and of a bare pull-up into an edge-sensitive input
(several edges per actuation): common practice, no source.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from rich.console import Console

from drc.board.stage import Capacitor, RailSource, Resistor, Throw
from drc.errors import UsageError
from drc.report.simulation_view import render_simulation_text, simulation_json
from drc.simulation.chatter import INTERVAL_S, BounceTrain, ChatterTrial, draw_trains
from drc.simulation.injection import replay_trial, simulate_stage
from tests.analysis.builders import receiver_electrical, stage
from tests.simulation.demo import demo_result


def test_trains_are_odd_bursts_within_the_bounce_time():
    rng = np.random.default_rng(7)
    rows = draw_trains(rng, 500, 10e-3)
    for row in rows:
        toggles = row[~np.isnan(row)]
        assert toggles[0] == 0.0 and toggles.size % 2 == 1
        assert toggles[-1] <= 10e-3
        gaps = np.diff(toggles)
        assert np.all(gaps >= INTERVAL_S[0]) and np.all(gaps <= INTERVAL_S[1])
    # Log-uniform intervals: about as many below 31.6 µs (the geometric middle) as above.
    gaps = np.concatenate([np.diff(r[~np.isnan(r)]) for r in rows])
    assert 0.4 < np.mean(gaps < math.sqrt(INTERVAL_S[0] * INTERVAL_S[1])) < 0.6


def test_debounced_stage_switches_once_every_trial():
    result = demo_result("remote_pod.cir", "SW1")
    # Precondition from the analysis: both nominal edges take longer than the whole bounce.
    assert all(e.nominal_s > result.stage.contact.bounce_s for e in result.edges.values())
    sim = simulate_stage(result.stage, result.receiver_electrical, trials=1000, seed=1)
    assert sim.trials == 1000 and sim.clean_trials == 1000
    assert all(s.histogram == {1: 1000} for s in sim.edges.values())


def test_bare_pullup_into_a_clock_input_chatters():
    result = demo_result("front_panel.cir", "SW4")
    assert result.stage.kind == "pull-only"
    sim = simulate_stage(result.stage, result.receiver_electrical, trials=1000, seed=2)
    assert sim.clean_trials < 50
    for stats in sim.edges.values():
        assert stats.mean_edges > 5 and sum(stats.histogram.values()) == 1000
        # An instant switch follows the contact: edges = toggles of the train (all odd counts).
        assert all(n % 2 == 1 for n in stats.histogram)
    worst = sim.trial(sim.worst_trial)
    assert sim.worst_edges == {"press": len(worst.press.toggles), "release": len(worst.release.toggles)}


def test_seeded_and_reproducible():
    result = demo_result("front_panel.cir", "SW3")
    a = simulate_stage(result.stage, result.receiver_electrical, trials=300, seed=5)
    b = simulate_stage(result.stage, result.receiver_electrical, trials=300, seed=5)
    c = simulate_stage(result.stage, result.receiver_electrical, trials=300, seed=6)
    assert simulation_json(a) == simulation_json(b)
    assert simulation_json(a) != simulation_json(c)


def test_no_bounce_gives_the_analysis_verdict():
    # With bounce 0 each actuation is one clean switch: one edge where the
    # analysis finds a crossing, none where it finds the level never crosses.
    for board, contact in (("front_panel.cir", "SW5"), ("dimmer_rack.cir", "RL1")):
        result = demo_result(board, contact)
        sim = simulate_stage(result.stage, result.receiver_electrical, trials=10, seed=0, bounce_s=0.0)
        for edge, stats in sim.edges.items():
            expected = 0 if result.edges[edge].nominal_s is None else 1
            assert stats.histogram == {expected: 10}, (contact, edge)


def test_event_integration_matches_the_rc_law():
    # 10 kΩ pull-up at the pin, 100 nF, contact to ground: press, break for
    # 300 µs (charging from ~0 V with tau = 1 ms), then make again.
    st = stage(resistors=(Resistor("R1", "vcc", "rx", 10e3, role="pull"),),
               capacitors=(Capacitor("C1", "rx", "0", 100e-9),),
               rails=(RailSource("vcc", 5.0, 0.05),), throws=(Throw("rx", "0", "pressed", 0.1),))
    rx = receiver_electrical(leak_high=(0.0, 0.0), leak_low=(0.0, 0.0))
    trial = ChatterTrial(0, BounceTrain("press", (0.0, 1e-3, 1.3e-3)), BounceTrain("release", (0.0,)))
    replay = replay_trial(st, rx, trial)
    tau_closed = (10e3 * 0.1 / (10e3 + 0.1)) * 100e-9
    v_closed = 5.0 * 0.1 / (10e3 + 0.1)
    # Lessons In Electric Circuits Vol. I ch. 16: v(t) = Vf + (V0 - Vf) exp(-t/tau).
    v_at_break = v_closed + (5.0 - v_closed) * math.exp(-1e-3 / tau_closed)
    v_at_remake = 5.0 + (v_at_break - 5.0) * math.exp(-300e-6 / 1e-3)
    assert replay.v_before[0] == pytest.approx(5.0, rel=1e-9)
    assert replay.v_before[1] == pytest.approx(v_at_break, rel=1e-6, abs=1e-9)
    assert replay.v_before[2] == pytest.approx(v_at_remake, rel=1e-9)
    # 1.30 V after the break stays under VT+ typ 2.9 V: the output falls once.
    assert v_at_remake < 2.9 and replay.edges["press"] == 1


def test_break_long_enough_to_cross_counts_three_edges():
    st = stage(resistors=(Resistor("R1", "vcc", "rx", 10e3, role="pull"),),
               capacitors=(Capacitor("C1", "rx", "0", 100e-9),),
               throws=(Throw("rx", "0", "pressed", 0.1),))
    rx = receiver_electrical(leak_high=(0.0, 0.0), leak_low=(0.0, 0.0))
    # A 1 ms break charges to 5(1 - e^-1) = 3.16 V > VT+ 2.9 V: fall, rise, fall.
    trial = ChatterTrial(0, BounceTrain("press", (0.0, 1e-3, 2e-3)), BounceTrain("release", (0.0,)))
    assert replay_trial(st, rx, trial).edges == {"press": 3, "release": 1}


def test_json_and_text():
    result = demo_result("front_panel.cir", "SW5")
    sim = simulate_stage(result.stage, result.receiver_electrical, trials=200, seed=3)
    doc = simulation_json(sim)
    assert doc["trials"] == 200 and 0 <= doc["clean_trials"] <= 200
    for edge in ("press", "release"):
        e = doc["edges"][edge]
        assert e["trials"] == 200 and sum(e["histogram"].values()) == 200
        assert e["clean_trials"] == e["histogram"].get("1", 0)
    assert doc["clean_trials"] <= min(doc["edges"][e]["clean_trials"] for e in ("press", "release"))
    console = Console(record=True, width=100)
    render_simulation_text(sim, console)
    out = console.export_text()
    assert "SW5" in out and f"{doc['clean_trials']}/200" in out


def test_floating_stage_is_a_clear_error():
    result = demo_result("dimmer_rack.cir", "SW15")
    with pytest.raises(UsageError, match="SW15"):
        simulate_stage(result.stage, result.receiver_electrical, trials=10)
