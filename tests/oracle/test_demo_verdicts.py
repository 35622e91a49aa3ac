"""The demo boards' expected timing findings, confirmed by ngspice at the worst corners.

`boards/lx24/NAME.expected` lists the findings each demo board must give.
For the timing rules those lines are held here to figures from outside the
tool: every edge of every stage with a capacitor is run in ngspice (Debian
package `ngspice`, the independent simulator) on the stage's deck
(drc.simulation.spice_deck) at its fastest and at its slowest corner, and
the verdict each rule states in its handbook text is taken from ngspice's
figures:

- bounce-window (RC stages): the edge at the fastest corner reaches the
  threshold sooner than the contact's bounce time × `bounce_margin`, and,
  for a press that crosses within one least closure into a Schmitt input
  (a first-edge stage), an opening after a `min_closure` closure also
  brings the input back across the other threshold that soon (ngspice on
  the stage's deck with the contact held closed for `min_closure`);
- response-latency: the edge at the slowest corner takes longer than
  `latency_limit`, or never reaches the threshold;
- slow-edge (a capacitor into a plain input): 1/|dV/dt| at the slowest
  corner's crossing (ngspice's secant over ±50 mV around the threshold)
  exceeds the family's transition limit.

The counts of these lines per contact and receiver must equal those in the
.expected files, and our fastest and slowest times must agree with ngspice
within 0.5 % (DESIGN.md section 10). Stages without a capacitor are run
too: their edges switch with the contact, but a level held short of the
threshold (a pull-down against a TTL input's current) never gets there,
which ngspice shows as a crossing it cannot measure. That the corners the analysis picks bound every
combination of tolerances is checked against Monte Carlo runs in
tests/analysis/test_corners.py.
"""

from __future__ import annotations

import re
from collections import Counter
from pathlib import Path

import pytest

from drc.analysis.first_edge import pull_back
from drc.analysis.physics.compiled import compile_circuit
from drc.checks.common import DEBOUNCED_ELSEWHERE, RC_KINDS
from drc.pipeline import CheckOptions, check_board_in_memory, effective_limits
from drc.simulation.spice_deck import MEASUREMENTS, stage_deck
from tests.boards.test_demo_boards import read_expected
from tests.support.ngspice import measurements, run_deck

pytestmark = pytest.mark.ngspice

ROOT = Path(__file__).resolve().parents[2]
BOARDS = sorted((ROOT / "boards").rglob("*.cir"))
TIMING_RULES = ("bounce-window", "response-latency", "slow-edge")
TARG = re.compile(r"TARG (\S+) VAL=(\S+) (RISE|FALL)=1 TD=(\S+)")
TRAN = re.compile(r"^\.tran (\S+) (\S+) 0 (\S+)$", re.MULTILINE)
DELTA_V = 0.05  # secant half-width around the threshold for the slope
STEPS_PER_EDGE = 400  # max step at most this fraction of the edge's own time
MAX_POINTS = 3_000_000  # a finer step only where ngspice stays within a few seconds


def finer(deck: str, expected_s: float | None, at: float) -> str:
    """The deck with its max step at most 1/400 of the edge's expected time.

    A stage whose other time constants are far longer gets a deck whose step
    is capped by the length of the run (the deck says so); an edge of a few
    microseconds then spans only a few steps. The deck measures one edge, so
    the run may stop a few edge times after it starts (at `at`). The
    expected time only sizes the run: ngspice still finds the crossing, and
    a crossing later than the run is a failed measurement."""
    m = TRAN.search(deck)
    if m is None or not expected_s:
        return deck
    t_max, t_stop = float(m.group(3)), float(m.group(2))
    step = min(t_max, expected_s / STEPS_PER_EDGE)
    stop = min(t_stop, at + 4 * expected_s + 10 * step)
    if step >= t_max or stop / step > MAX_POINTS:
        return deck
    return deck.replace(m.group(0), f".tran {step:.6g} {stop:.15g} 0 {step:.6g}")


def spice_edge(result, edge: str, corner: dict[str, float], expected_s: float | None) -> dict[str, float]:
    """ngspice's time to the threshold at `corner` and the s/V rate at the crossing."""
    name = MEASUREMENTS[("press", "release").index(edge)]
    deck = stage_deck(result.stage, result.receiver_electrical, corner=corner, edges=(edge,))
    meas = next(line for line in deck.splitlines() if line.startswith(f".meas tran {name} "))
    node, vth, way, td = TARG.search(meas).groups()
    deck = finer(deck, expected_s, float(td))
    extra = [f".meas tran s_lo WHEN {node}={float(vth) - DELTA_V:.12g} {way}=1 TD={td}",
             f".meas tran s_hi WHEN {node}={float(vth) + DELTA_V:.12g} {way}=1 TD={td}"]
    deck = deck.replace("\n.end\n", "\n" + "\n".join(extra) + "\n.end\n")
    proc = run_deck(deck)
    found = measurements(proc.stdout + "\n" + proc.stderr)
    out = {"t": found.get(name)}
    if "s_lo" in found and "s_hi" in found:
        out["rate"] = abs(found["s_hi"] - found["s_lo"]) / (2 * DELTA_V)
    return out


