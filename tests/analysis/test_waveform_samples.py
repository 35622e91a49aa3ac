"""The samples a plot of an edge is drawn from, against the RC law by hand.

transient.sample promises (its docstring): the steady level before the edge
at t = 0, then the edge's own samples, linear and logarithmic in time, up to
when the slowest mode has settled (seven time constants) or one and a half
times the crossing, whichever is later. Check values: the first-order RC
law v(t) = Vf + (V0 − Vf)·exp(−t/τ) with τ = R·C (*Lessons In Electric
Circuits*, Vol. I, ch. 16), for a pull-up R1 to the pin, C1 at the pin and
the contact from the pin to ground.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from drc.analysis.stage_analysis import edge_waveform
from tests.analysis.builders import pullup_c_at_pin, receiver_electrical

RX = receiver_electrical(leak_high=(0.0, 0.0), leak_low=(0.0, 0.0))
R1, C1, VCC = 10e3, 100e-9, 5.0


def test_release_samples_lie_on_the_rc_law_and_reach_the_settled_level():
    st = pullup_c_at_pin(r_pu=R1, c=C1, vcc=VCC, closed_ohms=0.1)
    t, v = edge_waveform(st, RX, "release", "nominal")
    tau = R1 * C1
    v0 = VCC * 0.1 / (R1 + 0.1)  # pressed: the divider of R1 and the closed contact
    assert t[0] == 0.0 and v[0] == pytest.approx(v0, rel=1e-9)
    law = VCC + (v0 - VCC) * np.exp(-t[1:] / tau)
    np.testing.assert_allclose(v[1:], law, rtol=1e-9, atol=1e-12)
    # Seven time constants: the plot ends within exp(-7) of the way to the final level.
    assert t[-1] == pytest.approx(7 * tau, rel=1e-9)
    assert VCC - v[-1] <= (VCC - v0) * math.exp(-7) * (1 + 1e-9)
    # Logarithmic in time too: the first steps resolve a thousandth of a time constant.
    positive = t[t > 0]
    assert positive.min() <= tau * 1e-3 * (1 + 1e-9)
    # t = 0 twice: the level before the edge, then v(0+) (a jump would show as a vertical step).
    assert t[1] == 0.0 and np.all(np.diff(t[1:]) > 0)


def test_a_slow_crossing_extends_the_plot_past_it():
    # A threshold close to the final level: the crossing is later than seven time constants
    # would show, so the plot runs to one and a half times the crossing.
    rx = receiver_electrical(rising=(4.998, 4.999, 4.9995), leak_high=(0.0, 0.0), leak_low=(0.0, 0.0))
    st = pullup_c_at_pin(r_pu=R1, c=C1, vcc=VCC, closed_ohms=0.1)
    t, v = edge_waveform(st, rx, "release", "nominal")
    v0 = VCC * 0.1 / (R1 + 0.1)
    crossing = R1 * C1 * math.log((VCC - v0) / (VCC - 4.999))
    assert crossing > 7 * R1 * C1
    assert t[-1] == pytest.approx(1.5 * crossing, rel=1e-9)
    assert np.interp(crossing, t[1:], v[1:]) == pytest.approx(4.999, abs=1e-9)


def test_an_unknown_corner_is_refused_naming_it():
    # A clear error: a corner that is neither a name edge_waveform knows nor a mapping is refused,
    # and the error names the value given, so that the caller sees what was wrong.
    st = pullup_c_at_pin(r_pu=R1, c=C1, vcc=VCC, closed_ohms=0.1)
    with pytest.raises(ValueError, match="warmest"):
        edge_waveform(st, RX, "release", "warmest")
