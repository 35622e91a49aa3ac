"""The bounded fallback's analyses fetched ahead (drc.design.bisection): what they must hold.

The prefetch exists so that the bisection's analyses go in few batches
(`Evaluator`'s docstring: a batch of a dozen costs about as much as one
analysis alone). Its contract, as the docstrings state it:

- `_bisection_points(a, b, depth, out)`: "the midpoints `_boundary` may visit in
  (a, b), `depth` levels deep". Reference: `_boundary` itself run on every
  monotonic verdict over [a, b] (each place the rule may change, passing either
  way: every sequence of outcomes a bisection can meet), its first `depth`
  questions recorded; the union is what a bisection may ask that deep.
- `_prefetch_for(ev, var, fixed, i)`: "Before asking for candidate i: analyse it
  with its likely successors in one batch. Around i lies a stretch of candidates
  not analysed yet; ... the batch is the stretch's bisection points, or all of it
  when short, plus both ends of the list", and, for a long stretch, "the probes of
  a rule failing at both ends, the neighbours of the present value". The probes
  are read from `_inner_interval` itself (a rule failing at every probe makes it
  ask them all); the stretch is found here by walking the known set by hand.
- `Evaluator`: on a closed-form stage `prefetch` analyses the value sets in one
  batch (`analyse_stages`) and `fired` then serves them without analysing again,
  counting each against the budget only when asked; on a stage of the exact path
  (two capacitors) it fetches nothing ahead and the budget is divided by
  `SLOW_ANALYSIS_COST` ("the exact path runs one by one"). Counted by spies on the
  two analysis entry points, never by time.
"""

from __future__ import annotations

import itertools
import math
from dataclasses import replace

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from drc.analysis.stage_analysis import analyse_stage
from drc.board.stage import Capacitor
from drc.design import bisection
from drc.design.bisection import Variable
from drc.design.complete import with_values
from tests.checks.builders import LIMITS
from tests.design.test_fix_completeness import RX, _stage

SETTINGS = settings(max_examples=400, deadline=None, suppress_health_check=[HealthCheck.too_slow])


# ------------------------------------------------------------------ _bisection_points

def _boundary_questions(a: int, b: int, depth: int) -> set[int]:
    """Every index `_boundary` asks among its first `depth` questions over [a, b], over
    every monotonic rule: failing below t and passing from t up (passes_high), or the
    mirror, for every t in (a, b]."""
    asked: set[int] = set()
    for t in range(a + 1, b + 1):
        for passes_high in (True, False):
            seen: list[int] = []

            def verdict(i: int, t=t, passes_high=passes_high, seen=seen) -> frozenset[str] | None:
                seen.append(i)
                fails = i < t if passes_high else i >= t
                return frozenset({"r"}) if fails else frozenset()
            bisection._boundary(verdict, "r", a, b, passes_high)
            asked.update(seen[:depth])
    return asked


def test_bisection_points_are_what_a_bisection_may_ask_that_deep():
    for a, b, depth in itertools.product(range(0, 4), range(0, 40), range(0, 5)):
        if b < a:
            continue
        out: list[int] = []
        bisection._bisection_points(a, b, depth, out)
        assert set(out) == _boundary_questions(a, b, depth), (a, b, depth, out)
        assert all(a < i < b for i in out)


# ------------------------------------------------------------------ _prefetch_for

class Spy:
    """Stands in for `bisection.Evaluator`: which values are known, and what is fetched."""

    fast = True

    def __init__(self, var: Variable, known: set[int], budget: int = 10**6, count: int = 0) -> None:
        self.var, self.known_idx, self.budget, self.count = var, known, budget, count
        self.batches: list[list[dict[str, float]]] = []

    def known(self, values) -> bool:
        return self.var.candidates.index(values[self.var.designator]) in self.known_idx

    def prefetch(self, many) -> None:
        self.batches.append(list(many))


def _stretch(n: int, known: set[int], i: int) -> tuple[int, int]:
    """The run of candidates not analysed yet around i, [first, last], walked by hand."""
    first = i
    while first - 1 >= 0 and first - 1 not in known:
        first -= 1
    last = i
    while last + 1 < n and last + 1 not in known:
        last += 1
    return first, last


def _probes(var: Variable) -> set[int]:
    """What `_inner_interval` asks for a rule failing wherever it looks."""
    asked: list[int] = []

    def verdict(i: int) -> frozenset[str]:
        asked.append(i)
        return frozenset({"r"})
    assert bisection._inner_interval(verdict, var, "r") is None
    return set(asked)


@st.composite
def prefetch_cases(draw):
    n = draw(st.integers(1, 40))
    cand = tuple(1e3 * 1.1 ** k for k in range(n))
    present = cand[0] * draw(st.floats(0.5, 1.1 ** n * 2))
    i = draw(st.integers(0, n - 1))
    known = set(draw(st.lists(st.integers(0, n - 1), max_size=6))) - {i}
    return Variable("X1", present, cand, "Ω"), known, i


