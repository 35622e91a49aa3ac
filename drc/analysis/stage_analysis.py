"""Analysis of one recognised stage: levels, edges and currents, worst-case.

`analyse_stage` turns a Stage and its receiver's electrical data into the
StageResult the rules read; `analyse_stages` does the same for many stages,
solving those that share a circuit structure as one numpy batch
(physics.batch), which is how a board's thousands of stages are analysed.
It compiles the stage circuit once, then asks the
physics package for steady levels in each actuator state (nominal, and at the
vertex closest to the threshold the level must clear), for both edges'
time-to-threshold at nominal and at the fastest and slowest corners, and for
the currents the contact and the pull resistors carry. Every receiver input
on the stage's nets is a load; each load's leakage follows its own level:
the range of the level a state settles to, and during an edge the range of
the level the edge moves towards (used for the steady state before the edge
too, so one edge is one linear problem; the CMOS families' ranges are the
same at both levels). The thresholds follow the receiver's supply: where the
circuit says which rail supplies the receiver, its thresholds at each corner
are those at that corner's voltage of that rail (one physical rail, one
corner variable), and a supply range that spans a bend of a threshold curve
is searched in pieces, each linear.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from drc.analysis.physics.batch import analyse_group, batchable, structure_key, template
from drc.analysis.physics.compiled import THRESHOLD, LinearModel, compile_circuit, rail_param
from drc.analysis.physics.corners import (
    ENUMERATE_MAX,
    Box,
    corner_dict,
    make_box,
    sign_search,
    vertices,
    worst_vertex,
)
from drc.analysis.physics.loads import is_clamp
from drc.analysis.physics.mna import DcBatch, cap_voltages, dc_solve, node_voltage
from drc.analysis.physics.supply import supply_column, supply_pieces, supply_table
from drc.analysis.physics.transient import EdgeSolution, edge_batch, sample, settle_diodes, solve_edge
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
from drc.board.stage import ActuatorState, Stage

# A corner: "nominal", "fastest", "slowest", or {parameter name: value} (an EdgeResult's corner).
Corner = str | Mapping[str, float]
# A DC figure to make worst: badness per corner row of a DcBatch and its rows (larger is worse).
DcObjective = Callable[[DcBatch, np.ndarray], np.ndarray]


@dataclass(frozen=True, slots=True)
class EdgeSetup:
    """What defines one edge's question: states, direction, thresholds, ranges.

    threshold, inner_v and outer_v are the values at the receiver's nominal
    supply; `vth` gives them per corner row where they follow the supply.
    """

    edge: Edge
    from_state: ActuatorState
    to_state: ActuatorState
    direction: int  # +1 rising, -1 falling
    threshold: tuple[float, float, float]  # (min, typ, max)
    inner_v: float  # nearest the start: fastest
    outer_v: float  # farthest from the start: slowest
    box: Box
    rx: ReceiverElectrical | None = None
    supply_col: int | None = None  # the receiver's supply column, when its thresholds follow it

    def vth(self, P: np.ndarray, which: str) -> np.ndarray:
        """Threshold per row of P: "inner" (fastest), "outer" (slowest) or "typ" (the
        typical threshold, used at the nominal corner only: its value at the nominal supply)."""
        P = np.atleast_2d(P)
        if self.rx is None or self.supply_col is None or which == "typ":
            value = {"inner": self.inner_v, "outer": self.outer_v, "typ": self.threshold[1]}[which]
            return np.full(P.shape[0], value)
        table = supply_table(self.rx)
        rng = table.rising if self.direction > 0 else table.falling
        k = {"typ": 1, "inner": 0 if self.direction > 0 else 2, "outer": 2 if self.direction > 0 else 0}[which]
        return np.interp(P[:, self.supply_col], table.vcc, rng[:, k])

    def pieces(self) -> list[Box]:
        """The box cut where the receiver's threshold curves bend (each piece linear)."""
        return supply_pieces(self.box, self.rx, self.supply_col)


