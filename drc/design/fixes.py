"""Standard-value fixes: replacement E-series values that pass every rule at worst case.

Rules describe a fix in plain words; this separate step upgrades the fix of
value-related findings (bounce-window, slow-edge, response-latency,
leakage-headroom, pullup-waste, shorted-pull, resistance-range) to named values, e.g.
"R2 4.7 kΩ → 22 kΩ (press 11.8 ms ≥ 10 ms at fastest corner)". The analysis
stays the only authority on the figures: every proposal is a stage analysed
with the new values (`analysis.analyse_stages`) on which the stage rules
fire nothing new (rules that fire today and no value changes are tolerated).

Which change, and where it is looked for (the stated ranges):
- one or two parts among the stage's pull and series resistors and its
  capacitors; other parts are held;
- resistors take the values of the series (E24 by default, `eseries` in
  drc.toml) inside the resistance-range window (1 kΩ-50 kΩ by default: a
  value outside it fails that rule); capacitors the values of the capacitor
  series (E12, or the resistors' series when that is E3 or E6), 1 pF-10 mF;
- preferred: fewest parts changed, then the smallest total change (sum of
  |ln(new / old)|), then the parts first in the stage's order, then the lower
  values.

Single-capacitor stages (closed-form edges) get the complete search of
drc.design.complete: if any one- or two-part change in those ranges passes,
the preferred one is proposed, and "no change passes" is a statement about
all of them. The searches of a board's failing stages run in lockstep, one
analysis batch per round. Closed-form stages the screen does not trust get
the bounded bisection search of drc.design.bisection, whose "nothing found"
says how many analyses it tried; stages on the exact event solver (several
capacitors, diodes) are not searched in a board check, and say so.
Identical stages (a keypad) are searched once (a memo keyed by values).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass

from drc.analysis.physics.batch import batchable, structure_key, template
from drc.analysis.receiver import ReceiverElectrical
from drc.analysis.results import EDGES, EdgeResult, StageResult
from drc.analysis.stage_analysis import analyse_stage
from drc.board.stage import Stage
from drc.caching import Memo
from drc.checks import run_stage_rules
from drc.checks.findings import Finding
from drc.design import bisection
from drc.design.complete import (
    CompleteSearch,
    Found,
    Move,
    Var,
    ranges_text,
    run_lockstep,
    search_vars,
    with_values,
)
from drc.design.screen import Screen
from drc.units import format_quantity as fq

__all__ = ["FIXABLE", "MAX_ANALYSES", "Change", "Solution", "capacitor_series", "propose_board_fixes",
           "propose_fixes", "rule_figure", "search", "with_values"]

FIXABLE = ("bounce-window", "slow-edge", "response-latency", "leakage-headroom",
           "pullup-waste", "shorted-pull", "resistance-range")
MAX_ANALYSES = bisection.MAX_ANALYSES
# The bisection search (stages the complete search cannot screen): analyses per stage in
# a board check, and per board in all.
FIX_BUDGET = 100
# Analyses a stage on the exact event solver may spend when asked (`--thorough-fixes`):
# tens of milliseconds each, so seconds a stage; none by default.
EXACT_FIX_BUDGET = 100
BOARD_FIX_BUDGET = 2000
# Capacitors are rarely stocked finer than E12 (common practice, no source).
_CAPACITOR_SERIES = {"E3": "E3", "E6": "E6", "E12": "E12"}


def capacitor_series(series: str) -> str:
    """The series capacitor values come from when resistors use `series`."""
    return _CAPACITOR_SERIES.get(series.upper(), "E12")


@dataclass(frozen=True, slots=True)
class Change:
    designator: str
    old: float
    new: float
    unit: str  # "Ω" or "F"

    def text(self) -> str:
        return f"{self.designator} {fq(self.old, self.unit)} → {fq(self.new, self.unit)}"


@dataclass(frozen=True, slots=True)
class Solution:
    changes: tuple[Change, ...]
    result: StageResult
    analyses: int


@dataclass(frozen=True, slots=True)
class _Job:
    """One distinct search: a stage, its receiver, what it tolerates, and how to search it."""

    stage: Stage
    rx: ReceiverElectrical
    limits: Mapping[str, float]
    series: str
    tolerated: frozenset[str]
    vars_: tuple[Var, ...]
    present: StageResult
    fired: frozenset[str]


@dataclass(frozen=True, slots=True)
class _Outcome:
    """A search's answer by variable index (so identical stages can share it)."""

    moves: tuple[tuple[int, float], ...] | None  # None: nothing passes / nothing found
    result: StageResult | None
    analyses: int
    screened: int
    complete: bool  # the complete search ran to the end of its order
    searched: bool = True  # False: not searched at all (see _bisection_budgets)


