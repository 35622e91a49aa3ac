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
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from drc.analysis.physics.compiled import LinearModel, compile_circuit, rail_param
from drc.analysis.physics.transient import solve_edge
from drc.analysis.receiver import ReceiverElectrical
from drc.analysis.results import EDGE_STATES, EDGES, Edge
from drc.analysis.stage_analysis import Corner, EdgeSetup, corner_row, edge_setup
from drc.board.stage import Stage, StageCircuit

MEASUREMENTS = ("t_press", "t_release")  # names printed by the deck's .meas lines
_EDGE_TIME = 1e-9  # s: control edge; the switch flips mid-way, where TRIG also looks
_SETTLE_TAUS = 16.0  # e^-16 = 1e-7: the level before the next edge is settled
_MAX_POINTS = 250_000  # cap on t_stop / max step, so a deck runs in seconds


def deck_number(x: float) -> str:
    """A number as decks write it: 15 significant figures (PWL times late in a long
    deck need more than 9, and the 1 ns control ramps must stay distinct)."""
    return f"{x:.15g}"


@dataclass(frozen=True, slots=True)
class _Timing:
    """When the deck presses, switches the leakage, releases and stops; its time step."""

    press_at: float
    release_at: float
    leak_switch: float
    t_stop: float
    t_max: float
    capped: bool  # the step-count cap, not the fastest tau, set t_max


def stage_deck(stage: Stage, rx: ReceiverElectrical, *, corner: Corner = "nominal", press_at: float = 1e-3,
               hold: float | None = None, edges: Sequence[str] = EDGES) -> str:
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
    circuit = model.circuit  # TTL inputs and conducting clamps as the elements the analysis solves
    setups = {e: edge_setup(model, rx, e) for e in EDGE_STATES}
    rows = {e: corner_row(model, setups[e], corner) for e in EDGE_STATES}
    timing = _timing(model, setups, rows, edges, press_at, hold)
    names = {"0": "0"}
    for i, net in enumerate(circuit.nodes(), start=1):
        names[net] = f"n{i}"
    value = dict(zip(model.param_names, rows[Edge.PRESS][0], strict=True))
    lines = [
        f"* drc stage deck: {stage.name} ({stage.kind}), corner "
        f"{corner if isinstance(corner, str) else 'as given'}",
        "* Look for t_press and t_release in the output: the time from the contact",
        "* edge (control crossing 0.5 V) to the receiver node crossing its threshold.",
        "* A '.meas ... failed' line means the threshold was never reached.",
        "* nets: " + ", ".join(f"{names[n]}={n}" for n in circuit.nodes()),
    ]
    lines += _element_lines(circuit, names, value)
    lines += _control_lines(timing)
    lines += _leak_lines(model, names, rows, timing)
    if any(d.card is not None for d in circuit.diodes):
        lines.append("* diodes from their .model cards: a diode's edge is nanoseconds, so a tight tolerance")
        lines.append(".options reltol=1e-6")
    if timing.capped:
        lines.append("* time constants far apart: max step capped at t_stop/250000, above the fastest tau/50")
    lines.append(f".tran {deck_number(timing.t_max)} {deck_number(timing.t_stop)} 0 {deck_number(timing.t_max)}")
    lines += _measure_lines(f"v({names[circuit.receiver_node]})", setups, rows, edges, timing)
    lines.append(".end")
    return "\n".join(lines) + "\n"


def _timing(model: LinearModel, setups: Mapping[Edge, EdgeSetup], rows: Mapping[Edge, tuple[np.ndarray, float]],
            edges: Sequence[str], press_at: float, hold: float | None) -> _Timing:
    """Settling from the edges' own time constants; the step from the measured edges'."""
    edge_taus: dict[str, list[float]] = {}
    for e, es in setups.items():
        row, vth = rows[e]
        found = solve_edge(model, es.from_state, es.to_state, row, vth, es.direction, full=True).time_constants
        edge_taus[e] = [t for t in found if math.isfinite(t) and t > 0]
    taus = edge_taus[Edge.PRESS] + edge_taus[Edge.RELEASE]
    measured_taus = [t for e in edges for t in edge_taus[e]]
    settle = _SETTLE_TAUS * max(taus) if taus else 1e-6
    hold = hold if hold is not None else 2.0 * settle
    release_at = press_at + hold
    leak_switch = press_at + 0.5 * hold  # pressed state re-settles with the release edge's leakage
    if Edge.RELEASE in edges:
        t_stop = release_at + settle
    else:  # the released state is the DC operating point: only the press edge must settle
        t_stop = press_at + _SETTLE_TAUS * max(edge_taus[Edge.PRESS] or [1e-6])
    # Max step tau/50 keeps trapezoidal integration within 0.01 % (spice-dialect.md);
    # with time constants far apart the cap on the step count wins (said in the deck).
    t_max = min(measured_taus) / 50.0 if measured_taus else t_stop / 1000.0
    capped = t_stop / t_max > _MAX_POINTS
    t_max = max(t_max, t_stop / _MAX_POINTS)
    return _Timing(press_at, release_at, leak_switch, t_stop, t_max, capped)


