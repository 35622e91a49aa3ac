"""After the first crossing: can the bounce bring the input back across the other threshold?

Why: a capacitor straight across the contact (or at the pin with no series
resistor) crosses the threshold at once by design, so the time to threshold
says nothing about bounce. On an input with hysteresis (Schmitt) what counts
is whether, once the input has switched, the bouncing contact can take the
capacitor back across the opposite threshold before it stops bouncing.

The bounce is modelled as closures and openings (the same model `drc
simulate` injects): while the contact is in the state an edge goes to (its
"new state", a closure on a press of a normally-open contact) it drives the
capacitor towards that state's level with that path's own time constant
(nanoseconds through a bare contact, the series RC otherwise), for at least
`min_closure_s`; in between it sits in its bounce state (no throw closed, or
the old state where the new one closes nothing), which pulls the capacitor
back. One capacitor and no diodes make every interval an exponential of the
capacitor voltage u, so:

- the highest level a crossing new-state interval can leave is u after
  `min_closure_s` from the steady start (the farther of the old level and the
  bounce state's own level), or the crossing threshold itself when the new
  state's path has not crossed it by then (a slow path: the interval can end
  just past the threshold);
- the pull back from there, in the bounce state, takes
  t = tau_b ln((u_b - u_left) / (u_b - u_opp)) to reach the opposite threshold
  (tau_b and u_b that state's time constant and level; never, when u_b lies
  short of it). Closures in between only push u further away, so one pull
  back lasting the whole bounce is the worst a bounce can do.

Stages with diodes or several capacitors are read the same way on their
exact trajectories (physics.flows: exponential sums between diode events,
card diodes by quadrature) from any capacitor voltages, the fastest corner
found by the exact edge timing's sign search (`_ExactRows` says why the
same levels bound the bounce there).

The fastest pull back is searched over every vertex of the tolerance box
(its own threshold limits: the crossing threshold nearest the old level, the
opposite one nearest too; leakage over both levels' ranges), and the nominal
corner with typical thresholds is what `drc simulate` counts. The rule
bounce-window reads this for Schmitt inputs (drc/checks/bounce_window.py).

A board has hundreds of such edges and few circuit shapes, so `pull_backs`
reads many edges at once: the stages of one structure (values aside) and one
edge share the compiled template of physics/batch.py, and their rows (each
edge's nominal corner and every vertex of its box) are solved in one stack:
the nominal levels that give each edge its direction, the old state's steady
level and both states' time constants. Every row is its own arithmetic, so a
reading is the same alone (`pull_back`: a batch of one) or in a batch.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, replace

import numpy as np

from drc.analysis.physics.batch import structure_key, template
from drc.analysis.physics.compiled import THRESHOLD, LinearModel, compile_circuit, param_table, rail_param
from drc.analysis.physics.corners import Box, corner_dict, make_box, sign_search, vertices
from drc.analysis.physics.flows import flow
from drc.analysis.physics.mna import cap_voltages, dc_solve, node_voltage, reduce_dynamic
from drc.analysis.physics.supply import supply_column, supply_pieces
from drc.analysis.receiver import ReceiverElectrical
from drc.analysis.results import EDGE_STATES, Edge
from drc.analysis.reuse import canonical_key, renamed_corner, stage_names
from drc.analysis.stage_analysis import EdgeSetup, edge_setup, leak_ranges
from drc.board.stage import Stage
from drc.caching import Memo

MIN_CLOSURE_S = 1e-6  # the shortest make or break of a bouncing contact (limits.toml min_closure)
TRANSIT = "transit"  # no throw closed: a state the circuit model builds like any other


@dataclass(frozen=True, slots=True)
class PullBack:
    """One edge read by closures and openings (all times in s, levels in V at the receiver).

    bounce_state: the state the contact bounces into ("transit": no throw closed).
    closure_tau_s / bounce_tau_s: the new state's and the bounce state's time
    constants at the nominal corner (nan where the stage has no single one:
    diodes, several capacitors). left_v: the level a crossing new-state
    interval can leave, at the fastest corner; at_threshold: that level is the
    crossing threshold itself (the new state's path is slow). opposite_v: the
    opposite threshold there. fastest_s: the shortest pull back from left_v
    to opposite_v over the tolerance box (None: it never gets there);
    nominal_s: the same at the nominal corner with typical thresholds;
    first_crossing_s: the nominal time from the first touch to the crossing
    (the edge's own time when nothing interrupts it).
    """

    edge: Edge
    bounce_state: str
    min_closure_s: float
    closure_tau_s: float
    bounce_tau_s: float
    left_v: float
    at_threshold: bool
    opposite_v: float
    fastest_s: float | None
    nominal_s: float | None
    corner_fastest: dict[str, float]
    first_crossing_s: float | None = None  # nominal: from the first touch to the crossing, in the new state


def bounce_state(stage: Stage, edge: Edge | str) -> str:
    """The state the contact bounces into during `edge`: no throw closed while it leaves
    a state that closes one; the old state where the new one closes nothing."""
    old, new = EDGE_STATES[Edge(edge)]
    return TRANSIT if any(t.closed_when == new for t in stage.circuit.throws) else old


# Stages of one design (a keypad, an archive) get one reading, renamed: canonical key of
# the stage and receiver (analysis.reuse), edge, least closure -> (reading, the names it was made for).
_PULL_BACKS: Memo[tuple, tuple[PullBack | None, tuple[str, ...]]] = Memo("first_edge.pull_back", 50_000)

# One edge of one stage to read: (stage, receiver data, edge).
Wanted = tuple[Stage, ReceiverElectrical, Edge | str]


def pull_back(stage: Stage, rx: ReceiverElectrical, edge: Edge | str,
              min_closure_s: float = MIN_CLOSURE_S) -> PullBack | None:
    """The closure-and-opening reading of one edge; None where it does not apply (an input
    without hysteresis, no capacitor, several capacitors not each to a rail or ground or
    with a card diode, an edge that never crosses).
    A stage identical to one read before but for its names gets that reading, renamed."""
    return pull_backs([(stage, rx, edge)], min_closure_s)[0]


def pull_backs(wanted: Sequence[Wanted], min_closure_s: float = MIN_CLOSURE_S) -> list[PullBack | None]:
    """The readings of many edges, each what `pull_back` gives for it alone.

    Edges not read before are read together: the stages of one circuit
    structure (values aside) and one edge are stacked and solved in one
    batch (three solves for all of them), where each alone costs a compiled
    circuit and nine small solves.
    """
    out: list[PullBack | None] = [None] * len(wanted)
    keys: list[tuple | None] = []
    todo: dict[tuple, list[int]] = {}  # memo key -> the edges that want it (the first is read)
    alone: list[int] = []  # edges of stages whose names are not distinct: read without the memo
    for i, (stage, rx, edge) in enumerate(wanted):
        stage_key = canonical_key(stage, rx)
        key = None if stage_key is None else (stage_key, str(edge), float(min_closure_s))
        keys.append(key)
        if key is None:
            alone.append(i)
            continue
        known = _PULL_BACKS.get(key)
        if known is not None:
            out[i] = _for_names(known, stage_names(stage))
        else:
            todo.setdefault(key, []).append(i)
    first = [idx[0] for idx in todo.values()] + alone
    read = _read(wanted, first, min_closure_s) if first else {}
    for i in alone:
        out[i] = read[i]
    for key, idx in todo.items():
        known = (read[idx[0]], stage_names(wanted[idx[0]][0]))
        _PULL_BACKS.put(key, known)
        for i in idx:
            out[i] = _for_names(known, stage_names(wanted[i][0]))
    return out


def _for_names(known: tuple[PullBack | None, tuple[str, ...]], names: tuple[str, ...]) -> PullBack | None:
    back, source = known
    if back is None or source == names:
        return back
    return replace(back, corner_fastest=renamed_corner(back.corner_fastest, source, names))


def _read(wanted: Sequence[Wanted], which: list[int], min_closure_s: float) -> dict[int, PullBack | None]:
    """The readings of the edges `which`, batched by circuit structure and edge."""
    min_closure_s = max(0.0, min_closure_s)  # a zero closure leaves the crossing threshold itself
    out: dict[int, PullBack | None] = {}
    groups: dict[tuple, list[int]] = {}
    for i in which:
        stage, rx, edge = wanted[i]
        if not rx.schmitt or not stage.circuit.capacitors:
            out[i] = None
            continue
        groups.setdefault((structure_key(stage.circuit), Edge(edge)), []).append(i)
    for (key, edge), idx in groups.items():
        model = template(key, wanted[idx[0]][0].circuit)
        got = _read_group(model, [(wanted[i][0], wanted[i][1]) for i in idx], edge, min_closure_s)
        out.update(zip(idx, got, strict=True))
    return out


@dataclass(frozen=True, slots=True)
class _Edge:
    """One stage's edge, set up: its edge and opposite thresholds, the rows to solve
    (the nominal corner of the edge, then every vertex of the box with both levels'
    leakage) and the names of the parameters."""

    es: EdgeSetup
    opposite: EdgeSetup
    V: np.ndarray
    names: tuple[str, ...]


def _read_group(model: LinearModel, items: list[tuple[Stage, ReceiverElectrical]], edge: Edge,
                min_closure_s: float) -> list[PullBack | None]:
    """The readings of one edge of stages of `model`'s structure (each stage's values are its rows)."""
    out: list[PullBack | None] = [None] * len(items)
    if model.k == 0 or model.rx < 0:
        return out
    if model.has_diodes or model.k != 1:  # on the exact trajectories, stage by stage
        return [_exact_one(stage, rx, edge, min_closure_s) for stage, rx in items]
    ready = [(j, s) for j, s in enumerate(_setups(model, items, edge)) if s is not None]
    if not ready:
        return out
    back = bounce_state(items[ready[0][0]][0], edge)
    rows = _Rows(model, [s for _, s in ready], back, min_closure_s)
    for k, (j, s) in enumerate(ready):
        out[j] = rows.pull_back(k, s, edge)
    return out


class _Rows:
    """The rows of several stages' edges (each the edge's nominal corner, then its
    vertices) solved together, and each row's best reading over the threshold pairs."""

    def __init__(self, model: LinearModel, setups: list[_Edge], back: str, min_closure_s: float) -> None:
        self.back, self.min_closure_s = back, min_closure_s
        blocks = [np.vstack([s.es.box.nominal[None, :], s.V]) for s in setups]
        sizes = [len(b) for b in blocks]
        self.ends = np.cumsum(sizes).tolist()
        self.P = P = np.vstack(blocks)
        es = setups[0].es
        u_old = cap_voltages(model, dc_solve(model, es.from_state, P))[:, 0]
        self.new, self.bounce = _mode(model, es.to_state, P), _mode(model, back, P)
        d = np.repeat([float(s.es.direction) for s in setups], sizes)
        cross1, opp1, cross2, opp2 = (np.concatenate(x) for x in zip(*map(_thresholds, setups), strict=True))
        self.f1 = f1 = _reading(d, u_old, self.new, self.bounce, cross1, opp1, min_closure_s)
        f2 = _reading(d, u_old, self.new, self.bounce, cross2, opp2, min_closure_s)
        t1 = np.where(np.isnan(f1.t), np.inf, f1.t)
        t2 = np.where(np.isnan(f2.t), np.inf, f2.t)
        take = t2 < t1  # the first pair wins ties
        self.t = np.where(take, t2, t1)
        self.left = np.where(take, f2.left_v, f1.left_v)
        self.at_threshold = np.where(take, f2.at_threshold, f1.at_threshold)
        self.cross, self.opp = np.where(take, cross2, cross1), np.where(take, opp2, opp1)
        # The receiver must follow the capacitor in the new state at every row of a stage.
        self.bad = (self.new[1] <= 0) | ~np.isfinite(self.new[3])

    def pull_back(self, k: int, s: _Edge, edge: Edge) -> PullBack | None:
        """The reading of the k-th edge; None where the receiver does not follow the
        capacitor or the edge never crosses at nominal."""
        hi = self.ends[k]
        lo = hi - 1 - len(s.V)
        f1 = self.f1
        if self.bad[lo:hi].any() or np.isnan(f1.t[lo]):
            return None
        i = lo + 1 + int(np.argmin(self.t[lo + 1:hi]))  # the fastest vertex (the first of equals)
        return PullBack(
            edge=edge, bounce_state=str(self.back), min_closure_s=self.min_closure_s,
            closure_tau_s=float(self.new[3][lo]), bounce_tau_s=float(self.bounce[3][lo]),
            left_v=float(self.left[i]), at_threshold=bool(self.at_threshold[i]),
            opposite_v=float(self.opp[i]), fastest_s=_time(self.t[i]), nominal_s=_time(float(f1.t[lo])),
            corner_fastest=corner_dict(s.names, self.P[i], {THRESHOLD: float(self.cross[i])}),
            first_crossing_s=_time(float(f1.t_cross[lo])))


