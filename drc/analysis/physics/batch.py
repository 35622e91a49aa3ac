"""Many stages of one structure analysed as one numpy batch.

A board has thousands of input paths but only a handful of circuit shapes
(pull-up + series R + C into a Schmitt pin, say). Stages whose circuits
differ only in values share a `structure_key`; one template model is compiled
per key (and cached), each stage contributes its parameter rows, and every
steady level, every vertex of every tolerance box and both edges of all of
them are solved in a few stacked linear solves instead of a few hundred small
ones per stage. This covers the closed-form stages (at most one capacitor
branch, no diodes, receiver on a free node, at most ENUMERATE_MAX varying
parameters), which is where the corners are enumerated outright; the
analysis sends every other stage down its per-stage path. The figures are
those of the per-stage computation: the same vertices, in the same order, so
the same corners win ties.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

import numpy as np

from drc.analysis.physics.compiled import GROUND, THRESHOLD, LinearModel, compile_circuit, param_table, rail_param
from drc.analysis.physics.corners import ENUMERATE_MAX, vertex_bits
from drc.analysis.physics.loads import expand_loads
from drc.analysis.physics.mna import cap_voltages, dc_solve, node_voltage, reduce_dynamic
from drc.analysis.physics.supply import SupplyTable, supply_table
from drc.analysis.physics.transient import single_cap_parts, single_cap_times
from drc.analysis.receiver import ReceiverElectrical
from drc.analysis.results import (
    ACTUATOR_STATES,
    EDGE_STATES,
    OTHER_STATE,
    PULL_ROLES,
    Edge,
    EdgeResult,
    LevelResult,
    StageResult,
    slope_or_none,
    time_or_none,
)
from drc.board.stage import ActuatorState, Stage, StageCircuit
from drc.caching import Memo

# One compiled model per circuit structure; shapes are few, the bound is for long-lived processes.
_TEMPLATES: Memo[tuple, LinearModel] = Memo("analysis.batch.templates", 512)
# Builds one edge's result for a distinct row j, with that stage's parameter names.
EdgeBuilder = Callable[[int, tuple[str, ...]], EdgeResult]


def structure_key(circuit: StageCircuit) -> tuple:
    """Everything `compile_circuit` derives its arrays from, except the values.

    Two circuits with the same key compile to the same incidence matrices,
    parameter layout and topologies; only their parameter rows differ. TTL
    inputs and clamps that can conduct count as the elements they compile to.
    """
    circuit = expand_loads(circuit)
    rails = [r for r in circuit.rails if r.net != GROUND]
    fixed = (GROUND,) + tuple(r.net for r in rails)
    fixed_index = {net: i for i, net in enumerate(fixed)}
    # One table of codes: free nets 0, 1, ... in node order; fixed nets -1, -2, ...
    # (computed for every stage of a board: lookups, not calls).
    code = {net: -1 - i for net, i in fixed_index.items()}
    free = 0
    for net in circuit.nodes():
        if net not in fixed_index:
            code[net] = free
            free += 1
    return (
        free, len(fixed),
        tuple((code[r.a], code[r.b], r.role) for r in circuit.resistors),
        tuple((code[c.a], code[c.b]) for c in circuit.capacitors),
        tuple((code[d.anode], code[d.cathode], d.forward_v, d.on_ohms) for d in circuit.diodes),
        tuple((code[t.a], code[t.b], t.closed_when, t.closed_ohms) for t in circuit.throws),
        code[circuit.receiver_node],
        tuple((code[ld.node], code[ld.supply_net]) for ld in circuit.loads),
    )


def template(key: tuple, circuit: StageCircuit) -> LinearModel:
    """The compiled model of a structure (values of the first circuit seen; never read)."""
    model = _TEMPLATES.get(key)
    if model is None:
        model = _TEMPLATES.put(key, compile_circuit(circuit))
    return model


def batchable(model: LinearModel) -> bool:
    """Whether a structure has the closed-form edges this module batches."""
    return model.k <= 1 and not model.has_diodes and model.rx >= 0


@dataclass
class _Group:
    """The stacked values of m stages of one structure.

    leak_high / leak_low: each load's leakage range at a high and a low
    level, per stage (m, loads, 2).
    """

    model: LinearModel
    stages: list[Stage]
    rxs: list[ReceiverElectrical]
    names: list[tuple[str, ...]]
    nom: np.ndarray  # (m, p)
    lo: np.ndarray
    hi: np.ndarray
    leak_high: np.ndarray
    leak_low: np.ndarray

    @property
    def m(self) -> int:
        return len(self.stages)


def _load_ranges(stage: Stage, rx: ReceiverElectrical) -> tuple[tuple[tuple[float, float], ...], ...]:
    """((high range, low range) per load): the loads' own data, the receiver's without loads."""
    loads = stage.circuit.loads
    if not loads:
        return ((rx.leak_high_a, rx.leak_low_a),)
    return tuple((ld.leak_high_a, ld.leak_low_a) for ld in loads)


def _rx_arrays(rxs: list[ReceiverElectrical]) -> dict[str, np.ndarray]:
    return {
        "vcc": np.array([r.vcc for r in rxs]),
        "rising": np.array([r.rising_threshold for r in rxs], dtype=float).reshape(-1, 3),
        "falling": np.array([r.falling_threshold for r in rxs], dtype=float).reshape(-1, 3),
        "high_req": np.array([r.high_required_v for r in rxs], dtype=float),
        "low_req": np.array([r.low_required_v for r in rxs], dtype=float),
    }


def _with_leak(g: _Group, nom: np.ndarray, lo: np.ndarray, hi: np.ndarray,
               leak: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """make_box over rows: each load's leakage range (m, loads, 2) filled in, nominal its midpoint."""
    nom, lo, hi = nom.copy(), lo.copy(), hi.copy()
    cols = list(g.model.leak_cols)
    lo[:, cols] = leak.min(axis=2)
    hi[:, cols] = leak.max(axis=2)
    nom[:, cols] = 0.5 * (lo[:, cols] + hi[:, cols])
    return nom, lo, hi