def analyse_stages(stages: Sequence[Stage],
                   rx_for: Callable[[Stage], ReceiverElectrical] | Sequence[ReceiverElectrical]
                   ) -> list[StageResult]:
    """StageResults of many stages, in their order (each as `analyse_stage` gives it).

    rx_for: the receiver data of each stage, as a function of the stage or a
    sequence aligned with `stages`. Stages of one circuit structure (values
    aside) with closed-form edges are solved together in one batch; the rest
    one by one.
    """
    stages = list(stages)
    rxs = [rx_for(s) for s in stages] if callable(rx_for) else list(rx_for)
    if len(rxs) != len(stages):
        raise ValueError("rx_for must give one receiver per stage")
    groups: dict[tuple, list[int]] = {}
    for i, st in enumerate(stages):
        groups.setdefault((structure_key(st.circuit), _bends_in_supply(st, rxs[i])), []).append(i)
    by_index: dict[int, StageResult] = {}
    for (key, bends), idx in groups.items():
        model = template(key, stages[idx[0]].circuit)
        mine, their_rxs = [stages[i] for i in idx], [rxs[i] for i in idx]
        # A supply range across a bend of the threshold curves is searched in pieces, per stage.
        got = _batched(model, mine, their_rxs) if batchable(model) and not bends else None
        if got is None:
            got = [_analyse_one(st, rx) for st, rx in zip(mine, their_rxs, strict=True)]
        by_index.update(zip(idx, got, strict=True))
    return [by_index[i] for i in range(len(stages))]


def _bends_in_supply(stage: Stage, rx: ReceiverElectrical) -> bool:
    """Whether the receiver's supply range holds a bend of its threshold curves."""
    net = stage.circuit.supply_of_receiver()
    if net is None or not rx.tracks_supply:
        return False
    rail = next((r for r in stage.circuit.rails if r.net == net), None)
    if rail is None or rail.tolerance <= 0:
        return False
    return bool(rx.supply_breaks(rail.volts * (1 - rail.tolerance), rail.volts * (1 + rail.tolerance)))


# Stages per batch: bounds the temporary arrays (rows = stages x 2**parameters).
_BATCH_STAGES = 2048


def _batched(model: LinearModel, stages: list[Stage], rxs: list[ReceiverElectrical]) -> list[StageResult] | None:
    """Stages of one structure solved in batches of `_BATCH_STAGES`; None if a batch does not apply."""
    got: list[StageResult] = []
    for lo in range(0, len(stages), _BATCH_STAGES):
        part = analyse_group(model, stages[lo:lo + _BATCH_STAGES], rxs[lo:lo + _BATCH_STAGES])
        if part is None:
            return None
        got += part
    return got


def analyse_stage(stage: Stage, rx: ReceiverElectrical) -> StageResult:
    """Levels per actuator state, both edges at nominal and worst corners, currents."""
    return analyse_stages([stage], [rx])[0]


def _analyse_one(stage: Stage, rx: ReceiverElectrical) -> StageResult:
    """The per-stage path: any structure (several capacitors, diodes, many parameters)."""
    model = compile_circuit(stage.circuit)
    notes: list[str] = list(stage.notes)
    levels: dict[str, LevelResult] = {}
    extremes: dict[str, dict[str, Any]] = {}
    for state in ACTUATOR_STATES:
        levels[state], extremes[state] = _level(model, state, rx)
        if levels[state].logic == "undefined":
            notes.append(f"{state}: the receiver has no DC path to a rail or ground")
    edges: dict[str, EdgeResult] = {}
    for edge, (a, b) in EDGE_STATES.items():
        if levels[a].logic == "undefined" or levels[b].logic == "undefined":
            notes.append(f"{edge}: not timed, a level is undefined")
            continue
        edges[edge] = _edge(model, edge_setup(model, rx, edge, levels, extremes[b]["logic"]))
    defined = [s for s in levels if levels[s].logic != "undefined"]
    max_in = max((extremes[s]["max_v"] for s in defined), default=None)

    def over(key: str, states, pick=max) -> float | None:
        found = [extremes[s][key] for s in states if extremes[s].get(key) is not None]
        return pick(found) if found else None

    return StageResult(
        stage=stage, levels=levels, edges=edges,
        pull_current_a=over("pull_a", defined),
        contact_current_a=over("contact_a", extremes, min),
        surge_peak_a=_surge_peak(model),
        max_input_v=max_in, receiver_electrical=rx, notes=tuple(notes),
        closed_current_a=over("closed_a", extremes),
        clamp_current_a=over("clamp_a", defined),
    )