def _thresholds(s: _Edge) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """(crossing, opposite) thresholds of a stage's rows, twice: the nominal row its
    typical pair (both times), each vertex the two pairs of `_threshold_pairs`."""
    nominal = s.es.box.nominal[None, :]
    rx = s.es.rx
    assert rx is not None
    (c1, o1), (c2, o2) = _threshold_pairs(s.es, s.opposite, s.V, rx.hysteresis_min_v or 0.0)
    typ_c, typ_o = s.es.vth(nominal, "typ"), s.opposite.vth(nominal, "typ")
    return (np.concatenate([typ_c, c1]), np.concatenate([typ_o, o1]),
            np.concatenate([typ_c, c2]), np.concatenate([typ_o, o2]))


@dataclass(frozen=True, slots=True)
class _Levels:
    """The stages' values as rows and where each load sits, for the edge set-ups."""

    names: list[tuple[str, ...]]
    nom: np.ndarray  # (m, p)
    lo: np.ndarray
    hi: np.ndarray
    ranges: list[tuple[tuple[tuple[float, float], tuple[float, float]], ...]]  # per load: (high, low)
    high: np.ndarray  # (m, loads): the load sits high in the state the edge goes to
    floating: np.ndarray  # (m,): the receiver floats in either state
    rising: list[bool]