def _changes(job: _Job, moves: tuple[tuple[int, float], ...]) -> tuple[Change, ...]:
    return tuple(Change(job.vars_[i].designator, job.vars_[i].present, new, job.vars_[i].unit)
                 for i, new in moves)


def _by_index(job: _Job, moves: Sequence[Move]) -> tuple[tuple[int, float], ...]:
    names = [v.designator for v in job.vars_]
    return tuple((names.index(m.designator), m.new) for m in moves)


def _run_jobs(jobs: Sequence[_Job], budgets: Sequence[int]) -> list[_Outcome]:
    """Every job searched: complete searches in lockstep, the others by bisection."""
    complete: dict[int, CompleteSearch] = {}
    for i, job in enumerate(jobs):
        screen = Screen.build(job.stage, job.rx, job.limits, job.tolerated)
        if screen is not None:
            complete[i] = CompleteSearch(job.stage, job.rx, job.limits, job.tolerated, screen, list(job.vars_),
                                         job.present, job.fired)
    run_lockstep(list(complete.values()))
    out: list[_Outcome] = []
    for i, job in enumerate(jobs):
        search_ = complete.get(i)
        if search_ is not None and search_.trusted and search_.found is not None:
            out.append(_outcome(job, search_.found))
        elif budgets[i] <= 0:
            out.append(_Outcome(None, None, 0, 0, False, searched=False))
        else:
            moves, result, count = bisection.search(job.stage, job.rx, job.limits, job.vars_,
                                                    set(job.tolerated), budgets[i])
            out.append(_Outcome(None if moves is None else _by_index(job, moves), result, count, 0, False))
    return out


def _outcome(job: _Job, found: Found) -> _Outcome:
    moves = _by_index(job, found.moves) if found.result is not None else None
    return _Outcome(moves, found.result, found.analyses, found.screened, not found.exhausted)


def _job(stage: Stage, rx: ReceiverElectrical, limits: Mapping[str, float], series: str,
         tolerated: frozenset[str], present: StageResult, fixed_parts: Sequence[str] = (),
         present_rules: frozenset[str] | None = None) -> _Job:
    """present: the stage's analysis with `rx` (an analysis always carries the receiver it
    was given; a board's result without one is never searched)."""
    series = series.upper()
    if present_rules is None:
        present_rules = frozenset(f.rule for f in run_stage_rules(present, limits))
    fired = present_rules - tolerated
    vars_ = tuple(search_vars(stage, series, capacitor_series(series), limits, fixed_parts))
    return _Job(stage, rx, dict(limits), series, tolerated, vars_, present, fired)


def search(stage: Stage, rx: ReceiverElectrical, limits: Mapping[str, float], series: str = "E24",
           tolerated: set[str] | None = None, budget: int = MAX_ANALYSES,
           fixed_parts: Sequence[str] = ()) -> tuple[Solution | None, int]:
    """The preferred one- or two-part change that passes every stage rule; (solution, analyses).

    analyses: every stage analysis run, the present values' included.
    `budget` bounds the bisection search only (stages the complete search
    cannot screen); `fixed_parts` are held at their values.
    """
    job = _job(stage, rx, limits, series, frozenset(tolerated or ()), analyse_stage(stage, rx), fixed_parts)
    outcome = _run_jobs([job], [budget])[0]
    analyses = 1 + outcome.analyses
    if outcome.moves is None or outcome.result is None:
        return None, analyses
    return Solution(_changes(job, outcome.moves), outcome.result, analyses), analyses


def rule_figure(rule_id: str, result: StageResult, limits: Mapping[str, float],
                edge: str | None = None) -> str:
    """The figure a rule checks, on a (fixed) result: "press 11.8 ms ≥ 10 ms at fastest corner".

    edge: the edge the finding was about; by default the tightest edge.
    """
    figure = _FIGURES.get(rule_id)
    if figure is None:
        return "passes"
    edges = [e for e in result.edges.values() if edge is None or e.edge == edge] or list(result.edges.values())
    return figure(result, limits, edges)


