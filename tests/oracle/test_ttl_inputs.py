"""Real TTL inputs and input clamps against ngspice and against numerical integration.

Sources, named beside each check:
- ngspice (Debian package `ngspice`), run on decks written here by hand: the
  TTL input is a behavioural current source (B element) drawing what
  rules/families.toml says an LS input draws - (VCC - 0.35 V - V) / Rin below
  the open-input level, nothing above it (a 5 mV smooth knee so the simulator
  converges), the IIH left out (leakage 0 at the corners compared) - and a
  CMOS input's clamp is a behavioural diode of the limits.toml knee and
  on-resistance (0.6 V, 10 ohm). Neither deck comes from drc's deck writer.
- Ohm's law by hand for the steady levels of a resistor into the input.
- scipy's solve_ivp (Radau, rtol 1e-9) on the one-node equation
  C dV/dt = (sources) - I_ttl(V) with the same smooth input current, over a
  seeded Monte Carlo inside the tolerance box: every sample's time lies
  between the fastest and the slowest corner the analysis reports.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from drc.analysis.stage_analysis import edge_solution
from drc.pipeline import check_netlist_text
from tests.support.ngspice import measure

pytestmark = pytest.mark.ngspice

LS14 = "XU1 in y1 0 y2 0 y3 0 y4 0 y5 0 y6 0 vcc 74LS14\n"
VD = 0.35  # families.toml LS ttl_input diode_v
KNEE = 0.005  # V: the smooth knee of the behavioural input (ours is a 10 ohm diode: a few mV)


def ttl_current(v, vcc, rin, vopen):
    """Current out of an LS input pin at voltage v (families.toml ttl_input), smooth at the open level."""
    return (vcc - VD - v) / rin * 0.5 * (1.0 - np.tanh((v - vopen) / KNEE))


def b_source(vcc: float, rin: float, vopen: float) -> str:
    """ngspice behavioural LS input at node `in`: current out of the pin (into the node)."""
    return (f"B_TTL 0 in I = ({vcc} - {VD} - v(in)) / {rin} * 0.5 * (1 - tanh((v(in) - {vopen}) / {KNEE}))\n")


def one(text: str):
    _board, res, findings = check_netlist_text(text, "ttl.cir")
    assert len(res) == 1
    return res[0], findings


PULL_DOWN = "pull-down\nV1 vcc 0 DC 5\nR1 in 0 22k\nSW1 vcc in TACTILE\n" + LS14


def test_an_open_ls_input_with_22k_to_ground_sits_at_its_open_level_not_above_the_rail():
    r, findings = one(PULL_DOWN)
    low = r.levels["released"]
    # Was 9.24 V (400 uA constant into 22 kohm); a real open input floats near 1.1-1.5 V.
    assert low.logic == "low"
    assert 1.1 <= low.nominal_v <= 1.5
    assert low.worst_v <= 1.5 + 0.01 and low.worst_v < 5.0
    assert r.max_input_v <= 5.25 + 1e-9
    # ngspice .op at the nominal values: Rin 18.1 kohm, open level 1.3 V, VCC 5 V.
    deck = ("ls input, 22k to ground\nR1 in 0 22k\n" + b_source(5.0, 18.1e3, 1.3)
            + ".op\n.control\nop\nlet vin = v(in)\nprint vin\n.endc\n.end\n")
    got = _print_value(deck, "vin")
    assert low.nominal_v == pytest.approx(got, abs=0.01)
    # And the analysis says the level is on the wrong side of VIL (a 22 kohm pull-down cannot hold TTL low).
    assert any(f.rule == "leakage-headroom" for f in findings)


def _print_value(deck: str, name: str) -> float:
    from tests.support.ngspice import run_deck
    out = run_deck(deck)
    text = out.stdout + out.stderr
    for line in text.splitlines():
        parts = line.replace("=", " ").split()
        if len(parts) >= 2 and parts[0].lower() == name:
            return float(parts[1])
    raise AssertionError(f"ngspice printed no {name}:\n{text[-2000:]}")


def test_a_1k_pull_down_holds_ls_low_by_ohms_law():
    # Ohm's law at the worst corner: Rin min 11.2 kohm, VCC 5.25 V, 1 kohm + 5 %:
    # V = (5.25 - 0.35) * 1.05k / (11.2k + 1.05k) (+ 10 ohm of the input diode) = 0.420 V.
    r, _ = one("pull-down 1k\nV1 vcc 0 DC 5\nR1 in 0 1k\nSW1 vcc in TACTILE\n" + LS14)
    want = (5.25 - VD) * 1050 / (11.2e3 + 10 + 1050)
    assert r.levels["released"].worst_v == pytest.approx(want, rel=1e-6)


EDGE = ("series R, pull-down, C\nV1 vcc 0 DC 5\nR1 sw in 1k\nR2 in 0 1k\nC1 in 0 1u\n"
        "SW1 vcc sw TACTILE\n" + LS14)


def _corner_values(corner):
    return (corner["R1"], corner["R2"], corner["C1"], corner["rail:vcc"], corner["U1:1/Rin"],
            corner["rail:U1:1/open"] - VD)


def _deck(corner, vth, falling: bool) -> str:
    r1, r2, c, vcc, rin, vopen = _corner_values(corner)
    # The press happens at 1 ms, the release at 6 ms (both states settle: tau under 1 ms).
    return (f"ls edge\nV1 vcc 0 DC {vcc}\nVC ctl 0 PWL(0 0 1m 0 1.000001m 1 6m 1 6.000001m 0)\n"
            f"S1 vcc sw ctl 0 smod\n.model smod SW(VT=0.5 VH=0 RON=0.1 ROFF=1e12)\n"
            f"R1 sw in {r1}\nR2 in 0 {r2}\nC1 in 0 {c}\n" + b_source(vcc, rin, vopen)
            + ".tran 1u 12m 0 1u\n"
            + (f".meas tran t_rel trig v(ctl) val=0.5 fall=1 targ v(in) val={vth} fall=1\n" if falling else
               f".meas tran t_press trig v(ctl) val=0.5 rise=1 targ v(in) val={vth} rise=1\n")
            + ".end\n")


@pytest.mark.parametrize("edge", ["press", "release"])
@pytest.mark.parametrize("which", ["nominal", "fastest", "slowest"])
def test_ls_edges_agree_with_ngspice(edge, which):
    r, _ = one(EDGE)
    e = r.edges[edge]
    corner = (e.corner_fastest if which == "fastest" else e.corner_slowest if which == "slowest"
              else {"R1": 1e3, "R2": 1e3, "C1": 1e-6, "rail:vcc": 5.0, "U1:1/Rin": 18.1e3,
                    "rail:U1:1/open": 1.3 + VD, "threshold": e.threshold_v})
    corner = dict(corner, leakage=0.0)  # IIH is not in the behavioural input
    ours = edge_solution(r.stage, r.receiver_electrical, edge, corner).crossing_s
    name = "t_rel" if edge == "release" else "t_press"
    spice = measure(_deck(corner, corner["threshold"], edge == "release"), [name])[name]
    # The release starts from the true pressed level (2.5 V, above the open level:
    # no IIL), the press from the released level the input's own current holds up.
    assert ours is not None
    assert spice == pytest.approx(ours, rel=5e-3), (edge, which, ours, spice)


def _integrate(r1, r2, c, vcc, rin, vopen, vth, falling: bool) -> float:
    """Time to vth after the contact moves, from the steady state of the state it leaves."""
    from scipy.integrate import solve_ivp
    from scipy.optimize import brentq

    def i_net(v, closed):
        src = (vcc - v) / (r1 + 0.1) if closed else 0.0
        return src - v / r2 + ttl_current(v, vcc, rin, vopen)

    v0 = brentq(lambda v: i_net(v, falling), -1.0, vcc + 1.0, xtol=1e-13)

    def crossing(t, y):
        return y[0] - vth
    crossing.terminal = True  # type: ignore[attr-defined]
    sol = solve_ivp(lambda t, y: [i_net(y[0], not falling) / c], (0.0, 50 * (r2 * c)), [v0],
                    method="Radau", rtol=1e-9, atol=1e-12, events=crossing)
    return float(sol.t_events[0][0]) if sol.t_events[0].size else math.inf


def test_ls_edges_monte_carlo_inside_the_corners():
    r, _ = one(EDGE)
    rng = np.random.default_rng(11)
    n = 150
    for edge in ("press", "release"):
        e = r.edges[edge]
        lo_t, hi_t = (e.threshold_fastest_v, e.threshold_slowest_v)
        ts = []
        for _ in range(n):
            s = [1e3 * rng.uniform(0.95, 1.05), 1e3 * rng.uniform(0.95, 1.05), 1e-6 * rng.uniform(0.8, 1.2),
                 5.0 * rng.uniform(0.95, 1.05), rng.uniform(11.2e3, 25e3), rng.uniform(1.1, 1.5)]
            vth = rng.uniform(min(lo_t, hi_t), max(lo_t, hi_t))
            ts.append(_integrate(*s, vth, edge == "release"))
        # 0.2 % for the smooth knee against the analysis's 10 ohm diode.
        assert min(ts) >= e.fastest_s * (1 - 2e-3), edge
        assert max(ts) <= e.slowest_s * (1 + 2e-3), edge


RAIL = ("rail mismatch\nV1 v5 0 DC 5\nV2 vcc 0 DC 3.3\nR1 v5 a 10k\nR2 a in 10k\nSW1 a 0 TACTILE\n"
        "XU1 in y1 0 y2 0 y3 0 y4 0 y5 0 y6 0 vcc 74HC14\n")


def test_a_rail_mismatch_is_clamped_and_its_current_goes_through_every_resistor():
    r, findings = one(RAIL)
    # Worst clamp current: 5.25 V rail, 3.135 V supply, both resistors at -5 %, the pin's
    # 1 uA leakage out of it (families.toml HC), the clamp a 0.6 V knee + 10 ohm (limits.toml).
    # By hand (Kirchhoff at the pin): (5.25 - 3.135 - 0.6 + 19 kohm x 1 uA) / (19 kohm + 10 ohm).
    want = (5.25 - 3.135 - 0.6 + 19e3 * 1e-6) / (19e3 + 10)
    assert r.clamp_current_a == pytest.approx(want, rel=1e-9)
    # Before: (V - abs max) / R_pull = (5.25 - 3.8) / 9.5 kohm = 153 uA, about twice too high.
    assert (5.25 - 3.8) / 9.5e3 > 1.8 * r.clamp_current_a
    # The highest level is held at VCC max + a diode drop, not the 5.25 V rail.
    assert r.max_input_v == pytest.approx(3.465 + 0.6 + 10 * (5.25 - 3.465 - 0.6 + 19e-3) / (19e3 + 10), rel=1e-9)
    rm = [f for f in findings if f.rule == "rail-mismatch"]
    assert len(rm) == 1 and "flows into its clamp" in rm[0].message
    # ngspice .op at the clamp-current corner with a behavioural clamp diode.
    deck = ("clamp\nV1 v5 0 DC 5.25\nV2 vcc 0 DC 3.135\nR1 v5 a 9.5k\nR2 a in 9.5k\n"
            "B_CL in vcc I = (v(in, vcc) > 0.6) ? (v(in, vcc) - 0.6) / 10 : 0\nI_LEAK 0 in DC 1u\n"
            ".control\nop\nlet icl = (v(in) - v(vcc) - 0.6) / 10\nprint icl\n.endc\n.end\n")
    assert r.clamp_current_a == pytest.approx(_print_value(deck, "icl"), rel=1e-4)


def _board_deck(result, corner, edge: str) -> str:
    """A deck of the stage's own parts at `corner`: each TTL load a behavioural input, each
    load's leakage (IIH, a CMOS input's) a current source at the corner's value."""
    from drc.analysis.physics.compiled import leak_param, rail_param

    c = result.stage.circuit
    names = {"0": "0", **{n: f"n{i}" for i, n in enumerate(c.nodes(), start=1)}}
    lines = [f"board stage {result.stage.name}"]
    for rail in c.rails:
        if rail.net != "0":
            lines.append(f"V{len(lines)} {names[rail.net]} 0 DC {corner.get(rail_param(rail.net), rail.volts)}")
    for r in c.resistors:
        lines.append(f"R{len(lines)} {names[r.a]} {names[r.b]} {corner.get(r.designator, r.ohms)}")
    for cap in c.capacitors:
        lines.append(f"C{len(lines)} {names[cap.a]} {names[cap.b]} {corner.get(cap.designator, cap.farads)}")
    lines.append("VC ctl 0 PWL(0 0 1m 0 1.000001m 1 40m 1 40.000001m 0)")
    lines.append("VB ctlb 0 PWL(0 1 1m 1 1.000001m 0 40m 0 40.000001m 1)")
    for t in c.throws:
        ctl = "ctl" if t.closed_when == "pressed" else "ctlb"
        lines += [f"S{len(lines)} {names[t.a]} {names[t.b]} {ctl} 0 smod"]
    lines.append(".model smod SW(VT=0.5 VH=0 RON=0.1 ROFF=1e12)")
    for i, ld in enumerate(c.loads):
        node = names[ld.node]
        leak = corner.get(leak_param(i, ld.ref), 0.0)
        if leak:
            lines.append(f"I{len(lines)} {node} 0 DC {leak}")  # into the pin: leaves the node
        if ld.ttl is not None:
            vcc = corner[rail_param(ld.supply_net)]
            rin, vopen = corner[f"{ld.ref}/Rin"], corner[rail_param(f"{ld.ref}/open")] - VD
            lines.append(f"B{len(lines)} 0 {node} I = ({vcc} - {VD} - v({node})) / {rin} * 0.5 * "
                         f"(1 - tanh((v({node}) - {vopen}) / {KNEE}))")
    rx = names[c.receiver_node]
    e = result.edges[edge]
    d = "rise" if e.direction == "rising" else "fall"
    trig = "rise" if edge == "press" else "fall"
    lines.append(".tran 0.2u 80m 0 2u")
    lines.append(f".meas tran t_edge trig v(ctl) val=0.5 {trig}=1 targ v({rx}) val={corner['threshold']} {d}=1")
    return "\n".join(lines) + "\n.end\n"