def _levels(model: LinearModel, items: list[tuple[Stage, ReceiverElectrical]], edge: Edge) -> _Levels:
    """Where each load sits in both states of the edge and the edge's direction (from the
    nominal levels, as `stage_analysis.edge_setup` finds it): four stacked solves."""
    a, b = EDGE_STATES[edge]
    tables = [param_table(stage.circuit) for stage, _ in items]
    nom = np.array([t[1] for t in tables], dtype=float)
    cols = list(model.leak_cols)
    ranges = [_load_ranges(stage, rx) for stage, rx in items]
    bare = nom.copy()
    bare[:, cols] = 0.0
    high = {}
    floating = np.zeros(len(items), dtype=bool)
    for state in (a, b):
        dc = dc_solve(model, state, bare)
        floating |= dc.floating
        high[state] = _loads_high(model, dc, nom, [rx for _, rx in items])
    level = {}
    for state in (a, b):
        # The nominal level: each load's leakage at the middle of its range at its level.
        rows = nom.copy()
        for j, rng in enumerate(ranges):
            for c, (h, lw), up in zip(cols, rng, high[state][j].tolist(), strict=True):
                got = h if up else lw
                rows[j, c] = 0.5 * (min(got) + max(got))
        level[state] = dc_solve(model, state, rows).rx_v.tolist()
    rising = [vb > va if vb != va else bool(up)
              for va, vb, up in zip(level[a], level[b], high[b][:, 0].tolist(), strict=True)]
    return _Levels([t[0] for t in tables], nom, np.array([t[2] for t in tables], dtype=float),
                   np.array([t[3] for t in tables], dtype=float), ranges, high[b], floating, rising)