def load_logic(model: LinearModel, state: str, rx: ReceiverElectrical) -> tuple[str, ...] | None:
    """The level each load sits at in `state` ("high"/"low"), the stage's own receiver first;
    None when the receiver floats. Read from the nominal corner without leakage."""
    row = model.nominal.copy()
    row[list(model.leak_cols)] = 0.0
    dc = dc_solve(model, state, row[None, :])
    if bool(dc.floating[0]):
        return None
    if not model.loads:
        return ("high" if dc.rx_v[0] > rx.vcc / 2 else "low",)
    out = []
    for load, node in zip(model.loads, model.leak_nodes, strict=True):
        v = float(node_voltage(dc.v, dc.vfix, node)[0])
        vcc = rx.vcc if node == model.rx else _supply_nominal(model, load.supply_net, rx.vcc)
        out.append("high" if v > vcc / 2 else "low")
    return tuple(out)


def _supply_nominal(model: LinearModel, net: str, default: float) -> float:
    name = rail_param(net)
    return float(model.nominal[model.column(name)]) if name in model.param_names else default


def leak_ranges(model: LinearModel, rx: ReceiverElectrical,
                logic: tuple[str, ...]) -> tuple[tuple[float, float], ...]:
    """Each load's leakage range at its level (the receiver's data where the circuit has no loads)."""
    if not model.loads:
        return (rx.leak_high_a if logic[0] == "high" else rx.leak_low_a,)
    return tuple(load.leak_high_a if lv == "high" else load.leak_low_a
                 for load, lv in zip(model.loads, logic, strict=True))


def _closed_throws(model: LinearModel, state: str) -> list[int]:
    return [j for j, t in enumerate(model.circuit.throws) if t.closed_when == state]


def _level(model: LinearModel, state: ActuatorState, rx: ReceiverElectrical) -> tuple[LevelResult, dict[str, Any]]:
    logic_all = load_logic(model, state, rx)
    if logic_all is None:
        none = LevelResult(state, "undefined", None, None, None, None, None, None)
        return none, {"max_v": None, "pull_a": None, "contact_a": _contact_current(model, state),
                      "closed_a": _contact_current(model, state, largest=True), "logic": None}
    logic = logic_all[0]
    box = _dc_box(model, make_box(model.nominal, model.lo, model.hi, model.leak_cols,
                                  leak_ranges(model, rx, logic_all)))
    nominal = dc_solve(model, state, box.nominal[None, :])
    col = supply_column(model, rx)
    table = supply_table(rx)
    req_curve = table.high_required if logic == "high" else table.low_required

    def required(P: np.ndarray) -> np.ndarray:
        if col is None:
            return np.full(P.shape[0], rx.high_required_v if logic == "high" else rx.low_required_v)
        return np.interp(P[:, col], table.vcc, req_curve)

    sign = -1.0 if logic == "high" else 1.0  # badness: lower is worse for high, higher for low
    objectives: dict[str, DcObjective] = {
        # The smallest margin: the level against the threshold the part has at that corner.
        "worst": lambda d, P: _nan_low(sign * (d.rx_v - required(P))),
        "max_v": lambda d, P: _nan_low(d.rx_v),
        "pull_a": lambda d, P: _pull_current(model, d),
    }
    closed = _closed_throws(model, state)
    if closed:
        objectives["contact_a"] = lambda d, P: -np.min(np.abs(d.i_throw[:, closed]), axis=1)
        objectives["closed_a"] = lambda d, P: np.max(np.abs(d.i_throw[:, closed]), axis=1)
    clamps = [j for j, d in enumerate(model.circuit.diodes) if is_clamp(d)]
    if clamps:
        objectives["clamp_a"] = lambda d, P: np.max(d.i_diode[:, clamps], axis=1)
    ex = _dc_extremes(model, state, supply_pieces(box, rx, col), objectives)
    worst_row = ex["worst"][0]
    worst_v = float(dc_solve(model, state, worst_row[None, :]).rx_v[0])
    req = float(required(worst_row[None, :])[0])
    margin = worst_v - req if logic == "high" else req - worst_v
    level = LevelResult(state, logic, float(nominal.rx_v[0]), worst_v, req, margin,
                        float(nominal.thevenin_v[0]), float(nominal.thevenin_ohms[0]))
    pull = ex["pull_a"][1]
    extra = {"max_v": float(ex["max_v"][1]),
             "pull_a": pull if math.isfinite(pull) else None,
             "contact_a": float(-ex["contact_a"][1]) if closed else None,
             "closed_a": float(ex["closed_a"][1]) if closed else None,
             "clamp_a": float(ex["clamp_a"][1]) if clamps else None,
             "logic": logic_all}
    return level, extra