def _vertex_rows(nom: np.ndarray, lo: np.ndarray, hi: np.ndarray, exclude: tuple[int, ...] = (),
                 tied: tuple[int, ...] = ()) -> tuple[np.ndarray, tuple[int, ...]]:
    """(m, 2**u, p) vertices over the columns varying in any row (u = their count).

    The `tied` columns (the loads' leakages) are one axis: all at lo or all
    at hi, as corners.make_box ties them. A column fixed in one stage but
    varying in another gives that stage duplicate vertices; the first of
    each duplicate pair comes first in the order, so argmin/argmax pick the
    vertex the per-stage enumeration picks.
    """
    varying = [int(i) for i in np.flatnonzero(np.any(hi != lo, axis=0)) if int(i) not in exclude]
    leaking = [c for c in tied if c in varying]
    cols = tuple(c for c in varying if c not in leaking[1:])
    bits = vertex_bits(len(cols))
    V = np.repeat(nom[:, None, :], bits.shape[0], axis=1)
    for j, c in enumerate(cols):
        for cc in (leaking if c in leaking else [c]):
            V[:, :, cc] = lo[:, None, cc] + bits[None, :, j] * (hi[:, None, cc] - lo[:, None, cc])
    return V, cols


def _nan_low(x: np.ndarray) -> np.ndarray:
    return np.where(np.isnan(x), -np.inf, x)


def _per_vertex(g: _Group, V: np.ndarray, pick: Callable[[SupplyTable], np.ndarray],
                fixed: np.ndarray) -> np.ndarray:
    """(m, nv) thresholds at each vertex's supply voltage; `fixed` (m,) where they do not follow it."""
    col = g.model.supply_col
    out = np.repeat(fixed[:, None], V.shape[1], axis=1)
    if col is None:
        return out
    by_rx: dict[ReceiverElectrical, list[int]] = {}
    for i, rx in enumerate(g.rxs):
        if rx.tracks_supply:
            by_rx.setdefault(rx, []).append(i)
    for rx, rows in by_rx.items():  # a board has a handful of receiver kinds
        table = supply_table(rx)
        out[rows] = np.interp(V[rows, :, col], table.vcc, pick(table))
    return out