def _setups(model: LinearModel, items: list[tuple[Stage, ReceiverElectrical]],
            edge: Edge) -> list[_Edge | None]:
    """Each stage's edge as `stage_analysis.edge_setup` sets it up, None where the
    receiver floats in a state of the edge."""
    lv = _levels(model, items, edge)
    a, b = EDGE_STATES[edge]
    out: list[_Edge | None] = []
    for j, (_, rx) in enumerate(items):
        if lv.floating[j]:
            out.append(None)
            continue
        rising = lv.rising[j]
        thr = rx.rising_threshold if rising else rx.falling_threshold
        logic = (rising, *lv.high[j][1:].tolist())
        own = tuple(h if up else lw for (h, lw), up in zip(lv.ranges[j], logic, strict=True))
        box = make_box(lv.nom[j], lv.lo[j], lv.hi[j], model.leak_cols, own)
        inner, outer = (thr[0], thr[2]) if rising else (thr[2], thr[0])
        es = EdgeSetup(edge, a, b, 1 if rising else -1, thr, inner, outer, box, rx, supply_column(model, rx))
        # Every load's leakage over its high and its low range: the capacitor crosses
        # from one level towards the other and may come back.
        both = tuple((min(*h, *lw), max(*h, *lw)) for h, lw in lv.ranges[j])
        wide = make_box(lv.nom[j], lv.lo[j], lv.hi[j], model.leak_cols, both)
        V = np.vstack([vertices(piece) for piece in supply_pieces(wide, rx, es.supply_col)])
        out.append(_Edge(es, _opposite(es, rx), V, lv.names[j]))
    return out


