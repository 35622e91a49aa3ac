"""Standard-value fixes: replacement E-series values that pass every rule at worst case.

Rules describe a fix in plain words; this separate step upgrades the fix of
value-related findings (bounce-window, slow-edge, response-latency,
leakage-headroom, pullup-waste, resistance-range) to named values, e.g.
"R2 4.7 kΩ → 22 kΩ (press 11.8 ms ≥ 10 ms at fastest corner)". It
re-runs `analysis.analyse_stage` on stages with one or two values replaced
(dataclasses.replace on the Resistor/Capacitor) and the stage rules on the
results, so the rules stay pure and cheap and the analysis stays the only
authority on the figures.

Search: each rule's verdict is monotonic in each value (a larger R or C
never makes an RC edge faster, a larger pull resistor never wastes more
current), so for one value the passing values form an interval. The solver
finds its ends by bisection over the series (the verdicts at the two ends of
the range say which way each rule passes), then takes the value in the
interval nearest the present one and confirms it with a full run. Preference:
fewest parts changed, then the smallest change (sum of |log ratio|). Two-part
changes walk the first part's values nearest-first and stop as soon as that
change alone exceeds the best total found. A stage gets at most
`budget` analyses (`FIX_BUDGET` in a board check, `MAX_ANALYSES` for forward
design), and a stage whose edges need the exact event-driven solver (several
capacitors, diodes: tens of milliseconds per analysis) gets
1/`SLOW_ANALYSIS_COST` of that, so a check's time stays bounded: about
0.2 s for a closed-form stage and 1 s for any other at worst. The bound is a
count, not a clock, so the proposals are the same on every machine. When
nothing passes within it the text says so.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, replace

from drc.analysis.physics.batch import batchable, structure_key, template
from drc.analysis.receiver import ReceiverElectrical
from drc.analysis.results import EDGES, EdgeResult, StageResult
from drc.analysis.stage_analysis import analyse_stage, analyse_stages
from drc.board.stage import Stage
from drc.caching import Memo
from drc.checks import run_stage_rules
from drc.checks.findings import Finding
from drc.library import eseries
from drc.units import format_quantity as fq

FIXABLE = ("bounce-window", "slow-edge", "response-latency", "leakage-headroom",
           "pullup-waste", "resistance-range")
MAX_ANALYSES = 300
# Board checks: a failing closed-form stage costs about 2 ms per analysis.
FIX_BUDGET = 100
# An analysis on the exact event-driven path costs about this many closed-form ones.
SLOW_ANALYSIS_COST = 25
# Values searched, as a ratio either side of the present value and absolute bounds.
RESISTOR_SPAN, RESISTOR_BOUNDS = 1000.0, (10.0, 10e6)
CAPACITOR_SPAN, CAPACITOR_BOUNDS = 1000.0, (1e-12, 10e-3)
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

    @property
    def log_ratio(self) -> float:
        return abs(math.log(self.new / self.old))

    def text(self) -> str:
        return f"{self.designator} {fq(self.old, self.unit)} → {fq(self.new, self.unit)}"


@dataclass(frozen=True, slots=True)
class Solution:
    changes: tuple[Change, ...]
    result: StageResult
    analyses: int

    @property
    def cost(self) -> tuple[int, float]:
        return (len(self.changes), sum(c.log_ratio for c in self.changes))


@dataclass(frozen=True, slots=True)
class Variable:
    designator: str
    present: float
    candidates: tuple[float, ...]  # ascending series values
    unit: str


def with_values(stage: Stage, values: Mapping[str, float]) -> Stage:
    """`stage` with the named resistors' ohms / capacitors' farads replaced."""
    circuit = stage.circuit
    resistors = tuple(replace(r, ohms=values[r.designator]) if r.designator in values else r
                      for r in circuit.resistors)
    capacitors = tuple(replace(c, farads=values[c.designator]) if c.designator in values else c
                       for c in circuit.capacitors)
    return replace(stage, circuit=replace(circuit, resistors=resistors, capacitors=capacitors))


class Evaluator:
    """Analyses a stage with values replaced and runs the stage rules; cached and budgeted.

    Speed: analysing one stage alone costs about as much as analysing a
    dozen of one structure together (physics.batch), so `prefetch` analyses
    the values a search is about to ask for in one batch. A prefetched
    analysis counts against the budget only when `fired` asks for it, so the
    search, its answer and its count are those of one analysis at a time.
    """

    def __init__(self, stage: Stage, rx: ReceiverElectrical, limits: Mapping[str, float], tolerated: set[str],
                 budget: int = MAX_ANALYSES) -> None:
        self.stage, self.rx, self.limits = stage, rx, limits
        self.tolerated = tolerated  # rule ids that fire today and no value can change
        fast = batchable(template(structure_key(stage.circuit), stage.circuit))
        self.fast = fast  # closed-form edges: batches pay off (the exact path runs one by one)
        self.budget = budget if fast else max(1, budget // SLOW_ANALYSIS_COST)
        self.count = 0
        self._cache: dict[tuple, tuple[frozenset[str], StageResult]] = {}
        self._pending: dict[tuple, StageResult] = {}  # analysed ahead, not asked for yet

    @property
    def exhausted(self) -> bool:
        return self.count >= self.budget

    def known(self, values: Mapping[str, float]) -> bool:
        """Whether `values` was analysed already (asked for or prefetched)."""
        key = tuple(sorted(values.items()))
        return key in self._cache or key in self._pending

    def prefetch(self, many: Sequence[Mapping[str, float]]) -> None:
        """Analyse these value sets together, ahead of `fired` (closed-form stages only)."""
        if not self.fast:
            return
        todo: dict[tuple, Mapping[str, float]] = {}
        for values in many:
            key = tuple(sorted(values.items()))
            if key not in self._cache and key not in self._pending:
                todo.setdefault(key, values)
        if len(todo) < 2:
            return
        results = analyse_stages([with_values(self.stage, v) for v in todo.values()],
                                 [self.rx] * len(todo))
        self._pending.update(zip(todo, results, strict=True))

    def fired(self, values: Mapping[str, float]) -> tuple[frozenset[str], StageResult] | None:
        """Rule ids that fire (tolerated ones removed), or None when out of budget."""
        key = tuple(sorted(values.items()))
        if key in self._cache:
            return self._cache[key]
        if self.exhausted:
            return None
        self.count += 1
        result = self._pending.pop(key, None)
        if result is None:
            result = analyse_stage(with_values(self.stage, values), self.rx)
        if result.receiver_electrical is None:
            result = replace(result, receiver_electrical=self.rx)
        ids = frozenset(f.rule for f in run_stage_rules(result, self.limits)) - self.tolerated
        self._cache[key] = (ids, result)
        return self._cache[key]


# Prefetch shape: the first levels of a bisection over an unknown stretch of
# candidates, or the whole stretch once it is this short (measured on the
# archive benchmark: small batches win, as a batch's cost grows with its size).
_PREFETCH_DEPTH = 2
_PREFETCH_FILL = 8


def _bisection_points(a: int, b: int, depth: int, out: list[int]) -> None:
    """The midpoints `_boundary` may visit in (a, b), `depth` levels deep."""
    if depth == 0 or b - a <= 1:
        return
    mid = (a + b) // 2
    out.append(mid)
    _bisection_points(a, mid, depth - 1, out)
    _bisection_points(mid, b, depth - 1, out)


def _prefetch_for(ev: Evaluator, var: Variable, fixed: Mapping[str, float], i: int) -> None:
    """Before asking for candidate i: analyse it with its likely successors in one batch.

    Around i lies a stretch of candidates not analysed yet; a search goes on
    inside it (bisection) or next to i (the nearest passing value), so the
    batch is the stretch's bisection points, or all of it when short, plus
    both ends of the list. Only an order of analyses is guessed: the answers
    and the budget count are the same as without it.
    """
    cand = var.candidates
    n = len(cand)

    def values(j: int) -> dict[str, float]:
        return {**fixed, var.designator: cand[j]}

    if not ev.fast or ev.known(values(i)):
        return
    lo = i - 1
    while lo >= 0 and not ev.known(values(lo)):
        lo -= 1
    hi = i + 1
    while hi < n and not ev.known(values(hi)):
        hi += 1
    if hi - lo - 1 <= _PREFETCH_FILL:
        picks = list(range(lo + 1, hi))
    else:
        # Both ends, the probes of a rule failing at both ends, the neighbours of
        # the present value, and the first bisection points.
        here = min(range(n), key=lambda j: abs(math.log(cand[j] / var.present)))
        picks = [i, 0, n - 1, n // 2, n // 4, 3 * n // 4]
        picks += [j for j in range(here - 2, here + 3) if 0 <= j < n]
        _bisection_points(max(lo, 0), min(hi, n - 1), _PREFETCH_DEPTH, picks)
    # No more than the budget could still ask for (with room for a few misses).
    room = 2 * (ev.budget - ev.count) + 2
    picks = list(dict.fromkeys(picks))[:room]
    ev.prefetch([values(j) for j in picks])


def variables(stage: Stage, series: str) -> list[Variable]:
    """The stage's pull/series resistors and capacitors with their candidate values."""
    out: list[Variable] = []
    for r in stage.circuit.resistors:
        if r.role in ("pull", "series") and r.ohms > 0:
            lo = max(RESISTOR_BOUNDS[0], r.ohms / RESISTOR_SPAN)
            hi = min(RESISTOR_BOUNDS[1], r.ohms * RESISTOR_SPAN)
            if lo > hi:  # far outside the searched bounds (1M read as milliohms): no candidates
                continue
            out.append(Variable(r.designator, r.ohms, tuple(eseries.values_between(series, lo, hi)), "Ω"))
    cap_series = capacitor_series(series)
    for c in stage.circuit.capacitors:
        if c.farads > 0:
            lo = max(CAPACITOR_BOUNDS[0], c.farads / CAPACITOR_SPAN)
            hi = min(CAPACITOR_BOUNDS[1], c.farads * CAPACITOR_SPAN)
            if lo > hi:
                continue
            out.append(Variable(c.designator, c.farads, tuple(eseries.values_between(cap_series, lo, hi)), "F"))
    return out