def _element_lines(circuit: StageCircuit, names: Mapping[str, str], value: Mapping[str, float]) -> list[str]:
    """Rails, resistors, capacitors, diodes and throws at the corner's values."""
    lines = []
    for rail in circuit.rails:
        if rail.net != "0":
            lines.append(f"V_{_id(rail.net)} {names[rail.net]} 0 DC {deck_number(value[rail_param(rail.net)])}")
    for r in circuit.resistors:
        lines.append(f"R_{_id(r.designator)} {names[r.a]} {names[r.b]} {deck_number(value[r.designator])}")
    for c in circuit.capacitors:
        lines.append(f"C_{_id(c.designator)} {names[c.a]} {names[c.b]} {deck_number(value[c.designator])}")
    for j, d in enumerate(circuit.diodes):
        if d.card is not None:
            lines += [f"D_{_id(d.designator)} {names[d.anode]} {names[d.cathode]} dcard{j}",
                      f".model dcard{j} D(IS={deck_number(d.card.saturation_a)} N={deck_number(d.card.emission)} "
                      f"RS={deck_number(d.card.series_ohms)})"]
            continue
        mid = f"dmid{j}"
        lines += [
            f"* {d.designator}: Vf in series with a switch that conducts while its own voltage is positive",
            f"VD_{_id(d.designator)} {names[d.anode]} {mid} DC {deck_number(d.forward_v)}",
            f"SD_{_id(d.designator)} {mid} {names[d.cathode]} {mid} {names[d.cathode]} dmod{j}",
            f".model dmod{j} SW(VT=0 VH=1e-6 RON={deck_number(d.on_ohms)} ROFF=1e12)",
        ]
    for j, t in enumerate(circuit.throws):
        ctl = "ctl" if t.closed_when == "pressed" else "ctlb"
        lines += [f"S_T{j} {names[t.a]} {names[t.b]} {ctl} 0 tmod{j}",
                  f".model tmod{j} SW(VT=0.5 VH=0 RON={deck_number(t.closed_ohms)} ROFF=1e12)"]
    return lines


def _control_lines(timing: _Timing) -> list[str]:
    p0, p1 = deck_number(timing.press_at), deck_number(timing.press_at + _EDGE_TIME)
    r0, r1 = deck_number(timing.release_at), deck_number(timing.release_at + _EDGE_TIME)
    return [
        "* ctl is 1 V while pressed; ctlb is its complement (for throws closed while released)",
        f"Vctl ctl 0 PWL(0 0 {p0} 0 {p1} 1 {r0} 1 {r1} 0)",
        f"Vctlb ctlb 0 PWL(0 1 {p0} 1 {p1} 0 {r0} 0 {r1} 1)",
    ]


def _leak_lines(model: LinearModel, names: Mapping[str, str], rows: Mapping[Edge, tuple[np.ndarray, float]],
                timing: _Timing) -> list[str]:
    """Each load's leakage: the press edge's, then the release edge's from mid-hold."""
    circuit = model.circuit
    nodes = [ld.node for ld in circuit.loads] if circuit.loads else [circuit.receiver_node]
    lines = ["* receiver leakage, one source per input on the nets: current into the pin "
             "(positive leaves the node)"]
    switch = timing.leak_switch
    for j, (col, node) in enumerate(zip(model.leak_cols, nodes, strict=True)):
        if node == "0" or node not in names or model.node_code(node) < 0:
            continue  # an input on a rail or ground: its leakage moves nothing
        leak_p = float(rows[Edge.PRESS][0][col])
        leak_r = float(rows[Edge.RELEASE][0][col])
        lines.append(f"I_leak{j} {names[node]} 0 PWL(0 {deck_number(leak_p)} {deck_number(switch)} "
                     f"{deck_number(leak_p)} {deck_number(switch + _EDGE_TIME)} {deck_number(leak_r)})")
    return lines


def _measure_lines(node: str, setups: Mapping[Edge, EdgeSetup], rows: Mapping[Edge, tuple[np.ndarray, float]],
                   edges: Sequence[str], timing: _Timing) -> list[str]:
    lines = []
    for e, name in zip(EDGE_STATES, MEASUREMENTS, strict=True):
        if e not in edges:
            continue
        es = setups[e]
        vth = rows[e][1]
        ctl_dir = "RISE" if e == Edge.PRESS else "FALL"
        targ_dir = "RISE" if es.direction > 0 else "FALL"
        at = timing.press_at if e == Edge.PRESS else timing.release_at
        way = "rising" if es.direction > 0 else "falling"
        lines.append(f"* {name}: {es.edge} edge, {way} through {deck_number(vth)} V")
        lines.append(f".meas tran {name} TRIG v(ctl) VAL=0.5 {ctl_dir}=1 TD={deck_number(at * 0.999)} "
                     f"TARG {node} VAL={deck_number(vth)} {targ_dir}=1 TD={deck_number(at)}")
    return lines


def _id(name: str) -> str:
    """An element-name suffix ngspice keeps whole."""
    return "".join(ch if ch.isalnum() else "_" for ch in name)


__all__ = ["MEASUREMENTS", "deck_number", "stage_deck"]