def _load_ranges(stage: Stage, rx: ReceiverElectrical) -> tuple[tuple[tuple[float, float], tuple[float, float]], ...]:
    """((high range, low range) per load): the loads' own data, the receiver's without loads."""
    loads = stage.circuit.loads
    if not loads:
        return ((rx.leak_high_a, rx.leak_low_a),)
    return tuple((ld.leak_high_a, ld.leak_low_a) for ld in loads)


def _loads_high(model: LinearModel, dc, nom: np.ndarray, rxs: list[ReceiverElectrical]) -> np.ndarray:
    """(m, loads) True where a load sits high (as `stage_analysis.load_logic`, per row)."""
    vcc = np.array([rx.vcc for rx in rxs])
    if not model.loads:
        return (dc.rx_v > vcc / 2)[:, None]
    out = np.empty((len(rxs), len(model.leak_cols)), dtype=bool)
    for j, (load, node) in enumerate(zip(model.loads, model.leak_nodes, strict=True)):
        v = node_voltage(dc.v, dc.vfix, node)
        if node == model.rx:
            half = vcc / 2
        else:
            name = rail_param(load.supply_net)
            half = nom[:, model.column(name)] / 2 if name in model.param_names else vcc / 2
        out[:, j] = v > half
    return out


def _opposite(es: EdgeSetup, rx: ReceiverElectrical) -> EdgeSetup:
    """The threshold a pull back must reach: the other direction's, its limit nearest
    the level the edge left ("inner" of an edge going back)."""
    back_rising = es.direction < 0
    thr = rx.rising_threshold if back_rising else rx.falling_threshold
    inner, outer = (thr[0], thr[2]) if back_rising else (thr[2], thr[0])
    return replace(es, direction=-es.direction, threshold=thr, inner_v=inner, outer_v=outer)


def _threshold_pairs(es: EdgeSetup, opposite: EdgeSetup, V: np.ndarray,
                     vh: float) -> list[tuple[np.ndarray, np.ndarray]]:
    """The (crossing, opposite) threshold pairs, per row, that can bring a pull back
    soonest: each threshold anywhere in its range, but never closer together than the
    input's least hysteresis (VT+ - VT- >= VH min, the same part at the same supply).
    The pull-back time moves monotonically along that bound, so its two ends do: the
    crossing threshold nearest the start (the opposite one as near as the hysteresis
    allows) and the opposite threshold nearest the start (the crossing one as far)."""
    return threshold_pairs(float(es.direction), es.vth(V, "inner"), es.vth(V, "outer"),
                           opposite.vth(V, "inner"), vh)


def threshold_pairs(d, c_in: np.ndarray, c_out: np.ndarray, o_in: np.ndarray,
                    vh) -> list[tuple[np.ndarray, np.ndarray]]:
    """`_threshold_pairs` from the thresholds themselves (d: the edge's direction, +1
    rising; c_in/c_out: the crossing threshold's ends nearest and farthest from the
    start, o_in: the opposite one's nearest; vh: the least hysteresis), per row."""
    def clip_cross(x: np.ndarray) -> np.ndarray:
        lo, hi = np.minimum(c_in, c_out), np.maximum(c_in, c_out)
        return np.clip(x, lo, hi)

    def opp_for(cross: np.ndarray) -> np.ndarray:  # as near the crossing as allowed
        return np.where(d * (cross - o_in) >= vh, o_in, cross - d * vh)

    # The crossing threshold as near the opposite one as the hysteresis allows (where the
    # two ranges are that far apart already, the clip gives the crossing's nearest end).
    cross_b = clip_cross(o_in + d * vh)
    return [(c_in, opp_for(c_in)), (cross_b, opp_for(cross_b))]


def _time(x: float) -> float | None:
    return float(x) if math.isfinite(x) else None


def _mode(model: LinearModel, state: str, P: np.ndarray):
    """(q, g, u_inf, tau) of one state, per row: v_rx = q + g u, u -> u_inf with tau."""
    red = reduce_dynamic(model, model.topology(state, ()), P)
    Y, C, h = red.Y[:, 0, 0], red.C[:, 0], red.h[:, 0]
    with np.errstate(divide="ignore", invalid="ignore"):
        tau = np.where(Y > 0, C / Y, np.inf)
        u_inf = np.where(Y > 0, h / Y, np.nan)
    return red.cv[:, model.rx], red.Mv[:, model.rx, 0], u_inf, tau