def _bounce_figure(result: StageResult, limits: Mapping[str, float], edges: list[EdgeResult]) -> str:
    need = result.stage.contact.bounce_s * limits["bounce_margin"]
    timed = [(*_bounce_reading(result, limits, e, e.fastest_s, need), e) for e in edges if e.fastest_s is not None]
    if not timed:
        return "no edge timed"
    fastest, how, e = min(timed, key=lambda got: got[0])
    if how:  # passed by the closure-and-opening reading (bounce-window's, an input with hysteresis)
        if fastest == math.inf:
            return f"{e.edge}: the bounce never brings it back, {how}"
        return f"{e.edge} back across in {fq(fastest, 's')} ≥ {fq(need, 's')} at fastest corner, {how}"
    return f"{e.edge} {fq(fastest, 's')} ≥ {fq(need, 's')} at fastest corner"


def _bounce_reading(result: StageResult, limits: Mapping[str, float], e: EdgeResult, own: float,
                    need: float) -> tuple[float, str]:
    """The time bounce-window reads for one edge, as its check does: the edge's own time
    (`own`, its fastest), or where that is short on an input with hysteresis and the closure-and-opening
    reading passes, that reading's pull back ("" or how it was read)."""
    from drc.analysis.first_edge import pull_back
    from drc.checks.bounce_window import CLOSURE_READING, passes_by_pull_back
    from drc.checks.common import is_schmitt
    rx = result.receiver_electrical
    if own >= need or rx is None or not is_schmitt(result):
        return own, ""
    back = pull_back(result.stage, rx, e.edge, limits["min_closure"])
    if not passes_by_pull_back(back, need):
        return own, ""
    assert back is not None
    return (math.inf if back.fastest_s is None else back.fastest_s), CLOSURE_READING


def _latency_figure(result: StageResult, limits: Mapping[str, float], edges: list[EdgeResult]) -> str:
    timed = [(e.slowest_s, e) for e in edges if e.slowest_s is not None]
    if not timed:
        return "no edge timed"
    slowest, e = max(timed, key=lambda pair: pair[0])
    return f"{e.edge} {fq(slowest, 's')} ≤ {fq(limits['latency_limit'], 's')} at slowest corner"


def _headroom_figure(result: StageResult, limits: Mapping[str, float], edges: list[EdgeResult]) -> str:
    margins = [(lv.margin_v, lv) for lv in result.levels.values() if lv.margin_v is not None]
    if not margins:
        return "no level defined"
    margin, lv = min(margins, key=lambda pair: pair[0])
    vcc = result.receiver_electrical.vcc if result.receiver_electrical else result.stage.receiver.supply_v
    return f"{lv.state} margin {fq(margin, 'V')} ≥ {fq(limits['leakage_headroom_margin'] * vcc, 'V')}"


def _pull_figure(result: StageResult, limits: Mapping[str, float], edges: list[EdgeResult]) -> str:
    if result.pull_current_a is None:
        return "no pull current"
    return f"held {fq(result.pull_current_a, 'A')} ≤ {fq(limits['pull_current_budget'], 'A')}"


def _range_figure(result: StageResult, limits: Mapping[str, float], edges: list[EdgeResult]) -> str:
    return f"within {fq(limits['resistance_min'], 'Ω')}-{fq(limits['resistance_max'], 'Ω')}"


def _short_figure(result: StageResult, limits: Mapping[str, float], edges: list[EdgeResult]) -> str:
    held = [x for x in (result.closed_current_a, result.pull_current_a) if x is not None]
    if not held or "short_current" not in limits:
        return "no short"
    return f"held {fq(max(held), 'A')} < {fq(limits['short_current'], 'A')}"


def _slow_edge_figure(result: StageResult, limits: Mapping[str, float], edges: list[EdgeResult]) -> str:
    return "edge rate within the transition limit"


_FIGURES: dict[str, Callable[[StageResult, Mapping[str, float], list[EdgeResult]], str]] = {
    "bounce-window": _bounce_figure,
    "response-latency": _latency_figure,
    "leakage-headroom": _headroom_figure,
    "pullup-waste": _pull_figure,
    "resistance-range": _range_figure,
    "slow-edge": _slow_edge_figure,
    "shorted-pull": _short_figure,
}


def _edge_of(finding: Finding) -> str | None:
    """The edge an edge rule's finding is about: its message starts with the edge's name."""
    first = finding.message.split(" ", 1)[0]
    return first if first in EDGES else None


def _plain_input_fix(result: StageResult) -> str | None:
    """Slow-edge on a plain input is not a value problem: say what is."""
    rx = result.receiver_electrical
    if rx is None or rx.schmitt or not result.stage.circuit.capacitors:
        return None
    limit = rx.transition_limit_s_per_v
    said = (f"its transition limit is {fq(limit, 's/V')}" if limit is not None
            else f"no transition limit is known for {rx.family}")
    return f"use a Schmitt-trigger input after the RC; no RC value passes a plain {rx.family} input ({said})"