def _logic(g: _Group, state: ActuatorState) -> tuple[bool, np.ndarray]:
    """(floating, (m, loads) True where a load sits high) at the nominal corner without leakage."""
    model, m = g.model, g.m
    rows = g.nom.copy()
    rows[:, list(model.leak_cols)] = 0.0
    dc = dc_solve(model, state, rows)
    if bool(dc.floating[0]):  # structural: the same for every stage of the group
        return True, np.zeros((m, len(model.leak_cols)), dtype=bool)
    high = np.empty((m, len(model.leak_cols)), dtype=bool)
    vcc = np.array([r.vcc for r in g.rxs])
    for j, node in enumerate(model.leak_nodes):
        v = node_voltage(dc.v, dc.vfix, node)
        if node == model.rx or not model.loads:
            half = vcc / 2
        else:
            name = rail_param(model.loads[j].supply_net)
            half = g.nom[:, model.column(name)] / 2 if name in model.param_names else vcc / 2
        high[:, j] = v > half
    return False, high


def _levels(g: _Group, state: ActuatorState, rx: dict) -> dict:
    """Steady levels of one actuator state for every stage of the group."""
    model, m = g.model, g.m
    floating, high_all = _logic(g, state)
    closed = [j for j, t in enumerate(model.circuit.throws) if t.closed_when == state]
    tied = model.leak_cols
    if floating:
        out: dict[str, Any] = {"undefined": True, "contact_a": None, "closed_a": None}
        if closed:
            nom, lo, hi = _with_leak(g, g.nom, g.lo, g.hi, np.zeros((m, len(tied), 2)))
            V, _ = _vertex_rows(nom, lo, hi, _cap_cols(model), tied)
            dc = dc_solve(model, state, V.reshape(-1, V.shape[2]))
            through = np.abs(dc.i_throw[:, closed])
            out["contact_a"] = np.min(through, axis=1).reshape(m, -1).min(axis=1)
            out["closed_a"] = np.max(through, axis=1).reshape(m, -1).max(axis=1)
        return out
    high = high_all[:, 0]
    leak = np.where(high_all[:, :, None], g.leak_high, g.leak_low)
    nom, lo, hi = _with_leak(g, g.nom, g.lo, g.hi, leak)
    nominal = dc_solve(model, state, nom)
    V, _ = _vertex_rows(nom, lo, hi, _cap_cols(model), tied)
    nv = V.shape[1]
    dc = dc_solve(model, state, V.reshape(-1, V.shape[2]))
    rx_v = dc.rx_v.reshape(m, nv)
    # The margin at each vertex against the threshold the part has at that vertex's supply.
    req_h = _per_vertex(g, V, lambda t: t.high_required, rx["high_req"])
    req_l = _per_vertex(g, V, lambda t: t.low_required, rx["low_req"])
    req = np.where(high[:, None], req_h, req_l)
    sign = np.where(high, -1.0, 1.0)
    ar = np.arange(m)
    i_w = np.argmax(_nan_low(sign[:, None] * (rx_v - req)), axis=1)
    worst_v, required = rx_v[ar, i_w], req[ar, i_w]
    max_v = _nan_low(rx_v).max(axis=1)
    pcols = [i for i, r in enumerate(model.circuit.resistors) if r.role in PULL_ROLES]
    if pcols:
        pull = np.max(np.abs(dc.i_res[:, pcols]), axis=1).reshape(m, nv).max(axis=1)
    else:
        pull = np.full(m, -np.inf)
    contact = closed_max = None
    if closed:
        through = np.abs(dc.i_throw[:, closed])
        contact = np.min(through, axis=1).reshape(m, nv).min(axis=1)
        closed_max = np.max(through, axis=1).reshape(m, nv).max(axis=1)
    margin = np.where(high, worst_v - required, required - worst_v)
    return {"undefined": False, "high": high, "high_all": high_all, "nominal_v": nominal.rx_v,
            "thevenin_v": nominal.thevenin_v, "thevenin_ohms": nominal.thevenin_ohms,
            "worst_v": worst_v, "required": required, "margin": margin,
            "max_v": max_v, "pull_a": pull, "contact_a": contact, "closed_a": closed_max}


