"""The board's analysis budget over the fallback searches (drc.design.fixes.propose_board_fixes).

Source: the budget as fixes.py states it ("once it is spent, later
bisection-searched stages get the plain-words fix", charged in board order,
as each search cost). Three stages, each with two receiver inputs on its RC
node (which the numpy screen leaves to the bounded fallback), differ only in
their capacitor, so each is searched on its own and costs the same number of
analyses. A board budget of exactly one search's cost leaves the second and
third with their plain-words fix; one analysis more lets the second through.
"""

from __future__ import annotations

from dataclasses import replace

from drc.board.stage import InputLoad
from drc.checks import run_stage_rules
from drc.design import fixes
from tests.checks.builders import LIMITS, analysed, contact, hc, rc_stage

RX = hc()


def _stage(name: str, c: float):
    stage = rc_stage(r1=10e3, r2=22e3, c1=c, contact_=replace(contact(), designator=name))
    loads = tuple(InputLoad(ref, "in", "HC", "vcc", RX.leak_high_a, RX.leak_low_a) for ref in ("U1:1", "U2:1"))
    return replace(stage, circuit=replace(stage.circuit, loads=loads))


def test_the_board_budget_stops_later_fallback_searches():
    results = [analysed(_stage(f"SW{k}", c), RX) for k, c in enumerate((100e-9, 150e-9, 220e-9), 1)]
    findings = [f for r in results for f in run_stage_rules(r, LIMITS)]
    assert {f.rule for f in findings} == {"bounce-window"}
    jobs = [fixes._job(r.stage, r.receiver_electrical, LIMITS, "E24", frozenset(), r) for r in results]
    outcomes = fixes._run_jobs(jobs, [fixes.FIX_BUDGET] * len(jobs))
    assert all(not o.screened and not o.complete for o in outcomes)  # the fallback searched each
    cost = outcomes[0].analyses
    assert cost > 0 and all(o.analyses == cost for o in outcomes)

    def fixed(budget: int) -> list[str]:
        texts = fixes.propose_board_fixes(results, findings, LIMITS, board_budget=budget)
        return sorted({f.contact for f in texts})

    assert fixed(10 * cost) == ["SW1", "SW2", "SW3"]
    assert fixed(cost) == ["SW1"]
    assert fixed(cost + 1) == ["SW1", "SW2"]
    assert fixed(0) == []


def test_a_board_budget_of_nothing_runs_no_fallback_search(monkeypatch):
    # `board_budget` bounds the analyses of the bisection searches: with 0 none may run (a spy
    # counts the calls of the bounded fallback) and no stage gets values. A later check with a
    # budget searches them: what was left unsearched is not remembered as their answer.
    from drc.caching import clear_caches
    from drc.design import bisection
    results = [analysed(_stage(f"SW{k}", c), RX) for k, c in enumerate((100e-9, 150e-9), 1)]
    findings = [f for r in results for f in run_stage_rules(r, LIMITS)]
    calls = []
    real = bisection.search
    monkeypatch.setattr(bisection, "search", lambda *a, **k: calls.append(a) or real(*a, **k))
    clear_caches()
    texts = fixes.propose_board_fixes(results, findings, LIMITS, board_budget=0)
    assert calls == [] and texts == {}
    later = fixes.propose_board_fixes(results, findings, LIMITS, board_budget=10 * fixes.FIX_BUDGET)
    assert len(calls) == 2 and set(later) == set(findings) and all(" → " in t for t in later.values())
