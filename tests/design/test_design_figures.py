"""`drc design`'s figures and margins, and the fix texts' quoted figures, worked by hand.

Outside reference: the designed stage's steady levels by the node equations
(Thevenin, *Lessons In Electric Circuits*, Vol. I, ch. 10) and its edges by
the first-order RC law t = R C ln((v_inf - v0) / (v_inf - vth))
(*Lessons In Electric Circuits*, Vol. I, ch. 16), at every vertex of the
tolerance box (R +-5 %, C +-20 %, rail +-5 %, the input current's range), for
the values the design chose. The receiver is one written here (not the
library's 74HC), so a design that ignored the receiver it was given, or a
contact resistance other than the limits', would show. Margins are
value - limit on the passing side (`forward.Margin`).
"""

from __future__ import annotations

import itertools
import math
from dataclasses import replace

import pytest

from drc.design import fixes
from drc.design.forward import DesignRequest, design_stage
from tests.checks.builders import LIMITS, analysed, hc, rc_stage

R_TOL, C_TOL, V_TOL = 0.05, 0.20, 0.05
CONTACT_OHMS = 5.0  # a worn contact, set through the limits (contact_closed_resistance)
# A Schmitt receiver unlike the library's 74HC: VT+ 1.9-3.3 V, VT- 1.1-2.0 V, 2 uA leakage.
RX = replace(hc(), rising_threshold=(1.9, 2.6, 3.3), falling_threshold=(1.1, 1.5, 2.0),
             leak_high_a=(0.0, 2e-6), leak_low_a=(-2e-6, 0.0))


def _node(r1, r2, v, current, pressed, pull_up, rc=CONTACT_OHMS):
    """(pin voltage, resistance the capacitor sees) of the designed stage in one state."""
    rail_pull, rail_contact = (v, 0.0) if pull_up else (0.0, v)
    if pressed:
        n1 = (rail_pull / r1 + rail_contact / rc - current) / (1 / r1 + 1 / rc)
        seen = r1 * rc / (r1 + rc) + r2
    else:
        n1 = rail_pull - current * r1
        seen = r1 + r2
    return n1 - current * r2, seen


def _vertices(r1, r2, c, leak):
    for s1, s2, sc, sv, i in itertools.product((-1, 1), (-1, 1), (-1, 1), (-1, 1), leak):
        yield r1 * (1 + s1 * R_TOL), r2 * (1 + s2 * R_TOL), c * (1 + sc * C_TOL), 5.0 * (1 + sv * V_TOL), i


def hand_figures(r1, r2, c, pull_up, rc=CONTACT_OHMS):
    """Level margins per state and (fastest, slowest) per edge, by hand."""
    high = {"released": pull_up, "pressed": not pull_up}
    margins = {}
    for state, logic in high.items():
        pressed = state == "pressed"
        pins = [_node(a, b, v, i, pressed, pull_up, rc)[0]
                for a, b, _c, v, i in _vertices(r1, r2, c, RX.leak_high_a if logic else RX.leak_low_a)]
        margins[state] = (min(pins) - RX.rising_threshold[2]) if logic else (RX.falling_threshold[0] - max(pins))
    edges = {}
    for edge, (before, after) in {"press": ("released", "pressed"), "release": ("pressed", "released")}.items():
        up = high[after]
        thr = RX.rising_threshold if up else RX.falling_threshold
        inner, outer = (thr[0], thr[2]) if up else (thr[2], thr[0])
        times = {inner: [], outer: []}
        for a, b, cc, v, i in _vertices(r1, r2, c, RX.leak_high_a if up else RX.leak_low_a):
            start = _node(a, b, v, i, before == "pressed", pull_up, rc)[0]
            final, seen = _node(a, b, v, i, after == "pressed", pull_up, rc)
            for vth in (inner, outer):
                times[vth].append(seen * cc * math.log((final - start) / (final - vth)))
        edges[edge] = (min(times[inner]), max(times[outer]))
    return margins, edges


@pytest.mark.parametrize("topology", ["pull-up", "pull-down"])
def test_design_margins_are_the_hand_figures(topology):
    limits = {**LIMITS, "contact_closed_resistance": CONTACT_OHMS}
    d = design_stage(DesignRequest(5.0, "HC", True, 0.010, 0.100, topology=topology), rx=RX, limits=limits)
    assert d.ok, d.reason
    assert d.result.receiver_electrical == RX  # the receiver it was given, not the library's
    margins, edges = hand_figures(d.pull.ohms, d.series_resistor.ohms, d.capacitor.farads, topology == "pull-up")
    got = {m.name: m for m in d.margins}
    for state, margin in margins.items():
        m = got[f"{state} level margin"]
        assert m.value == pytest.approx(margin, rel=1e-7, abs=1e-9)
        assert m.limit == pytest.approx(LIMITS["leakage_headroom_margin"] * 5.0)
        assert m.spare == pytest.approx(m.value - m.limit, rel=1e-9)
    for edge, (fastest, slowest) in edges.items():
        times = next(e for e in d.edges if e.edge == edge)
        assert times.fastest_s == pytest.approx(fastest, rel=1e-6)
        assert times.slowest_s == pytest.approx(slowest, rel=1e-6)
        bounce, latency = got[f"{edge} fastest vs bounce"], got[f"{edge} slowest vs latency"]
        assert bounce.spare == pytest.approx(fastest - 0.010, rel=1e-6)
        assert latency.spare == pytest.approx(0.100 - slowest, rel=1e-6)
    assert all(m.spare >= 0 for m in d.margins)  # ok means every figure on its passing side