def propose_fixes(result: StageResult, findings: Sequence[Finding], limits: Mapping[str, float],
                  series: str = "E24", budget: int = FIX_BUDGET) -> dict[Finding, str]:
    """Upgraded fix texts for this stage's value-related findings (others are left out).

    `findings` may hold findings of other stages; only this stage's are used.
    """
    return propose_board_fixes([result], findings, limits, series, board_budget=budget)


# Boards repeat one input design many times (a keypad): a search runs once per distinct
# (structure, values, contact and receiver data, limits, exact budget) and its answer is
# renamed for every other stage of that kind. Bounded for long-lived processes.
_SEARCHES: Memo[tuple, _Outcome] = Memo("design.fix_searches", 4096)


def _memo_key(stage: Stage, rx: ReceiverElectrical, limits: Mapping[str, float], series: str) -> tuple:
    """A stage's design by value, names set aside: all its analysis, the verdicts of its rules
    and so its search read. Every field is a float, a string, an enum, or a tuple or frozen
    record of them: the key is hashable."""
    c, k, r = stage.circuit, stage.contact, stage.receiver
    return (
        structure_key_of(stage), stage.kind,
        tuple((x.ohms, x.tol_minus, x.tol_plus) for x in c.resistors),
        tuple((x.farads, x.tol_minus, x.tol_plus) for x in c.capacitors),
        tuple((x.volts, x.tolerance) for x in c.rails),
        (k.contact_class, k.form, k.bounce_s, k.wetting_a, k.rating_a, k.origin, k.closed_resistance),
        (r.part_type, r.family, r.schmitt, r.edge_sensitive, r.function, r.supply_v, r.supply_tolerance,
         r.internal_pull, r.firmware_debounce_s, r.dedicated_debounce),
        rx, tuple(sorted(limits.items())), series,
    )


def structure_key_of(stage: Stage) -> tuple:
    return structure_key(stage.circuit)


def _mine(result: StageResult, findings: Sequence[Finding]) -> list[Finding]:
    stage = result.stage
    return [f for f in findings if f.rule in FIXABLE and f.contact == stage.contact.designator
            and f.receiver == stage.receiver.ref]


def propose_board_fixes(results: Sequence[StageResult], findings: Sequence[Finding],
                        limits: Mapping[str, float], series: str = "E24",
                        board_budget: int = BOARD_FIX_BUDGET, exact_budget: int = 0) -> dict[Finding, str]:
    """Fix texts for a whole board, keyed by finding.

    Every failing stage's search runs together (drc.design.complete.run_lockstep);
    identical stages (equal `_memo_key`) share one search and one run of the stage
    rules on their present values. `board_budget` bounds the analyses of the
    bisection searches (a stage never gets more than `FIX_BUDGET`); the bound
    counts analyses, not seconds, so the texts are the same on every machine.
    `exact_budget`: the analyses of a stage on the exact event solver (several
    capacitors, diodes, TTL inputs, conducting clamps); 0, the default, leaves
    their values unsearched (their text says so).
    A search first done for another board in the same process costs what it
    cost there, so a board's texts do not depend on what was checked before.
    """
    series = series.upper()
    by_stage: dict[tuple, list[Finding]] = {}
    for f in findings:  # _mine keeps a stage's fixable ones
        by_stage.setdefault((f.contact, f.receiver), []).append(f)
    out: dict[Finding, str] = {}
    todo: list[tuple[StageResult, list[Finding], tuple, _Job]] = []
    fired_by_design: dict[tuple, frozenset[str]] = {}
    for result in results:
        mine = _mine(result, by_stage.get((result.stage.contact.designator, result.stage.receiver.ref), []))
        if not mine or result.receiver_electrical is None:
            continue
        if any(f.rule == "slow-edge" for f in mine):
            text = _plain_input_fix(result)
            if text:
                out.update({f: text for f in mine})
                continue
        # Identical stages (a keypad) fire the same rules: run them once per design. What a
        # search tolerates follows from them, so the search's key needs only the design's.
        value_key = _memo_key(result.stage, result.receiver_electrical, limits, series)
        present_rules = fired_by_design.get(value_key)
        if present_rules is None:
            present_rules = fired_by_design[value_key] = frozenset(
                f.rule for f in run_stage_rules(result, limits))
        tolerated = frozenset(present_rules - set(FIXABLE))
        job = _job(result.stage, result.receiver_electrical, limits, series, tolerated, result,
                   present_rules=present_rules)
        todo.append((result, mine, (value_key, exact_budget), job))
    outcomes = _board_outcomes(todo, board_budget, exact_budget)
    for (_result, mine, _key, job), outcome in zip(todo, outcomes, strict=True):
        out.update(_texts(job, mine, outcome))
    return out