@dataclass(frozen=True, slots=True)
class _Figures:
    """Per row: pull-back time (nan: no crossing, inf: never back), level left, left at
    the threshold, time to the crossing."""

    t: np.ndarray
    left_v: np.ndarray
    at_threshold: np.ndarray
    t_cross: np.ndarray


def _reading(d: np.ndarray, u_old: np.ndarray, new: tuple, bounce: tuple, cross_v: np.ndarray,
             opp_v: np.ndarray, min_closure_s: float) -> _Figures:
    """The closure-and-opening reading per row (d: the edge's direction, +1 rising)."""
    qn, gn, un, tau_n = new
    qb, gb, ub, tau_b = bounce
    sn = d  # u moves the way the receiver does (g > 0; rows where it does not are not read)
    # The steady start: the old level, or the bounce state's own level where it lies farther back.
    u_start = np.where(np.isfinite(ub) & (sn * (ub - u_old) < 0), ub, u_old)
    with np.errstate(divide="ignore", invalid="ignore"):
        u_cross = (cross_v - qn) / gn
        reaches = sn * (un - u_cross) > 0
        u_after = un + (u_start - un) * np.exp(-min_closure_s / tau_n)
        crossed = sn * (u_after - u_cross) >= 0
        u_left = np.where(crossed, u_after, u_cross)
        left_v = qn + gn * u_left
        v_back0 = qb + gb * u_left  # the receiver as the contact bounces open
        u_opp = np.where(gb > 0, (opp_v - qb) / gb, np.nan)
        past = -d * (v_back0 - opp_v) >= 0  # already back across as the contact bounces
        gets_there = np.isfinite(ub) & (gb > 0) & (-d * (qb + gb * ub - opp_v) > 0)
        t = np.where(past, 0.0, np.where(gets_there, tau_b * np.log((ub - u_left) / (ub - u_opp)), np.inf))
        t = np.where(reaches, t, np.nan)
        t_cross = np.where(reaches, np.maximum(tau_n * np.log((un - u_start) / (un - u_cross)), 0.0), np.inf)
    return _Figures(t, left_v, ~crossed, t_cross)


def pull_back_floor(model: LinearModel, edge: Edge, back: str, P: np.ndarray, d: np.ndarray,
                    pairs: Sequence[tuple[np.ndarray, np.ndarray]], need: np.ndarray,
                    min_closure_s: float | np.ndarray = MIN_CLOSURE_S) -> np.ndarray:
    """Per row of P (one capacitor, no diodes): the least factor on the capacitor at
    which the closure-and-opening reading of `edge` can take `need` or longer, from below.

    For the fix search's screen (drc.design.screen), which solves each row once and
    scales the capacitor. With the capacitor times s every time constant is s times
    its own and no level moves, so in `_reading`: a closure crosses within the least
    closure while s <= min_closure_s / t_cross; then the level it leaves lies between
    the crossing level and the new state's own, and the pull back takes at most s
    times the time from the new state's level; beyond, it leaves the crossing level
    itself and takes exactly s times the time from there. The readings that reach
    `need` therefore lie at or above the returned factor (0: any factor may; inf: none
    can). pairs: the (crossing, opposite) thresholds per row, each pair as
    `threshold_pairs` gives them (the reading takes the faster pair); d: each row's
    direction, +1 rising.
    """
    a, b = EDGE_STATES[edge]
    u_old = cap_voltages(model, dc_solve(model, a, P))[:, 0]
    qn, gn, un, tau_n = _mode(model, b, P)
    qb, gb, ub, tau_b = _mode(model, back, P)
    floor = np.zeros(P.shape[0])
    with np.errstate(divide="ignore", invalid="ignore"):
        u_start = np.where(np.isfinite(ub) & (d * (ub - u_old) < 0), ub, u_old)
        for cross_v, opp_v in pairs:
            u_cross = (cross_v - qn) / gn
            u_opp = np.where(gb > 0, (opp_v - qb) / gb, np.nan)
            t_cross = np.maximum(tau_n * np.log((un - u_start) / (un - u_cross)), 0.0)
            deep = tau_b * np.log((ub - un) / (ub - u_opp))  # from the new state's level
            shallow = tau_b * np.log((ub - u_cross) / (ub - u_opp))  # from the crossing level
            fast = np.where(deep > 0, need / deep, np.inf)
            slow = np.where(shallow > 0, need / shallow, np.inf)
            switch = np.where(t_cross > 0, min_closure_s / t_cross, np.inf)
            got = np.where(fast <= switch, fast, np.maximum(switch, slow))
            # Rows the reading does not time (no crossing, never back, not following) bound nothing.
            unknown = (~(d * (un - u_cross) > 0) | ~(np.isfinite(ub) & (gb > 0) & (-d * (qb + gb * ub - opp_v) > 0))
                       | (gn <= 0) | ~np.isfinite(tau_n) | np.isnan(got))
            floor = np.maximum(floor, np.where(unknown, 0.0, got))
    return np.where(need > 0, floor, 0.0)


