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
from drc.pipeline import check_netlist_text
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
    # The second stage's press settles at 3.84 V (1 kohm / 3.3 kohm divider, Ohm's law),
    # above the HC14's VT- band (at most 2.7 V at 5.25 V): no crossing.
    divider = ("divider\nV1 vcc 0 DC 5\nR1 vcc in 1k\nR2 in n 3.3k\nC1 in 0 4.7u\nSW1 n 0 TACTILE\n"
               "XU1 in y1 0 y2 0 y3 0 y4 0 y5 0 y6 0 vcc 74HC14\n")
    for contact, result in (("SW5", demo_result("front_panel.cir", "SW5")),
                            ("SW1", check_netlist_text(divider, "divider.cir")[1][0])):
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
        # SW5 feeds a plain input: a one-edge actuation that lingers in the band is not clean.
        assert e["clean_trials"] <= e["histogram"].get("1", 0)
        assert e["clean_trials"] + e["lingering_trials"] >= e["histogram"].get("1", 0)
    assert doc["clean_trials"] <= min(doc["edges"][e]["clean_trials"] for e in ("press", "release"))
    console = Console(record=True, width=100)
    render_simulation_text(sim, console)
    out = console.export_text()
    assert "SW5" in out and f"{doc['clean_trials']}/200" in out


def test_floating_stage_is_a_clear_error():
    result = demo_result("dimmer_rack.cir", "SW15")
    with pytest.raises(UsageError, match="SW15"):
        simulate_stage(result.stage, result.receiver_electrical, trials=10)


# ---------------------------------------------------------------- plain inputs: the undefined band

def _plain_rc(r=10e3, c=100e-9):
    st = stage(resistors=(Resistor("R1", "vcc", "rx", r, role="pull"),),
               capacitors=(Capacitor("C1", "rx", "0", c),),
               rails=(RailSource("vcc", 5.0, 0.05),), throws=(Throw("rx", "0", "pressed", 0.1),))
    rx = receiver_electrical(leak_high=(0.0, 0.0), leak_low=(0.0, 0.0))
    from dataclasses import replace
    plain = replace(rx, schmitt=False, rising_threshold=(1.5, 2.5, 3.5), falling_threshold=(1.5, 2.5, 3.5),
                    vil_max=1.5, vih_min=3.5, transition_limit_s_per_v=500e-9 / 4.5)
    return st, plain


def test_a_plain_input_lingers_as_long_as_the_rc_law_says():
    # Release without bounce: the pin charges through R1 = 10 kOhm into 100 nF from ~0 V to 5 V.
    # Lessons In Electric Circuits Vol. I ch. 16: v = 5 (1 - exp(-t/RC)); it is between VIL 1.5 V
    # and VIH 3.5 V from RC ln(5/3.5) to RC ln(5/1.5), i.e. for RC ln(3.5/1.5) = 847 us.
    st, rx = _plain_rc()
    sim = simulate_stage(st, rx, trials=5, seed=0, bounce_s=0.0)
    tau = 10e3 * 100e-9
    v_closed = 5.0 * 0.1 / (10e3 + 0.1)  # the pressed level the release starts from
    expected = tau * math.log((5.0 - v_closed - 0) / (5.0 - 3.5)) - tau * math.log((5.0 - v_closed) / (5.0 - 1.5))
    stays = sim.edges["release"].longest_stay_s
    assert stays == pytest.approx(expected, rel=1e-6)
    # 847 us is far over the 222 ns a ramp at the transition limit takes across the band: not clean,
    # as the check's slow-edge rule says, though each actuation has exactly one output edge. The
    # press discharges through the 0.1 Ohm contact (tau = 10 ns): it crosses the band in 8.5 ns.
    assert sim.linger_limit_s == pytest.approx(500e-9 / 4.5 * 2.0)
    assert all(s.histogram == {1: 5} for s in sim.edges.values())
    assert sim.edges["release"].lingering_trials == 5 and sim.edges["press"].lingering_trials == 0
    assert sim.edges["press"].longest_stay_s == pytest.approx(0.1 * 10e3 / (10e3 + 0.1) * 100e-9
                                                              * math.log(3.5 / 1.5), rel=1e-3)
    assert sim.clean_trials == 0


def test_a_fast_plain_input_does_not_linger():
    # 100 Ohm into 10 pF: tau = 1 ns, the band is crossed in ~0.85 ns, under the 222 ns limit.
    st, rx = _plain_rc(r=100.0, c=10e-12)
    sim = simulate_stage(st, rx, trials=5, seed=0, bounce_s=0.0)
    assert all(s.lingering_trials == 0 for s in sim.edges.values())
    assert sim.clean_trials == 5


