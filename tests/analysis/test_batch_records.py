"""Stages of one structure solved together in one batch: each keeps its own figures.

physics.batch stacks the stages of one circuit structure (values aside) and
solves them as one numpy problem; every figure must still be each stage's
own. Check values: the per-stage solver on each stage alone (the two
implementations of the same maths must agree, issue 13), and Ohm's law by
hand for the contact current (Vcc / (R1 + Rc) over the corners, the
leakage range of the low level at the pin, *Lessons In Electric Circuits*,
Vol. I, ch. 2).
"""

from __future__ import annotations

import itertools

import pytest

from drc.analysis.stage_analysis import _analyse_one, analyse_stages
from tests.analysis.builders import pullup_c_at_pin, receiver_electrical

RX = receiver_electrical()
RC = 0.1


def test_each_stage_of_a_batch_has_its_own_levels_currents_and_edges():
    stages = [pullup_c_at_pin(r_pu=r, c=c, closed_ohms=RC) for r, c in ((10e3, 100e-9), (2.2e3, 47e-9), (47e3, 10e-9))]
    together = analyse_stages(stages, [RX] * len(stages))
    for st, got in zip(stages, together, strict=True):
        alone = _analyse_one(st, RX)
        for state, lev in alone.levels.items():
            other = got.levels[state]
            assert other.state == lev.state == state and other.logic == lev.logic
            for field in ("nominal_v", "worst_v", "required_v", "margin_v", "thevenin_v", "thevenin_ohms"):
                assert getattr(other, field) == pytest.approx(getattr(lev, field), rel=1e-9, abs=1e-12)
        for edge, e in alone.edges.items():
            o = got.edges[edge]
            assert (o.edge, o.direction) == (e.edge, e.direction)
            for field in ("nominal_s", "fastest_s", "slowest_s", "start_v", "final_v"):
                assert getattr(o, field) == pytest.approx(getattr(e, field), rel=1e-9)
            assert o.corner_fastest == pytest.approx(e.corner_fastest, rel=1e-12)
            assert o.corner_slowest == pytest.approx(e.corner_slowest, rel=1e-12)
        # Ohm's law: the contact carries the pull-up's current (vcc / (R1 + Rc)) and, of the up to
        # 1 µA the low level's leakage brings out of the pin, the share R1 / (R1 + Rc).
        r1 = next(r.ohms for r in st.circuit.resistors)
        currents = [(v + leak * r) / (r + RC) for v, r, leak in
                    itertools.product((4.75, 5.25), (r1 * 0.95, r1 * 1.05), (0.0, 1e-6))]
        assert got.contact_current_a == pytest.approx(min(currents), rel=1e-9)
        assert got.closed_current_a == pytest.approx(max(currents), rel=1e-9)
        assert got.pull_current_a == pytest.approx(alone.pull_current_a, rel=1e-9)