def _dc_box(model: LinearModel, box: Box) -> Box:
    """Capacitors do not move a steady level: keep them out of the DC search."""
    caps = {model.column(c.designator) for c in model.circuit.capacitors}
    return box.with_cols(tuple(c for c in box.cols if c not in caps))


def _nan_low(x: np.ndarray) -> np.ndarray:
    return np.where(np.isnan(x), -np.inf, x)


def _dc_extremes(model: LinearModel, state: str, pieces: list[Box],
                 objectives: Mapping[str, DcObjective]) -> dict[str, tuple[np.ndarray, float]]:
    """For each objective ((DcBatch, rows) -> badness per row): (worst row, worst value),
    over the vertices of every piece of the box."""
    out: dict[str, tuple[np.ndarray, float]] = {}
    for box in pieces:
        if len(box.cols) <= ENUMERATE_MAX:
            P = vertices(box)
            dc = dc_solve(model, state, P)
            found = {}
            for name, fn in objectives.items():
                vals = fn(dc, P)
                i = int(np.argmax(vals))
                found[name] = (P[i], float(vals[i]))
        else:
            found = {name: worst_vertex(box, _over_rows(model, state, fn)) for name, fn in objectives.items()}
        for name, got in found.items():
            if name not in out or got[1] > out[name][1]:
                out[name] = got
    return out


def _over_rows(model: LinearModel, state: str, fn: DcObjective) -> Callable[[np.ndarray], np.ndarray]:
    """An objective as a function of parameter rows (one DC solve per call)."""
    return lambda P: fn(dc_solve(model, state, P), P)


def _pull_current(model: LinearModel, dc: DcBatch) -> np.ndarray:
    cols = [i for i, r in enumerate(model.circuit.resistors) if r.role in PULL_ROLES]
    if not cols:
        return np.full(dc.rx_v.shape, -np.inf)
    return np.max(np.abs(dc.i_res[:, cols]), axis=1)


def _contact_current(model: LinearModel, state: ActuatorState, largest: bool = False) -> float | None:
    """Smallest (largest) steady current through a throw closed in `state`, over corners
    (no leakage: the receiver floats in this state)."""
    closed = _closed_throws(model, state)
    if not closed:
        return None
    zero = tuple((0.0, 0.0) for _ in model.leak_cols)
    box = _dc_box(model, make_box(model.nominal, model.lo, model.hi, model.leak_cols, zero))
    if largest:
        ex = _dc_extremes(model, state, [box], {
            "max_i": lambda d, P: np.max(np.abs(d.i_throw[:, closed]), axis=1)})
        return float(ex["max_i"][1])
    ex = _dc_extremes(model, state, [box], {
        "min_i": lambda d, P: -np.min(np.abs(d.i_throw[:, closed]), axis=1)})
    return float(-ex["min_i"][1])


def edge_setup(model: LinearModel, rx: ReceiverElectrical, edge: str,
               levels: Mapping[str, LevelResult] | None = None,
               logic: tuple[str, ...] | None = None) -> EdgeSetup:
    """Direction (from the nominal levels), thresholds and ranges of an edge ("press" or "release").

    logic: the level of each load in the state the edge goes to (found here when not given).
    """
    edge = Edge(edge)
    a, b = EDGE_STATES[edge]
    if levels is None:
        levels = {s: _level(model, s, rx)[0] for s in (a, b)}
    va, vb = levels[a].nominal_v, levels[b].nominal_v
    if va is None or vb is None:
        raise ValueError(f"{edge}: a level is undefined (the receiver floats)")
    rising = vb > va if vb != va else levels[b].logic == "high"
    thr = rx.rising_threshold if rising else rx.falling_threshold
    if logic is None:
        logic = load_logic(model, b, rx) or (("high" if rising else "low"),) * len(model.leak_cols)
    # The own receiver's range follows the direction of the edge, the others their own level.
    logic = ("high" if rising else "low", *logic[1:])
    box = make_box(model.nominal, model.lo, model.hi, model.leak_cols, leak_ranges(model, rx, logic))
    inner, outer = (thr[0], thr[2]) if rising else (thr[2], thr[0])
    return EdgeSetup(edge, a, b, 1 if rising else -1, thr, inner, outer, box, rx, supply_column(model, rx))


