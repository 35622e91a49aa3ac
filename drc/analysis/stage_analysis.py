"""Analysis of one recognised stage: levels, edges and currents, worst-case.

`analyse_stage` turns a Stage and its receiver's electrical data into the
StageResult the rules read; `analyse_stages` does the same for many stages,
solving those that share a circuit structure as one numpy batch
(physics.batch), which is how a board's thousands of stages are analysed.
It compiles the stage circuit once, then asks the
physics package for steady levels in each actuator state (nominal, and at the
vertex closest to the threshold the level must clear), for both edges'
time-to-threshold at nominal and at the fastest and slowest corners, and for
the currents the contact and the pull resistors carry. Leakage follows the
receiver's level: the range of the level a state settles to, and during an
edge the range of the level the edge moves towards (used for the steady state
before the edge too, so one edge is one linear problem).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from drc.analysis.physics.batch import analyse_group, batchable, structure_key, template
from drc.analysis.physics.compiled import THRESHOLD, LinearModel, compile_circuit
from drc.analysis.physics.corners import (
    ENUMERATE_MAX,
    Box,
    corner_dict,
    make_box,
    sign_search,
    vertices,
    worst_vertex,
)
from drc.analysis.physics.mna import DcBatch, cap_voltages, dc_solve, node_voltage
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
# A DC figure to make worst: badness per corner row of a DcBatch (larger is worse).
DcObjective = Callable[[DcBatch], np.ndarray]


@dataclass(frozen=True, slots=True)
class EdgeSetup:
    """What defines one edge's question: states, direction, thresholds, ranges."""

    edge: Edge
    from_state: ActuatorState
    to_state: ActuatorState
    direction: int  # +1 rising, -1 falling
    threshold: tuple[float, float, float]  # (min, typ, max)
    inner_v: float  # nearest the start: fastest
    outer_v: float  # farthest from the start: slowest
    box: Box


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
        groups.setdefault(structure_key(st.circuit), []).append(i)
    by_index: dict[int, StageResult] = {}
    for key, idx in groups.items():
        model = template(key, stages[idx[0]].circuit)
        mine, their_rxs = [stages[i] for i in idx], [rxs[i] for i in idx]
        got = _batched(model, mine, their_rxs) if batchable(model) else None
        if got is None:
            got = [_analyse_one(st, rx) for st, rx in zip(mine, their_rxs, strict=True)]
        by_index.update(zip(idx, got, strict=True))
    return [by_index[i] for i in range(len(stages))]


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
        edges[edge] = _edge(model, edge_setup(model, rx, edge, levels))
    defined = [s for s in levels if levels[s].logic != "undefined"]
    max_in = max((extremes[s]["max_v"] for s in defined), default=None)
    pulls = [extremes[s]["pull_a"] for s in defined if extremes[s]["pull_a"] is not None]
    contacts = [extremes[s]["contact_a"] for s in extremes if extremes[s]["contact_a"] is not None]
    closed = [extremes[s]["closed_a"] for s in extremes if extremes[s].get("closed_a") is not None]
    return StageResult(
        stage=stage, levels=levels, edges=edges,
        pull_current_a=max(pulls) if pulls else None,
        contact_current_a=min(contacts) if contacts else None,
        surge_peak_a=_surge_peak(model),
        max_input_v=max_in, receiver_electrical=rx, notes=tuple(notes),
        closed_current_a=max(closed) if closed else None,
    )


def _level_range(rx: ReceiverElectrical, logic: str) -> tuple[float, float]:
    return rx.leak_high_a if logic == "high" else rx.leak_low_a


def _closed_throws(model: LinearModel, state: str) -> list[int]:
    return [j for j, t in enumerate(model.circuit.throws) if t.closed_when == state]


