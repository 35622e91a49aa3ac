"""A standalone ngspice deck of one stage, modelled as the analysis models it.

The deck lets anyone replay a stage in an independent simulator: rails as
DC sources, resistors and capacitors at the corner's values, each diode as a
forward-voltage source in series with a switch driven by its own voltage
(on when forward biased: the same piecewise-linear diode the analysis uses),
each throw as an `S` switch driven by a PWL control (press at `press_at`,
release after `hold`), and the receiver's leakage as a current source out of
the pin. `.meas` statements time each edge from the control edge to the
receiver crossing its threshold. Nets are renamed n1, n2, ... because
exported names such as `Net-(SW1-Pad2)` do not survive ngspice's parser; a
comment lists the mapping.
"""

from __future__ import annotations

import math

from drc.analysis.stage_analysis import EDGE_STATES, corner_row, edge_setup
from drc.analysis.receiver import ReceiverElectrical
from drc.analysis.physics.compiled import compile_circuit
from drc.analysis.physics.transient import solve_edge
from drc.board.stage import Stage

MEASUREMENTS = ("t_press", "t_release")  # names printed by the deck's .meas lines
_EDGE_TIME = 1e-9  # s: control edge; the switch flips mid-way, where TRIG also looks
_SETTLE_TAUS = 16.0  # e^-16 = 1e-7: the level before the next edge is settled
_MAX_POINTS = 250_000  # cap on t_stop / max step, so a deck runs in seconds


def _fmt(x: float) -> str:
    return f"{x:.15g}"  # PWL times late in a long deck need more than 9 figures


