"""The bounded bisection search: the fallback for stages the complete search cannot screen.

Why it remains: stages whose edges need the exact event-driven solver
(several capacitors, diodes: tens of milliseconds per analysis), plain
inputs whose slow-edge rule reads a slope at one corner, and stages where the
screen disagrees with the full analysis cannot be screened in numpy
(drc.design.screen). For them, each rule's verdict is taken as monotonic in
each value, so for one value the passing values form an interval: its ends
are found by bisection over the series (the verdicts at the two ends of the
range say which way each rule passes), then the value in the interval nearest
the present one is confirmed with a full run. Two-part changes walk the first
part's values nearest-first and stop as soon as that change alone exceeds the
best total found. A stage gets at most `budget` analyses, so this search is
not complete: when it finds nothing its text says how many analyses it tried.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, replace

from drc.analysis.physics.batch import batchable, structure_key, template
from drc.analysis.receiver import ReceiverElectrical
from drc.analysis.results import StageResult
from drc.analysis.stage_analysis import analyse_stage, analyse_stages
from drc.board.stage import Stage
from drc.checks import run_stage_rules
from drc.design.complete import Move, Var, with_values

MAX_ANALYSES = 300
# An analysis on the exact event-driven path costs about this many closed-form ones.
SLOW_ANALYSIS_COST = 25


@dataclass(frozen=True, slots=True)
class Variable:
    designator: str
    present: float
    candidates: tuple[float, ...]  # ascending series values
    unit: str


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


def variables(vars_: Sequence[Var]) -> list[Variable]:
    """The complete search's parts (drc.design.complete.search_vars), as this search takes them."""
    return [Variable(v.designator, v.present, tuple(float(x) for x in v.candidates), v.unit) for v in vars_]


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




def search(stage: Stage, rx: ReceiverElectrical, limits: Mapping[str, float], vars_: Sequence[Var],
           tolerated: set[str], budget: int = MAX_ANALYSES) -> tuple[tuple[Move, ...] | None, StageResult | None, int]:
    """The cheapest one- or two-part change found within `budget` analyses:
    (moves or None, its result, analyses)."""
    ev = Evaluator(stage, rx, limits, tolerated, budget)
    vs = variables(vars_)
    best = _best_one_part(ev, vs)
    if best is None:
        best = _best_two_parts(ev, vs)
    if best is None:
        return None, None, ev.count
    return best[0], best[1], ev.count


_Best = tuple[tuple[Move, ...], StageResult, float]


def _best_one_part(ev: Evaluator, vars_: list[Variable]) -> _Best | None:
    best: _Best | None = None
    for var in vars_:
        found = best_single(ev, var, {})
        if found is not None:
            cost = abs(math.log(found[0] / var.present))
            if best is None or cost < best[2]:
                best = ((Move(var.designator, var.present, found[0], var.unit),), found[1], cost)
    return best


def _best_two_parts(ev: Evaluator, vars_: list[Variable]) -> _Best | None:
    """Two-part changes: the first part's values nearest-first, stopping once that
    change alone exceeds the best total found."""
    best: _Best | None = None
    for outer in vars_:
        for inner in vars_:
            if inner is outer:
                continue
            for value in sorted(outer.candidates, key=lambda v: abs(math.log(v / outer.present))):
                step = abs(math.log(value / outer.present))
                if step == 0.0:
                    continue
                if (best is not None and step >= best[2]) or ev.exhausted:
                    break
                found = best_single(ev, inner, {outer.designator: value})
                if found is None:
                    continue
                cost = step + abs(math.log(found[0] / inner.present))
                if best is None or cost < best[2]:
                    best = ((Move(outer.designator, outer.present, value, outer.unit),
                             Move(inner.designator, inner.present, found[0], inner.unit)), found[1], cost)
    return best