def _level(model: LinearModel, state: ActuatorState, rx: ReceiverElectrical) -> tuple[LevelResult, dict[str, Any]]:
    # The level decides which leakage range applies: solve with both midpoints at once.
    boxes = {lv: make_box(model.nominal, model.lo, model.hi, model.leak_col, _level_range(rx, lv))
             for lv in ("high", "low")}
    both = dc_solve(model, state, np.vstack([boxes["high"].nominal, boxes["low"].nominal]))
    if bool(both.floating[0]):
        none = LevelResult(state, "undefined", None, None, None, None, None, None)
        return none, {"max_v": None, "pull_a": None, "contact_a": _contact_current(model, state, rx),
                      "closed_a": _contact_current(model, state, rx, largest=True)}
    logic = "high" if both.rx_v[0] > rx.vcc / 2 else "low"
    i0 = 0 if logic == "high" else 1
    box = _dc_box(model, boxes[logic])
    sign = -1.0 if logic == "high" else 1.0  # badness: lower is worse for high, higher for low
    objectives: dict[str, DcObjective] = {
        "worst": lambda d: _nan_low(sign * d.rx_v),
        "max_v": lambda d: _nan_low(d.rx_v),
        "pull_a": lambda d: _pull_current(model, d),
    }
    closed = _closed_throws(model, state)
    if closed:
        objectives["contact_a"] = lambda d: -np.min(np.abs(d.i_throw[:, closed]), axis=1)
        objectives["closed_a"] = lambda d: np.max(np.abs(d.i_throw[:, closed]), axis=1)
    ex = _dc_extremes(model, state, box, objectives)
    worst_v = float(ex["worst"][1] * sign)
    required = rx.high_required_v if logic == "high" else rx.low_required_v
    margin = worst_v - required if logic == "high" else required - worst_v
    level = LevelResult(state, logic, float(both.rx_v[i0]), worst_v, required, margin,
                        float(both.thevenin_v[i0]), float(both.thevenin_ohms[i0]))
    pull = ex["pull_a"][1]
    extra = {"max_v": float(ex["max_v"][1]),
             "pull_a": pull if math.isfinite(pull) else None,
             "contact_a": float(-ex["contact_a"][1]) if closed else None,
             "closed_a": float(ex["closed_a"][1]) if closed else None}
    return level, extra


def _dc_box(model: LinearModel, box: Box) -> Box:
    """Capacitors do not move a steady level: keep them out of the DC search."""
    caps = {model.column(c.designator) for c in model.circuit.capacitors}
    return Box(box.nominal, box.lo, box.hi, tuple(c for c in box.cols if c not in caps))


def _nan_low(x: np.ndarray) -> np.ndarray:
    return np.where(np.isnan(x), -np.inf, x)


def _dc_extremes(model: LinearModel, state: str, box: Box,
                 objectives: Mapping[str, DcObjective]) -> dict[str, tuple[np.ndarray, float]]:
    """For each objective (DcBatch -> badness per corner): (worst row, worst value)."""
    out = {}
    if len(box.cols) <= ENUMERATE_MAX:
        P = vertices(box)
        dc = dc_solve(model, state, P)
        for name, fn in objectives.items():
            vals = fn(dc)
            i = int(np.argmax(vals))
            out[name] = (P[i], float(vals[i]))
        return out
    for name, fn in objectives.items():
        out[name] = worst_vertex(box, _over_rows(model, state, fn))
    return out


def _over_rows(model: LinearModel, state: str, fn: DcObjective) -> Callable[[np.ndarray], np.ndarray]:
    """An objective as a function of parameter rows (one DC solve per call)."""
    return lambda P: fn(dc_solve(model, state, P))


def _pull_current(model: LinearModel, dc: DcBatch) -> np.ndarray:
    cols = [i for i, r in enumerate(model.circuit.resistors) if r.role in PULL_ROLES]
    if not cols:
        return np.full(dc.rx_v.shape, -np.inf)
    return np.max(np.abs(dc.i_res[:, cols]), axis=1)


def _contact_current(model: LinearModel, state: ActuatorState, rx: ReceiverElectrical,
                     logic: str | None = None, largest: bool = False) -> float | None:
    """Smallest (largest) steady current through a throw closed in `state`, over corners."""
    closed = _closed_throws(model, state)
    if not closed:
        return None
    leak = _level_range(rx, logic) if logic else (0.0, 0.0)
    box = _dc_box(model, make_box(model.nominal, model.lo, model.hi, model.leak_col, leak))
    if largest:
        ex = _dc_extremes(model, state, box, {
            "max_i": lambda d: np.max(np.abs(d.i_throw[:, closed]), axis=1)})
        return float(ex["max_i"][1])
    ex = _dc_extremes(model, state, box, {
        "min_i": lambda d: -np.min(np.abs(d.i_throw[:, closed]), axis=1)})
    return float(-ex["min_i"][1])