# ---------------------------------------------------------------- diodes, several capacitors

@dataclass(frozen=True, slots=True)
class _ExactFigures:
    """One row and threshold pair read on the exact trajectories."""

    pull_s: float  # nan: the edge never crosses; inf: the bounce never brings it back
    left_v: float
    at_threshold: bool
    cross_s: float  # from the steady start to the crossing, in the new state


class _ExactRows:
    """The closure-and-opening reading at rows of parameters, on the exact trajectories
    (physics.flows): what the closed forms above do for one capacitor without diodes.

    One capacitor: its voltage is the whole state, so the argument of the
    module docstring holds as it stands (a one-dimensional flow keeps its
    order). Several capacitors, each with one end on a rail or ground: the
    network is cooperative (a capacitor's voltage only pulls its neighbours
    its way), so the state a crossing closure can leave is at most the state
    after `min_closure_s` from the steady start, capacitor by capacitor; when
    the closure path is slow, that state with the receiver's own capacitor
    at the crossing threshold bounds it (pessimistic: a recharge from there
    is at least as fast as from any state a real bounce leaves). The bounce
    state must then be the old state itself (its steady start one point).
    """

    def __init__(self, model: LinearModel, es: EdgeSetup, back: str, min_closure_s: float) -> None:
        self.model, self.es, self.back, self.min_closure_s = model, es, back, min_closure_s
        self.rows: dict[bytes, tuple | None] = {}

    def _start(self, row: np.ndarray) -> tuple | None:
        key = row.tobytes()
        if key not in self.rows:
            self.rows[key] = self._start_now(row)
        return self.rows[key]

    def _start_now(self, row: np.ndarray) -> tuple | None:
        model, es = self.model, self.es
        new, bounce = flow(model, es.to_state, row), flow(model, self.back, row)
        if new is None or bounce is None:
            return None
        u_start = bounce.steady() if self.back == es.from_state else \
            cap_voltages(model, dc_solve(model, es.from_state, row[None, :]))[0]
        if self.back != es.from_state:
            u_b = bounce.steady()
            if model.k == 1:
                u_new = new.steady()
                if (u_new[0] - u_start[0]) * (u_b[0] - u_start[0]) < 0:
                    u_start = u_b  # the bounce state's own level lies farther back
            elif not np.allclose(u_b, u_start, rtol=0.0, atol=1e-9):
                return None
        return new, bounce, u_start, new.after(u_start, self.min_closure_s)

    def figures(self, row: np.ndarray, cross: float, opp: float) -> _ExactFigures | None:
        start = self._start(row)
        if start is None:
            return None
        new, bounce, u_start, u_after = start
        d = self.es.direction
        hit = new.reach(u_start, cross, d)
        if hit is None:
            return _ExactFigures(math.nan, math.nan, False, math.inf)
        crossed = hit[0] <= self.min_closure_s
        if crossed:
            u_left = u_after
        elif self.model.k == 1:
            u_left = hit[1]  # the crossing threshold itself
        else:
            u_left = self._at_threshold(row, u_after, cross)
            if u_left is None:
                return None
        way_back = bounce.reach(u_left, opp, -d)
        return _ExactFigures(math.inf if way_back is None else way_back[0], new.receiver(u_left), not crossed, hit[0])

    def _at_threshold(self, row: np.ndarray, u: np.ndarray, level: float) -> np.ndarray | None:
        """u with the capacitor from the receiver to a rail or ground set to put the receiver
        at `level`; None when no capacitor sits there."""
        model = self.model
        vfix = model.fixed_voltages(row[None, :])[0]
        for j, (a, b) in enumerate(model.cap_nodes):
            if model.rx in (a, b) and min(a, b) < 0:
                out = u.copy()
                out[j] = model.Ac[j, model.rx] * level + float(model.Acf[j] @ vfix)
                return out
        return None

    def fastest(self, row: np.ndarray, pairs: list[tuple[float, float]]) -> tuple[float, _ExactFigures, int] | None:
        """The quickest pull back at `row` over the threshold pairs: (time, figures, pair)."""
        best = None
        for i, (cross, opp) in enumerate(pairs):
            fig = self.figures(row, cross, opp)
            if fig is None:
                return None
            t = math.inf if math.isnan(fig.pull_s) else fig.pull_s
            if best is None or t < best[0]:
                best = (t, fig, i)
        return best