def _dimmer_rack_timed():
    from pathlib import Path

    path = Path(__file__).resolve().parents[2] / "boards" / "lx24" / "dimmer_rack.cir"
    _board, res, _ = check_netlist_text(path.read_text(encoding="utf-8"), "dimmer_rack.cir")
    for r in res:
        if r.receiver_electrical.family == "LS" and r.stage.circuit.capacitors:
            for edge, e in r.edges.items():
                if e.fastest_s and e.fastest_s > 1e-5:
                    yield pytest.param(r, edge, id=f"{r.stage.name}:{edge}")


@pytest.mark.parametrize("result, edge", list(_dimmer_rack_timed()))
def test_dimmer_rack_ls_edges_at_their_corners_agree_with_ngspice(result, edge):
    # The LS stages of the demo board (TTL releases used to start from the level of the
    # state they go to), at the fastest and slowest corners the analysis reports.
    e = result.edges[edge]
    for corner, ours in ((e.corner_fastest, e.fastest_s), (e.corner_slowest, e.slowest_s)):
        spice = measure(_board_deck(result, corner, edge), ["t_edge"])["t_edge"]
        assert spice == pytest.approx(ours, rel=5e-3), (result.stage.name, edge, ours, spice)


SHARED = ("LS beside HC on one RC node\nV1 +5V 0 DC 5\nR1 +5V SW 10k\nR2 SW IN 1k\nC1 IN 0 1u\n"
          "SW1 SW 0 TACTILE\nXU1 IN a1 0 a2 0 a3 0 a4 0 a5 0 a6 0 +5V 74HC14\n"
          "XU2 IN b1 0 b2 0 b3 0 b4 0 b5 0 b6 0 +5V 74LS04\n")
