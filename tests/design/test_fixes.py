"""Standard-value fixes: proposed values are IEC 60063 members, pass, and are the smallest change."""

from __future__ import annotations

import eseries as oracle
import pytest

from drc.checks import run_stage_rules
from drc.design.fixes import MAX_ANALYSES, propose_fixes, search, with_values
from tests.checks.builders import LIMITS, analysed, hc, rc_stage

SERIES = {"E12": oracle.E12, "E24": oracle.E24, "E96": oracle.E96}


def oracle_member(series, value: float) -> bool:
    # IEC 60063 tables via the eseries package
    return any(abs(v - value) <= 1e-9 * value for v in oracle.erange(SERIES[series], value / 2, value * 2))


def passes(stage, rx=None) -> bool:
    return run_stage_rules(analysed(stage, rx), LIMITS) == []


@pytest.mark.parametrize("series", ["E12", "E24", "E96"])
def test_bounce_fix_is_a_passing_series_value_and_the_smallest_step(series):
    stage = rc_stage(c1=100e-9)
    res = analysed(stage)
    findings = run_stage_rules(res, LIMITS)
    assert {f.rule for f in findings} == {"bounce-window"}
    solution, count = search(stage, res.receiver_electrical, LIMITS, series)
    assert solution is not None and count <= MAX_ANALYSES
    [change] = solution.changes
    cap_series = "E12"  # capacitors come from E12 when resistors use E24 or finer
    assert oracle_member(cap_series, change.new), change
    assert passes(with_values(stage, {change.designator: change.new}))
    # The next smaller E12 capacitor does not pass: the proposal is the smallest change of C1.
    smaller = max(v for v in oracle.erange(oracle.E12, 1e-9, change.new) if v < change.new * 0.999)
    assert not passes(with_values(stage, {"C1": smaller}))
    text = propose_fixes(res, findings, LIMITS, series)
    assert all("C1 100 nF → " in t and "at fastest corner" in t for t in text.values())


def test_pullup_waste_fix_raises_the_pull_resistor_to_an_e24_value():
    stage = rc_stage(r1=1e3)
    res = analysed(stage)
    solution, _ = search(stage, res.receiver_electrical, LIMITS, "E24")
    [change] = solution.changes
    assert change.designator == "R1" and change.new > 1e3 and oracle_member("E24", change.new)
    assert passes(with_values(stage, {"R1": change.new}))
    lower = max(v for v in oracle.erange(oracle.E24, 1e3, change.new) if v < change.new * 0.999)
    assert not passes(with_values(stage, {"R1": lower}))


def test_latency_fix_and_resistance_fix():
    for kwargs in (dict(c1=4.7e-6), dict(r2=56e3, c1=680e-9)):
        stage = rc_stage(**kwargs)
        res = analysed(stage)
        solution, _ = search(stage, res.receiver_electrical, LIMITS, "E24")
        assert solution is not None, kwargs
        values = {c.designator: c.new for c in solution.changes}
        assert passes(with_values(stage, values))
        for c in solution.changes:
            assert oracle_member("E24" if c.unit == "Ω" else "E12", c.new)


def test_plain_input_gets_an_honest_fix():
    res = analysed(rc_stage(schmitt=False), hc(schmitt=False))
    findings = run_stage_rules(res, LIMITS)
    assert "slow-edge" in {f.rule for f in findings}
    texts = propose_fixes(res, findings, LIMITS)
    assert texts and all("no RC value passes a plain HC input" in t for t in texts.values())


def test_no_fix_found_says_so():
    # Both resistors outside the 1 kOhm-50 kOhm window and the latency over its limit:
    # at least three parts must change, so no one- or two-part change passes, and the
    # text says so with the ranges searched (the search is complete over them).
    stage = rc_stage(r1=82e3, r2=390e3, c1=100e-9)
    res = analysed(stage)
    findings = run_stage_rules(res, LIMITS)
    assert {"resistance-range", "response-latency"} <= {f.rule for f in findings}
    texts = propose_fixes(res, findings, LIMITS, budget=60)
    assert texts and all("no change of one or two of R1, R2, C1 passes every rule at worst case" in t
                         and "resistors E24 1 kΩ-50 kΩ" in t for t in texts.values())


def test_findings_of_other_rules_or_stages_are_left_alone():
    res = analysed(rc_stage(r2=None, c1=None))  # pull-only: undebounced-input only
    findings = run_stage_rules(res, LIMITS)
    assert {f.rule for f in findings} == {"undebounced-input"}
    assert propose_fixes(res, findings, LIMITS) == {}


def test_a_stage_needing_the_exact_solver_says_its_values_were_not_searched():
    # Two capacitors: every analysis runs the event solver (tens of ms); a board check does not
    # search its values and says so rather than claim nothing passes.
    from drc.board.stage import Capacitor
    stage = rc_stage(r1=10e3, r2=1e3, c1=100e-9, extra_caps=(Capacitor("C2", "n1", "0", 10e-9),))
    res = analysed(stage)
    findings = run_stage_rules(res, LIMITS)
    assert "bounce-window" in {f.rule for f in findings}
    texts = propose_fixes(res, findings, LIMITS)
    assert texts and all("values not searched" in t and "exact event solver" in t for t in texts.values())


def test_the_exact_stage_is_searched_when_asked_and_its_change_passes_the_rules():
    # A two-capacitor stage with an exact budget (drc check --thorough-fixes): the
    # bisection proposes standard values, and the stage with them fires none of the rules
    # the search fixes (the proposal re-analysed from scratch: the full analysis is the
    # authority, whose two-capacitor edges are held to ngspice in tests/oracle).
    import re

    from drc.board.stage import Capacitor
    from drc.design.fixes import FIXABLE, propose_board_fixes
    stage = rc_stage(r1=10e3, r2=22e3, c1=220e-9, extra_caps=(Capacitor("C2", "n1", "0", 10e-9),))
    res = analysed(stage)
    findings = run_stage_rules(res, LIMITS)
    assert "bounce-window" in {f.rule for f in findings}
    texts = propose_board_fixes([res], findings, LIMITS, exact_budget=100)
    assert texts and not any("not searched" in t for t in texts.values())
    changes = {m.group(1): m.group(2) for t in texts.values()
               for m in re.finditer(r"(R1|R2|C1|C2) [0-9.]+ [kµn]?[ΩF] → ([0-9.]+ [kµnM]?[ΩF])", t)}
    assert changes, texts
    scale = {"": 1.0, "k": 1e3, "M": 1e6, "µ": 1e-6, "n": 1e-9}
    values = {name: float(v.split()[0]) * scale[v.split()[1][:-1]] for name, v in changes.items()}
    # IEC 60063 through eseries: every proposed value is an E24 resistor or an E12 capacitor
    for name, v in values.items():
        series = oracle.E24 if name.startswith("R") else oracle.E12
        assert any(abs(v - x) <= 1e-9 * v for x in oracle.erange(series, v / 2, v * 2)), (name, v)
    fixed = analysed(with_values(stage, values))
    assert not {f.rule for f in run_stage_rules(fixed, LIMITS)} & set(FIXABLE)
