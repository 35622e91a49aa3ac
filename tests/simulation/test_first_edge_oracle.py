"""First-edge stages: check, simulate and ngspice tell one story.

A capacitor straight across the contact into a Schmitt input (74HC14 from
the library). Oracles: ngspice (Debian package `ngspice`) running the chatter
deck `chatter_deck` writes, for one hand-made bounce (a 1 µs closure, then an
opening longer than the recharge) and for random chatter; the RC law by hand
is in tests/analysis/test_first_edge.py. The check's closure-and-opening
reading (drc.analysis.first_edge) at the nominal corner gives the recharge
time T; `drc simulate` must count, in every trial, one output edge per
press plus two for every opening longer than T, and ngspice must count the
same on its own waveform and cross VT+ T after the opening, within 0.5 %
(DESIGN.md section 10's agreement).
"""

from __future__ import annotations

import re

import numpy as np
import pytest

from drc.analysis.first_edge import pull_back
from drc.pipeline import check_netlist_text
from drc.simulation.chatter import BounceTrain, ChatterTrial
from drc.simulation.injection import chatter_deck, replay_trial, simulate_stage
from tests.support.ngspice import measurements, run_deck
from tests.support.waveforms import count_edges

_ROW = re.compile(r"^\d+\s+(\S+)\s+(\S+)\s*$", re.MULTILINE)


def _result(r: str, c: str):
    text = (f"* C across the contact\nV1 vcc 0 DC 5\nR1 vcc in {r}\nSW1 in 0 TACTILE\nC1 in 0 {c}\n"
            "XU1 in y1 0 y2 0 y3 0 y4 0 y5 0 y6 0 vcc 74HC14\n.end\n")
    _, results, findings = check_netlist_text(text)
    return results[0], [f for f in findings if f.rule == "bounce-window"]


def _openings(row: np.ndarray) -> np.ndarray:
    """The break intervals of one press train: it closes at 0, opens, closes, ... and its
    last toggle closes for good, so every second interval from the second is an opening."""
    t = row[~np.isnan(row)]
    return np.diff(t)[1::2]


def test_simulate_counts_what_the_closure_reading_predicts():
    result, findings = _result("10k", "100n")
    rx = result.receiver_electrical
    pb = pull_back(result.stage, rx, "press")
    assert pb is not None and pb.nominal_s is not None
    assert any(f.message.startswith("press") and "closure-and-opening" in f.message for f in findings)
    sim = simulate_stage(result.stage, rx, trials=400, seed=4)
    predicted = sorted(1 + 2 * int(np.sum(_openings(row) > pb.nominal_s))
                       for row in sim.trains["press"])
    counted = sorted(k for k, n in sim.edges["press"].histogram.items() for _ in range(n))
    assert counted == predicted
    assert sim.edges["press"].clean_trials < 400  # openings up to 1 ms outlast T (about 0.7 ms)
    # simulate says so, with the check's T
    note = next(n for n in sim.notes if n.startswith("press crosses at once"))
    assert f"{pb.nominal_s * 1e6:.3g} µs" in note and "count extra edges" in note
    assert not any(n.startswith("release") for n in sim.notes)  # the release does not cross at once


def test_a_stage_the_check_passes_is_clean_in_every_simulated_trial():
    result, findings = _result("100k", "1u")
    assert not findings
    sim = simulate_stage(result.stage, result.receiver_electrical, trials=1000, seed=8)
    assert sim.clean_trials == 1000
    assert any(n.startswith("press crosses at once") and "none drawn here can" in n for n in sim.notes)


def test_simulate_draws_its_shortest_interval_from_the_min_closure_limit(tmp_path):
    from tests.cli.helpers import drc
    board = tmp_path / "b.cir"
    board.write_text("* C across the contact\nV1 vcc 0 DC 5\nR1 vcc in 100k\nSW1 in 0 TACTILE\n"
                     "C1 in 0 1u\nXU1 in y1 0 y2 0 y3 0 y4 0 y5 0 y6 0 vcc 74HC14\n.end\n", encoding="utf-8")
    (tmp_path / "drc.toml").write_text('[limits]\nmin-closure = "20 us"\n', encoding="utf-8")
    proc = drc("simulate", str(board), "SW1", "--trials", "20", "--format", "json")
    assert proc.returncode == 0, proc.stderr
    import json
    notes = json.loads(proc.stdout)["notes"]
    assert any("intervals drawn here last 20 µs to 1 ms" in n for n in notes), notes


def _spice(result, trial):
    rx = result.receiver_electrical
    deck = chatter_deck(result.stage, rx, trial)
    node = re.search(r"FIND (v\(\w+\))", deck).group(1)
    replay = replay_trial(result.stage, rx, trial)
    extra = (f".meas tran back WHEN {node}={replay.upper_v:.9g} RISE=1 TD={replay.instants[0]:.15g}\n"
             f".print tran {node}\n")
    proc = run_deck(deck.replace("\n.end\n", "\n" + extra + ".end\n"), timeout=300)
    rows = [(float(a), float(b)) for a, b in _ROW.findall(proc.stdout)]
    assert len(rows) > 100, proc.stdout[-2000:] + proc.stderr[-2000:]
    times, volts = zip(*rows, strict=True)
    edges = count_edges(times, volts, 0.0, replay.leak_switch_s, replay.upper_v, replay.lower_v)
    return measurements(proc.stdout), edges, replay


@pytest.mark.ngspice
def test_ngspice_recharges_in_the_reported_time_after_a_minimum_closure():
    result, _ = _result("10k", "100n")
    pb = pull_back(result.stage, result.receiver_electrical, "press")
    # Close for the 1 us minimum, open for 3 ms (longer than T), close for good.
    trial = ChatterTrial(0, BounceTrain("press", (0.0, 1e-6, 3e-3)), BounceTrain("release", (0.0,)))
    found, edges, replay = _spice(result, trial)
    opened = replay.instants[1]
    assert found["back"] - opened == pytest.approx(pb.nominal_s, rel=5e-3)
    assert edges == replay.edges["press"] == 3  # fall at the closure, rise in the opening, fall again


@pytest.mark.ngspice
def test_random_chatter_on_a_capacitor_across_the_contact_agrees_with_ngspice():
    result, _ = _result("10k", "100n")
    pb = pull_back(result.stage, result.receiver_electrical, "press")
    sim = simulate_stage(result.stage, result.receiver_electrical, trials=40, seed=11)
    trial = sim.trial(sim.worst_trial)
    _, edges, replay = _spice(result, trial)
    opens = _openings(np.array(trial.press.toggles))
    assert edges == replay.edges["press"] == 1 + 2 * int(np.sum(opens > pb.nominal_s))
    assert edges > 1  # the worst trial has an opening longer than the recharge
