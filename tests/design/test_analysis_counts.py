"""The count of analyses the design and the fix search report is the count they ran.

`drc design` says "no E24 combination found within N analyses" and keeps N in
`DesignResult.analyses`; `fixes.search` returns (solution, analyses). The
reference is a spy: the stage analysis (`analyse_stages`, through which
`analyse_stage` goes) wrapped so that it counts every stage it is given, in
each module that calls it.
"""

from __future__ import annotations

import pytest

import drc.analysis.stage_analysis as stage_analysis
from drc.board.stage import Capacitor
from drc.design import bisection, complete, fixes
from drc.design.forward import DesignRequest, design_stage
from tests.checks.builders import LIMITS, hc, rc_stage


@pytest.fixture
def analyses(monkeypatch):
    """A list whose length is the count of stage analyses run since the test began."""
    seen: list[object] = []
    real = stage_analysis.analyse_stages

    def counting(stages, rx_for):
        stages = list(stages)
        seen.extend(stages)
        return real(stages, rx_for)

    for module in (stage_analysis, complete, bisection):
        monkeypatch.setattr(module, "analyse_stages", counting)
    return seen


@pytest.mark.parametrize("request_", [
    DesignRequest(5.0, "HC", True, 0.010, 0.100),  # passes
    DesignRequest(5.0, "HC", True, 0.010, 0.100, topology="pull-down", capacitor=1e-6),  # passes, C1 held
    DesignRequest(5.0, "HC", True, 0.010, 0.012),  # nothing passes: every attempt searched
    DesignRequest(5.0, "HC", True, 0.010, 0.100, resistor=4.7e3),  # nothing passes with R1 held
    DesignRequest(5.0, "HC", True, 0.010, 0.012, design_budget=4),  # the design's budget ends it
    DesignRequest(5.0, "HC", False, 0.010, 0.100),  # a plain input: refused without a search
], ids=["passes", "held-capacitor", "fails", "held-resistor", "budget", "plain"])
def test_the_design_reports_the_analyses_it_ran(request_, analyses):
    d = design_stage(request_, rx=hc(request_.schmitt), limits=LIMITS)
    assert d.analyses == len(analyses) > 0


@pytest.mark.parametrize("budget", [0, 1, 5])
def test_the_search_reports_the_analyses_it_ran_on_an_exact_stage(budget, analyses):
    # Two capacitors: the bisection on the exact event solver, within `budget` (0: not searched).
    stage = rc_stage(r1=10e3, r2=1e3, c1=100e-9, extra_caps=(Capacitor("C2", "n1", "0", 10e-9),))
    solution, count = fixes.search(stage, hc(), LIMITS, "E24", budget=budget)
    assert solution is None and count == len(analyses) > 0


@pytest.mark.parametrize("values", [{}, {"c1": 4.7e-6}, {"r1": 1e3}, {"r2": 56e3, "c1": 680e-9}])
def test_the_search_reports_the_analyses_it_ran(values, analyses):
    solution, count = fixes.search(rc_stage(**values), hc(), LIMITS, "E24")
    assert count == len(analyses) > 0
    assert solution is None or solution.analyses == count
