"""The one-port's network solved by Newton, with the pin behind a resistor and clamped.

The stage: R1 from the 5 V rail to the filter node c, C1 from c to ground,
the contact from c to ground, R2 from c to the pin, and two clamps from the
pin to a 3.3 V rail: D1 with a model card (IS 10 fA, N 1, no RS) and D2
piecewise linear (0.4 V, 100 ohm). Two diodes take OnePort off its closed
form for one diode, onto Newton's method; the pin is written first, so it is
the network's first node. OnePort.solve(u, slopes=True) promises (its
docstring) the current into the capacitor, the receiver's voltage and the
derivatives of both by the capacitor voltage u.

Sources:
- Kirchhoff's current law. At the pin: (u - v)/R2 = I_D1 + I_D2 + gmin v, the
  pin's voltage v by scipy.optimize.brentq; into C1: i = (Vcc - u)/R1 - gmin u
  - (u - v)/R2. Differentiated by hand: dv/du = (1/R2) / (1/R2 + g_D1 + g_D2 +
  gmin), di/du = -1/R1 - gmin - (1 - dv/du)/R2, with g the diodes' slopes.
- The Shockley equation I = IS (exp(V / (N Vt)) - 1), Vt = kT/q at 27 °C
  (CODATA constants), the diode model of SPICE's manual; a diode without a
  card is Vf in series with Ron while it conducts (the tool's documented
  piecewise-linear diode); SPICE's gmin, 1e-12 S at every free node ("from
  memory", kept as the tool keeps it).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.optimize import brentq

from drc.analysis.physics.compiled import compile_circuit
from drc.analysis.physics.mna import dc_solve
from drc.analysis.physics.oneport import OnePort
from drc.board.stage import Capacitor, Diode, DiodeCard, RailSource, Resistor, Throw
from tests.analysis.builders import stage

IS, N = 1e-14, 1.0
R1, R2, C1, VCC, V33, RC = 10e3, 1e3, 100e-9, 5.0, 3.3, 0.1
GMIN = 1e-12
NVT = N * 1.380649e-23 * 300.15 / 1.602176634e-19


def clamped_behind_r2():
    return stage(resistors=(Resistor("R2", "rx", "c", R2), Resistor("R1", "vcc", "c", R1)),
                 capacitors=(Capacitor("C1", "c", "0", C1),),
                 diodes=(Diode("D1", "rx", "v33", card=DiodeCard(IS, N, 0.0)),
                         Diode("D2", "rx", "v33", 0.4, 100.0)),
                 rails=(RailSource("vcc", VCC, 0.05), RailSource("v33", V33, 0.05)),
                 throws=(Throw("c", "0", "pressed", RC),))


def i_clamps(v: float) -> float:
    x = v - V33
    return IS * math.expm1(x / NVT) + max(0.0, (x - 0.4) / 100.0)


def g_clamps(v: float) -> float:
    x = v - V33
    return IS / NVT * math.exp(x / NVT) + (1 / 100.0 if x > 0.4 else 0.0)


def by_hand(u: float) -> tuple[float, float, float, float]:
    """(current into C1, pin voltage, their derivatives by u) at capacitor voltage u."""
    v = brentq(lambda v: (u - v) / R2 - i_clamps(v) - GMIN * v, -1.0, u + 1.0, xtol=1e-15, rtol=1e-15)
    dv = (1 / R2) / (1 / R2 + g_clamps(v) + GMIN)
    return (VCC - u) / R1 - GMIN * u - (u - v) / R2, v, -1 / R1 - GMIN - (1 - dv) / R2, dv


def test_the_one_ports_newton_path_follows_kirchhoff_with_the_pin_first():
    model = compile_circuit(clamped_behind_r2().circuit)
    assert model.free[0] == "rx" and model.rx == 0  # the clamped pin is the network's first node
    row = model.nominal.copy()
    port = OnePort(model, "released", row, dc_solve(model, "released", row[None, :], exact=False).v[0])
    # Below the clamps, in D1's knee, and with D2 conducting (the pin over 3.7 V).
    u = np.array([3.0, 3.5, 3.8, 4.0, 4.5])
    ic, vrx, d = port.solve(u, slopes=True)
    assert d is not None
    want = np.array([by_hand(float(x)) for x in u])
    np.testing.assert_allclose(ic, want[:, 0], rtol=1e-9, atol=1e-12)
    np.testing.assert_allclose(vrx, want[:, 1], rtol=1e-9)
    np.testing.assert_allclose(d[:, 0], want[:, 2], rtol=1e-6)
    np.testing.assert_allclose(d[:, 1], want[:, 3], rtol=1e-6)
    assert want[-1, 3] == pytest.approx(0.0906, abs=1e-3)  # R2 against 100 ohm: the pin clamped