# The rule ids that fire at candidate i (None: out of budget).
Verdict = Callable[[int], frozenset[str] | None]


def _nearest_index(var: Variable, indices: range) -> int:
    """The candidate among `indices` nearest the present value (log scale)."""
    cand = var.candidates
    return min(indices, key=lambda i: abs(math.log(cand[i] / var.present)))


def best_single(ev: Evaluator, var: Variable, fixed: Mapping[str, float]) -> tuple[float, StageResult] | None:
    """The passing value of `var` nearest its present value, others held at `fixed`.

    Bisection per rule over the candidate list (see the module docstring);
    None when no candidate passes or the budget ran out.
    """
    cand = var.candidates
    if not cand:
        return None

    def verdict(i: int) -> frozenset[str] | None:
        _prefetch_for(ev, var, fixed, i)
        got = ev.fired({**fixed, var.designator: cand[i]})
        return None if got is None else got[0]

    n = len(cand)
    lo_fired, hi_fired = verdict(0), verdict(n - 1)
    if lo_fired is None or hi_fired is None:
        return None
    span = _passing_span(verdict, var, lo_fired, hi_fired)
    if span is None:
        return None
    regions = _outside_inner_failures(verdict, var, span, lo_fired | hi_fired)
    if regions is None:
        return None
    return _nearest_passing(ev, var, fixed, regions)