def test_design_parts_by_designator():
    d = design_stage(DesignRequest(5.0, "HC", True, 0.010, 0.100), rx=RX, limits=LIMITS)
    assert d.part("R1") == d.pull and d.part("R2") == d.series_resistor and d.part("C1") == d.capacitor
    assert d.pull.ohms != d.series_resistor.ohms or d.pull.designator != d.series_resistor.designator
    with pytest.raises(KeyError):
        d.part("R9")


def test_a_given_receiver_is_used_with_the_library_limits():
    # Only the receiver given: the limits come from rules/limits.toml, the receiver is the one given.
    d = design_stage(DesignRequest(5.0, "HC", True, 0.010, 0.100), rx=RX)
    assert d.result.receiver_electrical == RX


def test_fragment_reads_back_as_the_designed_stage(tmp_path):
    # The stage drc design analysed is the stage its fragment describes: read back by drc
    # (with a 74HC14's input A1, pin 1, on net 'in'), the same contact, parts and pin.
    from drc.pipeline import CheckOptions, check_board_in_memory
    d = design_stage(DesignRequest(5.0, "HC", True, 0.010, 0.100))
    board = tmp_path / "design.cir"
    board.write_text("* design read back\n" + d.netlist_fragment()
                     + "XU1 in out 0 0 0 0 0 0 0 0 0 0 0 vcc 74HC14\n.end\n", encoding="utf-8")
    [back] = [r.stage for r in check_board_in_memory(board, CheckOptions(propose_fixes=False)).results
              if r.stage.contact.designator == "SW1"]
    mine = d.stage
    assert mine.contact.designator == back.contact.designator
    assert set(mine.contact.terminals) == set(back.contact.terminals) == {"n1", "0"}
    assert mine.contact.form == back.contact.form
    assert (mine.receiver.ref, mine.receiver.pin) == ("U1:1", 1) and back.receiver.pin == 1
    assert sorted(mine.parts) == sorted(back.parts)
    ohms = {r.designator: r.ohms for r in back.circuit.resistors}
    assert {r.designator: r.ohms for r in mine.circuit.resistors} == pytest.approx(ohms)


# ------------------------------------------------------------------ the figures fix texts quote

PREFIX = {"p": 1e-12, "n": 1e-9, "µ": 1e-6, "m": 1e-3, "": 1.0, "k": 1e3}


def _quoted(text: str, after: str, unit: str) -> float:
    """The figure quoted right after `after` (three significant figures and a prefix)."""
    assert text.startswith(after), text
    number, word = text[len(after):].split()[:2]
    assert word.endswith(unit), text
    return float(number) * PREFIX[word[:-len(unit)]]


def _near(quoted: float, hand: float) -> bool:
    return abs(quoted - hand) <= 0.005 * abs(hand)  # three figures: within half a unit of the third


def test_fix_figures_quote_the_hand_figures():
    # rule_figure names the edge that sets the figure and its time: the slowest edge for
    # response-latency, the fastest for bounce-window; the smallest level margin for
    # leakage-headroom; the largest held current for shorted-pull.
    r1, r2, c = 10e3, 22e3, 2.2e-6
    result = analysed(rc_stage(r1=r1, r2=r2, c1=c), RX)
    margins, edges = hand_figures(r1, r2, c, True, rc=0.1)  # rc_stage's contact: 0.1 ohm
    slowest = max(edges, key=lambda e: edges[e][1])
    assert _near(_quoted(fixes.rule_figure("response-latency", result, LIMITS), f"{slowest} ", "s"),
                 edges[slowest][1])
    fastest = min(edges, key=lambda e: edges[e][0])
    assert _near(_quoted(fixes.rule_figure("bounce-window", result, LIMITS), f"{fastest} ", "s"), edges[fastest][0])
    for edge in edges:  # asked about one edge, the figure is that edge's
        assert _near(_quoted(fixes.rule_figure("response-latency", result, LIMITS, edge), f"{edge} ", "s"),
                     edges[edge][1])
        assert _near(_quoted(fixes.rule_figure("bounce-window", result, LIMITS, edge), f"{edge} ", "s"),
                     edges[edge][0])
    worst = min(margins, key=margins.get)
    assert _near(_quoted(fixes.rule_figure("leakage-headroom", result, LIMITS), f"{worst} margin ", "V"),
                 margins[worst])
    # Held with the contact closed: the rail's maximum over R1's minimum and the 0.1 ohm contact,
    # plus what the input sources through R2 at most (2 uA).
    held = 5.25 / (0.95 * r1 + 0.1) + 2e-6 * 0.95 * r1 / (0.95 * r1 + 0.1)
    assert _near(_quoted(fixes.rule_figure("shorted-pull", result, LIMITS), "held ", "A"), held)


