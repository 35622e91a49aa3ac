"""Diodes from their .model card against ngspice's own diode, and the card as read.

Sources, named beside each check:
- ngspice (Debian package `ngspice`) with the same `.model ... D(IS N RS)`
  card, its own diode model (Shockley with series resistance, no junction
  capacitance as the card gives none), on decks written here by hand with a
  tight tolerance (reltol 1e-6) and a step far below the edge.
- The Shockley equation I = IS (exp((V - I RS) / (N Vt)) - 1), Vt = kT/q at
  27 degC (CODATA constants), evaluated by hand in the test.
- Monte Carlo (seeded) of ngspice runs inside the tolerance box: every
  sample's time lies between the fastest and slowest corner reported.
- The HC14 class VT- lines of rules/families.toml (from memory, widest
  across makers: VT- min 0.9 V at 4.5 V, 1.2 V at 6 V; max 2.45 V, 3.2 V),
  interpolated by hand for the sampled supply.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from drc.analysis.physics.nonlinear import THERMAL_V, diode_current
from drc.analysis.stage_analysis import edge_solution
from drc.pipeline import check_netlist_text
from tests.support.ngspice import measure

CARD = ".model DSW D(IS=4n N=1.9 RS=0.6)\n"
STAGE = ("diode speeds the press\nV1 vcc 0 DC 5\nR1 vcc sw 10k\nR2 sw in 47k\nC1 in 0 100n\nD1 in sw DSW\n"
         "SW1 sw 0 TACTILE\nXU1 in y1 0 y2 0 y3 0 y4 0 y5 0 y6 0 vcc 74HC14\n" + CARD)


def one(text: str):
    _board, res, _findings = check_netlist_text(text, "diode.cir")
    assert len(res) == 1
    return res[0]


def test_the_card_is_read_and_what_it_leaves_out_is_the_spice_default():
    r = one(STAGE)
    [d] = r.stage.circuit.diodes
    assert d.card is not None
    assert (d.card.saturation_a, d.card.emission, d.card.series_ohms) == (4e-9, 1.9, 0.6)
    assert d.card.defaulted == ()
    r2 = one(STAGE.replace(CARD, ".model DSW D(N=1.9)\n"))
    [d2] = r2.stage.circuit.diodes
    # rules/limits.toml: IS 1e-14 A and RS 0, the SPICE defaults.
    assert (d2.card.saturation_a, d2.card.series_ohms) == (1e-14, 0.0)
    assert set(d2.card.defaulted) == {"IS", "RS"}
    # No card at all: the piecewise-linear diode of limits.toml (0.6 V, 10 ohm).
    r3 = one(STAGE.replace(CARD, ""))
    [d3] = r3.stage.circuit.diodes
    assert d3.card is None and (d3.forward_v, d3.on_ohms) == (0.6, 10.0)


def test_the_diode_current_is_the_shockley_equation():
    r = one(STAGE)
    [d] = r.stage.circuit.diodes
    nvt = 1.9 * 1.380649e-23 * 300.15 / 1.602176634e-19
    assert THERMAL_V * 1.9 == pytest.approx(nvt, rel=1e-12)
    for i_want in (1e-9, 1e-6, 1e-3, 0.1):
        v = nvt * math.log(i_want / 4e-9 + 1) + i_want * 0.6  # the equation solved for V by hand
        i, di = diode_current(d, np.array([v]))
        assert float(i[0]) == pytest.approx(i_want, rel=1e-9)
        # dI/dV = 1 / (RS + N Vt / (I + IS))
        assert float(di[0]) == pytest.approx(1 / (0.6 + nvt / (i_want + 4e-9)), rel=1e-6)


def _deck(values, vth, edge: str) -> str:
    r1, r2, c, vcc = values
    if edge == "press":  # released is the DC operating point; the press at 10 ns, fine steps
        ctl, tran = "PWL(0 0 10n 0 10.001n 1)", f".tran 0.01n {40 * 1e-7 * c / 100e-9 + 2e-6} 0 0.2n"
        meas = f".meas tran t_edge trig v(ctl) val=0.5 rise=1 targ v(in) val={vth} fall=1"
    else:
        ctl, tran = "PWL(0 1 10n 1 10.001n 0)", f".tran 1u {12 * (r1 + r2) * c} 0 {(r1 + r2) * c / 200}"
        meas = f".meas tran t_edge trig v(ctl) val=0.5 fall=1 targ v(in) val={vth} rise=1"
    return (f"card diode {edge}\nV1 vcc 0 DC {vcc}\nVC ctl 0 {ctl}\nS1 sw 0 ctl 0 smod\n"
            f".model smod SW(VT=0.5 VH=0 RON=0.1 ROFF=1e12)\nR1 vcc sw {r1}\nR2 sw in {r2}\nC1 in 0 {c}\n"
            f"D1 in sw DSW\n{CARD}.options reltol=1e-6\n{tran}\n{meas}\n.end\n")


@pytest.mark.ngspice
@pytest.mark.parametrize("edge", ["press", "release"])
@pytest.mark.parametrize("which", ["nominal", "fastest", "slowest"])
def test_card_diode_edges_agree_with_ngspice(edge, which):
    r = one(STAGE)
    e = r.edges[edge]
    corner = (e.corner_fastest if which == "fastest" else e.corner_slowest if which == "slowest"
              else {"R1": 10e3, "R2": 47e3, "C1": 100e-9, "rail:vcc": 5.0, "threshold": e.threshold_v})
    corner = dict(corner, leakage=0.0)  # no leakage source in the hand deck
    ours = edge_solution(r.stage, r.receiver_electrical, edge, corner).crossing_s
    values = (corner["R1"], corner["R2"], corner["C1"], corner["rail:vcc"])
    spice = measure(_deck(values, corner["threshold"], edge), ["t_edge"])["t_edge"]
    assert ours is not None
    # DESIGN.md section 10: within 0.5 %.
    assert spice == pytest.approx(ours, rel=5e-3), (edge, which, ours, spice)


def test_before_the_card_the_press_was_ten_times_too_slow():
    # The piecewise-linear 0.6 V + 10 ohm diode (no card) against the card's (ngspice above).
    with_card, without = one(STAGE), one(STAGE.replace(CARD, ""))
    assert without.edges["press"].nominal_s > 8 * with_card.edges["press"].nominal_s


def _lerp(x, x0, y0, x1, y1):
    return y0 + (x - x0) * (y1 - y0) / (x1 - x0)


@pytest.mark.ngspice
def test_card_diode_press_monte_carlo_inside_the_corners():
    r = one(STAGE)
    e = r.edges["press"]
    rng = np.random.default_rng(5)
    times = []
    for _ in range(12):
        vcc = 5.0 * rng.uniform(0.95, 1.05)
        lo, hi = _lerp(vcc, 4.5, 0.9, 6.0, 1.2), _lerp(vcc, 4.5, 2.45, 6.0, 3.2)  # HC14 VT- at this VCC
        values = (10e3 * rng.uniform(0.95, 1.05), 47e3 * rng.uniform(0.95, 1.05),
                  100e-9 * rng.uniform(0.8, 1.2), vcc)
        times.append(measure(_deck(values, rng.uniform(lo, hi), "press"), ["t_edge"])["t_edge"])
    # ngspice's own accuracy (reltol 1e-6) on a 50-300 ns edge: 0.1 %.
    assert min(times) >= e.fastest_s * (1 - 1e-3)
    assert max(times) <= e.slowest_s * (1 + 1e-3)