def _passing_span(verdict: Verdict, var: Variable, lo_fired: frozenset[str],
                  hi_fired: frozenset[str]) -> tuple[int, int] | None:
    """[first, last]: the candidates every rule firing at an end of the list passes on.

    None when that is empty or the budget ran out.
    """
    n = len(var.candidates)
    first, last = 0, n - 1
    # Sorted: a set's order changes with the process's string hashing, and with a
    # budget the order of the bisections decides what is found.
    for rule_id in sorted(lo_fired | hi_fired):
        if rule_id in lo_fired and rule_id in hi_fired:
            inner = _inner_interval(verdict, var, rule_id)
            if inner is None:
                return None
            first, last = max(first, inner[0]), min(last, inner[1])
            continue
        passes_high = rule_id in lo_fired
        bound = _boundary(verdict, rule_id, 0, n - 1, passes_high)
        if bound is None:
            return None
        if passes_high:
            first = max(first, bound)
        else:
            last = min(last, bound)
    if first > last:
        return None
    return first, last


def _inner_interval(verdict: Verdict, var: Variable, rule_id: str) -> tuple[int, int] | None:
    """Where a rule failing at both ends passes: probe for one passing point (the
    present value first), then bisect each side. None if no probe passes."""
    n = len(var.candidates)
    here = _nearest_index(var, range(n))
    inside = None
    for i in dict.fromkeys((here, n // 2, n // 4, 3 * n // 4)):
        got = verdict(i)
        if got is None:
            return None
        if rule_id not in got:
            inside = i
            break
    if inside is None:
        return None
    lo_b = _boundary(verdict, rule_id, 0, inside, passes_high=True)
    hi_b = _boundary(verdict, rule_id, inside, n - 1, passes_high=False)
    if lo_b is None or hi_b is None:
        return None
    return lo_b, hi_b


def _outside_inner_failures(verdict: Verdict, var: Variable, span: tuple[int, int],
                            at_ends: frozenset[str]) -> list[tuple[int, int]] | None:
    """The parts of `span` outside the stretches where a rule passing at both ends fails.

    Such a rule may still fail in between (a level that changes logic as a
    divider moves): if it fails near the present value, find where it stops
    failing on each side. None when the budget ran out.
    """
    n = len(var.candidates)
    first, last = span
    here = _nearest_index(var, range(first, last + 1))
    regions = [(first, last)]
    got = verdict(here)
    if got is None:
        return None
    for rule_id in sorted(got - at_ends):
        below = _boundary(verdict, rule_id, 0, here, passes_high=False)
        above = _boundary(verdict, rule_id, here, n - 1, passes_high=True)
        if below is None or above is None:
            return None
        regions = [(max(a, lo), min(b, hi)) for a, b in regions for lo, hi in ((0, below), (above, n - 1))]
        regions = [(a, b) for a, b in regions if a <= b]
    return regions


def _nearest_passing(ev: Evaluator, var: Variable, fixed: Mapping[str, float],
                     regions: list[tuple[int, int]]) -> tuple[float, StageResult] | None:
    """The nearest passing value in `regions`; a few neighbours if a verdict was not monotonic."""
    cand = var.candidates
    indices = sorted({i for a, b in regions for i in range(a, b + 1)},
                     key=lambda i: (abs(math.log(cand[i] / var.present)), cand[i]))
    for i in indices[:4]:
        _prefetch_for(ev, var, fixed, i)
        got = ev.fired({**fixed, var.designator: cand[i]})
        if got is None:
            return None
        if not got[0]:
            return cand[i], got[1]
    return None


def _boundary(verdict: Verdict, rule_id: str, a: int, b: int, passes_high: bool) -> int | None:
    """Bisect [a, b] where `rule_id` fails at one end and passes at the other.

    Returns the passing index next to the boundary: the lowest passing index
    when it passes towards b (passes_high), else the highest. None when the
    budget runs out.
    """
    while b - a > 1:
        mid = (a + b) // 2
        got = verdict(mid)
        if got is None:
            return None
        fails_mid = rule_id in got
        if passes_high:
            a, b = (mid, b) if fails_mid else (a, mid)
        else:
            a, b = (a, mid) if fails_mid else (mid, b)
    return b if passes_high else a


def search(stage: Stage, rx: ReceiverElectrical, limits: Mapping[str, float], series: str = "E24",
           tolerated: set[str] | None = None, budget: int = MAX_ANALYSES,
           fixed_parts: Sequence[str] = ()) -> tuple[Solution | None, int]:
    """The cheapest one- or two-part change that passes every stage rule; (solution, analyses)."""
    ev = Evaluator(stage, rx, limits, tolerated or set(), budget)
    vars_ = [v for v in variables(stage, series) if v.designator not in fixed_parts]
    best = _best_one_part(ev, vars_)
    if best is not None:
        return best, ev.count
    return _best_two_parts(ev, vars_), ev.count


def _best_one_part(ev: Evaluator, vars_: list[Variable]) -> Solution | None:
    best: Solution | None = None
    for var in vars_:
        found = best_single(ev, var, {})
        if found is not None:
            sol = Solution((Change(var.designator, var.present, found[0], var.unit),), found[1], ev.count)
            if best is None or sol.cost < best.cost:
                best = sol
    return best


def _best_two_parts(ev: Evaluator, vars_: list[Variable]) -> Solution | None:
    """Two-part changes: the first part's values nearest-first, stopping once that
    change alone exceeds the best total found."""
    best: Solution | None = None
    for outer in vars_:
        for inner in vars_:
            if inner is outer:
                continue
            for value in sorted(outer.candidates, key=lambda v: abs(math.log(v / outer.present))):
                step = abs(math.log(value / outer.present))
                if step == 0.0:
                    continue
                if (best is not None and step >= best.cost[1]) or ev.exhausted:
                    break
                found = best_single(ev, inner, {outer.designator: value})
                if found is None:
                    continue
                changes = (Change(outer.designator, outer.present, value, outer.unit),
                           Change(inner.designator, inner.present, found[0], inner.unit))
                sol = Solution(changes, found[1], ev.count)
                if best is None or sol.cost < best.cost:
                    best = sol
    return best


# Boards repeat one input design many times (a keypad): the search runs once per
# distinct (structure, values, contact and receiver data, limits) and its answer is
# renamed for every other stage of that kind: (moves as (variable index, new value),
# the result, analyses). Bounded for long-lived processes.
_Moves = tuple[tuple[int, float], ...]
_SEARCHES: Memo[tuple, tuple[_Moves | None, StageResult | None, int]] = Memo("design.fix_searches", 4096)


def _memo_key(stage: Stage, rx: ReceiverElectrical, limits: Mapping[str, float], series: str,
              tolerated: set[str], budget: int) -> tuple:
    c, k, r = stage.circuit, stage.contact, stage.receiver
    return (
        structure_key(c), stage.kind,
        tuple((x.ohms, x.tol_minus, x.tol_plus) for x in c.resistors),
        tuple((x.farads, x.tol_minus, x.tol_plus) for x in c.capacitors),
        tuple((x.volts, x.tolerance) for x in c.rails),
        (k.contact_class, k.form, k.bounce_s, k.wetting_a, k.rating_a, k.origin, k.closed_resistance),
        (r.part_type, r.family, r.schmitt, r.edge_sensitive, r.function, r.supply_v, r.supply_tolerance,
         r.internal_pull, r.firmware_debounce_s, r.dedicated_debounce),
        rx, tuple(sorted(limits.items())), series, frozenset(tolerated), budget,
    )


def _search_memo_keyed(stage: Stage, rx: ReceiverElectrical, limits: Mapping[str, float], series: str,
                       tolerated: set[str], budget: int) -> tuple[Solution | None, int, tuple | None]:
    """`search`, answered from the memo when an identical stage was searched before;
    and the memo key (None when the stage has no memo key)."""
    try:
        key = _memo_key(stage, rx, limits, series, tolerated, budget)
        hash(key)
    except TypeError:  # an unhashable field somewhere: no memo, same answer
        return (*search(stage, rx, limits, series, tolerated, budget), None)
    vars_ = variables(stage, series)
    hit = _SEARCHES.get(key)
    if hit is None:
        solution, count = search(stage, rx, limits, series, tolerated, budget)
        names = [v.designator for v in vars_]
        moves = None if solution is None else tuple((names.index(ch.designator), ch.new)
                                                    for ch in solution.changes)
        _SEARCHES.put(key, (moves, None if solution is None else solution.result, count))
        return solution, count, key
    moves, res, count = hit
    if moves is None or res is None:
        return None, count, key
    changes = tuple(Change(vars_[i].designator, vars_[i].present, new, vars_[i].unit) for i, new in moves)
    return Solution(changes, res, count), count, key


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
    timed = [(e.fastest_s, e) for e in edges if e.fastest_s is not None]
    if not timed:
        return "no edge timed"
    fastest, e = min(timed, key=lambda pair: pair[0])
    need = result.stage.contact.bounce_s * limits.get("bounce_margin", 1.0)
    return f"{e.edge} {fq(fastest, 's')} ≥ {fq(need, 's')} at fastest corner"


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


def _slow_edge_figure(result: StageResult, limits: Mapping[str, float], edges: list[EdgeResult]) -> str:
    return "edge rate within the transition limit"


_FIGURES: dict[str, Callable[[StageResult, Mapping[str, float], list[EdgeResult]], str]] = {
    "bounce-window": _bounce_figure,
    "response-latency": _latency_figure,
    "leakage-headroom": _headroom_figure,
    "pullup-waste": _pull_figure,
    "resistance-range": _range_figure,
    "slow-edge": _slow_edge_figure,
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
    return (f"use a Schmitt-trigger input after the RC; no RC value passes a plain {rx.family} input "
            f"(its transition limit is {fq(rx.transition_limit_s_per_v or 0.0, 's/V')})")


def propose_fixes(result: StageResult, findings: Sequence[Finding], limits: Mapping[str, float],
                  series: str = "E24", budget: int = FIX_BUDGET) -> dict[Finding, str]:
    """Upgraded fix texts for this stage's value-related findings (others are left out).

    `findings` may hold findings of other stages; only this stage's are used.
    """
    return _propose(result, findings, limits, series, budget, None)[0]


def _propose(result: StageResult, findings: Sequence[Finding], limits: Mapping[str, float],
             series: str, budget: int, searched: set[tuple] | None) -> tuple[dict[Finding, str], int]:
    """propose_fixes, and the analyses its search costs the board's budget.

    searched: memo keys this board searched already; a repeat costs nothing,
    a search first done for another board costs what it cost there, so a
    board's fixes are the same in a fresh process and in a long-lived worker.
    """
    stage = result.stage
    mine = [f for f in findings if f.rule in FIXABLE and f.contact == stage.contact.designator
            and f.receiver == stage.receiver.ref]
    if not mine or result.receiver_electrical is None:
        return {}, 0
    series = series.upper()
    if any(f.rule == "slow-edge" for f in mine):
        text = _plain_input_fix(result)
        if text:
            return {f: text for f in mine}, 0
    present = {f.rule for f in run_stage_rules(result, limits)}
    solution, count, key = _search_memo_keyed(stage, result.receiver_electrical, limits, series,
                                              present - set(FIXABLE), budget)
    charged = count
    if searched is not None and key is not None:
        charged = 0 if key in searched else count
        searched.add(key)
    if solution is None:
        return _no_change_texts(mine, stage, series, count), charged
    change_text = ", ".join(c.text() for c in solution.changes)
    return {f: f"{change_text} ({rule_figure(f.rule, solution.result, limits, _edge_of(f))})"
            for f in mine}, charged


def _no_change_texts(mine: list[Finding], stage: Stage, series: str, count: int) -> dict[Finding, str]:
    """The plain-words fix, and honestly why no values are proposed."""
    names = ", ".join(v.designator for v in variables(stage, series)) or "the stage's parts"
    honest = (f"no {series} value change of one or two of {names} passes every rule at worst case "
              f"({count} analyses tried)")
    return {f: f"{f.fix}; {honest}" if f.fix else honest for f in mine}


# A board check searches fixes for at most this many analyses in all (about 2 ms each
# for closed-form stages): a board with hundreds of distinct failing stages gets
# concrete values for the first ones, in board order, and the plain-words fix after.
BOARD_FIX_BUDGET = 2000


def propose_board_fixes(results: Sequence[StageResult], findings: Sequence[Finding],
                        limits: Mapping[str, float], series: str = "E24",
                        board_budget: int = BOARD_FIX_BUDGET) -> dict[Finding, str]:
    """Fix texts for a whole board, keyed by finding; bounded by `board_budget` analyses.

    Same texts as `propose_fixes` per stage, while the board's budget lasts
    (a stage never gets more than `FIX_BUDGET`); deterministic, since the
    bound counts analyses, not seconds. Findings are values: two equal
    findings get the same text.
    """
    by_stage: dict[tuple, list[Finding]] = {}
    for f in findings:
        if f.contact is not None and f.receiver is not None:
            by_stage.setdefault((f.contact, f.receiver), []).append(f)
    out: dict[Finding, str] = {}
    left = board_budget
    searched: set[tuple] = set()
    for result in results:
        mine = by_stage.get((result.stage.contact.designator, result.stage.receiver.ref))
        if not mine or left <= 0:
            continue
        texts, charged = _propose(result, mine, limits, series, min(FIX_BUDGET, left), searched)
        out.update(texts)
        # Charged as the search cost when first run (the memo may answer it here
        # from another board): the budget, hence the texts, depend on this board alone.
        left -= charged
    return out