def _exact_one(stage: Stage, rx: ReceiverElectrical, edge: Edge, min_closure_s: float) -> PullBack | None:
    model = compile_circuit(stage.circuit)
    try:
        es = edge_setup(model, rx, edge)
    except ValueError:
        return None
    return _exact_reading(model, rx, es, bounce_state(stage, edge), min_closure_s)


def _both_levels_box(model: LinearModel, rx: ReceiverElectrical, es: EdgeSetup) -> Box:
    """The edge's box with every load's leakage over its high and its low range: the
    capacitor crosses from one level towards the other and may come back."""
    n = len(model.leak_cols)
    high = leak_ranges(model, rx, ("high",) * n)
    low = leak_ranges(model, rx, ("low",) * n)
    both = tuple((min(*h, *lo), max(*h, *lo)) for h, lo in zip(high, low, strict=True))
    return make_box(model.nominal, model.lo, model.hi, model.leak_cols, both)


def _grounded(model: LinearModel) -> bool:
    """Every capacitor has one end on a rail or ground."""
    return all(min(a, b) < 0 for a, b in model.cap_nodes)


def _row_pairs(es: EdgeSetup, opposite: EdgeSetup, row: np.ndarray, vh: float) -> list[tuple[float, float]]:
    return [(float(c[0]), float(o[0])) for c, o in _threshold_pairs(es, opposite, row[None, :], vh)]


def _exact_reading(model: LinearModel, rx: ReceiverElectrical, es: EdgeSetup, back: str,
                   min_closure_s: float) -> PullBack | None:
    """The reading of a stage with diodes or several capacitors: the same closures and
    openings on the exact trajectories (card diodes by quadrature, the rest by exponential
    sums between diode events), the fastest pull back found by the corner search the exact
    edge timing uses (corners.sign_search: a sign per parameter, confirmed by single flips)."""
    if model.k > 1 and not _grounded(model):
        return None
    reader = _ExactRows(model, es, back, min_closure_s)
    opposite = _opposite(es, rx)
    nominal_row = es.box.nominal
    nominal = reader.figures(nominal_row, float(es.vth(nominal_row[None, :], "typ")[0]),
                             float(opposite.vth(nominal_row[None, :], "typ")[0]))
    if nominal is None or math.isnan(nominal.pull_s):
        return None  # no exact path, or the edge never crosses at nominal
    vh = rx.hysteresis_min_v or 0.0
    failed = False

    def badness(P: np.ndarray) -> np.ndarray:
        nonlocal failed
        out = np.empty(P.shape[0])
        for i, row in enumerate(P):
            got = reader.fastest(row, _row_pairs(es, opposite, row, vh))
            failed = failed or got is None
            out[i] = -np.inf if got is None else -got[0]
        return out

    box = _both_levels_box(model, rx, es)
    found = [sign_search(piece, badness) for piece in supply_pieces(box, rx, es.supply_col)]
    if failed:
        return None
    row, _bad = max(found, key=lambda x: x[1])
    pairs = _row_pairs(es, opposite, row, vh)
    got = reader.fastest(row, pairs)
    assert got is not None
    t, fig, i = got
    return PullBack(
        edge=es.edge, bounce_state=str(back), min_closure_s=min_closure_s,
        closure_tau_s=math.nan, bounce_tau_s=math.nan, left_v=fig.left_v,
        at_threshold=fig.at_threshold, opposite_v=pairs[i][1], fastest_s=_time(t),
        nominal_s=_time(nominal.pull_s), corner_fastest=corner_dict(model.param_names, row, {THRESHOLD: pairs[i][0]}),
        first_crossing_s=_time(nominal.cross_s))


__all__ = ["MIN_CLOSURE_S", "TRANSIT", "PullBack", "bounce_state", "pull_back", "pull_back_floor", "pull_backs",
           "threshold_pairs"]
