"""Brent's root finder (drc.analysis.physics.roots) against SciPy's brentq, the
outside reference (scipy.optimize.brentq, same tolerances), on smooth functions
of the kinds the event solver brackets: sums of decaying exponentials crossing
a threshold (one to four modes, both directions, steep and flat crossings),
plus textbook cases (cos x = x, a cubic, a root at an end of the bracket).
Each root must agree with SciPy's within the shared tolerance and must bracket
a sign change of the function at that tolerance. A dip of two modes that just
grazes a threshold: its minimum worked by hand (f'(t) = 0), the first crossing
by brentq on the falling side. The solver's grid of distinct
instants (transient.sorted_distinct) is numpy.unique's, compared directly.
"""

from __future__ import annotations

import math
import random

import numpy as np
import pytest

from drc.analysis.physics.roots import brent_root
from drc.analysis.physics.transient import ExpSum, first_crossing

brentq = pytest.importorskip("scipy.optimize").brentq

RTOL = 1e-13


def _agree(f, lo, hi):
    xtol = max(hi * 1e-15, 1e-300)
    ours = brent_root(f, lo, hi, xtol=xtol, rtol=RTOL)
    theirs = brentq(f, lo, hi, xtol=xtol, rtol=RTOL, maxiter=200)
    tol = 4 * (xtol + RTOL * abs(theirs))
    assert abs(ours - theirs) <= tol, (ours, theirs)
    assert lo <= ours <= hi
    return ours


def _random_expsums(count: int, seed: int = 7):
    rng = random.Random(seed)
    for _ in range(count):
        modes = rng.randint(1, 4)
        lam = np.array([10 ** rng.uniform(0, 6) for _ in range(modes)])
        a = np.array([rng.uniform(-5, 5) for _ in range(modes)])
        yield ExpSum(rng.uniform(-1, 6), a, lam, 0.0)


def test_textbook_roots():
    assert _agree(lambda x: math.cos(x) - x, 0.0, 1.0) == pytest.approx(0.7390851332151607, rel=1e-12)
    assert _agree(lambda x: x ** 3 - 2 * x - 5, 2.0, 3.0) == pytest.approx(2.0945514815423265, rel=1e-12)
    assert brent_root(lambda x: x - 1.0, 1.0, 2.0, xtol=1e-15, rtol=RTOL) == 1.0
    assert brent_root(lambda x: x - 2.0, 1.0, 2.0, xtol=1e-15, rtol=RTOL) == 2.0


def test_steep_and_flat_crossings():
    _agree(lambda t: 5.0 * (1 - math.exp(-t / 1e-9)) - 2.5, 0.0, 1e-7)  # a ns edge
    _agree(lambda t: 5.0 * (1 - math.exp(-t / 10.0)) - 4.9999, 0.0, 1e3)  # creeping to the threshold
    _agree(lambda t: math.tanh(1e4 * (t - 0.3)), 0.0, 1.0)  # nearly a step


def test_exponential_sums_agree_with_scipy():
    checked = 0
    for f in _random_expsums(400):
        for direction in (1, -1):
            target = f.c + 0.5 * float(np.sum(f.a)) * 0.999
            grid = np.geomspace(1e-9, 1e-1, 400)
            vals = direction * (f.many(grid) - target)
            hits = np.flatnonzero(vals >= 0)
            if hits.size == 0 or hits[0] == 0:
                continue
            lo, hi = float(grid[hits[0] - 1]), float(grid[hits[0]])
            root = _agree(lambda t, f=f, d=direction, y=target: d * (f(t) - y), lo, hi)
            checked += 1
            assert first_crossing(f, target, direction) is not None
            assert root > 0
    assert checked > 200


def test_no_sign_change_is_refused():
    with pytest.raises(ValueError):
        brent_root(lambda x: x * x + 1.0, -1.0, 1.0, xtol=1e-15, rtol=RTOL)


def test_sorted_distinct_is_numpy_unique():
    from drc.analysis.physics.transient import sorted_distinct
    rng = np.random.default_rng(3)
    for size in (0, 1, 2, 50, 500):
        values = np.round(rng.uniform(-3, 3, size), 1)  # many repeats
        assert np.array_equal(sorted_distinct(values), np.unique(values))


def test_a_dip_that_just_grazes_the_threshold_is_found():
    # f(t) = 1 - exp(-t) + 1.5 exp(-3t) falls to a minimum and comes back. By hand: f'(t) = 0 at
    # exp(2t) = 4.5, t* = ln(4.5)/2; a threshold 1e-10 over f(t*) is crossed twice, about 2e-5
    # apart around t*, which no grid of the time constants alone resolves. The first crossing is
    # the root of f - target on [0, t*], where f falls monotonically (scipy's brentq).
    f = ExpSum(1.0, np.array([-1.0, 1.5]), np.array([1.0, 3.0]), 0.0)
    t_star = math.log(4.5) / 2
    assert abs(f.deriv(t_star)) < 1e-12
    target = f(t_star) + 1e-10
    root = brentq(lambda t: f(t) - target, 0.0, t_star, xtol=1e-15, rtol=RTOL)
    assert first_crossing(f, target, -1) == pytest.approx(root, rel=1e-9)
    # Just under the minimum: never reached.
    assert first_crossing(f, f(t_star) - 1e-10, -1) is None


