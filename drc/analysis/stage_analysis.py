"""Analysis of one recognised stage: levels, edges and currents, worst-case.

`analyse_stage` turns a Stage and its receiver's electrical data into the
StageResult the rules read; `analyse_stages` does the same for many stages,
solving those that share a circuit structure as one numpy batch
(physics.batch), which is how a board's thousands of stages are analysed. It compiles the stage circuit once, then asks the
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

import numpy as np

from drc.analysis.receiver import ReceiverElectrical
from drc.analysis.physics.corners import ENUMERATE_MAX, Box, corner_dict, make_box, sign_search, vertices, worst_vertex
from drc.analysis.physics.mna import DcBatch, cap_voltages, dc_solve, node_voltage
from drc.analysis.physics.compiled import THRESHOLD, LinearModel, compile_circuit
from drc.analysis.physics.transient import EdgeSolution, edge_batch, sample, settle_diodes, solve_edge
from drc.analysis.results import LevelResult, EdgeResult, StageResult
from drc.board.stage import Stage

EDGE_STATES = {"press": ("released", "pressed"), "release": ("pressed", "released")}
PULL_ROLES = ("pull", "internal-pull")
_OTHER = {"released": "pressed", "pressed": "released"}


@dataclass(frozen=True, slots=True)
class EdgeSetup:
    """What defines one edge's question: states, direction, thresholds, ranges."""

    edge: str
    from_state: str
    to_state: str
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
    from drc.analysis.physics.batch import analyse_group, batchable, structure_key, template
    stages = list(stages)
    rxs = [rx_for(s) for s in stages] if callable(rx_for) else list(rx_for)
    if len(rxs) != len(stages):
        raise ValueError("rx_for must give one receiver per stage")
    out: list[StageResult | None] = [None] * len(stages)
    groups: dict[tuple, list[int]] = {}
    for i, st in enumerate(stages):
        groups.setdefault(structure_key(st.circuit), []).append(i)
    for key, idx in groups.items():
        model = template(key, stages[idx[0]].circuit)
        got = None
        if batchable(model):
            for lo in range(0, len(idx), _BATCH_STAGES):
                chunk = idx[lo:lo + _BATCH_STAGES]
                part = analyse_group(model, [stages[i] for i in chunk], [rxs[i] for i in chunk])
                if part is None:
                    got = None
                    break
                got = (got or []) + part
        if got is None:
            got = [_analyse_one(stages[i], rxs[i]) for i in idx]
        for i, res in zip(idx, got):
            out[i] = res
    return out  # type: ignore[return-value]


# Stages per batch: bounds the temporary arrays (rows = stages x 2**parameters).
_BATCH_STAGES = 2048


def analyse_stage(stage: Stage, rx: ReceiverElectrical) -> StageResult:
    """Levels per actuator state, both edges at nominal and worst corners, currents."""
    return analyse_stages([stage], [rx])[0]


def _analyse_one(stage: Stage, rx: ReceiverElectrical) -> StageResult:
    """The per-stage path: any structure (several capacitors, diodes, many parameters)."""
    model = compile_circuit(stage.circuit)
    notes: list[str] = []
    levels: dict[str, LevelResult] = {}
    extremes: dict[str, dict] = {}
    for state in ("released", "pressed"):
        levels[state], extremes[state] = _level(model, state, rx)
        if levels[state].logic == "undefined":
            notes.append(f"{state}: the receiver has no DC path to a rail or ground")
    edges: dict[str, EdgeResult] = {}
    for edge, (a, b) in EDGE_STATES.items():
        if levels[a].logic == "undefined" or levels[b].logic == "undefined":
            notes.append(f"{edge}: not timed, a level is undefined")
            continue
        edges[edge] = _edge(model, rx, edge_setup(model, rx, edge, levels), notes)
    defined = [s for s in levels if levels[s].logic != "undefined"]
    max_in = max((extremes[s]["max_v"] for s in defined), default=None)
    pulls = [extremes[s]["pull_a"] for s in defined if extremes[s]["pull_a"] is not None]
    contacts = [extremes[s]["contact_a"] for s in extremes if extremes[s]["contact_a"] is not None]
    return StageResult(
        stage=stage, levels=levels, edges=edges,
        pull_current_a=max(pulls) if pulls else None,
        contact_current_a=min(contacts) if contacts else None,
        surge_peak_a=_surge_peak(model),
        max_input_v=max_in, receiver_electrical=rx, notes=tuple(notes),
    )


def _level_range(rx: ReceiverElectrical, logic: str) -> tuple[float, float]:
    return rx.leak_high_a if logic == "high" else rx.leak_low_a


