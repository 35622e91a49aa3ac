"""The closure-and-opening reading of a release: which threshold pair pulls back soonest.

The stage: 10k pull-up to the contact node, 1k series to the pin, 100 nF at
the pin, the contact to ground (0.1 ohm); a Schmitt input with VT+ 2.0-3.5 V,
VT- 0.9-2.2 V and a least hysteresis of 0.4 V. On a release the pin charges
through 11k (1.1 ms), so a 1 µs opening leaves it where it crossed: the
crossing threshold itself. A re-closure then empties the capacitor through
1k + (10k ∥ 0.1 ohm) towards the closed level Vcc·0.1/(10k + 0.1).

Sources: the RC law t = τ·ln((V0 − Vf)/(Vth − Vf)) and the Thevenin
equivalent of the closed contact (*Lessons In Electric Circuits*, Vol. I,
ch. 16 and ch. 10), worked by hand over every corner; the thresholds may
sit anywhere in their ranges but never closer than the least hysteresis
(VT+ − VT- ≥ VH min), so the soonest pull back is at one of the two ends
of that bound: VT+ at its minimum with VT- 0.4 V under it (2.0 → 1.6 V),
or VT- at its maximum with VT+ 0.4 V over it (2.6 → 2.2 V).
"""

from __future__ import annotations

import itertools
import math
from dataclasses import replace

import pytest

from drc.analysis.first_edge import pull_back
from tests.analysis.builders import pullup_series_rc, receiver_electrical

RC = 0.1
RX = replace(receiver_electrical(leak_high=(0.0, 0.0), leak_low=(0.0, 0.0)), hysteresis_min_v=0.4)


def back_time(r_pu, r_s, c, vcc, left, opposite):
    closed = vcc * RC / (r_pu + RC)
    tau = (r_s + r_pu * RC / (r_pu + RC)) * c
    return tau * math.log((left - closed) / (opposite - closed))


def test_release_pull_back_takes_the_pair_nearest_the_top():
    pb = pull_back(pullup_series_rc(r_pu=10e3, r_s=1e3, c=100e-9), RX, "release")
    assert pb is not None and pb.edge == "release" and pb.bounce_state == "pressed" and pb.at_threshold
    pairs = {(2.0, 1.6): [], (2.6, 2.2): []}
    for r_pu, r_s, c, vcc in itertools.product((9.5e3, 10.5e3), (0.95e3, 1.05e3), (80e-9, 120e-9), (4.75, 5.25)):
        for (left, opp), times in pairs.items():
            times.append(back_time(r_pu, r_s, c, vcc, left, opp))
    best = min(min(t) for t in pairs.values())
    # The upper pair is the sooner: the same 0.4 V drop is a smaller ratio higher up.
    assert best == min(pairs[(2.6, 2.2)]) < min(pairs[(2.0, 1.6)])
    assert pb.fastest_s == pytest.approx(best, rel=1e-9)
    assert pb.left_v == pytest.approx(2.6) and pb.opposite_v == pytest.approx(2.2)
    assert pb.corner_fastest["threshold"] == pytest.approx(2.6)
    # Nominal: typical thresholds (VT+ 2.9 V left, back to VT- 1.6 V), every value nominal.
    assert pb.nominal_s == pytest.approx(back_time(10e3, 1e3, 100e-9, 5.0, 2.9, 1.6), rel=1e-9)
    assert pb.bounce_tau_s == pytest.approx((1e3 + 10e3 * RC / (10e3 + RC)) * 100e-9, rel=1e-12)
    assert pb.closure_tau_s == pytest.approx(11e3 * 100e-9, rel=1e-12)


def test_without_a_least_hysteresis_the_thresholds_may_meet():
    # No VH min known: VT+ min 2.0 V and VT- max 2.2 V overlap, so the pull back is there at once.
    pb = pull_back(pullup_series_rc(r_pu=10e3, r_s=1e3, c=100e-9), replace(RX, hysteresis_min_v=None), "release")
    assert pb is not None and pb.fastest_s == 0.0