def _cap_cols(model: LinearModel) -> tuple[int, ...]:
    n_r = len(model.circuit.resistors)
    return tuple(range(n_r, n_r + len(model.circuit.capacitors)))


def _edges(g: _Group, edge: Edge, lv: dict, rx: dict) -> EdgeBuilder | None:
    """One edge for every row: a builder (row, names) -> EdgeResult, or None
    when the closed form does not apply."""
    model, m = g.model, g.m
    a, b = EDGE_STATES[edge]
    va, vb = lv[a]["nominal_v"], lv[b]["nominal_v"]
    rising = np.where(vb != va, vb > va, lv[b]["high"])
    thr = np.where(rising[:, None], rx["rising"], rx["falling"])
    # Each load's range at its level in the state the edge goes to; the own receiver's
    # follows the edge's direction (as stage_analysis.edge_setup).
    high_all = lv[b]["high_all"].copy()
    high_all[:, 0] = rising
    leak = np.where(high_all[:, :, None], g.leak_high, g.leak_low)
    nom, lo, hi = _with_leak(g, g.nom, g.lo, g.hi, leak)
    typ = thr[:, 1]
    V, cols = _vertex_rows(nom, lo, hi, (), model.leak_cols)
    if len(cols) > ENUMERATE_MAX:
        return None
    up = rising[:, None]
    inner_v = np.where(up, _per_vertex(g, V, lambda t: t.rising[:, 0], thr[:, 0]),
                       _per_vertex(g, V, lambda t: t.falling[:, 2], thr[:, 2]))
    outer_v = np.where(up, _per_vertex(g, V, lambda t: t.rising[:, 2], thr[:, 2]),
                       _per_vertex(g, V, lambda t: t.falling[:, 0], thr[:, 0]))
    nv = V.shape[1]
    rows = np.concatenate([nom[:, None, :], V], axis=1)  # (m, 1 + nv, p)
    P = rows.reshape(-1, rows.shape[2])
    parts = single_cap_parts(model, a, b, P)
    if parts is None:
        return None
    direction = np.repeat(np.where(rising, 1.0, -1.0), nv + 1)
    # The nominal row of each stage: its typical threshold at the nominal supply.
    vth_f = np.concatenate([typ[:, None], inner_v], axis=1).ravel()
    vth_s = np.concatenate([typ[:, None], outer_v], axis=1).ravel()
    ef = single_cap_times(parts, vth_f, direction)
    es = single_cap_times(parts, vth_s, direction)
    t_f, t_s = ef.t.reshape(m, nv + 1), es.t.reshape(m, nv + 1)
    s_f, s_s = ef.slope.reshape(m, nv + 1), es.slope.reshape(m, nv + 1)
    start = parts.start.reshape(m, nv + 1)[:, 0]
    final = parts.vinf.reshape(m, nv + 1)[:, 0]
    tf = np.where(np.isnan(t_f[:, 1:]), np.inf, t_f[:, 1:])
    ts = np.where(np.isnan(t_s[:, 1:]), np.inf, t_s[:, 1:])
    i_f, i_s = np.argmin(tf, axis=1), np.argmax(ts, axis=1)
    ar = np.arange(m)
    t_fast, t_slow = tf[ar, i_f], ts[ar, i_s]
    slope_slow = s_s[ar, 1 + i_s]
    inner, outer = inner_v[ar, i_f], outer_v[ar, i_s]
    # Plain Python floats once per group (tolist), not a numpy scalar per figure:
    # the same values, at a fraction of the cost over thousands of stages.
    columns = [rising, start, final, typ, inner, outer, t_f[:, 0], t_fast, t_slow, s_f[:, 0], slope_slow]
    figures = list(zip(*(c.tolist() for c in columns), strict=True))
    fast_rows = V[ar, i_f].tolist()
    slow_rows = V[ar, i_s].tolist()

    def build(j: int, names: tuple[str, ...]) -> EdgeResult:
        up, v0, v1, vt, vin, vout, t0, tfast, tslow, s0, sslow = figures[j]
        fastest = dict(zip(names, fast_rows[j], strict=True))  # as corners.corner_dict
        fastest[THRESHOLD] = vin
        slowest = dict(zip(names, slow_rows[j], strict=True))
        slowest[THRESHOLD] = vout
        return EdgeResult(
            edge=edge, direction="rising" if up else "falling",
            start_v=v0, final_v=v1, threshold_v=vt,
            threshold_fastest_v=vin, threshold_slowest_v=vout,
            nominal_s=time_or_none(t0), fastest_s=time_or_none(tfast), slowest_s=time_or_none(tslow),
            slope_v_per_s=slope_or_none(s0) if not math.isnan(t0) else None,
            slowest_slope_v_per_s=slope_or_none(sslow) if math.isfinite(tslow) else None,
            corner_fastest=fastest, corner_slowest=slowest,
        )
    return build


