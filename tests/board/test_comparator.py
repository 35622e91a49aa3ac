"""A comparator with hysteresis resistors is a Schmitt receiver: its thresholds.

Checked against two outside sources:
- the handbook formula of the inverting comparator with hysteresis (a divider
  R1 from the supply and R2 to ground on IN+, feedback Rf from the output;
  an open-collector output adds its pull-up Rpu in series with Rf while
  high): VT+ = VCC R2 / (R2 + R1 || (Rf + Rpu)), VT- = VCC (R2 || Rf) /
  (R1 + R2 || Rf) (the usual derivation: superposition at IN+ with the
  output at VCC or at ground);
- ngspice: the same network with the comparator as an ideal voltage-
  controlled switch from the output to ground (open collector), the input
  swept slowly up and down; the input levels where the output flips.
A Monte Carlo over the resistor and rail tolerances stays inside the
computed (min, max) of each threshold.
"""

from __future__ import annotations

import numpy as np
import pytest

from drc.board.board import UncheckedReason
from drc.config.settings import Config
from tests.support.ngspice import measure


def par(a: float, b: float) -> float:
    return a * b / (a + b)


def handbook(vcc: float, r1: float, r2: float, rf: float, rpu: float) -> tuple[float, float]:
    """(VT+, VT-) of the inverting Schmitt with an open-collector output."""
    return vcc * r2 / (r2 + par(r1, rf + rpu)), vcc * par(r2, rf) / (r1 + par(r2, rf))


def deck(vcc: float, r1: float, r2: float, rf: float, rpu: float, part: str = "LM393") -> str:
    """Signal on IN- (pin 2) through 10k; the second comparator unused (inputs grounded)."""
    return f"""* comparator with hysteresis
V1 vcc 0 DC {vcc}
R0 vcc sig 10k
SW1 sig 0 TACTILE
RS sig inm 10k
C1 inm 0 100n
R1 vcc inp {r1}
R2 inp 0 {r2}
RF out inp {rf}
RPU vcc out {rpu}
XU1 out inm inp 0 0 0 out2 vcc {part}
.end
"""


CASES = [
    # vcc, R1, R2, Rf, Rpu
    (12.0, 100e3, 100e3, 470e3, 10e3),
    (5.0, 10e3, 10e3, 100e3, 4.7e3),
    (5.0, 47e3, 22e3, 220e3, 10e3),
    (24.0, 100e3, 47e3, 1e6, 22e3),
]


def receiver_of(board_of, text: str, pin: int = 2):
    board = board_of(text)
    return next(r for r in board.receivers if r.part == "U1" and r.pin == pin), board


@pytest.mark.parametrize("vcc,r1,r2,rf,rpu", CASES)
def test_thresholds_match_the_handbook_formula(board_of, vcc, r1, r2, rf, rpu):
    receiver, _ = receiver_of(board_of, deck(vcc, r1, r2, rf, rpu))
    assert receiver.schmitt and receiver.thresholds is not None
    rising, falling = receiver.thresholds
    vt_plus, vt_minus = handbook(vcc, r1, r2, rf, rpu)
    assert rising[1] == pytest.approx(vt_plus, rel=1e-9)
    assert falling[1] == pytest.approx(vt_minus, rel=1e-9)
    assert rising[0] < rising[1] < rising[2] and falling[0] < falling[1] < falling[2]
    assert "Schmitt thresholds" in receiver.threshold_note


@pytest.mark.parametrize("vcc,r1,r2,rf,rpu", CASES[:2])
def test_thresholds_match_ngspice(board_of, vcc, r1, r2, rf, rpu):
    receiver, _ = receiver_of(board_of, deck(vcc, r1, r2, rf, rpu))
    rising, falling = receiver.thresholds
    spice = f"""* open-collector comparator as an ideal switch, input swept up then down
V1 vcc 0 DC {vcc}
VIN inm 0 PWL(0 0 10m {vcc} 20m 0)
R1 vcc inp {r1}
R2 inp 0 {r2}
RF out inp {rf}
RPU vcc out {rpu}
S1 out 0 inm inp OC
.model OC SW(VT=0 VH=1e-4 RON=1m ROFF=1e12)
.tran 1u 20m 0 1u
.meas tran vtplus FIND v(inm) WHEN v(out)={vcc / 2} FALL=1
.meas tran vtminus FIND v(inm) WHEN v(out)={vcc / 2} RISE=1
.end
"""
    found = measure(spice, ["vtplus", "vtminus"])
    # ngspice's switch adds VH = 0.1 mV and the sweep moves 1.2 mV per step at most
    assert rising[1] == pytest.approx(found["vtplus"], abs=5e-3)
    assert falling[1] == pytest.approx(found["vtminus"], abs=5e-3)


def test_monte_carlo_stays_inside_the_corners(board_of):
    vcc, r1, r2, rf, rpu = CASES[0]
    receiver, board = receiver_of(board_of, deck(vcc, r1, r2, rf, rpu))
    rising, falling = receiver.thresholds
    tol_r = Config().tolerances.resistor
    tol_v = next(iter(board.rails.values())).tolerance
    rng = np.random.default_rng(12)
    n = 20_000
    draw = [rng.uniform(v * (1 - tol_r), v * (1 + tol_r), n) for v in (r1, r2, rf, rpu)]
    supply = rng.uniform(vcc * (1 - tol_v), vcc * (1 + tol_v), n)
    plus, minus = handbook(supply, *draw)
    assert rising[0] <= plus.min() and plus.max() <= rising[2]
    assert falling[0] <= minus.min() and minus.max() <= falling[2]


def test_without_feedback_one_threshold(board_of):
    text = deck(5.0, 10e3, 10e3, 100e3, 4.7e3).replace("RF out inp", "RF out nowhere")
    receiver, _ = receiver_of(board_of, text)
    rising, falling = receiver.thresholds
    assert not receiver.schmitt and rising == falling
    assert rising[1] == pytest.approx(2.5)  # the divider alone


def test_non_inverting_schmitt_is_not_checked(board_of):
    """Signal on IN+ (pin 3) with feedback to IN+: the thresholds depend on the source."""
    text = """* non-inverting
V1 vcc 0 DC 5
R0 vcc sig 10k
SW1 sig 0 TACTILE
RS sig inp 10k
RF out inp 100k
RPU vcc out 4.7k
R1 vcc ref 10k
R2 ref 0 10k
XU1 out ref inp 0 0 0 out2 vcc LM393
.end
"""
    board = board_of(text)
    assert not [r for r in board.receivers if r.part == "U1" and r.pin == 3]
    (blocked,) = [u for u in board.uncheckable if u.pins == (("U1:3", "inp"),)]
    assert blocked.reason == UncheckedReason.FEEDBACK_INPUT


def test_floating_reference_is_not_checked(board_of):
    text = deck(5.0, 10e3, 10e3, 100e3, 4.7e3).replace("R1 vcc inp", "R1 vcc nc1").replace(
        "R2 inp 0", "R2 nc2 0").replace("RF out inp", "RF out nc3")
    board = board_of(text)
    (blocked,) = [u for u in board.uncheckable if u.designator == "U1" and "U1:2" in dict(u.pins)]
    assert blocked.reason == UncheckedReason.UNKNOWN_THRESHOLD