def test_each_edge_finding_quotes_its_own_edge():
    # A stage whose press and release both bounce through: one finding per edge, and each
    # finding's fix text quotes the figure of the edge it is about (fix texts name the edge first).
    from drc.checks import run_stage_rules
    result = analysed(rc_stage(r1=10e3, r2=10e3, c1=100e-9), RX)
    findings = [f for f in run_stage_rules(result, LIMITS) if f.rule == "bounce-window"]
    assert {f.message.split(" ", 1)[0] for f in findings} == {"press", "release"}
    texts = fixes.propose_fixes(result, findings, LIMITS)
    for f in findings:
        edge = f.message.split(" ", 1)[0]
        assert f"({edge} " in texts[f], texts[f]


def test_the_fallback_out_of_budget_claims_no_change():
    # A two-capacitor stage goes to the bounded fallback on the exact solver; with a budget of one
    # analysis it cannot bracket anything: no change is claimed (fail closed), and the analyses are
    # counted: the present values' and the one of the budget (test_analysis_counts.py spies on them).
    from drc.board.stage import Capacitor
    stage = rc_stage(r1=10e3, r2=1e3, c1=100e-9, extra_caps=(Capacitor("C2", "n1", "0", 10e-9),))
    solution, count = fixes.search(stage, RX, LIMITS, "E24", budget=1)
    assert solution is None and count == 2


def _passes_by_hand(d, bounce, latency, pull_up):
    """Every stage rule on the design's values, by hand at every vertex (contact 0.1 ohm, the
    limits of rules/limits.toml): level margins, both edges, the held pull current."""
    margins, edges = hand_figures(d.pull.ohms, d.series_resistor.ohms, d.capacitor.farads, pull_up,
                                  rc=LIMITS["contact_closed_resistance"])
    held = 5.0 * (1 + V_TOL) / (d.pull.ohms * (1 - R_TOL))  # rail max over R1 min, the contact closed
    return (min(margins.values()) >= LIMITS["leakage_headroom_margin"] * 5.0
            and all(fast >= bounce and slow <= latency for fast, slow in edges.values())
            and held <= LIMITS["pull_current_budget"])


@pytest.mark.parametrize("bounce, latency", [(1e-3, 8e-3), (0.020, 0.180)])
def test_a_design_at_a_neighbouring_capacitor_passes_by_hand(bounce, latency):
    # E6 values, pull-down: here no change of one or two parts from the start values passes (the
    # complete search of the first two attempts finds none); the design holds a neighbouring
    # capacitor and moves both resistors (forward._attempts). Its values pass every rule by hand.
    d = design_stage(DesignRequest(5.0, "HC", True, bounce, latency, topology="pull-down", series="E6"),
                     rx=RX, limits=LIMITS)
    assert d.ok, d.reason
    assert _passes_by_hand(d, bounce, latency, False)


def test_a_start_that_passes_is_the_design():
    # The start of forward's docstring, by hand for E6, 5 V, bounce 1 ms: R1 the least E6 value
    # with 5.25 V / (0.95 R1) <= 0.8 mA, i.e. R1 >= 6.908 kOhm: 10 kOhm; R2 22 kOhm; C1 the E6
    # value nearest 2.5 x 1 ms / 22 kOhm = 113.6 nF: 100 nF (|ln(113.6/100)| < |ln(150/113.6)|).
    # These pass every rule by hand with a 5 ms latency, so no value is moved (the design
    # proposed R1 33 kOhm, R2 33 kOhm, C1 47 nF before: a neighbouring capacitor's search).
    d = design_stage(DesignRequest(5.0, "HC", True, 1e-3, 5e-3, series="E6"), rx=RX, limits=LIMITS)
    assert (d.pull.ohms, d.series_resistor.ohms, d.capacitor.farads) == (10e3, 22e3, 100e-9)
    assert d.ok and _passes_by_hand(d, 1e-3, 5e-3, True)


@pytest.mark.parametrize("resistor, passes", [(10e3, True), (2.2e3, False)])
def test_a_held_pull_resistor_and_capacitor_stay_as_given(resistor, passes):
    # DesignRequest: "hold the capacitor or the pull resistor at this value". With both held only
    # R2 may move; 10 kOhm passes with another R2 (by hand), 2.2 kOhm with none (the verdict).
    d = design_stage(DesignRequest(5.0, "HC", True, 1e-3, 5e-3, capacitor=100e-9, resistor=resistor),
                     rx=RX, limits=LIMITS)
    assert (d.pull.ohms, d.capacitor.farads) == (resistor, 100e-9)
    assert d.ok == passes == _passes_by_hand(d, 1e-3, 5e-3, True)
