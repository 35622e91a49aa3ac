"""Every receiver input on a stage's nets, each receiver's own supply, thresholds that follow VCC.

Sources, named beside each check:
- Ohm's and Kirchhoff's laws, with each receiver's leakage as a current
  source (textbook circuit theory; the figure is computed in the test).
- The RC closed form t = R·C·ln((Vf − V0)/(Vf − Vth)) of
  /work/shared/reference/components-and-contacts.md (CC), evaluated with
  numpy over Monte Carlo samples (seeded) inside the tolerance box.
- The threshold lines of rules/families.toml (HC14 class, widest across
  makers, from memory: VT+ min 0.7 V at 2.0 V and 1.55 V at 4.5 V; 4093B /
  40106B class, from memory: VT+ max 7.1 V at 10 V and 10.8 V at 15 V),
  interpolated here by hand.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from drc.analysis.physics.batch import analyse_group, structure_key, template
from drc.analysis.stage_analysis import _analyse_one
from drc.pipeline import check_netlist_text

HC14 = "XU{n} {a} o{n}1 0 o{n}2 0 o{n}3 0 o{n}4 0 o{n}5 0 o{n}6 0 {vcc} 74HC14\n"
HC04 = "XU{n} {a} p{n}1 0 p{n}2 0 p{n}3 0 p{n}4 0 p{n}5 0 p{n}6 0 {vcc} 74HC04\n"


def results(text: str):
    _board, res, findings = check_netlist_text(text, "net.cir")
    return {r.stage.name: r for r in res}, findings


def lerp(x, x0, y0, x1, y1):
    return y0 + (x - x0) * (y1 - y0) / (x1 - x0)


def test_every_receiver_on_the_net_loads_it():
    # A 470 kΩ pull-up feeding two CMOS inputs (±1 µA each, families.toml HC).
    # Ohm's law at the worst corner: 5 V × 0.95 − 2 × 1 µA × 470 kΩ × 1.05 = 3.763 V,
    # where one input alone would leave 4.257 V.
    text = ("two loads\nV1 +5V 0 DC 5\nR1 +5V IN 470k\nSW1 IN 0 TACTILE\n"
            + HC14.format(n=1, a="IN", vcc="+5V") + HC04.format(n=2, a="IN", vcc="+5V"))
    by_name, _ = results(text)
    a, b = by_name["SW1 -> U1:1"], by_name["SW1 -> U2:1"]
    assert [ld.ref for ld in a.stage.circuit.loads] == ["U1:1", "U2:1"]
    assert [ld.ref for ld in b.stage.circuit.loads] == ["U2:1", "U1:1"]
    for r in (a, b):
        assert r.levels["released"].worst_v == pytest.approx(5 * 0.95 - 2 * 1e-6 * 470e3 * 1.05, abs=1e-9)


def test_one_pull_resistor_is_one_finding_whatever_the_receivers():
    # 470 Ω pull-up: 5.25 V / 446.5 Ω = 11.8 mA held (Ohm's law): pullup-waste, once.
    text = ("two loads\nV1 +5V 0 DC 5\nR1 +5V IN 470\nR2 IN F 39k\nC1 F 0 1u\nSW1 IN 0 TACTILE\n"
            + HC14.format(n=1, a="F", vcc="+5V") + HC14.format(n=2, a="F", vcc="+5V"))
    by_name, findings = results(text)
    assert len(by_name) == 2
    waste = [f for f in findings if f.rule == "pullup-waste"]
    assert len(waste) == 1 and waste[0].receiver == "U1:1"
    assert waste[0].measured.value == pytest.approx(5.25 / (470 * 0.95), rel=1e-3)
    assert len([f for f in findings if f.rule == "resistance-range"]) == 1


SEPARATE = ("separate rails\nV1 +3V3A 0 DC 3.3\nV2 +3V3B 0 DC 3.3\nR1 +3V3A SW 10k\nR2 SW IN 22k\n"
            "C1 IN 0 220n\nSW1 SW 0 TACTILE\n" + HC14.format(n=1, a="IN", vcc="+3V3B"))


def test_a_receiver_on_its_own_rail_gets_that_rails_tolerance():
    by_name, _ = results(SEPARATE)
    r = by_name["SW1 -> U1:1"]
    e = r.edges["release"]
    # HC14 VT+ min at the receiver rail's -5 % (3.135 V), by hand from the table line.
    want = lerp(3.135, 2.0, 0.7, 4.5, 1.55)
    assert e.threshold_fastest_v == pytest.approx(want, abs=1e-9)
    assert e.corner_fastest["rail:+3V3B"] == pytest.approx(3.135)
    assert e.corner_fastest["rail:+3V3A"] == pytest.approx(3.465)  # the pull rail at its own maximum
    # CC closed form at that corner (leakage 1 µA out of the pin, contact 0.1 Ω).
    c = e.corner_fastest
    r1, r2, cap, vp, leak = c["R1"], c["R2"], c["C1"], c["rail:+3V3A"], c["leakage"]
    rc = 0.1
    v0 = vp * rc / (r1 + rc) - leak * (r2 + r1 * rc / (r1 + rc))
    vf = vp - leak * (r1 + r2)
    assert e.fastest_s == pytest.approx((r1 + r2) * cap * np.log((vf - v0) / (vf - want)), rel=1e-9)


def _mc_release(n, rng, r1, r2, cap, vp, vt, leak):
    rc = 0.1
    v0 = vp * rc / (r1 + rc) - leak * (r2 + r1 * rc / (r1 + rc))
    vf = vp - leak * (r1 + r2)
    return (r1 + r2) * cap * np.log((vf - v0) / (vf - vt))


def test_separate_rails_monte_carlo_inside_the_corners():
    # CC closed form over 200 000 samples: both rails, R, C, leakage and the part's
    # VT+ drawn independently, VT+ within its spread at the sampled receiver VCC.
    by_name, _ = results(SEPARATE)
    e = by_name["SW1 -> U1:1"].edges["release"]
    rng = np.random.default_rng(13)
    n = 200_000
    r1 = 10e3 * rng.uniform(0.95, 1.05, n)
    r2 = 22e3 * rng.uniform(0.95, 1.05, n)
    cap = 220e-9 * rng.uniform(0.8, 1.2, n)
    vp = 3.3 * rng.uniform(0.95, 1.05, n)
    vcc = 3.3 * rng.uniform(0.95, 1.05, n)
    lo = lerp(vcc, 2.0, 0.7, 4.5, 1.55)  # VT+ min line
    hi = lerp(vcc, 2.0, 1.5, 4.5, 3.15)  # VT+ max line
    vt = lo + rng.uniform(0, 1, n) * (hi - lo)
    leak = rng.uniform(-1e-6, 1e-6, n)
    t = _mc_release(n, rng, r1, r2, cap, vp, vt, leak)
    assert t.min() >= e.fastest_s * (1 - 1e-9)
    assert t.max() <= e.slowest_s * (1 + 1e-9)
    # The corners are attained: a sample at the fastest corner's values gives its time.
    c = e.corner_fastest
    t_corner = _mc_release(1, rng, c["R1"], c["R2"], c["C1"], c["rail:+3V3A"], c["threshold"], c["leakage"])
    assert t_corner == pytest.approx(e.fastest_s, rel=1e-9)


ONE_RAIL = ("one rail\nV1 +12V 0 DC 12\nR1 +12V SW 18k\nR2 SW IN 33k\nC1 IN 0 1.2u\nSW1 SW 0 TOGGLE\n"
            "XU1 IN a1 0 a2 0 a3 0 a4 0 a5 0 a6 0 +12V CD40106BE\n")


def test_thresholds_that_follow_vcc_move_with_the_pull_rail():
    by_name, _ = results(ONE_RAIL)
    e = by_name["SW1 -> U1:1"].edges["release"]
    # The slowest release rises from 0 V towards the rail V to VT+ max(V): by hand,
    # VT+ max(V) = 7.1 + (V - 10)(10.8 - 7.1)/5 = 0.74 V - 0.3, a fraction of V that
    # grows with V, so the slowest part sits at the rail's maximum 12.6 V with its own
    # VT+ max 9.024 V (the nominal 12 V's 8.58 V paired with 11.4 V was no part at all).
    assert e.corner_slowest["rail:+12V"] == pytest.approx(12.6)
    assert e.threshold_slowest_v == pytest.approx(lerp(12.6, 10.0, 7.1, 15.0, 10.8), abs=1e-9)
    # Monte Carlo with one rail variable: pull source and thresholds together (CC closed form).
    rng = np.random.default_rng(3)
    n = 200_000
    r1 = 18e3 * rng.uniform(0.95, 1.05, n)
    r2 = 33e3 * rng.uniform(0.95, 1.05, n)
    cap = 1.2e-6 * rng.uniform(0.8, 1.2, n)
    v = 12 * rng.uniform(0.95, 1.05, n)
    lo = lerp(v, 10.0, 4.6, 15.0, 6.8)
    hi = lerp(v, 10.0, 7.1, 15.0, 10.8)
    vt = lo + rng.uniform(0, 1, n) * (hi - lo)
    leak = rng.uniform(-1e-6, 1e-6, n)
    t = _mc_release(n, rng, r1, r2, cap, v, vt, leak)
    assert t.min() >= e.fastest_s * (1 - 1e-9)
    assert t.max() <= e.slowest_s * (1 + 1e-9)
    # The old pairing (rail minimum with the nominal 12 V's VT+ max) lay outside every part.
    c = e.corner_slowest
    old = _mc_release(1, rng, c["R1"], c["R2"], c["C1"], 11.4, lerp(12.0, 10.0, 7.1, 15.0, 10.8), c["leakage"])
    assert old > e.slowest_s * 1.05


def test_batch_and_per_stage_paths_agree_with_supplies_and_loads():
    # The two implementations of the same maths (physics.batch and the per-stage path).
    for text in (SEPARATE, ONE_RAIL):
        board, res, _ = check_netlist_text(text, "x.cir")
        for r in res:
            st, rx = r.stage, r.receiver_electrical
            one = _analyse_one(st, rx)
            [batch] = analyse_group(template(structure_key(st.circuit), st.circuit), [st], [rx])
            for edge in one.edges:
                a, b = one.edges[edge], batch.edges[edge]
                for name in ("nominal_s", "fastest_s", "slowest_s", "threshold_fastest_v", "threshold_slowest_v"):
                    assert getattr(a, name) == pytest.approx(getattr(b, name), rel=1e-12), (edge, name)
            for state in one.levels:
                assert one.levels[state].margin_v == pytest.approx(batch.levels[state].margin_v, rel=1e-12)


def test_a_supply_range_across_a_bend_is_searched_in_pieces():
    # HC at 4.5 V ±10 %: the VT+ lines bend at 4.5 V (a table point). With the pull
    # rail the receiver's own, the release time from 0 V to VT+ min(V) towards V
    # is τ·ln(V / (V − VT+min(V))); by hand its smallest value over 4.05..4.95 V
    # sits at an end or at the bend, and the analysis must find it.
    text = ("bend\nV1 +5V 0 DC 4.5\nR1 +5V SW 10k\nR2 SW IN 22k\nC1 IN 0 1u\nSW1 SW 0 TACTILE\n"
            + HC14.format(n=1, a="IN", vcc="+5V"))
    from drc.config.settings import Config, Tolerances
    _b, res, _ = check_netlist_text(text, "x.cir", Config(tolerances=Tolerances(rail=0.10)))
    e = res[0].edges["release"]
    assert [p.vcc for p in res[0].receiver_electrical.supply_points] == pytest.approx([4.05, 4.5, 4.95])
    c = e.corner_fastest
    vs = np.linspace(4.05, 4.95, 1801)  # 0.5 mV steps: the ends and the bend are on the grid
    vtmin = np.where(vs <= 4.5, lerp(vs, 2.0, 0.7, 4.5, 1.55), lerp(vs, 4.5, 1.55, 6.0, 2.1))
    rng = np.random.default_rng(0)
    t = _mc_release(vs.size, rng, c["R1"], c["R2"], c["C1"], vs, vtmin, c["leakage"])
    assert t.min() >= e.fastest_s * (1 - 1e-9)
    assert t.min() == pytest.approx(e.fastest_s, rel=1e-9)
    # Without the drop of the leakage and the contact, the bend itself is the fastest supply
    # (VT+ min / V falls up to 4.5 V and rises after it): the pieces hold that vertex.
    ratio = np.log(vs / (vs - vtmin))
    assert vs[np.argmin(ratio)] == pytest.approx(4.5)


def test_the_fastest_edge_at_a_band_edge_inside_the_supply_range():
    # A 74LVC04 input (plain: thresholds VIL max / VIH min, the JESD8 bands of
    # rules/families.toml, from memory) on a 2.7 V +-5 % rail, pulled up by R1 = 10k with
    # C1 = 100 nF. VIL max is 0.7 V up to 2.7 V (JESD8-5) and 0.8 V above (JESD8C), 0.7 V at
    # 2.7 V itself (the more demanding neighbour): the release reaches 0.7 V soonest at the
    # band edge, where the rail is highest with the lower threshold. By hand, the RC law
    # t = R C ln((Vf - V0) / (Vf - VIL)) from the pressed level (the divider of R1 and the
    # contact's 0.1 ohm, limits.toml) towards Vf = V - I R1 (I: the leakage into the pin,
    # -5 to +5 uA for LVC), over every vertex with the rail also at the band edge.
    text = ("band edge\nV1 +2V7 0 DC 2.7\nR1 +2V7 IN 10k\nC1 IN 0 100n\nSW1 IN 0 TACTILE\n"
            + HC04.format(n=1, a="IN", vcc="+2V7").replace("74HC04", "74LVC04"))
    by_name, _ = results(text)
    e = by_name["SW1 -> U1:1"].edges["release"]
    times = []
    for r in (9.5e3, 10.5e3):
        for c in (80e-9, 120e-9):
            for v in (2.565, 2.7, 2.835):
                for i in (-5e-6, 5e-6):
                    vil = 0.7 if v <= 2.7 else 0.8
                    v0 = (v / r - i) / (1 / r + 1 / 0.1)
                    vf = v - i * r
                    times.append((r * c * math.log((vf - v0) / (vf - vil)), v))
    t, v = min(times)
    assert v == 2.7
    assert e.fastest_s == pytest.approx(t, rel=1e-6)
    assert e.corner_fastest["rail:+2V7"] == pytest.approx(2.7, abs=1e-5)