def spice_pull_back(result, edge: str, crossing_s: float, limits) -> tuple[float, float | None] | None:
    """The closure-and-opening reading of a press that crosses within one least closure
    (a first-edge stage) into a Schmitt input: (ours, ngspice's) time for an opening
    after a `min_closure` closure to bring the input back across the other threshold,
    at our fastest corner; None where it does not apply. ngspice's deck presses, holds
    the contact closed for `min_closure` and opens it (a normally-open contact, whose
    bounce state is the released one)."""
    stage, rx = result.stage, result.receiver_electrical
    closure = limits["min_closure"]
    if edge != "press" or not rx.schmitt or crossing_s > closure or len(stage.circuit.throws) != 1:
        return None
    pb = pull_back(stage, rx, edge, closure)
    if pb is None or pb.fastest_s is None:
        return None
    deck = stage_deck(stage, rx, corner=dict(pb.corner_fastest, threshold=pb.opposite_v), hold=closure)
    if any(d.card is None for d in compile_circuit(stage.circuit).circuit.diodes):
        # Diodes written as switches take no part in ngspice's truncation-error control:
        # a step of a twentieth of the closure places the level it leaves (0.2 %).
        m = TRAN.search(deck)
        assert m is not None
        step, start = closure / 20, float(TARG.findall(deck)[-1][3])
        stop = start + 2 * pb.fastest_s + 10 * step
        if stop / step <= MAX_POINTS:
            deck = deck.replace(m.group(0), f".tran {step:.6g} {stop:.15g} 0 {step:.6g}")
    proc = run_deck(deck)
    return pb.fastest_s, measurements(proc.stdout + "\n" + proc.stderr).get("t_release")


def where(result) -> str:
    return f"{result.stage.contact.designator} -> {result.stage.receiver.ref}"


def verdicts(result, limits) -> tuple[Counter, list[tuple]]:
    """Timing findings by ngspice's figures; (ours, ngspice) time pairs to compare."""
    found: Counter = Counter()
    pairs = []
    stage, rx = result.stage, result.receiver_electrical
    for edge, e in result.edges.items():
        fast = spice_edge(result, edge, e.corner_fastest, e.fastest_s)
        slow = spice_edge(result, edge, e.corner_slowest, e.slowest_s)
        pairs += [(edge, "fastest", e.fastest_s, fast["t"]), (edge, "slowest", e.slowest_s, slow["t"])]
        needed = stage.contact.bounce_s * limits["bounce_margin"]
        if stage.kind in RC_KINDS and fast["t"] is not None and fast["t"] < needed:
            back = spice_pull_back(result, edge, fast["t"], limits)
            if back is not None:
                pairs.append((edge, "pull back", back[0], back[1]))
            if back is None or (back[1] is not None and back[1] < needed):
                found["bounce-window", where(result)] += 1
        starts_past = (e.start_v >= e.threshold_slowest_v if e.direction == "rising"
                       else e.start_v <= e.threshold_slowest_v)
        if (slow["t"] is None and not starts_past) or (slow["t"] is not None and slow["t"] > limits["latency_limit"]):
            found["response-latency", where(result)] += 1
        if (not rx.schmitt and rx.transition_limit_s_per_v is not None and stage.kind not in DEBOUNCED_ELSEWHERE
                and slow.get("rate", 0.0) > rx.transition_limit_s_per_v):
            found["slow-edge", where(result)] += 1
    return found, pairs


def boards():
    for board in BOARDS:
        check = check_board_in_memory(board, CheckOptions(propose_fixes=False))
        yield pytest.param(board, check, id=board.name)


CHECKS = list(boards())


@pytest.mark.parametrize("board, check", CHECKS)
def test_expected_timing_findings_follow_ngspice(board, check):
    limits = effective_limits(check.config)
    from_spice: Counter = Counter()
    timed = 0
    for result in check.results:
        found, pairs = verdicts(result, limits)
        from_spice += found
        for edge, corner, ours, spice in pairs:
            if ours is None or spice is None:
                assert ours is None and spice is None, (result.stage.name, edge, corner, ours, spice)
                continue
            timed += 1
            # DESIGN.md section 10: within 0.5 %; 2 ns for edges that cross at once (control ramp 1 ns).
            assert spice == pytest.approx(ours, rel=5e-3, abs=2e-9), (result.stage.name, edge, corner)
    expected = Counter()
    for line, n in read_expected(board.with_suffix(".expected")).items():
        _severity, rule, place = line.split(" ", 2)
        if rule in TIMING_RULES:
            expected[rule, place] += n
    assert expected == from_spice, (board.name, expected - from_spice, from_spice - expected)
    assert timed >= 2 or not expected


def test_every_timing_rule_is_confirmed_on_some_board():
    rules = set()
    for board, _check in (p.values for p in CHECKS):
        for line in read_expected(board.with_suffix(".expected")):
            rules.add(line.split(" ", 2)[1])
    assert set(TIMING_RULES) <= rules