@SETTINGS
@given(prefetch_cases())
def test_the_batch_holds_the_stretch_or_its_bisection_points_and_probes(case):
    var, known, i = case
    n = len(var.candidates)
    ev = Spy(var, known)
    fixed = {"R9": 4.7e3}
    bisection._prefetch_for(ev, var, fixed, i)  # type: ignore[arg-type]
    assert len(ev.batches) == 1, "one batch"
    batch = ev.batches[0]
    assert all(v["R9"] == 4.7e3 for v in batch), "the other parts held as given"
    got = {var.candidates.index(v["X1"]) for v in batch}
    first, last = _stretch(n, known, i)
    stretch = set(range(first, last + 1))
    assert i in got, "candidate i itself"
    if len(stretch) <= bisection._PREFETCH_FILL:
        # All of the short stretch, and nothing not analysed yet past the analysed
        # candidates around it (both ends of the list allowed; `Evaluator.prefetch`
        # drops what it knows).
        assert stretch <= got, (sorted(stretch - got), known)
        assert got - known <= stretch | {0, n - 1}, (sorted(got - known - stretch), known)
    else:
        # The bisection between the analysed candidates around the stretch (or the ends
        # of the list), its first levels; both ends; the probes; the present value's nearest.
        points = _boundary_questions(max(first - 1, 0), min(last + 1, n - 1), bisection._PREFETCH_DEPTH)
        nearest = min(range(n), key=lambda j: abs(math.log(var.candidates[j] / var.present)))
        want = points | {0, n - 1} | _probes(var) | {nearest}
        assert want <= got, (sorted(want - got), known)


def test_a_stage_analysed_already_fetches_nothing():
    var = Variable("X1", 1e3, tuple(1e3 * 1.1 ** k for k in range(20)), "Ω")
    ev = Spy(var, {5})
    bisection._prefetch_for(ev, var, {}, 5)  # type: ignore[arg-type]
    assert ev.batches == []
    ev.fast = False  # the exact path: one analysis at a time
    bisection._prefetch_for(ev, var, {}, 6)  # type: ignore[arg-type]
    assert ev.batches == []


# ------------------------------------------------------------------ Evaluator

class Calls:
    """Counts the analyses `bisection` starts: batches (with their sizes) and single ones."""

    def __init__(self, monkeypatch) -> None:
        self.batches: list[int] = []
        self.singles = 0
        batch, single = bisection.analyse_stages, bisection.analyse_stage

        def spy_batch(stages, rxs):
            self.batches.append(len(stages))
            return batch(stages, rxs)

        def spy_single(stage, rx):
            self.singles += 1
            return single(stage, rx)
        monkeypatch.setattr(bisection, "analyse_stages", spy_batch)
        monkeypatch.setattr(bisection, "analyse_stage", spy_single)


VALUES = [{"R1": 8.2e3}, {"R1": 12e3}, {"R1": 15e3}]


def _edges(result):
    return {e: (t.fastest_s, t.slowest_s) for e, t in result.edges.items()}


def test_a_closed_form_stage_is_analysed_ahead_in_one_batch(monkeypatch):
    stage = _stage(10e3, 1e3, 100e-9, True)  # one capacitor, no diode: closed-form edges
    calls = Calls(monkeypatch)
    ev = bisection.Evaluator(stage, RX, LIMITS, set(), budget=50)
    assert ev.budget == 50
    ev.prefetch(VALUES)
    assert calls.batches == [3] and calls.singles == 0
    assert ev.count == 0, "fetched ahead, not asked for: not counted"
    for k, values in enumerate(VALUES, 1):
        _ids, result = ev.fired(values)
        assert ev.count == k
        # The same figures as the stage analysed alone with that value (the per-stage path).
        alone = analyse_stage(with_values(stage, values), RX)
        for e, (fast, slow) in _edges(alone).items():
            assert math.isclose(_edges(result)[e][0], fast, rel_tol=1e-9)
            assert math.isclose(_edges(result)[e][1], slow, rel_tol=1e-9)
    assert calls.batches == [3] and calls.singles == 0  # served from the batch


def test_a_stage_of_the_exact_path_is_analysed_one_at_a_time(monkeypatch):
    stage = _stage(10e3, 1e3, 100e-9, True)
    circuit = stage.circuit
    two = circuit.capacitors + (Capacitor("C2", "n1", "0", 10e-9),)
    stage = replace(stage, circuit=replace(circuit, capacitors=two))
    calls = Calls(monkeypatch)
    ev = bisection.Evaluator(stage, RX, LIMITS, set(), budget=50)
    assert ev.budget == 50 // bisection.SLOW_ANALYSIS_COST
    ev.prefetch(VALUES)
    assert calls.batches == [] and calls.singles == 0
    ev.fired(VALUES[0])
    assert calls.batches == [] and calls.singles == 1 and ev.count == 1