@dataclass(frozen=True, slots=True)
class _EdgeCorners:
    """One edge's figures before they become an EdgeResult (nan: threshold not reached)."""

    nominal_s: float
    nominal_slope: float
    start_v: float
    final_v: float
    row_fastest: np.ndarray
    row_slowest: np.ndarray
    fastest_s: float  # inf: not reached
    slowest_s: float
    slowest_slope: float


def _edge(model: LinearModel, es: EdgeSetup) -> EdgeResult:
    """Both worst corners and the nominal of one edge: closed form when it applies, else exact."""
    if len(es.box.cols) <= ENUMERATE_MAX and model.k <= 1 and not model.has_diodes:
        c = _closed_form_corners(model, es)
    else:
        c = _exact_corners(model, es)
    inner = float(es.vth(c.row_fastest, "inner")[0])
    outer = float(es.vth(c.row_slowest, "outer")[0])
    return EdgeResult(
        edge=es.edge, direction="rising" if es.direction > 0 else "falling",
        start_v=float(c.start_v), final_v=float(c.final_v), threshold_v=es.threshold[1],
        threshold_fastest_v=inner, threshold_slowest_v=outer,
        nominal_s=time_or_none(c.nominal_s), fastest_s=time_or_none(c.fastest_s),
        slowest_s=time_or_none(c.slowest_s),
        slope_v_per_s=slope_or_none(c.nominal_slope) if not np.isnan(c.nominal_s) else None,
        slowest_slope_v_per_s=slope_or_none(c.slowest_slope) if math.isfinite(c.slowest_s) else None,
        corner_fastest=corner_dict(model.param_names, c.row_fastest, {THRESHOLD: inner}),
        corner_slowest=corner_dict(model.param_names, c.row_slowest, {THRESHOLD: outer}),
    )


def _closed_form_corners(model: LinearModel, es: EdgeSetup) -> _EdgeCorners:
    """Closed form, vectorised: every vertex of every piece outright (one batched solve)."""
    box = es.box
    V = np.vstack([vertices(piece) for piece in es.pieces()])
    nv = V.shape[0]
    P = np.vstack([box.nominal[None, :], V, V])
    vth = np.concatenate([es.vth(box.nominal, "typ"), es.vth(V, "inner"), es.vth(V, "outer")])
    eb = edge_batch(model, es.from_state, es.to_state, P, vth, es.direction)
    tf = np.where(np.isnan(eb.t[1:nv + 1]), np.inf, eb.t[1:nv + 1])
    ts = np.where(np.isnan(eb.t[nv + 1:]), np.inf, eb.t[nv + 1:])
    i_f, i_s = int(np.argmin(tf)), int(np.argmax(ts))
    return _EdgeCorners(eb.t[0], eb.slope[0], eb.start_v[0], eb.final_v[0], V[i_f], V[i_s],
                        tf[i_f], ts[i_s], eb.slope[nv + 1 + i_s])


class _ExactRuns:
    """Exact event-driven solves of one edge at rows of parameters, each (row, threshold) once.

    Keys are the rows' bytes and the threshold (values), and the memo lives
    only as long as one edge's corner search.
    """

    def __init__(self, model: LinearModel, es: EdgeSetup) -> None:
        self.model, self.es = model, es
        self.memo: dict[tuple[bytes, float], tuple[float, float]] = {}
        self.nominal_levels = (math.nan, math.nan)  # (start, final) at the nominal corner

    def __call__(self, P: np.ndarray, which: str) -> tuple[np.ndarray, np.ndarray]:
        """(time, slope) at each row of P to its "inner", "outer" or "typ" threshold;
        nan where the threshold is not reached."""
        es, nominal = self.es, self.es.box.nominal.tobytes()
        vths = es.vth(P, which)
        out_t, out_s = np.empty(P.shape[0]), np.empty(P.shape[0])
        for i, row in enumerate(P):
            vth = float(vths[i])
            key = (row.tobytes(), vth)
            hit = self.memo.get(key)
            if hit is None:
                sol = solve_edge(self.model, es.from_state, es.to_state, row, vth, es.direction)
                slope = math.nan if sol.slope_v_per_s is None else sol.slope_v_per_s
                hit = (math.nan, math.nan) if sol.crossing_s is None else (sol.crossing_s, slope)
                self.memo[key] = hit
                if which == "typ" and key[0] == nominal:
                    self.nominal_levels = (sol.start_v, sol.final_v)
            out_t[i], out_s[i] = hit
        return out_t, out_s


