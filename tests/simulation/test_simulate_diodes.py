"""`drc simulate` on a stage with diodes says "not simulated", why, and what the check reads.

Issue 13 item 6: simulate and check tell one story. The chatter simulation
solves its trials in closed form per linear state, so a stage with a diode
is not simulated; its result must say so with the reason (no trials, no
verdict), and name the check's closure-and-opening figure for an edge that
crosses at once. The figure itself is held to the Shockley law and the RC
law by hand in tests/analysis/test_first_edge_exact.py and to ngspice in
tests/oracle/test_first_edge_exact.py; here it must be the check's.
"""

from __future__ import annotations

from drc.analysis.first_edge import pull_back
from drc.pipeline import check_netlist_text
from drc.simulation.injection import simulate_stage

BOARD = ("* work-light key at 5 V\nV1 vcc 0 DC 5\nR1 vcc sw 100k\nR2 sw in 47k\nD1 in sw DK\nC1 in 0 470n\n"
         "SW1 sw 0 TACTILE\nXU1 in y1 0 y2 0 y3 0 y4 0 y5 0 y6 0 vcc 74HC14\n"
         ".model DK D(IS=2.5n N=1.75)\n.end\n")


def test_a_diode_stage_is_not_simulated_and_names_the_checks_reading():
    _board, results, findings = check_netlist_text(BOARD)
    [result] = results
    rx = result.receiver_electrical
    sim = simulate_stage(result.stage, rx, trials=50, seed=1)
    assert not sim.simulated and sim.trials == 0 and sim.clean_trials == 0
    assert sim.notes[0].startswith("not simulated:") and "D1" in sim.notes[0]
    pb = pull_back(result.stage, rx, "press")
    assert pb is not None and pb.nominal_s is not None
    note = next(n for n in sim.notes if n.startswith("press crosses at once"))
    assert f"{pb.nominal_s * 1e3:.3g} ms" in note
    # The check agrees: the recharge outlasts the 10 ms bounce, so no bounce-window finding.
    assert pb.fastest_s is not None and pb.fastest_s > result.stage.contact.bounce_s
    assert not [f for f in findings if f.rule == "bounce-window"]