def _level(model: LinearModel, state: str, rx: ReceiverElectrical) -> tuple[LevelResult, dict]:
    # The level decides which leakage range applies: solve with both midpoints at once.
    boxes = {lv: make_box(model.nominal, model.lo, model.hi, model.leak_col, _level_range(rx, lv))
             for lv in ("high", "low")}
    both = dc_solve(model, state, np.vstack([boxes["high"].nominal, boxes["low"].nominal]))
    if bool(both.floating[0]):
        none = LevelResult(state, "undefined", None, None, None, None, None, None)
        return none, {"max_v": None, "pull_a": None, "contact_a": _contact_current(model, state, rx)}
    logic = "high" if both.rx_v[0] > rx.vcc / 2 else "low"
    i0 = 0 if logic == "high" else 1
    box = _dc_box(model, boxes[logic])
    sign = -1.0 if logic == "high" else 1.0  # badness: lower is worse for high, higher for low
    objectives = {
        "worst": lambda d: _nan_low(sign * d.rx_v),
        "max_v": lambda d: _nan_low(d.rx_v),
        "pull_a": lambda d: _pull_current(model, d),
    }
    closed = [j for j, t in enumerate(model.circuit.throws) if t.closed_when == state]
    if closed:
        objectives["contact_a"] = lambda d: -np.min(np.abs(d.i_throw[:, closed]), axis=1)
    ex = _dc_extremes(model, state, box, objectives)
    worst_v = float(ex["worst"][1] * sign)
    required = rx.high_required_v if logic == "high" else rx.low_required_v
    margin = worst_v - required if logic == "high" else required - worst_v
    level = LevelResult(state, logic, float(both.rx_v[i0]), worst_v, required, margin,
                        float(both.thevenin_v[i0]), float(both.thevenin_ohms[i0]))
    pull = ex["pull_a"][1]
    extra = {"max_v": float(ex["max_v"][1]),
             "pull_a": pull if math.isfinite(pull) else None,
             "contact_a": float(-ex["contact_a"][1]) if closed else None}
    return level, extra


def _dc_box(model: LinearModel, box: Box) -> Box:
    """Capacitors do not move a steady level: keep them out of the DC search."""
    caps = {model.column(c.designator) for c in model.circuit.capacitors}
    return Box(box.nominal, box.lo, box.hi, tuple(c for c in box.cols if c not in caps))


def _nan_low(x: np.ndarray) -> np.ndarray:
    return np.where(np.isnan(x), -np.inf, x)


def _dc_extremes(model: LinearModel, state: str, box: Box, objectives: dict) -> dict:
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
        out[name] = worst_vertex(box, lambda P, fn=fn: fn(dc_solve(model, state, P)))
    return out


def _pull_current(model: LinearModel, dc: DcBatch) -> np.ndarray:
    cols = [i for i, r in enumerate(model.circuit.resistors) if r.role in PULL_ROLES]
    if not cols:
        return np.full(dc.rx_v.shape, -np.inf)
    return np.max(np.abs(dc.i_res[:, cols]), axis=1)


def _contact_current(model: LinearModel, state: str, rx: ReceiverElectrical,
                     logic: str | None = None) -> float | None:
    """Smallest steady current through a throw closed in `state`, over corners."""
    closed = [j for j, t in enumerate(model.circuit.throws) if t.closed_when == state]
    if not closed:
        return None
    leak = _level_range(rx, logic) if logic else (0.0, 0.0)
    box = _dc_box(model, make_box(model.nominal, model.lo, model.hi, model.leak_col, leak))
    ex = _dc_extremes(model, state, box, {
        "min_i": lambda d: -np.min(np.abs(d.i_throw[:, closed]), axis=1)})
    return float(-ex["min_i"][1])


def edge_setup(model: LinearModel, rx: ReceiverElectrical, edge: str,
               levels: Mapping[str, LevelResult] | None = None) -> EdgeSetup:
    """Direction (from the nominal levels), thresholds and ranges of an edge."""
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


def _none(x: float) -> float | None:
    return None if x is None or not math.isfinite(x) else float(x)


def _slope(x: float) -> float | None:
    """A slope; inf (an instant switch) is kept, nan (no crossing) is None."""
    return None if x is None or math.isnan(x) else float(x)