def stage_deck(stage: Stage, rx: ReceiverElectrical, *, corner="nominal", press_at: float = 1e-3,
               hold: float | None = None, edges: tuple[str, ...] = EDGE_STATES) -> str:
    """An ngspice deck of `stage` measuring `t_press` and `t_release`.

    corner: "nominal" (each edge with its own typical threshold and the
    midpoint of its leakage range) or a {parameter: value} mapping such as
    EdgeResult.corner_slowest (its "threshold" and "leakage" then apply to
    both edges). hold: time between press and release; by default long
    enough for both edges to settle. edges: the edges to measure; the time
    step follows only their time constants, so a deck for one fast edge of a
    stage whose other edge is slow stays accurate.
    """
    model = compile_circuit(stage.circuit)
    circuit = stage.circuit
    setups = {e: edge_setup(model, rx, e) for e in EDGE_STATES}
    rows = {e: corner_row(model, setups[e], corner) for e in EDGE_STATES}
    edge_taus: dict[str, list[float]] = {}
    for e, es in setups.items():
        row, vth = rows[e]
        found = solve_edge(model, es.from_state, es.to_state, row, vth, es.direction, full=True).time_constants
        edge_taus[e] = [t for t in found if math.isfinite(t) and t > 0]
    taus = edge_taus["press"] + edge_taus["release"]
    measured_taus = [t for e in edges for t in edge_taus[e]]
    settle = _SETTLE_TAUS * max(taus) if taus else 1e-6
    hold = hold if hold is not None else 2.0 * settle
    release_at = press_at + hold
    leak_switch = press_at + 0.5 * hold  # pressed state re-settles with the release edge's leakage
    if "release" in edges:
        t_stop = release_at + settle
    else:  # the released state is the DC operating point: only the press edge must settle
        t_stop = press_at + _SETTLE_TAUS * max(edge_taus["press"] or [1e-6])
    # Max step tau/50 keeps trapezoidal integration within 0.01 % (spice-dialect.md);
    # with time constants far apart the cap on the step count wins (said in the deck).
    t_max = min(measured_taus) / 50.0 if measured_taus else t_stop / 1000.0
    capped = t_stop / t_max > _MAX_POINTS
    t_max = max(t_max, t_stop / _MAX_POINTS)

    names = {"0": "0"}
    for i, net in enumerate(circuit.nodes(), start=1):
        names[net] = f"n{i}"
    row = rows["press"][0]
    value = dict(zip(model.param_names, row))
    lines = [
        f"* drc stage deck: {stage.name} ({stage.kind}), corner "
        f"{corner if isinstance(corner, str) else 'as given'}",
        "* Look for t_press and t_release in the output: the time from the contact",
        "* edge (control crossing 0.5 V) to the receiver node crossing its threshold.",
        "* A '.meas ... failed' line means the threshold was never reached.",
        "* nets: " + ", ".join(f"{names[n]}={n}" for n in circuit.nodes()),
    ]
    for r in circuit.rails:
        if r.net != "0":
            lines.append(f"V_{_id(r.net)} {names[r.net]} 0 DC {_fmt(value[f'rail:{r.net}'])}")
    for r in circuit.resistors:
        lines.append(f"R_{_id(r.designator)} {names[r.a]} {names[r.b]} {_fmt(value[r.designator])}")
    for c in circuit.capacitors:
        lines.append(f"C_{_id(c.designator)} {names[c.a]} {names[c.b]} {_fmt(value[c.designator])}")
    for j, d in enumerate(circuit.diodes):
        mid = f"dmid{j}"
        lines += [
            f"* {d.designator}: Vf in series with a switch that conducts while its own voltage is positive",
            f"VD_{_id(d.designator)} {names[d.anode]} {mid} DC {_fmt(d.forward_v)}",
            f"SD_{_id(d.designator)} {mid} {names[d.cathode]} {mid} {names[d.cathode]} dmod{j}",
            f".model dmod{j} SW(VT=0 VH=1e-6 RON={_fmt(d.on_ohms)} ROFF=1e12)",
        ]
    for j, t in enumerate(circuit.throws):
        ctl = "ctl" if t.closed_when == "pressed" else "ctlb"
        lines += [f"S_T{j} {names[t.a]} {names[t.b]} {ctl} 0 tmod{j}",
                  f".model tmod{j} SW(VT=0.5 VH=0 RON={_fmt(t.closed_ohms)} ROFF=1e12)"]
    p1, r1 = press_at + _EDGE_TIME, release_at + _EDGE_TIME
    lines += [
        "* ctl is 1 V while pressed; ctlb is its complement (for throws closed while released)",
        f"Vctl ctl 0 PWL(0 0 {_fmt(press_at)} 0 {_fmt(p1)} 1 {_fmt(release_at)} 1 {_fmt(r1)} 0)",
        f"Vctlb ctlb 0 PWL(0 1 {_fmt(press_at)} 1 {_fmt(p1)} 0 {_fmt(release_at)} 0 {_fmt(r1)} 1)",
    ]
    if circuit.receiver_node != "0":
        leak_p = _leak(rows["press"][0], model)
        leak_r = _leak(rows["release"][0], model)
        lines += [
            "* receiver leakage: current into the pin (positive leaves the node)",
            f"I_leak {names[circuit.receiver_node]} 0 PWL(0 {_fmt(leak_p)} {_fmt(leak_switch)} "
            f"{_fmt(leak_p)} {_fmt(leak_switch + _EDGE_TIME)} {_fmt(leak_r)})",
        ]
    if capped:
        lines.append("* time constants far apart: max step capped at t_stop/250000, above the fastest tau/50")
    lines.append(f".tran {_fmt(t_max)} {_fmt(t_stop)} 0 {_fmt(t_max)}")
    node = f"v({names[circuit.receiver_node]})"
    for e, name in zip(EDGE_STATES, MEASUREMENTS):
        if e not in edges:
            continue
        es = setups[e]
        vth = rows[e][1]
        ctl_dir = "RISE" if e == "press" else "FALL"
        targ_dir = "RISE" if es.direction > 0 else "FALL"
        at = press_at if e == "press" else release_at
        lines.append(f"* {name}: {es.edge} edge, {'rising' if es.direction > 0 else 'falling'} through {_fmt(vth)} V")
        lines.append(f".meas tran {name} TRIG v(ctl) VAL=0.5 {ctl_dir}=1 TD={_fmt(at * 0.999)} "
                     f"TARG {node} VAL={_fmt(vth)} {targ_dir}=1 TD={_fmt(at)}")
    lines.append(".end")
    return "\n".join(lines) + "\n"


def _leak(row, model) -> float:
    return float(row[model.leak_col])


def _id(name: str) -> str:
    """An element-name suffix ngspice keeps whole."""
    return "".join(ch if ch.isalnum() else "_" for ch in name)


__all__ = ["MEASUREMENTS", "stage_deck"]