def _surge(g: _Group) -> np.ndarray | None:
    """Peak closing current per stage (see stage_analysis._surge_peak), or None if no throw has one."""
    model = g.model
    row = g.lo.copy()
    rp = model.rail_params
    row[:, rp] = g.hi[:, rp]
    row[:, list(model.leak_cols)] = 0.0
    peaks = []
    for t in model.circuit.throws:
        ends = {n for n in (t.a, t.b) if n in model.free}
        if not any(c.a in ends or c.b in ends for c in model.circuit.capacitors):
            continue
        dc0 = dc_solve(model, OTHER_STATE[t.closed_when], row)
        u0 = cap_voltages(model, dc0)
        red = reduce_dynamic(model, model.topology(t.closed_when, ()), row)
        v = red.cv + np.einsum("Nnk,Nk->Nn", red.Mv, u0)
        va = node_voltage(v, red.vfix, model.node_code(t.a))
        vb = node_voltage(v, red.vfix, model.node_code(t.b))
        peaks.append(np.abs(va - vb) / t.closed_ohms)
    return np.max(np.vstack(peaks), axis=0) if peaks else None


def analyse_group(model: LinearModel, stages: list[Stage], rxs: list[ReceiverElectrical]) -> list[StageResult] | None:
    """StageResults of stages sharing `model`'s structure; None if the batch does not apply."""
    g, inverse, names = _distinct(model, stages, rxs)
    # The steady-level search leaves capacitors out; more columns go per stage.
    dc_cols = np.flatnonzero(np.any(g.hi != g.lo, axis=0))
    skip = set(_cap_cols(model)) | set(model.leak_cols)
    if len([c for c in dc_cols if c not in skip]) + 1 > ENUMERATE_MAX:  # + 1: the loads' leakage
        return None
    rx = _rx_arrays(g.rxs)
    lv = {s: _levels(g, s, rx) for s in ACTUATOR_STATES}
    notes = [f"{s}: the receiver has no DC path to a rail or ground" for s in ACTUATOR_STATES
             if lv[s]["undefined"]]
    builders: dict[Edge, EdgeBuilder] = {}
    for edge, (a, b) in EDGE_STATES.items():
        if lv[a]["undefined"] or lv[b]["undefined"]:
            notes.append(f"{edge}: not timed, a level is undefined")
            continue
        got = _edges(g, edge, lv, rx)
        if got is None:
            return None
        builders[edge] = got
    figures = _RowFigures(lv, _surge(g))
    notes_t = tuple(notes)
    out = []
    for i, st in enumerate(stages):
        j = int(inverse[i])
        levels, pull, contact, surge_j, max_in, closed_max = figures.row(j)
        out.append(StageResult(
            stage=st, levels=dict(levels), edges={e: build(j, names[i]) for e, build in builders.items()},
            pull_current_a=pull, contact_current_a=contact, surge_peak_a=surge_j,
            max_input_v=max_in, receiver_electrical=rxs[i],
            notes=st.notes + notes_t, closed_current_a=closed_max,
        ))
    return out