def _edge(model: LinearModel, rx: ReceiverElectrical, es: EdgeSetup, notes: list[str]) -> EdgeResult:
    box = es.box
    typ = es.threshold[1]
    if len(box.cols) <= ENUMERATE_MAX and model.k <= 1 and not model.has_diodes:
        # Closed form, vectorised: every vertex outright (one batched solve).
        V = vertices(box)
        nv = V.shape[0]
        P = np.vstack([box.nominal[None, :], V, V])
        vth = np.concatenate([[typ], np.full(nv, es.inner_v), np.full(nv, es.outer_v)])
        eb = edge_batch(model, es.from_state, es.to_state, P, vth, es.direction)
        nom = (eb.t[0], eb.slope[0], eb.start_v[0], eb.final_v[0])
        tf = np.where(np.isnan(eb.t[1:nv + 1]), np.inf, eb.t[1:nv + 1])
        ts = np.where(np.isnan(eb.t[nv + 1:]), np.inf, eb.t[nv + 1:])
        i_f, i_s = int(np.argmin(tf)), int(np.argmax(ts))
        row_f, row_s = V[i_f], V[i_s]
        t_fast, t_slow = tf[i_f], ts[i_s]
        slope_slow = eb.slope[nv + 1 + i_s]
    else:
        # Exact event-driven solves, one corner at a time: the direction of each
        # parameter from sensitivities, then a local search over single flips
        # (2n + 2 solves per corner instead of 2**n; corners.sign_search).
        memo: dict[tuple, tuple[float, float]] = {}

        def run(P, vth):
            out_t = np.empty(P.shape[0]); out_s = np.empty(P.shape[0])
            for i, row in enumerate(P):
                key = (row.tobytes(), vth)
                hit = memo.get(key)
                if hit is None:
                    sol = solve_edge(model, es.from_state, es.to_state, row, vth, es.direction)
                    hit = (math.nan, math.nan) if sol.crossing_s is None else (sol.crossing_s, sol.slope_v_per_s)
                    memo[key] = hit
                    if key[1] == typ and row.tobytes() == box.nominal.tobytes():
                        memo["nominal"] = (sol.start_v, sol.final_v)
                out_t[i], out_s[i] = hit
            return out_t, out_s
        t0, s0 = run(box.nominal[None, :], typ)
        start_v, final_v = memo["nominal"]
        nom = (t0[0], s0[0], start_v, final_v)
        row_f, bad_f = sign_search(box, lambda P: -np.where(np.isnan(t := run(P, es.inner_v)[0]), np.inf, t))
        row_s, bad_s = sign_search(box, lambda P: np.where(np.isnan(t := run(P, es.outer_v)[0]), np.inf, t))
        t_fast, t_slow = -bad_f, bad_s
        slope_slow = run(row_s[None, :], es.outer_v)[1][0]
    return EdgeResult(
        edge=es.edge, direction="rising" if es.direction > 0 else "falling",
        start_v=float(nom[2]), final_v=float(nom[3]), threshold_v=typ,
        threshold_fastest_v=es.inner_v, threshold_slowest_v=es.outer_v,
        nominal_s=_none(nom[0]), fastest_s=_none(t_fast), slowest_s=_none(t_slow),
        slope_v_per_s=_slope(nom[1]) if not np.isnan(nom[0]) else None,
        slowest_slope_v_per_s=_slope(slope_slow) if math.isfinite(t_slow) else None,
        corner_fastest=corner_dict(model.param_names, row_f, {THRESHOLD: es.inner_v}),
        corner_slowest=corner_dict(model.param_names, row_s, {THRESHOLD: es.outer_v}),
    )


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
        dc0 = dc_solve(model, _OTHER[t.closed_when], P)
        u0 = cap_voltages(model, dc0)[0]
        on = tuple(bool(x) for x in dc0.diodes_on[0])
        on, red = settle_diodes(model, t.closed_when, P, u0, on)
        v = (red.cv[0] + red.Mv[0] @ u0)[None, :]
        va = node_voltage(model, v, red.vfix, model.node_code(t.a))[0]
        vb = node_voltage(model, v, red.vfix, model.node_code(t.b))[0]
        peaks.append(abs(va - vb) / t.closed_ohms)
    return max(peaks) if peaks else None


def corner_row(model: LinearModel, es: EdgeSetup, corner) -> tuple[np.ndarray, float]:
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


def edge_solution(stage: Stage, rx: ReceiverElectrical, edge: str, corner="nominal") -> EdgeSolution:
    """The full exact trajectory of one edge at one corner."""
    model = compile_circuit(stage.circuit)
    es = edge_setup(model, rx, edge)
    if isinstance(corner, str) and corner in ("fastest", "slowest"):
        res = _edge(model, rx, es, [])
        corner = res.corner_fastest if corner == "fastest" else res.corner_slowest
    row, vth = corner_row(model, es, corner)
    return solve_edge(model, es.from_state, es.to_state, row, vth, es.direction, full=True)


def edge_waveform(stage: Stage, rx: ReceiverElectrical, edge: str, corner="nominal") -> tuple[np.ndarray, np.ndarray]:
    """(t, v) at the receiver for one edge and corner, sampled for plotting."""
    return sample(edge_solution(stage, rx, edge, corner))
