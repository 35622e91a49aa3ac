"""The closure-and-opening reading where the fastest vertex lies at a bend of the
receiver's threshold curve (inside its rail's tolerance band).

The stage: a 74HC14 input supplied from a 4.5 V rail (three cells) with the
default ±5 % (limits.toml tolerance_rail), the contact from that rail to the
pin, a 10 kΩ pull-down and 100 nF at the pin. A press closes the contact
(the pin goes to the rail within nanoseconds), then the bounce opens it and
R1·C1 pull the pin back down towards VT-.

Check values, worked here:
- rules/families.toml, [families.HC.schmitt] (HC14 class, from memory):
  VT- max is 1.0 V at 2.0 V, 2.45 V at 4.5 V, 3.2 V at 6.0 V, linear
  between. Relative to the supply it peaks at the table point:
  VT-max/VCC = 0.58 − 0.16/VCC below 4.5 V (rising), 0.5 + 0.2/VCC above
  (falling), so 2.45/4.5 = 0.5444 at 4.5 V against 0.5426 at 4.275 V and
  0.5423 at 4.725 V. The pull back to VT- max is quickest where that ratio
  is highest: at the bend, inside the rail's band, at no end of it.
- The RC law v(t) = Vf + (V0 − Vf)·exp(−t/τ) and its inverse
  t = τ·ln((V0 − Vf)/(Vth − Vf)) (*Lessons In Electric Circuits*, Vol. I,
  ch. 16, open textbook), with the Thevenin levels by hand: closed,
  Vf = (VCC/Rc − I)/(1/Rc + 1/R1) with τ = C1/(1/Rc + 1/R1); open,
  Vf = −I·R1 with τ = R1·C1 (I: the input's leakage into the pin).
- Brute force over the tolerance box: R1 ±5 %, C1 ±20 % (limits.toml
  defaults), the leakage ±1 µA (families.toml HC) and the rail over a grid
  of its band with the table's points inside it.
"""

from __future__ import annotations

import itertools
import math

import numpy as np
import pytest

from drc.analysis.first_edge import pull_back
from drc.pipeline import check_netlist_text

HC14 = "XU1 IN o1 0 o2 0 o3 0 o4 0 o5 0 o6 0 +4V5 74HC14\n"
STAGE = "bend\nV1 +4V5 0 DC 4.5\nR1 IN 0 10k\nC1 IN 0 100n\nSW1 +4V5 IN TACTILE\n"
# A diode from the pin to its rail never conducts here (the pin never rises over the rail):
# the stage takes the exact path of stages with diodes, its trajectories the same RC law.
DIODE = "D1 IN +4V5 DCLAMP\n"

RC = 0.1  # the closed contact (contacts.toml: 0.1 Ω where the class gives none)
CLOSURE = 1e-6  # the least closure (limits.toml min_closure)
VT_MINUS_MAX = ((2.0, 4.5, 6.0), (1.0, 2.45, 3.2))  # families.toml HC schmitt


def vt_minus_max(vcc: float) -> float:
    return float(np.interp(vcc, *VT_MINUS_MAX))


def pull_back_time(r1: float, c1: float, vcc: float, leak: float) -> float:
    """From the released level, a 1 µs closure, then the open contact's RC law down to VT- max."""
    u_start = -leak * r1  # released: R1 to ground, the leakage into the pin
    g = 1 / RC + 1 / r1
    u_closed, tau_closed = (vcc / RC - leak) / g, c1 / g
    u_left = u_closed + (u_start - u_closed) * math.exp(-CLOSURE / tau_closed)
    u_open = -leak * r1
    return r1 * c1 * math.log((u_left - u_open) / (vt_minus_max(vcc) - u_open))


def brute_force() -> tuple[float, float]:
    """(least pull back, the rail there) over the tolerance box."""
    lo, hi = 4.5 * 0.95, 4.5 * 1.05
    rails = sorted({*np.linspace(lo, hi, 181).tolist(), *(x for x in VT_MINUS_MAX[0] if lo < x < hi)})
    best = min((pull_back_time(r1, c1, v, i), v) for r1, c1, v, i in itertools.product(
        (9.5e3, 10.5e3), (80e-9, 120e-9), rails, (-1e-6, 1e-6)))
    return best


def _press(extra: str = ""):
    _board, results, _ = check_netlist_text(STAGE + extra + HC14, "net.cir")
    (r,) = results
    assert r.stage.circuit.rails[0].tolerance == pytest.approx(0.05)
    return pull_back(r.stage, r.receiver_electrical, "press")


@pytest.mark.parametrize("extra", ["", DIODE], ids=["closed-form", "exact-path"])
def test_the_fastest_pull_back_lies_at_the_bend_of_vt_minus(extra):
    want, rail = brute_force()
    assert rail == pytest.approx(4.5)  # the table point, not an end of the band
    pb = _press(extra)
    assert pb is not None and pb.bounce_state == "transit" and not pb.at_threshold
    assert pb.fastest_s == pytest.approx(want, rel=1e-6)
    assert pb.corner_fastest["rail:+4V5"] == pytest.approx(4.5)
    assert pb.opposite_v == pytest.approx(2.45)  # VT- max at 4.5 V (families.toml)
    # Read at an end of the band only, the least would be 0.5 % longer (less safe):
    ends = min(pull_back_time(r1, c1, v, i) for r1, c1, v, i in itertools.product(
        (9.5e3, 10.5e3), (80e-9, 120e-9), (4.275, 4.725), (-1e-6, 1e-6)))
    assert ends > want * 1.004


def release_time(r1: float, c1: float, vcc: float, leak: float) -> float:
    """From the pressed level (the closed contact against R1, steady) down to VT- max by R1·C1."""
    g = 1 / RC + 1 / r1
    u_pressed = (vcc / RC - leak) / g
    u_open = -leak * r1
    return r1 * c1 * math.log((u_pressed - u_open) / (vt_minus_max(vcc) - u_open))


def test_the_fastest_release_edge_lies_at_the_bend_of_vt_minus():
    # The stage's own release edge (StageResult.edges, what the rules read), same box and RC law:
    # quickest at the table point 4.5 V, inside the band; read at the band's ends only it would be
    # longer (less safe).
    lo, hi = 4.5 * 0.95, 4.5 * 1.05
    rails = sorted({*np.linspace(lo, hi, 181).tolist(), 4.5})
    box = list(itertools.product((9.5e3, 10.5e3), (80e-9, 120e-9), rails, (-1e-6, 1e-6)))
    want, at = min((release_time(r1, c1, v, i), v) for r1, c1, v, i in box)
    assert at == pytest.approx(4.5)
    _board, results, _ = check_netlist_text(STAGE + HC14, "net.cir")
    (r,) = results
    edge = r.edges["release"]
    assert edge.fastest_s == pytest.approx(want, rel=1e-6)
    assert edge.corner_fastest["rail:+4V5"] == pytest.approx(4.5)
    assert edge.threshold_fastest_v == pytest.approx(2.45)  # VT- max at 4.5 V (families.toml)
    ends = min(release_time(r1, c1, v, i) for r1, c1, v, i in box if v in (rails[0], rails[-1]))
    assert ends > want * 1.004
