"""The bounded fallback search (drc.design.bisection) against brute force on drawn verdict worlds.

The fallback rests on one stated assumption (its module docstring): each
rule's verdict is monotonic in each value, so along one part's candidate
list a rule fails below a point, above a point, at both ends (it passes on
an interval in between) or, passing at both ends, on an interval in between
(a level that changes logic as a divider moves). On worlds of such rules,
drawn by hypothesis over short candidate lists (the ends and the one-off
cases of every bracket are where bisections go wrong), the search's answer
is compared with the brute force over every candidate: the reference is
plain enumeration of the same verdicts, outside the search.

What the fallback promises, and so what is asserted:
- whatever it returns passes;
- one part: the passing value nearest the present one (|ln(new/old)|, then
  the lower value), whenever the rules are as the docstring says and a rule
  failing at both ends passes at one of the probes it tries (the present
  value, the middle and the quarters of the list) and a rule failing in the
  middle fails at the candidate nearest the present value (the only place
  it looks for one);
- two parts, with one-sided rules (a weighted sum of candidate indices
  against a threshold, monotonic in each): a change of the least total cost
  when no one-part change passes, and the one-part optimum when one does.

The verdicts are served by a stand-in for `bisection.Evaluator` (its own
caching and budget are covered by tests/design/test_fix_search_paths.py,
which compares it with one analysis at a time, and by the brute force on
real stages in tests/design/test_bisection_order.py).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping
from unittest import mock

import numpy as np
from hypothesis import HealthCheck, assume, example, given, settings
from hypothesis import strategies as st

from drc.design import bisection
from drc.design.bisection import Variable
from drc.design.complete import Var

SETTINGS = settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.too_slow])


class World:
    """Serves rule verdicts of value sets like `bisection.Evaluator` (cached, budgeted)."""

    fast = False  # no prefetching: one verdict at a time

    def __init__(self, fails: Callable[[Mapping[str, float]], frozenset[str]], budget: int = 10**9) -> None:
        self.fails, self.budget, self.count = fails, budget, 0
        self._cache: dict[tuple, tuple[frozenset[str], tuple]] = {}

    @property
    def exhausted(self) -> bool:
        return self.count >= self.budget

    def known(self, values: Mapping[str, float]) -> bool:
        return tuple(sorted(values.items())) in self._cache

    def fired(self, values: Mapping[str, float]):
        key = tuple(sorted(values.items()))
        if key in self._cache:
            return self._cache[key]
        if self.exhausted:
            return None
        self.count += 1
        self._cache[key] = (self.fails(values), key)
        return self._cache[key]


def _distance(value: float, present: float) -> float:
    return abs(math.log(value / present))


@st.composite
def candidate_lists(draw, min_size: int = 2, max_size: int = 14) -> tuple[float, ...]:
    """Ascending values with uneven ratios (1.05 to 2) between neighbours."""
    n = draw(st.integers(min_size, max_size))
    ratios = draw(st.lists(st.sampled_from([1.05, 1.1, 1.2, 1.5, 2.0]), min_size=n - 1, max_size=n - 1))
    values = [1e3]
    for r in ratios:
        values.append(values[-1] * r)
    return tuple(values)


def _nearest(indices, cand, present):
    return min(indices, key=lambda i: abs(math.log(cand[i] / present)))


@st.composite
def one_part_worlds(draw):
    """(variable, {rule: failing indices}, exact): rules of the four shapes along one list."""
    cand = draw(candidate_lists())
    n = len(cand)
    if draw(st.booleans()):
        present = draw(st.sampled_from(cand))
    else:  # a present value off the list (outside the window, or not a series value)
        present = cand[0] * draw(st.sampled_from([0.3, 0.7, 1.03, 1.7, 2.9, 6.1, 13.0, 40.0]))
    rules: dict[str, frozenset[int]] = {}
    for k in range(draw(st.integers(0, 3))):
        t = draw(st.integers(1, n))
        if draw(st.booleans()):
            rules[f"low{k}"] = frozenset(range(t))  # fails below t, passes towards the top
        else:
            rules[f"high{k}"] = frozenset(range(n - t, n))  # fails from n - t up
    probes = {_nearest(range(n), cand, present), n // 2, n // 4, 3 * n // 4}
    exact = True
    if n >= 3:
        for k in range(draw(st.integers(0, 2))):
            a = draw(st.integers(1, n - 2))
            b = draw(st.integers(a, n - 2))
            rules[f"both{k}"] = frozenset(range(n)) - frozenset(range(a, b + 1))  # passes on [a, b]
            exact &= any(a <= p <= b for p in probes)
    # The span every end-failing rule passes on, and its candidate nearest the present value.
    span = [i for i in range(n) if not any(i in f for f in rules.values())]
    here = _nearest(range(span[0], span[-1] + 1), cand, present) if span else 0
    if 1 <= here <= n - 2:
        for k in range(draw(st.integers(0, 2))):
            # Passes at both ends, fails on [a, b] around the span's nearest candidate.
            a = draw(st.integers(1, here))
            b = draw(st.integers(here, n - 2))
            rules[f"mid{k}"] = frozenset(range(a, b + 1))
    var = Variable("X1", present, cand, "Ω")
    return var, rules, exact


def _fails_of(rules: dict[str, frozenset[int]], cand: tuple[float, ...]):
    index = {v: i for i, v in enumerate(cand)}

    def fails(values: Mapping[str, float]) -> frozenset[str]:
        i = index[values["X1"]]
        return frozenset(r for r, bad in rules.items() if i in bad)
    return fails


# Hand-picked ends: the nearest passing value is the last (first) candidate, just past a
# stretch where a rule passing at both ends fails around the present value.
LAST = (Variable("X1", 1210.0, (1000.0, 1100.0, 1210.0, 1270.5), "Ω"), {"mid0": frozenset({2})}, True)
FIRST = (Variable("X1", 1050.0, (1000.0, 1050.0, 1155.0, 1270.5), "Ω"), {"mid0": frozenset({1})}, True)


@SETTINGS
@given(one_part_worlds())
@example(LAST)
@example(FIRST)
def test_one_part_is_the_nearest_passing_value(world):
    var, rules, exact = world
    cand = var.candidates
    passing = [i for i in range(len(cand)) if not any(i in bad for bad in rules.values())]
    ev = World(_fails_of(rules, cand))
    got = bisection.best_single(ev, var, {})
    if got is not None:
        assert got[0] in [cand[i] for i in passing], (got[0], rules)
        assert got[1] == (("X1", got[0]),)  # the result of that very value set
    if exact:
        want = min(passing, key=lambda i: (_distance(cand[i], var.present), cand[i])) if passing else None
        assert (got[0] if got else None) == (cand[want] if want is not None else None), rules


@SETTINGS
@given(one_part_worlds())
def test_one_part_fails_closed_when_the_budget_runs_out(world):
    # Out of budget: None, never a value that was not analysed.
    var, rules, _exact = world
    full = World(_fails_of(rules, var.candidates))
    bisection.best_single(full, var, {})
    assume(full.count >= 2)
    short = World(_fails_of(rules, var.candidates), budget=full.count - 1)
    got = bisection.best_single(short, var, {})
    assert got is None or not _fails_of(rules, var.candidates)({"X1": got[0]})



@SETTINGS
@given(one_part_worlds())
def test_the_regions_leave_out_exactly_where_a_rule_passing_at_both_ends_fails(world):
    # `_outside_inner_failures`: "the parts of `span` outside the stretches where a rule
    # passing at both ends fails" (one that fails at the span's candidate nearest the
    # present value, the only place it looks). Reference: the drawn failing sets, by
    # enumeration. The span is given as the brute force has it (every rule failing at an
    # end of the list passes there), so this checks the regions alone.
    var, rules, _exact = world
    cand = var.candidates
    n = len(cand)
    at_ends = frozenset(r for r, bad in rules.items() if 0 in bad or n - 1 in bad)
    span = [i for i in range(n) if not any(i in rules[r] for r in at_ends)]
    assume(span)
    first, last = span[0], span[-1]
    assert span == list(range(first, last + 1))  # the drawn end-failing rules leave an interval
    here = _nearest(range(first, last + 1), cand, var.present)
    fails = _fails_of(rules, cand)
    regions = bisection._outside_inner_failures(lambda i: fails({"X1": cand[i]}), var, (first, last), at_ends)
    assert regions is not None
    inner = [bad for r, bad in rules.items() if r not in at_ends and here in bad]
    want = {i for i in range(first, last + 1) if not any(i in bad for bad in inner)}
    assert {i for a, b in regions for i in range(a, b + 1)} == want, (regions, rules, here)


# ------------------------------------------------------------------ two or three parts

@st.composite
def many_part_worlds(draw):
    """Variables and rules "sum of w_k * index_k >= t" (each monotonic in each index)."""
    count = draw(st.integers(2, 3))
    vars_ = []
    for k in range(count):
        cand = draw(candidate_lists(3, 9))
        present = draw(st.sampled_from(cand))
        vars_.append(Variable(f"X{k + 1}", present, cand, "Ω" if k < count - 1 else "F"))
    rules = []
    for _ in range(draw(st.integers(1, 3))):
        weights = [draw(st.sampled_from([-2, -1, 0, 1, 2])) for _ in vars_]
        assume(any(weights))
        rules.append((weights, draw(st.integers(-6, 6))))
    return vars_, rules


def _linear_fails(vars_, rules):
    index = [{v: i for i, v in enumerate(var.candidates)} for var in vars_]

    def idx(values):
        return [index[k][values.get(v.designator, v.present)] for k, v in enumerate(vars_)]

    def fails(values: Mapping[str, float]) -> frozenset[str]:
        at = idx(values)
        # Each rule passes where the weighted sum of indices (less the present ones) reaches t.
        base = [index[k][v.present] for k, v in enumerate(vars_)]
        return frozenset(f"rule{r}" for r, (w, t) in enumerate(rules)
                         if sum(wk * (a - b) for wk, a, b in zip(w, at, base, strict=True)) < t)
    return fails


def _brute(vars_, fails):
    """(cost, change) of every passing one-part change, and of every passing two-part one."""
    singles, pairs = [], []
    for k, v in enumerate(vars_):
        for x in v.candidates:
            if x != v.present and not fails({v.designator: x}):
                singles.append((_distance(x, v.present), {v.designator: x}))
        for w in vars_[k + 1:]:
            for x in v.candidates:
                for y in w.candidates:
                    if x != v.present and y != w.present and not fails({v.designator: x, w.designator: y}):
                        pairs.append((_distance(x, v.present) + _distance(y, w.present),
                                      {v.designator: x, w.designator: y}))
    return sorted(singles, key=lambda s: s[0]), sorted(pairs, key=lambda s: s[0])


@SETTINGS
@given(many_part_worlds())
def test_the_fallback_finds_the_cheapest_one_or_two_part_change(world):
    vars_, rules = world
    fails = _linear_fails(vars_, rules)
    assume(fails({}))  # the present values fail: something to fix
    singles, pairs = _brute(vars_, fails)
    ev = World(fails)
    best = bisection._best_one_part(ev, vars_)
    if best is None:
        assert not singles, singles[0]
        best = bisection._best_two_parts(ev, vars_)
        if best is None:
            assert not pairs, pairs[0]
            return
        want = pairs
    else:
        want = singles
    moves, result, cost = best
    present = {v.designator: v for v in vars_}
    change = {m.designator: m.new for m in moves}
    assert not fails(change), change
    assert result == tuple(sorted(change.items()))
    for m in moves:  # each move names its part as it is and as proposed
        assert (m.old, m.unit) == (present[m.designator].present, present[m.designator].unit)
        assert m.new != m.old
    assert cost == sum(_distance(m.new, m.old) for m in moves)
    assert want and cost <= want[0][0] + 1e-12, (change, want[0])


@SETTINGS
@given(many_part_worlds())
def test_the_search_entry_gives_that_answer_and_counts_its_verdicts(world):
    # bisection.search: one part if one passes, else two, with the analyses it asked for.
    vars_, rules = world
    fails = _linear_fails(vars_, rules)
    assume(fails({}))
    singles, pairs = _brute(vars_, fails)
    served: list[World] = []

    def evaluator(stage, rx, limits, tolerated, budget):
        served.append(World(fails, budget))
        return served[-1]

    as_vars = [Var(v.designator, v.present, np.array(v.candidates), v.unit) for v in vars_]
    with mock.patch.object(bisection, "Evaluator", evaluator):
        moves, result, count = bisection.search(None, None, {}, as_vars, set(), 10**6)  # type: ignore[arg-type]
    assert count == served[0].count > 0
    want = singles or pairs
    if not want:
        assert moves is None and result is None
        return
    change = {m.designator: m.new for m in moves}
    assert len(moves) == (1 if singles else 2)
    assert not fails(change) and result == tuple(sorted(change.items()))
    assert sum(_distance(m.new, m.old) for m in moves) <= want[0][0] + 1e-12, (change, want[0])