def test_simulate_and_check_tell_one_story_on_a_plain_input():
    # front_panel SW5: an RC into a plain 74HC04 input; the check reports slow-edge, and the
    # simulation counts no actuation clean (each stays in the band for hundreds of microseconds).
    result = demo_result("front_panel.cir", "SW5")
    sim = simulate_stage(result.stage, result.receiver_electrical, trials=100, seed=1)
    assert sim.receiver_model == "plain" and sim.clean_trials == 0
    assert all(s.lingering_trials == 100 for s in sim.edges.values())


# ---------------------------------------------------------------- latches

def test_latch_truth_table():
    # The cross-coupled NAND (set-reset) latch of Lessons In Electric Circuits Vol. IV ch. 10:
    # a low input sets its gate's output high; both high hold; both low drive both outputs high.
    from drc.simulation.readers import Latch
    hi, lo = np.array([True]), np.array([False])
    latch = Latch("nand", lo, hi)  # this input low: this gate's output high
    assert latch.out[0] and not latch.other[0]
    assert not latch.update(latch.asserted(hi), latch.asserted(hi))[0]  # both high: hold
    assert latch.update(latch.asserted(hi), latch.asserted(lo))[0] and not latch.out[0]  # reset
    latch.update(latch.asserted(lo), latch.asserted(lo))
    assert latch.out[0] and latch.other[0]  # both low: both high
    nor = Latch("nor", hi, lo)  # NOR: a high input sets its gate's output low
    assert not nor.out[0] and nor.other[0]


def test_the_footswitch_latch_absorbs_the_bounce():
    # footswitch_unit SW20: a changeover into a '00 NAND latch. During a press the common
    # bounces between NO and neither throw; both inputs then read high and the latch holds:
    # one output edge per actuation (common practice, no source).
    from drc.library.catalogue import load_library
    from drc.simulation.injection import latch_gates
    result = demo_result("footswitch_unit.cir", "SW20")
    gates = latch_gates(result.stage, load_library())
    assert gates is not None and gates.logic == "nand"
    sim = simulate_stage(result.stage, result.receiver_electrical, trials=300, seed=4, latch=gates)
    assert sim.receiver_model == "latch" and sim.clean_trials == 300
    # The same bounces read through NOR gates (inputs idle high assert them) are not absorbed.
    wrong = simulate_stage(result.stage, result.receiver_electrical, trials=300, seed=4,
                           latch=type(gates)(gates.partner_net, "nor"))
    assert wrong.clean_trials < 300


def test_a_latch_without_its_gates_is_not_simulated():
    result = demo_result("footswitch_unit.cir", "SW20")
    sim = simulate_stage(result.stage, result.receiver_electrical, trials=50)
    assert not sim.simulated and sim.trials == 0 and "not simulated" in sim.notes[0]
    doc = simulation_json(sim)
    assert doc["simulated"] is False and doc["clean_trials"] == 0


# ---------------------------------------------------------------- first-edge stages

@pytest.mark.parametrize("c", [1e-6, 10e-9])
def test_a_capacitor_across_the_contact_is_counted_by_the_closure_and_opening_reading(c):
    # 10 kOhm pull-up, C straight across the contact, into a Schmitt input (VT+ 2.9 V typ here).
    # Each make (at least 1 us, chatter.INTERVAL_S) empties C through the bare contact (tau 0.1 Ohm x C);
    # an opening recharges it from ~0 V: 5 (1 - exp(-t/RC)) crosses VT+ after
    # T = RC ln(5 / (5 - 2.9)) (Lessons In Electric Circuits Vol. I ch. 16). So a press gives one edge
    # plus two for every opening longer than T, a release one plus two for every opening but the last.
    st = stage(resistors=(Resistor("R1", "vcc", "rx", 10e3, role="pull"),),
               capacitors=(Capacitor("C1", "rx", "0", c),),
               rails=(RailSource("vcc", 5.0, 0.05),), throws=(Throw("rx", "0", "pressed", 0.1),))
    rx = receiver_electrical(leak_high=(0.0, 0.0), leak_low=(0.0, 0.0))
    sim = simulate_stage(st, rx, trials=300, seed=9)
    vt = sim.upper_v
    cross = 10e3 * c * math.log(5.0 / (5.0 - vt))
    for edge, first_break in (("press", 1), ("release", 0)):
        rows = sim.trains[edge]
        expected = []
        for row in rows:
            t = row[~np.isnan(row)]
            gaps = np.diff(t)
            breaks = gaps[first_break::2]  # the last opening of a release never ends: not a gap
            expected.append(1 + 2 * int(np.sum(breaks > cross)))
        counted = [k for k, n in sim.edges[edge].histogram.items() for _ in range(n)]
        assert sorted(counted) == sorted(expected), edge
    if c == 1e-6:  # T = 7.5 ms, longer than any opening (at most 1 ms): every trial clean
        assert sim.clean_trials == 300
