"""`drc design`'s request and report contract: a bad contact class is refused by name, the
start pull is what its docstring states, each margin carries its figure's unit, a plain
input's design reads back as the plain stage it is; and a stage with no finding to fix is
not searched.

References: the `eseries` package (IEC 60063 series values), Ohm's law by hand, the SI
unit of each figure (a time in s, a level in V, a current in A), the fragment read back
by drc's own reader as a board (the designed stage is the one a check sees), spies that
count the fix search's jobs.
"""

from __future__ import annotations

import eseries as iec
import pytest

from drc.caching import clear_caches
from drc.design import fixes
from drc.design.forward import DesignError, DesignRequest, _start_pull, design_stage
from drc.library.catalogue import load_library
from tests.checks.builders import LIMITS, analysed, rc_stage


def test_an_unknown_contact_class_is_refused_by_name():
    with pytest.raises(DesignError, match="'reed-heavy'"):
        design_stage(DesignRequest(5.0, "HC", True, 0.010, 0.100, contact_class="reed-heavy"))


@pytest.mark.parametrize("series", ["E6", "E12", "E24"])
@pytest.mark.parametrize("rail", [3.3, 5.0, 12.0])
def test_the_start_pull_is_the_smallest_value_within_80_percent_of_the_budget(series, rail):
    # Docstring: the smallest series value that holds the closed-contact current to 80 % of
    # the budget at rail max and R min. By hand: I = rail (1 + vt) / (R (1 - rt)) <= 0.8 budget.
    lib = load_library()
    limits = {k: v.value for k, v in lib.limits.items()}
    budget, rt, vt = limits["pull_current_budget"], limits["tolerance_resistor"], limits["tolerance_rail"]

    def holds(r):
        return rail * (1 + vt) / (r * (1 - rt)) <= 0.8 * budget * (1 + 1e-12)

    values = sorted(float(v) for v in iec.erange(getattr(iec.ESeries, series), 1.0, 10e6))
    want = next(v for v in values if holds(v))
    got = _start_pull(series, rail, limits)
    assert got == pytest.approx(want, rel=1e-9)


def test_each_margin_carries_its_figures_unit():
    d = design_stage(DesignRequest(5.0, "HC", True, 0.010, 0.100))
    units = {m.name: m.unit for m in d.margins}
    assert {n for n in units if n.endswith(("vs bounce", "vs latency"))}, units
    for name, unit in units.items():
        want = ("s" if name.endswith(("vs bounce", "vs latency")) else
                "V" if name.endswith("level margin") else "A" if "current" in name else None)
        assert unit == want, name
    assert "held pull current" in units  # the pull budget is always a limit (rules/limits.toml)


def test_a_plain_input_design_reads_back_as_the_plain_stage_it_is(tmp_path):
    from drc.pipeline import CheckOptions, check_board_in_memory
    d = design_stage(DesignRequest(5.0, "HC", False, 0.010, 0.100))
    assert not d.ok  # no RC value passes a plain input (slow-edge)
    board = tmp_path / "plain.cir"
    board.write_text("* plain design read back\n" + d.netlist_fragment()
                     + "XU1 in out 0 0 0 0 0 0 0 0 0 0 0 vcc 74HC04\n.end\n", encoding="utf-8")
    check = check_board_in_memory(board, CheckOptions(propose_fixes=False))
    [result] = [r for r in check.results if r.stage.contact.designator == "SW1"]
    assert result.stage.kind == d.stage.kind
    assert not result.receiver_electrical.schmitt


def test_a_stage_with_no_finding_to_fix_is_not_searched(monkeypatch):
    searched = []
    run_jobs = fixes._run_jobs

    def counting(jobs, budgets):
        searched.extend(jobs)
        return run_jobs(jobs, budgets)

    monkeypatch.setattr(fixes, "_run_jobs", counting)
    clear_caches()
    failing = analysed(rc_stage(c1=470e-9))  # bounce-window fails at 470 nF (test_fix_memo)
    assert fixes.propose_board_fixes([failing], [], LIMITS) == {}
    assert searched == []
    clear_caches()


@pytest.mark.parametrize("r1, r2, c", [(220e3, 10e3, 470e-9), (100e3, 22e3, 220e-9)])
def test_a_lead_stages_pull_resistor_out_of_the_window_is_moved_first(r1, r2, c):
    # The contact's first stage: resistance-range holds the pull resistor in the window
    # (1 kOhm-50 kOhm, rules/limits.toml) but is a pure value test the screen does not restate,
    # so the search must move that resistor in every option. Reference: the brute force of
    # test_fix_completeness.py (RC law and node equations by hand at every vertex, E24/E12 from
    # IEC 60063 through `eseries`), its first passing change in the stated order.
    import numpy as np

    from drc.design.fixes import search
    from tests.design.test_fix_completeness import (
        MARGIN,
        RX,
        _stage,
        assert_first_in_order,
        brute_force,
        reference_passes,
    )
    stage = _stage(r1, r2, c, True)
    assert stage.lead
    solution, _count = search(stage, RX, LIMITS, "E24")
    robust = brute_force(r1, r2, c, True, slack=-MARGIN)
    assert solution is not None and robust
    present = {"R1": r1, "R2": r2, "C1": c}
    change = {ch.designator: ch.new for ch in solution.changes}
    assert "R1" in change and LIMITS["resistance_min"] <= change["R1"] <= LIMITS["resistance_max"]
    rows = {k: np.array([change.get(k, v)]) for k, v in present.items()}
    assert reference_passes(rows["R1"], rows["R2"], rows["C1"], True, slack=MARGIN)[0]
    assert_first_in_order(change, present, robust)