def _exact_corners(model: LinearModel, es: EdgeSetup) -> _EdgeCorners:
    """Exact event-driven solves, one corner at a time: the direction of each
    parameter from sensitivities, then a local search over single flips
    (2n + 2 solves per corner instead of 2**n; corners.sign_search), in each
    piece of the box."""
    box = es.box
    run = _ExactRuns(model, es)
    t0, s0 = run(box.nominal[None, :], "typ")
    start_v, final_v = run.nominal_levels
    fast = [sign_search(piece, lambda P: -np.where(np.isnan(t := run(P, "inner")[0]), np.inf, t))
            for piece in es.pieces()]
    slow = [sign_search(piece, lambda P: np.where(np.isnan(t := run(P, "outer")[0]), np.inf, t))
            for piece in es.pieces()]
    row_f, bad_f = max(fast, key=lambda x: x[1])
    row_s, bad_s = max(slow, key=lambda x: x[1])
    slope_slow = run(row_s[None, :], "outer")[1][0]
    return _EdgeCorners(t0[0], s0[0], start_v, final_v, row_f, row_s, -bad_f, bad_s, slope_slow)


def _surge_peak(model: LinearModel) -> float | None:
    """Current at the instant a throw closes onto a capacitor on its own nodes.

    Rails at maximum, resistors at minimum, no leakage: capacitors act as
    voltage sources at their pre-closure voltage, so the throw current at
    t = 0+ is (Vcap - Vother) / (closed_ohms + resistance between them).
    """
    peaks = []
    row = model.lo.copy()
    row[model.rail_params] = model.hi[model.rail_params]
    row[list(model.leak_cols)] = 0.0
    P = row[None, :]
    for t in model.circuit.throws:
        ends = {n for n in (t.a, t.b) if n in model.free}
        if not any(c.a in ends or c.b in ends for c in model.circuit.capacitors):
            continue
        dc0 = dc_solve(model, OTHER_STATE[t.closed_when], P)
        u0 = cap_voltages(model, dc0)[0]
        on = tuple(bool(x) for x in dc0.diodes_on[0])
        on, red = settle_diodes(model, t.closed_when, P, u0, on)
        v = (red.cv[0] + red.Mv[0] @ u0)[None, :]
        va = node_voltage(v, red.vfix, model.node_code(t.a))[0]
        vb = node_voltage(v, red.vfix, model.node_code(t.b))[0]
        peaks.append(float(abs(va - vb)) / t.closed_ohms)  # a plain float: records hold no numpy scalars
    return max(peaks) if peaks else None


def corner_row(model: LinearModel, es: EdgeSetup, corner: Corner) -> tuple[np.ndarray, float]:
    """Parameters and threshold of the nominal corner or of a {name: value} mapping."""
    if isinstance(corner, Mapping):
        row = es.box.nominal.copy()
        for name, value in corner.items():
            if name in model.param_names:
                row[model.column(name)] = value
        return row, float(corner.get(THRESHOLD, es.threshold[1]))
    if corner == "nominal":
        return es.box.nominal.copy(), es.threshold[1]
    raise ValueError(f"unknown corner {corner!r}: 'nominal', 'fastest', 'slowest' or a mapping")


def edge_solution(stage: Stage, rx: ReceiverElectrical, edge: str, corner: Corner = "nominal") -> EdgeSolution:
    """The full exact trajectory of one edge at one corner."""
    model = compile_circuit(stage.circuit)
    es = edge_setup(model, rx, edge)
    if isinstance(corner, str) and corner in ("fastest", "slowest"):
        res = _edge(model, es)
        corner = res.corner_fastest if corner == "fastest" else res.corner_slowest
    row, vth = corner_row(model, es, corner)
    return solve_edge(model, es.from_state, es.to_state, row, vth, es.direction, full=True)


def edge_waveform(stage: Stage, rx: ReceiverElectrical, edge: str,
                  corner: Corner = "nominal") -> tuple[np.ndarray, np.ndarray]:
    """(t, v) at the receiver for `edge` ("press"/"release") at `corner`, sampled for plotting.

    corner: "nominal", "fastest", "slowest", or a {parameter: value} mapping
    such as EdgeResult.corner_slowest. The samples come from the same exact
    solution the timing uses (`edge_solution`).
    """
    return sample(edge_solution(stage, rx, edge, corner))