SEPARATE = ("separate rails\nV1 +3V3A 0 DC 3.3\nV2 +3V3B 0 DC 3.3\nR1 +3V3A SW 10k\nR2 SW IN 22k\n"
            "C1 IN 0 220n\nSW1 SW 0 TACTILE\nXU1 IN y1 0 y2 0 y3 0 y4 0 y5 0 y6 0 +3V3B 74HC14\n")


@pytest.mark.parametrize("text, stage, edge", [
    (SHARED, "SW1 -> U1:1", "press"), (SHARED, "SW1 -> U1:1", "release"),
    (SHARED, "SW1 -> U2:1", "release"), (SEPARATE, "SW1 -> U1:1", "release"),
    (SEPARATE, "SW1 -> U1:1", "press")], ids=["shared-HC-press", "shared-HC-release", "shared-LS-release",
                                           "own-rail-release", "own-rail-press"])
def test_every_load_and_its_own_supply_at_the_corners_agree_with_ngspice(text, stage, edge):
    # Issue 13 items 1-3: every receiver input on the net (an LS input as a behavioural
    # input beside an HC input), a receiver on its own rail at its own tolerance.
    _board, res, _ = check_netlist_text(text, "loads.cir")
    r = next(x for x in res if x.stage.name == stage)
    e = r.edges[edge]
    for corner, ours in ((e.corner_fastest, e.fastest_s), (e.corner_slowest, e.slowest_s)):
        assert ours is not None and ours > 0
        spice = measure(_board_deck(r, corner, edge), ["t_edge"])["t_edge"]
        assert spice == pytest.approx(ours, rel=5e-3), (stage, edge, ours, spice)
