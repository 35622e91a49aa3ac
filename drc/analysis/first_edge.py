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

The fastest pull back is searched over every vertex of the tolerance box
(its own threshold limits: the crossing threshold nearest the old level, the
opposite one nearest too; leakage over both levels' ranges), and the nominal
corner with typical thresholds is what `drc simulate` counts. The rule
bounce-window reads this for Schmitt inputs (drc/checks/bounce_window.py).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np

from drc.analysis.physics.compiled import THRESHOLD, LinearModel, compile_circuit
from drc.analysis.physics.corners import Box, corner_dict, make_box, vertices
from drc.analysis.physics.mna import cap_voltages, dc_solve, reduce_dynamic
from drc.analysis.physics.supply import supply_pieces
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
    constants at the nominal corner. left_v: the level a crossing new-state
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


def pull_back(stage: Stage, rx: ReceiverElectrical, edge: Edge | str,
              min_closure_s: float = MIN_CLOSURE_S) -> PullBack | None:
    """The closure-and-opening reading of one edge; None where it does not apply (an input
    without hysteresis, several capacitors or none, diodes, an edge that never crosses).
    A stage identical to one read before but for its names gets that reading, renamed."""
    stage_key = canonical_key(stage, rx)
    if stage_key is None:
        return _pull_back_now(stage, rx, edge, min_closure_s)
    key = (stage_key, str(edge), float(min_closure_s))
    names = stage_names(stage)
    known = _PULL_BACKS.get(key)
    if known is None:
        back = _pull_back_now(stage, rx, edge, min_closure_s)
        _PULL_BACKS.put(key, (back, names))
        return back
    back, source = known
    if back is None or source == names:
        return back
    return replace(back, corner_fastest=renamed_corner(back.corner_fastest, source, names))


def _pull_back_now(stage: Stage, rx: ReceiverElectrical, edge: Edge | str,
                   min_closure_s: float) -> PullBack | None:
    min_closure_s = max(0.0, min_closure_s)  # a zero closure leaves the crossing threshold itself
    if not rx.schmitt or len(stage.circuit.capacitors) != 1:
        return None
    model = compile_circuit(stage.circuit)
    if model.has_diodes or model.k != 1 or model.rx < 0:
        return None
    try:
        es = edge_setup(model, rx, edge)
    except ValueError:
        return None
    back = bounce_state(stage, edge)
    box = _both_levels_box(model, rx, es)
    V = np.vstack([vertices(piece) for piece in supply_pieces(box, rx, es.supply_col)])
    P = np.vstack([es.box.nominal[None, :], V])
    opposite = _opposite(es, rx)
    vh = rx.hysteresis_min_v or 0.0
    nominal = _figures(model, es, back, P[:1], es.vth(P[:1], "typ"), opposite.vth(P[:1], "typ"),
                       min_closure_s)
    if nominal is None or np.isnan(nominal[0][0]):
        return None  # the edge never crosses at nominal: nothing to pull back
    best = None
    for cross, opp in _threshold_pairs(es, opposite, V, vh):
        fig = _figures(model, es, back, V, cross, opp, min_closure_s)
        if fig is None:
            return None
        t = np.where(np.isnan(fig[0]), np.inf, fig[0])
        if best is None:
            best = (t, fig, cross, opp)
            continue
        take = t < best[0]
        best = (np.where(take, t, best[0]),
                tuple(np.where(take, a, b) for a, b in zip(fig, best[1], strict=True)),
                np.where(take, cross, best[2]), np.where(take, opp, best[3]))
    assert best is not None
    tv, (_, left, at_thr, _, _, _), cross_v, opp_v = best
    tau_n, tau_b = nominal[3], nominal[4]
    t0 = nominal[0]
    i = int(np.argmin(tv))
    row = V[i]
    return PullBack(
        edge=Edge(edge), bounce_state=str(back), min_closure_s=min_closure_s,
        closure_tau_s=float(tau_n[0]), bounce_tau_s=float(tau_b[0]), left_v=float(left[i]),
        at_threshold=bool(at_thr[i]), opposite_v=float(opp_v[i]),
        fastest_s=_time(tv[i]), nominal_s=_time(float(t0[0])),
        corner_fastest=corner_dict(model.param_names, row, {THRESHOLD: float(cross_v[i])}),
        first_crossing_s=_time(float(nominal[5][0])))


def _time(x: float) -> float | None:
    return float(x) if math.isfinite(x) else None


def _both_levels_box(model: LinearModel, rx: ReceiverElectrical, es: EdgeSetup) -> Box:
    """The edge's box with every load's leakage over its high and its low range: the
    capacitor crosses from one level towards the other and may come back."""
    n = len(model.leak_cols)
    high = leak_ranges(model, rx, ("high",) * n)
    low = leak_ranges(model, rx, ("low",) * n)
    both = tuple((min(*h, *lo), max(*h, *lo)) for h, lo in zip(high, low, strict=True))
    return make_box(model.nominal, model.lo, model.hi, model.leak_cols, both)


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
    d = float(es.direction)
    c_in, c_out = es.vth(V, "inner"), es.vth(V, "outer")
    o_in = opposite.vth(V, "inner")

    def clip_cross(x: np.ndarray) -> np.ndarray:
        lo, hi = np.minimum(c_in, c_out), np.maximum(c_in, c_out)
        return np.clip(x, lo, hi)

    def opp_for(cross: np.ndarray) -> np.ndarray:  # as near the crossing as allowed
        return np.where(d * (cross - o_in) >= vh, o_in, cross - d * vh)

    cross_b = clip_cross(np.where(d * (c_in - o_in) >= vh, c_in, o_in + d * vh))
    return [(c_in, opp_for(c_in)), (cross_b, opp_for(cross_b))]


def _mode(model: LinearModel, state: str, P: np.ndarray):
    """(q, g, u_inf, tau) of one state, per row: v_rx = q + g u, u -> u_inf with tau."""
    red = reduce_dynamic(model, model.topology(state, ()), P)
    Y, C, h = red.Y[:, 0, 0], red.C[:, 0], red.h[:, 0]
    with np.errstate(divide="ignore", invalid="ignore"):
        tau = np.where(Y > 0, C / Y, np.inf)
        u_inf = np.where(Y > 0, h / Y, np.nan)
    return red.cv[:, model.rx], red.Mv[:, model.rx, 0], u_inf, tau


def _figures(model: LinearModel, es: EdgeSetup, back: str, P: np.ndarray, cross_v: np.ndarray,
             opp_v: np.ndarray, min_closure_s: float):
    """Per row: (pull-back time (nan: no crossing, inf: never back), level left, left at
    the threshold, tau of the new state, tau of the bounce state, time to the crossing)."""
    d = es.direction
    u_old = cap_voltages(model, dc_solve(model, es.from_state, P))[:, 0]
    qn, gn, un, tau_n = _mode(model, es.to_state, P)
    qb, gb, ub, tau_b = _mode(model, back, P)
    if np.any(gn <= 0) or np.any(~np.isfinite(tau_n)):
        return None  # the receiver does not follow the capacitor in the new state
    sn = float(d)  # u moves the way the receiver does (g > 0)
    # The steady start: the old level, or the bounce state's own level where it lies farther back.
    u_start = np.where(np.isfinite(ub) & (sn * (ub - u_old) < 0), ub, u_old)
    u_cross = (cross_v - qn) / gn
    reaches = sn * (un - u_cross) > 0
    u_after = un + (u_start - un) * np.exp(-min_closure_s / tau_n)
    crossed = sn * (u_after - u_cross) >= 0
    u_left = np.where(crossed, u_after, u_cross)
    left_v = qn + gn * u_left
    v_back0 = qb + gb * u_left  # the receiver as the contact bounces open
    with np.errstate(divide="ignore", invalid="ignore"):
        u_opp = np.where(gb > 0, (opp_v - qb) / gb, np.nan)
        past = -d * (v_back0 - opp_v) >= 0  # already back across as the contact bounces
        gets_there = np.isfinite(ub) & (gb > 0) & (-d * (qb + gb * ub - opp_v) > 0)
        t = np.where(past, 0.0, np.where(gets_there, tau_b * np.log((ub - u_left) / (ub - u_opp)), np.inf))
    t = np.where(reaches, t, np.nan)
    with np.errstate(divide="ignore", invalid="ignore"):
        t_cross = np.where(reaches, np.maximum(tau_n * np.log((un - u_start) / (un - u_cross)), 0.0), np.inf)
    return t, left_v, ~crossed, tau_n, tau_b, t_cross


__all__ = ["MIN_CLOSURE_S", "TRANSIT", "PullBack", "bounce_state", "pull_back"]