def edge_setup(model: LinearModel, rx: ReceiverElectrical, edge: str,
               levels: Mapping[str, LevelResult] | None = None) -> EdgeSetup:
    """Direction (from the nominal levels), thresholds and ranges of an edge ("press" or "release")."""
    edge = Edge(edge)
    a, b = EDGE_STATES[edge]
    if levels is None:
        levels = {s: _level(model, s, rx)[0] for s in (a, b)}
    va, vb = levels[a].nominal_v, levels[b].nominal_v
    if va is None or vb is None:
        raise ValueError(f"{edge}: a level is undefined (the receiver floats)")
    rising = vb > va if vb != va else levels[b].logic == "high"
    thr = rx.rising_threshold if rising else rx.falling_threshold
    leak = rx.leak_high_a if rising else rx.leak_low_a
    box = make_box(model.nominal, model.lo, model.hi, model.leak_col, leak)
    inner, outer = (thr[0], thr[2]) if rising else (thr[2], thr[0])
    return EdgeSetup(edge, a, b, 1 if rising else -1, thr, inner, outer, box)


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
    return EdgeResult(
        edge=es.edge, direction="rising" if es.direction > 0 else "falling",
        start_v=float(c.start_v), final_v=float(c.final_v), threshold_v=es.threshold[1],
        threshold_fastest_v=es.inner_v, threshold_slowest_v=es.outer_v,
        nominal_s=time_or_none(c.nominal_s), fastest_s=time_or_none(c.fastest_s),
        slowest_s=time_or_none(c.slowest_s),
        slope_v_per_s=slope_or_none(c.nominal_slope) if not np.isnan(c.nominal_s) else None,
        slowest_slope_v_per_s=slope_or_none(c.slowest_slope) if math.isfinite(c.slowest_s) else None,
        corner_fastest=corner_dict(model.param_names, c.row_fastest, {THRESHOLD: es.inner_v}),
        corner_slowest=corner_dict(model.param_names, c.row_slowest, {THRESHOLD: es.outer_v}),
    )


def _closed_form_corners(model: LinearModel, es: EdgeSetup) -> _EdgeCorners:
    """Closed form, vectorised: every vertex outright (one batched solve)."""
    box = es.box
    V = vertices(box)
    nv = V.shape[0]
    P = np.vstack([box.nominal[None, :], V, V])
    vth = np.concatenate([[es.threshold[1]], np.full(nv, es.inner_v), np.full(nv, es.outer_v)])
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

    def __call__(self, P: np.ndarray, vth: float) -> tuple[np.ndarray, np.ndarray]:
        """(time, slope) at each row of P; nan where the threshold is not reached."""
        es, nominal = self.es, self.es.box.nominal.tobytes()
        out_t, out_s = np.empty(P.shape[0]), np.empty(P.shape[0])
        for i, row in enumerate(P):
            key = (row.tobytes(), vth)
            hit = self.memo.get(key)
            if hit is None:
                sol = solve_edge(self.model, es.from_state, es.to_state, row, vth, es.direction)
                slope = math.nan if sol.slope_v_per_s is None else sol.slope_v_per_s
                hit = (math.nan, math.nan) if sol.crossing_s is None else (sol.crossing_s, slope)
                self.memo[key] = hit
                if vth == es.threshold[1] and key[0] == nominal:
                    self.nominal_levels = (sol.start_v, sol.final_v)
            out_t[i], out_s[i] = hit
        return out_t, out_s


def _exact_corners(model: LinearModel, es: EdgeSetup) -> _EdgeCorners:
    """Exact event-driven solves, one corner at a time: the direction of each
    parameter from sensitivities, then a local search over single flips
    (2n + 2 solves per corner instead of 2**n; corners.sign_search)."""
    box = es.box
    run = _ExactRuns(model, es)
    t0, s0 = run(box.nominal[None, :], es.threshold[1])
    start_v, final_v = run.nominal_levels
    row_f, bad_f = sign_search(box, lambda P: -np.where(np.isnan(t := run(P, es.inner_v)[0]), np.inf, t))
    row_s, bad_s = sign_search(box, lambda P: np.where(np.isnan(t := run(P, es.outer_v)[0]), np.inf, t))
    slope_slow = run(row_s[None, :], es.outer_v)[1][0]
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
    row[model.leak_col] = 0.0
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
        va = node_voltage(model, v, red.vfix, model.node_code(t.a))[0]
        vb = node_voltage(model, v, red.vfix, model.node_code(t.b))[0]
        peaks.append(abs(va - vb) / t.closed_ohms)
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
