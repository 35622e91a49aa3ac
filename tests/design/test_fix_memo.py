"""Identical stages of a board are searched once (`fixes.propose_board_fixes`, its docstring).

The contract: stages equal in value (a keypad: the same parts, contact class and
receiver, other names) share one search and one run of the stage rules on their
present values, within a board and, through the memo, in later boards of the
same process; the answer they share is the one a fresh search of each gives.
References: spies (a wrapper that counts the calls of the search and of the
rules, as `fixes` calls them) and a fresh search of each stage alone, the memo
emptied first (`drc.caching.clear_caches`). Also: the latency and bounce figures
of results whose two edges are equally slow or fast (hand-built results).
"""

from __future__ import annotations

from dataclasses import replace

import pytest

from drc.caching import clear_caches
from drc.checks import run_stage_rules
from drc.design import fixes
from tests.checks.builders import LIMITS, analysed, contact, edge, hc, rc_stage, result

RX = hc()


def _board(values: list[float]):
    """One failing stage per capacitor value (bounce-window below 1 uF, response-latency above),
    contacts SW1, SW2, ..."""
    results = [analysed(rc_stage(c1=c, contact_=replace(contact(), designator=f"SW{k}")), RX)
               for k, c in enumerate(values, 1)]
    findings = [f for r in results for f in run_stage_rules(r, LIMITS)]
    assert findings and {f.rule for f in findings} <= set(fixes.FIXABLE)
    return results, findings


@pytest.fixture
def spies(monkeypatch):
    """Counts: the searches run (jobs given to `_run_jobs`) and the rule runs of `fixes`."""
    counts = {"searches": 0, "rules": 0}
    run_jobs, rules = fixes._run_jobs, fixes.run_stage_rules

    def counting_jobs(jobs, budgets):
        counts["searches"] += len(jobs)
        return run_jobs(jobs, budgets)

    def counting_rules(res, limits):
        counts["rules"] += 1
        return rules(res, limits)

    monkeypatch.setattr(fixes, "_run_jobs", counting_jobs)
    monkeypatch.setattr(fixes, "run_stage_rules", counting_rules)
    clear_caches()
    yield counts
    clear_caches()


def _by_contact(texts: dict) -> dict[str, set[str]]:
    out: dict[str, set[str]] = {}
    for f, text in texts.items():
        out.setdefault(f.contact, set()).add(text)
    return out


def _fresh(res, findings) -> set[str]:
    """The texts of one stage searched alone, nothing remembered."""
    clear_caches()
    return set(fixes.propose_board_fixes([res], findings, LIMITS).values())


def test_identical_stages_are_searched_once_with_the_answer_a_fresh_search_gives(spies):
    # SW1, SW2, SW4 are one design (470 nF); SW3 another (4.7 uF): two designs, two searches.
    results, findings = _board([470e-9, 470e-9, 4.7e-6, 470e-9])
    texts = _by_contact(fixes.propose_board_fixes(results, findings, LIMITS))
    assert spies == {"searches": 2, "rules": 2}
    assert set(texts) == {"SW1", "SW2", "SW3", "SW4"}
    for res in results:
        mine = [f for f in findings if f.contact == res.stage.contact.designator]
        assert texts[res.stage.contact.designator] == _fresh(res, mine)


def test_a_later_board_finds_the_search_in_the_memo(spies):
    results, findings = _board([470e-9])
    first = fixes.propose_board_fixes(results, findings, LIMITS)
    assert spies["searches"] == 1
    # The same design under other names on another board: no new search, the same proposal.
    again, again_findings = _board([4.7e-6, 470e-9])
    second = _by_contact(fixes.propose_board_fixes(again[1:], again_findings, LIMITS))
    assert spies["searches"] == 1
    assert second["SW2"] == set(first.values())


def test_the_latency_figure_of_two_equally_slow_edges_names_one_of_them():
    # max over (time, edge) pairs: with equal times the edges themselves are not ordered.
    both = result(edges={"press": edge("press", 0.020, 0.080),
                         "release": edge("release", 0.015, 0.080, "rising", start_v=0.0, final_v=5.0)})
    alone = [replace(both, edges={name: e}) for name, e in both.edges.items()]
    figure = fixes.rule_figure("response-latency", both, LIMITS)
    assert figure in {fixes.rule_figure("response-latency", r, LIMITS) for r in alone}


def test_the_bounce_figure_of_two_equally_fast_edges_names_one_of_them():
    # min over (time, reading, edge): with equal times and readings the edges are not ordered.
    both = result(edges={"press": edge("press", 0.020, 0.080),
                         "release": edge("release", 0.020, 0.070, "rising", start_v=0.0, final_v=5.0)})
    alone = [replace(both, edges={name: e}) for name, e in both.edges.items()]
    figure = fixes.rule_figure("bounce-window", both, LIMITS)
    assert figure in {fixes.rule_figure("bounce-window", r, LIMITS) for r in alone}