def _board_outcomes(todo: list[tuple[StageResult, list[Finding], tuple, _Job]],
                    board_budget: int, exact_budget: int = 0) -> list[_Outcome | None]:
    """Each stage's outcome: from the memo, or searched (distinct searches once, in lockstep)."""
    outcomes: list[_Outcome | None] = [None] * len(todo)
    fresh: dict[tuple, list[int]] = {}
    for i, (_r, _m, key, _job) in enumerate(todo):
        hit = _SEARCHES.get(key)
        if hit is not None:
            outcomes[i] = hit
        else:
            fresh.setdefault(key, []).append(i)
    firsts = [idx[0] for idx in fresh.values()]
    jobs = [todo[i][3] for i in firsts]
    budgets = _bisection_budgets(jobs, board_budget, exact_budget)
    for idx, outcome in zip(fresh.values(), _run_jobs(jobs, budgets), strict=True):
        if outcome.searched:  # a search left out for want of budget is no answer to remember
            _SEARCHES.put(todo[idx[0]][2], outcome)
        for i in idx:
            outcomes[i] = outcome
    return _charge(todo, outcomes, board_budget)


def _bisection_budgets(jobs: Sequence[_Job], board_budget: int, exact_budget: int = 0) -> list[int]:
    """Each job's analyses if it falls back to bisection: FIX_BUDGET while the board's lasts.

    A stage whose edges need the exact event solver (several capacitors, diodes) is not
    searched in a board check: at tens of milliseconds an analysis, the few a check can
    afford never finish a bisection (its text says values were not searched), unless
    `exact_budget` grants it that many analyses.
    """
    if board_budget <= 0:
        return [0] * len(jobs)
    # The bisection's evaluator divides a slow stage's budget by what one of its analyses costs.
    slow = exact_budget * bisection.SLOW_ANALYSIS_COST
    return [FIX_BUDGET if batchable(template(structure_key(j.stage.circuit), j.stage.circuit)) else slow
            for j in jobs]


def _charge(todo, outcomes: list[_Outcome | None], board_budget: int) -> list[_Outcome | None]:
    """The board budget over the bisection searches, in board order: once it is spent,
    later bisection-searched stages get the plain-words fix (None); with no budget at all,
    every stage the complete search does not answer (none is searched). Charged as each
    search cost when first run, so the texts depend on this board alone."""
    left = board_budget
    seen: set = set()
    for i, outcome in enumerate(outcomes):
        if outcome is None or outcome.complete or outcome.screened:
            continue
        if board_budget <= 0 or (outcome.searched and left <= 0):
            outcomes[i] = None
            continue
        if not outcome.searched:
            continue
        key = todo[i][2]
        if key not in seen:
            seen.add(key)
            left -= outcome.analyses
    return outcomes


def _texts(job: _Job, mine: list[Finding], outcome: _Outcome | None) -> dict[Finding, str]:
    if outcome is None:
        return {}
    if outcome.moves is None or outcome.result is None:
        return _no_change_texts(mine, job, outcome)
    changes = _changes(job, outcome.moves)
    change_text = ", ".join(c.text() for c in changes)
    return {f: f"{change_text} ({rule_figure(f.rule, outcome.result, job.limits, _edge_of(f))})"
            for f in mine}


def _no_change_texts(mine: list[Finding], job: _Job, outcome: _Outcome) -> dict[Finding, str]:
    """The plain-words fix, and honestly why no values are proposed."""
    names = ", ".join(v.designator for v in job.vars_) or "the stage's parts"
    ranges = ranges_text(job.series, capacitor_series(job.series), job.limits)
    if not outcome.searched:
        honest = ("values not searched: this stage needs the exact event solver (several capacitors, "
                  "diodes, TTL inputs or conducting clamps), too slow to search within a check by default "
                  "(drc check --thorough-fixes searches it)")
    elif outcome.complete:
        honest = f"no change of one or two of {names} passes every rule at worst case ({ranges})"
    elif outcome.screened:
        honest = (f"no change of one or two of {names} confirmed within {outcome.analyses} analyses "
                  f"({ranges})")
    else:
        honest = (f"no {job.series} value change of one or two of {names} found to pass every rule at "
                  f"worst case ({outcome.analyses} analyses tried)")
    return {f: f"{f.fix}; {honest}" if f.fix else honest for f in mine}