def _distinct(model: LinearModel, stages: list[Stage],
              rxs: list[ReceiverElectrical]) -> tuple[_Group, np.ndarray, list[tuple[str, ...]]]:
    """The group of distinct stages, each stage's row in it, and each stage's parameter names.

    Stages repeat (a keypad is one design many times): each distinct set of
    values and receiver data is solved once.
    """
    names, nom, lo, hi = [], [], [], []
    for st in stages:
        n_, a_, b_, c_ = param_table(st.circuit)
        names.append(n_)
        nom.append(a_)
        lo.append(b_)
        hi.append(c_)
    # The receiver's data and the loads' leakage ranges are part of what makes a row distinct.
    ids: dict[tuple, int] = {}
    ranges = [_load_ranges(st, r) for st, r in zip(stages, rxs, strict=True)]
    rx_col = [ids.setdefault((r, lr), len(ids)) for r, lr in zip(rxs, ranges, strict=True)]
    table = np.column_stack([np.array(nom, dtype=float), np.array(lo, dtype=float),
                             np.array(hi, dtype=float), np.array(rx_col, dtype=float)])
    uniq, first, inverse = np.unique(table, axis=0, return_index=True, return_inverse=True)
    p = len(names[0])
    leak = np.array([ranges[i] for i in first], dtype=float)  # (m, loads, 2 levels, 2)
    g = _Group(model, [stages[i] for i in first], [rxs[i] for i in first], [names[i] for i in first],
               uniq[:, :p].copy(), uniq[:, p:2 * p].copy(), uniq[:, 2 * p:3 * p].copy(),
               leak[:, :, 0, :].copy(), leak[:, :, 1, :].copy())
    return g, inverse.ravel(), names


# What stages of one distinct row share: levels, pull, contact and surge currents, max input,
# largest closed-contact current.
_Shared = tuple[dict[str, LevelResult], float | None, float | None, float | None, float | None,
                float | None]


class _RowFigures:
    """The per-stage figures of each distinct row, as plain Python values, built once per row."""

    def __init__(self, lv: dict[ActuatorState, dict], surge: np.ndarray | None) -> None:
        self.lv = lv
        # Plain Python values per distinct row, once (tolist): same figures, no numpy scalars.
        self.plain = {s: _plain_levels(lv[s]) for s in ACTUATOR_STATES}
        self.defined = [s for s in ACTUATOR_STATES if not lv[s]["undefined"]]
        self.surge = surge.tolist() if surge is not None else None
        self.built: dict[int, _Shared] = {}

    def row(self, j: int) -> _Shared:
        shared = self.built.get(j)
        if shared is None:
            shared = self.built[j] = self._build(j)
        return shared

    def _build(self, j: int) -> _Shared:
        plain = self.plain
        levels: dict[str, LevelResult] = {s: _level_result(s, plain[s], j) for s in ACTUATOR_STATES}
        defined = [d for d in (plain[s] for s in self.defined) if d is not None]
        max_in = max((d["max_v"][j] for d in defined), default=None)
        pulls = [d["pull_a"][j] for d in defined if math.isfinite(d["pull_a"][j])]
        contacts = [float(self.lv[s]["contact_a"][j]) for s in ACTUATOR_STATES
                    if self.lv[s]["contact_a"] is not None]
        closed = [float(self.lv[s]["closed_a"][j]) for s in ACTUATOR_STATES
                  if self.lv[s]["closed_a"] is not None]
        return (levels, max(pulls) if pulls else None, min(contacts) if contacts else None,
                self.surge[j] if self.surge is not None else None, max_in,
                max(closed) if closed else None)


def _level_result(state: ActuatorState, d: dict | None, j: int) -> LevelResult:
    if d is None:
        return LevelResult(state, "undefined", None, None, None, None, None, None)
    return LevelResult(state, "high" if d["high"][j] else "low", d["nominal_v"][j], d["worst_v"][j],
                       d["required"][j], d["margin"][j], d["thevenin_v"][j], d["thevenin_ohms"][j])


def _plain_levels(d: dict) -> dict | None:
    """One state's level arrays as Python lists (None for an undefined state)."""
    if d["undefined"]:
        return None
    keys = ("high", "nominal_v", "worst_v", "required", "margin", "thevenin_v", "thevenin_ohms",
            "max_v", "pull_a")
    return {k: d[k].tolist() for k in keys}