def _calls(f, lo, hi, xtol):
    """Evaluations of f by brent_root, by SciPy's brentq (its full_output count), and by
    bisection to the same tolerance (the bracket halved until it is below xtol + rtol |x|)."""
    seen = [0]

    def counted(x):
        seen[0] += 1
        return f(x)

    brent_root(counted, lo, hi, xtol=xtol, rtol=RTOL)
    root, info = brentq(f, lo, hi, xtol=xtol, rtol=RTOL, maxiter=200, full_output=True)
    bisection = math.ceil(math.log2((hi - lo) / (xtol + RTOL * abs(root))))
    return seen[0], info.function_calls, bisection


def test_brent_converges_superlinearly_on_smooth_functions():
    # Brent's method (Brent 1973, ch. 4, from memory): on a smooth function with a simple root the
    # interpolation steps converge superlinearly, so it needs far fewer evaluations than
    # bisection's log2(bracket / tolerance), and as few as SciPy's brentq (the same method, the
    # outside reference; its function_calls) give or take two. Cases: the textbook roots, the RC
    # law v(t) = 5 (1 - exp(-t / RC)) at a threshold (a ns edge, a creeping one), an exponential,
    # and the exponential sums the event solver brackets.
    cases = [(lambda x: math.cos(x) - x, 0.0, 1.0),
             (lambda x: x ** 3 - 2 * x - 5, 2.0, 3.0),
             (lambda t: 5.0 * (1 - math.exp(-t / 1e-9)) - 2.5, 0.0, 1e-7),
             (lambda t: 5.0 * (1 - math.exp(-t / 10.0)) - 4.9999, 0.0, 1e3),
             (lambda x: math.exp(x) - 2.0, 0.0, 5.0)]
    for f in _random_expsums(60, seed=11):
        target = f.c + 0.5 * float(np.sum(f.a)) * 0.999
        grid = np.geomspace(1e-9, 1e-1, 400)
        for direction in (1, -1):
            hits = np.flatnonzero(direction * (f.many(grid) - target) >= 0)
            if hits.size and hits[0] > 0:
                cases.append((lambda t, f=f, d=direction, y=target: d * (f(t) - y),
                              float(grid[hits[0] - 1]), float(grid[hits[0]])))
    assert len(cases) > 40
    for f, lo, hi in cases:
        ours, scipys, bisection = _calls(f, lo, hi, xtol=max(hi * 1e-15, 1e-300))
        assert ours <= scipys + 2, (lo, hi, ours, scipys)
        assert ours <= bisection / 2, (lo, hi, ours, bisection)


def test_a_mode_the_start_does_not_excite_leaves_a_late_crossing_where_it_is():
    # f(t) = -exp(-3t) + 0 * exp(-t): the slow mode has no amplitude (the starting state does not
    # excite it). A threshold 1e-30 or 1e-35 under the final level 0 is crossed only after 60
    # time constants of the fast mode (the solver's grid), at t = ln(1/y) / 3 by hand:
    # 23.03 s and 26.86 s.
    # The same with the idle mode one that does not decay (rate 0: a capacitor with no DC path
    # holds its charge; the modal solution gives such a mode no amplitude).
    for idle_rate in (1.0, 0.0):
        f = ExpSum(0.0, np.array([-1.0, 0.0]), np.array([3.0, idle_rate]), 0.0)
        for y in (1e-30, 1e-35):
            assert first_crossing(f, -y, 1) == pytest.approx(math.log(1 / y) / 3, rel=1e-12)


def test_a_crossing_exactly_at_the_end_of_the_interval_is_found():
    # first_crossing's docstring: the first t in [0, t_max] (closed) with f(t) - target >= 0.
    # f(t) = 2 t (a capacitor charged by a constant current) meets 1 exactly at t = 0.5 (exact
    # in binary): with t_max = 0.5 the crossing is t_max itself; a hair shorter, none.
    f = ExpSum(0.0, np.zeros(0), np.zeros(0), 2.0)
    assert first_crossing(f, 1.0, 1, t_max=0.5) == 0.5
    assert first_crossing(f, 1.0, 1, t_max=0.5 * (1 - 1e-12)) is None
    assert first_crossing(f, 1.0, 1) == pytest.approx(0.5, rel=1e-13)
