"""Screening thousands of candidate values of many stages at once, optimistically.

Why: a fix search that claims to find every passing one- or two-part change
must know, for every series value of every part and every pair of parts,
whether the stage would pass. A full analysis (every vertex of the tolerance
box, then the rules) costs about 0.1 ms a candidate: too much for thousands.
This screen evaluates candidates of single-capacitor stages (the closed-form
edges of `analysis.physics.batch`) at a few vertices only, in numpy, and the
candidates of every stage of one circuit structure in the same solves
(`screen_all`):

- Optimistic, never pessimistic. A figure's worst case over every vertex is
  at least as bad as over a few of them, so a candidate the screen fails
  fails the full analysis too, and only candidates it passes need a full
  analysis. The vertices used are those that were worst for values already
  analysed; when a full analysis refutes the screen, that candidate's worst
  vertices join the set (a `learn` request), so the screen tightens as it is used.
- Capacitance solved directly. In a single-capacitor stage every vertex's
  time is the time constant times a factor that does not depend on the
  capacitance, so each edge time scales with the capacitor value: one
  evaluation gives the exact interval of capacitor values (as a factor on the
  present one) that passes the timing rules, without trying any.
- The value rules' conditions are restated here (bounce-window,
  response-latency, leakage-headroom, pullup-waste, shorted-pull,
  contact-wetting; contact-level rules only on the contact's lead stage; the
  resistance window is a pure value test, left to the search). Before a
  screen is trusted, its exact figures on the present values are compared
  with the full analysis and its verdict with the rules (`agrees`); a rule or
  model change elsewhere then makes the search fall back, never go wrong.
  Slow-edge (a plain input's transition limit) reads a slope at one corner,
  which a subset of vertices cannot bound: it is not screened, and the full
  analyses refute what it fails.

Thresholds follow the receiver's supply as in the analysis: each vertex
reads them at its own supply voltage (`analysis.physics.supply`), and a
steady level's figure is its margin against the threshold at that vertex.

Stages not covered: several capacitor branches, what is not linear (diodes,
TTL inputs, conducting clamps), several receiver inputs on the nets, and
anything where the present values disagree with the analysis.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field

import numpy as np

from drc.analysis.first_edge import MIN_CLOSURE_S, bounce_state, pull_back_floor, threshold_pairs
from drc.analysis.physics.batch import batchable, structure_key, template
from drc.analysis.physics.compiled import LinearModel, param_table
from drc.analysis.physics.mna import dc_solve
from drc.analysis.physics.supply import SupplyTable, supply_table
from drc.analysis.physics.transient import single_cap_parts, single_cap_times
from drc.analysis.receiver import ReceiverElectrical
from drc.analysis.results import ACTUATOR_STATES, EDGE_STATES, PULL_ROLES, Edge, StageResult
from drc.board.stage import ActuatorState, Stage

# The rules whose conditions the screen restates (and the limits they read).
SCREENED_RULES = ("bounce-window", "response-latency", "leakage-headroom", "pullup-waste", "shorted-pull",
                  "contact-wetting")
_LIMIT_KEYS = ("bounce_margin", "latency_limit", "leakage_headroom_margin", "pull_current_budget")
_OPTIONAL_KEYS = ("short_current", "min_closure")
_RC_KINDS = ("rc", "rc-schmitt")  # the stage kinds bounce-window reads (checks.common.RC_KINDS)
# Comparisons lean to passing by this relative slack: a candidate exactly on a
# boundary is sent to the full analysis rather than screened out by rounding.
_SLACK = 1e-9
# Figures compared with the full analysis before the screen is trusted.
_AGREE_REL, _AGREE_ABS = 1e-7, 1e-12


@dataclass(frozen=True, slots=True)
class Verdicts:
    """The screen's verdict per candidate row.

    fixed_ok: every screened rule that does not depend on the capacitor passes.
    scale_lo, scale_hi: the timing rules pass for capacitor values between
    these factors of the row's capacitor (1.0 is the row's own value; an empty
    interval has scale_lo > scale_hi). fails: one column per figure against
    its limit (a state's level margin, pull or contact current; an edge's
    bounce or latency time) at the row's own capacitor, each monotonic in
    each part value. Optimistic, as everything here.
    """

    fixed_ok: np.ndarray
    scale_lo: np.ndarray
    scale_hi: np.ndarray
    fails: np.ndarray

    def passes(self, scale: float | np.ndarray = 1.0) -> np.ndarray:
        return self.fixed_ok & (self.scale_lo <= scale) & (scale <= self.scale_hi)


@dataclass
class Figures:
    """The figures of some rows over the vertices used (see `Verdicts` for their use)."""

    worst: dict[ActuatorState, np.ndarray] = field(default_factory=dict)  # minus the smallest level margin
    required: dict[ActuatorState, np.ndarray] = field(default_factory=dict)  # the threshold there
    level: dict[ActuatorState, np.ndarray] = field(default_factory=dict)  # the level there
    high: dict[ActuatorState, np.ndarray] = field(default_factory=dict)  # the logic each row reads
    pull: dict[ActuatorState, np.ndarray] = field(default_factory=dict)
    contact: dict[ActuatorState, np.ndarray] = field(default_factory=dict)  # least through the contact
    closed: dict[ActuatorState, np.ndarray] = field(default_factory=dict)  # most through the contact
    fast: dict[Edge, np.ndarray] = field(default_factory=dict)
    slow: dict[Edge, np.ndarray] = field(default_factory=dict)
    rising: dict[Edge, np.ndarray] = field(default_factory=dict)
    start: dict[Edge, np.ndarray] = field(default_factory=dict)
    # Schmitt inputs: the least capacitor factor at which the closure-and-opening reading
    # can pass bounce-window (first_edge.pull_back_floor, worst vertex used; inf: no such reading).
    back: dict[Edge, np.ndarray] = field(default_factory=dict)


@dataclass(frozen=True, slots=True)
class Request:
    """Rows of one stage to screen. `full`: evaluate the first row at every vertex of its
    steady levels and learn the worst ones; `all_edges`: the same for its edges."""

    screen: Screen
    X: np.ndarray
    full: bool = False
    all_edges: bool = False
    every_figure: bool = False  # compute the edges of rows a steady level already fails too


@dataclass(frozen=True, slots=True)
class Screened:
    """A request's answer: its verdicts, and (full requests) its figures and whether
    vertices were learned."""

    verdicts: Verdicts
    figures: Figures
    learned: bool = False


class Screen:
    """What the screen knows of one stage: its parameters, limits and the vertices used."""

    def __init__(self, stage: Stage, rx: ReceiverElectrical, limits: Mapping[str, float],
                 tolerated: frozenset[str], model: LinearModel) -> None:
        self.stage, self.rx, self.model = stage, rx, model
        self.limits = {k: float(limits[k]) for k in _LIMIT_KEYS + _OPTIONAL_KEYS if k in limits}
        self.tolerated = tolerated
        self.names, self.nominal, self.f_lo, self.f_hi = _tolerance_factors(stage)
        self.column = {name: j for j, name in enumerate(self.names)}
        self.leak = model.leak_col
        # The column the thresholds follow, and their table (None: fixed thresholds).
        self.supply_col = model.supply_col if rx.tracks_supply else None
        self.table: SupplyTable | None = supply_table(rx) if self.supply_col is not None else None
        n_r, p = len(stage.circuit.resistors), len(self.names)
        cap_cols = set(range(n_r, n_r + len(stage.circuit.capacitors)))
        varying = tuple(j for j in range(p) if j != self.leak and self.f_lo[j] != self.f_hi[j])
        self.all_dc = _all_bits(varying + (self.leak,), p, exclude=cap_cols)
        self.all_edge = _all_bits(varying + (self.leak,), p)
        self.pull_cols, self.closed, self.floating, self.timed = _structure(stage, model)
        # Vertices (bit rows over the parameter columns) per actuator state and per edge.
        self.dc_bits: dict[ActuatorState, list[np.ndarray]] = {s: [] for s in ACTUATOR_STATES}
        self.edge_bits: dict[Edge, list[np.ndarray]] = {e: [] for e in EDGE_STATES}
        lv = self.limit_values()
        self.limit_row = [float(lv[k]) for k in _LIMIT_NAMES]
        # The receiver's data and the tolerance factors, as one row (see _Rows).
        self.row_data = np.concatenate([[rx.vcc], sorted(rx.leak_high_a), sorted(rx.leak_low_a),
                                        rx.rising_threshold, rx.falling_threshold, self.f_lo, self.f_hi])
        self.learns_pull = bool(self.pull_cols) and math.isfinite(lv["budget"])
        self.learns_contact = math.isfinite(lv["wetting"])
        self.learns_closed = math.isfinite(lv["short"])

    @classmethod
    def build(cls, stage: Stage, rx: ReceiverElectrical, limits: Mapping[str, float],
              tolerated: frozenset[str]) -> Screen | None:
        """A screen for `stage`, or None where the closed form does not apply.

        Trust it only after `agrees` on the present values (a `full` request).
        """
        circuit = stage.circuit
        if any(k not in limits for k in _LIMIT_KEYS) or len(circuit.capacitors) > 1 or len(circuit.loads) > 1:
            return None
        model = template(structure_key(circuit), circuit)
        if not batchable(model):
            return None
        return cls(stage, rx, limits, tolerated, model)

    def seed(self, present: StageResult) -> bool:
        """Take each edge's fastest and slowest vertices from the full analysis' corners
        (so the present values need not be enumerated); False when they do not map."""
        for edge in self.timed:
            e = present.edges.get(edge)
            if e is None:
                return False
            for corner in (e.corner_fastest, e.corner_slowest):
                bits = self._bits_of(corner, e.direction == "rising")
                if bits is None:
                    return False
                _add(self.edge_bits[edge], bits)
        return True

    def _bits_of(self, corner: Mapping[str, float], rising: bool) -> np.ndarray | None:
        bits = np.zeros(len(self.names), dtype=np.int8)
        leak = sorted(self.rx.leak_high_a if rising else self.rx.leak_low_a)
        for j, name in enumerate(self.names):
            if name not in corner:
                return None
            value = corner[name]
            lo, hi = ((leak[0], leak[1]) if j == self.leak
                      else (self.nominal[j] * self.f_lo[j], self.nominal[j] * self.f_hi[j]))
            # Relative only: a capacitor of a few picofarads is within any absolute slack of
            # both its ends.
            if _same(value, hi) and not _same(value, lo):
                bits[j] = 1
            elif not _same(value, lo):
                return None
        return bits

    def rows(self, n: int) -> np.ndarray:
        return np.tile(self.nominal, (n, 1))

    # ------------------------------------------------------------ verdicts

    def judge(self, f: Figures, n: int) -> Verdicts:
        """Verdicts of n rows of this stage from their figures."""
        return judge(f, _Limits([self], [n]))

    def limit_values(self) -> dict[str, float]:
        """This stage's limits as the screen applies them; a rule it does not apply gets the
        value that never fails (so that the rows of many stages are judged in one go)."""
        rx, lim, t = self.rx, self.limits, self.tolerated
        wetting = self.stage.contact.wetting_a
        lead = self.stage.lead  # contact-level rules speak on the contact's first stage only
        # A short is reported by shorted-pull, not pullup-waste: while a short is tolerated,
        # waste depends on a figure the screen cannot bound from above, so it is not screened.
        waste = lead and "pullup-waste" not in t and "shorted-pull" not in t
        short = lead and "shorted-pull" not in t and "short_current" in lim
        return {
            "vcc": rx.vcc, "high_req": rx.high_required_v, "low_req": rx.low_required_v,
            "headroom": lim["leakage_headroom_margin"] if "leakage-headroom" not in t else -np.inf,
            "budget": lim["pull_current_budget"] if waste else np.inf,
            "short": lim["short_current"] if short else np.inf,
            "wetting": wetting if lead and wetting is not None and "contact-wetting" not in t else -np.inf,
            "need": (self.stage.contact.bounce_s * lim["bounce_margin"]
                     if "bounce-window" not in t and self.stage.kind in _RC_KINDS else 0.0),
            "latency": lim["latency_limit"] if "response-latency" not in t else np.inf,
            "outer_r": rx.rising_threshold[2], "outer_f": rx.falling_threshold[0],
            "min_closure": lim.get("min_closure", MIN_CLOSURE_S),
            "schmitt": 1.0 if rx.schmitt else 0.0, "hysteresis": rx.hysteresis_min_v or 0.0,
        }

    # ------------------------------------------------------------ trust

    def agrees(self, exact: Figures, present: StageResult, fired: frozenset[str]) -> bool:
        """Whether exact figures (a full request on the present values) are the full
        analysis' and the screened verdict is the rules' (`fired`, tolerated ones removed)."""
        if not (self._levels_agree(exact, present) and self._currents_agree(exact, present)
                and self._edges_agree(exact, present)):
            return False
        screened_fail = not bool(self.judge(exact, 1).passes()[0])
        return screened_fail == bool(fired & set(SCREENED_RULES))

    def _levels_agree(self, exact: Figures, present: StageResult) -> bool:
        for s, level in present.levels.items():
            state = ActuatorState(s)
            if state not in exact.worst:
                if level.logic != "undefined":
                    return False
                continue
            high = bool(exact.high[state][0])
            if level.logic != ("high" if high else "low") or not _close(-float(exact.worst[state][0]),
                                                                         level.margin_v):
                return False
            if not _close(float(exact.level[state][0]), level.worst_v):
                return False
        return True

    def _currents_agree(self, exact: Figures, present: StageResult) -> bool:
        pulls = [float(p[0]) for p in exact.pull.values() if math.isfinite(float(p[0]))]
        contacts = [float(exact.contact[s][0]) for s in exact.contact if self.closed[s]]
        closed = [float(exact.closed[s][0]) for s in exact.closed if self.closed[s]]
        return (_close(max(pulls) if pulls else None, present.pull_current_a)
                and _close(min(contacts) if contacts else None, present.contact_current_a)
                and _close(max(closed) if closed else None, present.closed_current_a))

    def _edges_agree(self, exact: Figures, present: StageResult) -> bool:
        if set(self.timed) != set(present.edges):
            return False
        for edge in self.timed:
            e = present.edges[edge]
            if (e.direction == "rising") != bool(exact.rising[edge][0]):
                return False
            if not (_close(float(exact.start[edge][0]), e.start_v)
                    and _close(_time(float(exact.fast[edge][0])), e.fastest_s)
                    and _close(_time(float(exact.slow[edge][0])), e.slowest_s)):
                return False
        return True


# ---------------------------------------------------------------- many stages at once

def screen_all(requests: Sequence[Request]) -> list[Screened | None]:
    """Answer requests of many stages; those of one circuit structure share each solve.

    None for the requests of a structure whose closed form does not apply after all
    (the searches asking fall back; the full analysis stays the authority).
    """
    out: list[Screened | None] = [None] * len(requests)
    groups: dict[int, list[int]] = {}
    for i, req in enumerate(requests):
        groups.setdefault(id(req.screen.model), []).append(i)
    for idx in groups.values():
        try:
            answers = _group([requests[i] for i in idx])
        except (ValueError, IndexError, FloatingPointError, np.linalg.LinAlgError):
            continue
        for i, got in zip(idx, answers, strict=True):
            out[i] = got
    return out


_LIMIT_NAMES = ("vcc", "high_req", "low_req", "headroom", "budget", "short", "wetting", "need", "latency",
                "outer_r", "outer_f", "min_closure", "schmitt", "hysteresis")


class _Limits:
    """Each row's limits (`Screen.limit_values`), for rows of several stages of one structure."""

    def __init__(self, screens: Sequence[Screen], sizes: Sequence[int]) -> None:
        table = np.repeat(np.array([sc.limit_row for sc in screens]), sizes, axis=0)
        self.v = {k: table[:, i] for i, k in enumerate(_LIMIT_NAMES)}
        self.screen = screens[0]  # structure: the same states, throws and pull resistors for all


def _level_fails(f: Figures, lim: _Limits) -> list[np.ndarray]:
    """Leakage-headroom, pullup-waste, contact-wetting and shorted-pull per state: True where failing."""
    v, sc = lim.v, lim.screen
    fails: list[np.ndarray] = []
    for s in f.worst:  # leakage-headroom
        high = f.high[s]
        required = f.required[s]
        margin = -f.worst[s]
        room = np.where(high, v["vcc"] - required, required)
        needed = np.minimum(v["headroom"] * v["vcc"], 0.5 * np.maximum(room, 0.0))
        fails.append(margin < needed - _SLACK * np.maximum(np.abs(needed), 1e-12))
    if sc.pull_cols:  # pullup-waste
        fails += [f.pull[s] > v["budget"] * (1 + _SLACK) for s in f.pull]
    fails += [f.contact[s] < v["wetting"] * (1 - _SLACK) for s in f.contact if sc.closed[s]]  # contact-wetting
    fails += [np.maximum(f.closed[s], f.pull[s]) >= v["short"] * (1 + _SLACK)  # shorted-pull
              for s in f.closed if sc.closed[s]]
    return fails


def judge(f: Figures, lim: _Limits) -> Verdicts:
    """Fold figures into verdicts; each elementary condition is one figure against its
    limit (one state's level, one edge's time), each monotonic in each value."""
    v, sc = lim.v, lim.screen
    n = v["vcc"].shape[0]
    ok = np.ones(n, dtype=bool)
    s_lo, s_hi = np.zeros(n), np.full(n, np.inf)
    fails = _level_fails(f, lim)
    for fail in fails:
        ok &= ~fail
    with np.errstate(divide="ignore", invalid="ignore"):
        for edge in sc.timed:
            fast, slow, rising, start = f.fast[edge], f.slow[edge], f.rising[edge], f.start[edge]
            lo = np.where(np.isinf(fast) | (v["need"] <= 0), 0.0,
                          np.where(fast > 0, v["need"] / fast, np.inf)) * (1 - _SLACK)
            if edge in f.back:  # bounce-window also passes by the closure-and-opening reading
                lo = np.minimum(lo, f.back[edge] * (1 - _SLACK))
            outer = np.where(rising, v["outer_r"], v["outer_f"])
            beyond = np.where(rising, start >= outer, start <= outer)
            unreached = np.isinf(slow)
            never = unreached & ~beyond & np.isfinite(v["latency"])
            hi = np.where(unreached | (slow <= 0), np.inf, v["latency"] / slow) * (1 + _SLACK)
            ok &= ~never
            s_lo, s_hi = np.maximum(s_lo, lo), np.minimum(s_hi, hi)
            fails += [lo > 1.0, never | (hi < 1.0)]
    return Verdicts(ok, s_lo, s_hi, np.column_stack(fails) if fails else np.zeros((n, 0), dtype=bool))


class _Rows:
    """The rows of a group of requests, stacked, with each row's receiver data."""

    def __init__(self, reqs: Sequence[Request]) -> None:
        self.reqs = reqs
        self.sizes = [r.X.shape[0] for r in reqs]
        self.X = np.vstack([r.X for r in reqs])
        p = self.X.shape[1]
        table = np.repeat(np.array([r.screen.row_data for r in reqs]), self.sizes, axis=0)
        self.vcc = table[:, 0]
        self.leak_high, self.leak_low = table[:, 1:3], table[:, 3:5]
        self.rising_thr, self.falling_thr = table[:, 5:8], table[:, 8:11]
        self.f_lo, self.f_hi = table[:, 11:11 + p], table[:, 11 + p:11 + 2 * p]
        self.leak_col = reqs[0].screen.leak

    def at_supply(self, V: np.ndarray, pick, fixed: np.ndarray, rows: np.ndarray | None = None) -> np.ndarray:
        """(N, M) thresholds at each vertex's supply (V: (N, M, p) for the rows `rows`, all by
        default); `pick` chooses one curve of a SupplyTable, `fixed` (all rows) where none tracks."""
        rows = np.arange(self.X.shape[0]) if rows is None else rows
        out = np.repeat(fixed[rows][:, None], V.shape[1], axis=1)
        owner = np.repeat(np.arange(len(self.reqs)), self.sizes)[rows]
        # Requests that share a receiver share its table (one per receiver, drc.analysis.physics.supply):
        # one interpolation per table and supply column, not one pass over every row per request.
        curves: dict[tuple[int, int], tuple[SupplyTable, int, list[int]]] = {}
        for q, r in enumerate(self.reqs):
            table, col = r.screen.table, r.screen.supply_col
            if table is not None and col is not None:
                curves.setdefault((id(table), col), (table, col, []))[2].append(q)
        for table, col, owners in curves.values():
            sel = np.isin(owner, owners)
            if sel.any():
                out[sel] = np.interp(V[sel][:, :, col], table.vcc, pick(table))
        return out

    def leak_range(self, high: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        rng = np.where(high[:, None], self.leak_high, self.leak_low)
        return rng[:, 0], rng[:, 1]

    def vertices(self, bits: list[np.ndarray], leak_lo: np.ndarray, leak_hi: np.ndarray) -> tuple[np.ndarray, int]:
        """(N * M, p): every row at each of its request's vertices (padded to M by repeats)."""
        m = max(b.shape[0] for b in bits)
        padded = np.concatenate([np.vstack([b, np.repeat(b[:1], m - b.shape[0], axis=0)]) for b in bits])
        per_row = np.repeat(padded.reshape(len(bits), m, -1), self.sizes, axis=0)  # (N, M, p)
        factor = np.where(per_row == 1, self.f_hi[:, None, :], self.f_lo[:, None, :])
        V = self.X[:, None, :] * factor
        L = self.leak_col
        V[:, :, L] = np.where(per_row[:, :, L] == 1, leak_hi[:, None], leak_lo[:, None])
        return V.reshape(-1, self.X.shape[1]), m


def _group(reqs: Sequence[Request]) -> list[Screened]:
    rows = _Rows(reqs)
    model = reqs[0].screen.model
    limits = _Limits([r.screen for r in reqs], rows.sizes)
    whole = Figures()
    learned = [False] * len(reqs)
    nominal = _nominal_levels(model, rows)
    screen0 = reqs[0].screen  # floating states and timed edges are structural: one for the group
    for s in ACTUATOR_STATES:
        if not screen0.floating[s]:
            _levels(model, rows, reqs, s, nominal, whole, learned)
    # Rows a steady level already fails need no edges: their edge figures stay optimistic
    # (never too fast, never too slow), so they rule out nothing they should not.
    need = np.ones(rows.X.shape[0], dtype=bool)
    for fail in _level_fails(whole, limits):
        need &= ~fail
    starts = np.cumsum([0] + rows.sizes[:-1])
    for r, i0 in zip(reqs, starts, strict=True):
        if r.every_figure:
            need[i0:i0 + r.X.shape[0]] = True
        elif r.full:
            need[i0] = True
    for edge in screen0.timed:
        _edges(model, rows, reqs, edge, nominal, whole, learned, need)
    verdicts = judge(whole, limits)
    cuts = np.cumsum(rows.sizes)[:-1]
    split = lambda a: np.split(a, cuts)  # noqa: E731
    parts = zip(*(split(a) for a in (verdicts.fixed_ok, verdicts.scale_lo, verdicts.scale_hi,
                                     verdicts.fails)), strict=True)
    # Figures go back to full requests only (the trust check reads them); the rest need verdicts.
    figures = [Figures() for _ in reqs]
    starts = np.cumsum([0] + rows.sizes[:-1])
    for k, r in enumerate(reqs):
        if r.full:
            sel = slice(int(starts[k]), int(starts[k]) + r.X.shape[0])
            for name in ("worst", "required", "level", "high", "pull", "contact", "closed", "fast", "slow",
                         "rising", "start", "back"):
                getattr(figures[k], name).update({key: a[sel] for key, a in getattr(whole, name).items()})
    return [Screened(Verdicts(*p), f, got) for p, f, got in zip(parts, figures, learned, strict=True)]


def _nominal_levels(model: LinearModel, rows: _Rows) -> dict[ActuatorState, tuple[np.ndarray, ...]]:
    """Per state: the logic each row reads, its nominal level (as the batch decides them),
    and its Thevenin source (the level at any leakage is v - leakage * ohms)."""
    L = rows.leak_col
    out: dict[ActuatorState, tuple[np.ndarray, ...]] = {}
    for s in ACTUATOR_STATES:
        X = rows.X.copy()
        X[:, L] = 0.0
        dc = dc_solve(model, s, X)
        th_v, th_r = dc.thevenin_v, dc.thevenin_ohms
        v_high = th_v - rows.leak_high.mean(axis=1) * th_r
        v_low = th_v - rows.leak_low.mean(axis=1) * th_r
        is_high = th_v > rows.vcc / 2  # the level read with no leakage, as the analysis reads it
        out[s] = (is_high, np.where(is_high, v_high, v_low), th_v, th_r)
    return out


def limits_of(reqs: Sequence[Request], name: str) -> np.ndarray:
    """One limit value (`Screen.limit_values`) per row of the requests."""
    return np.concatenate([np.full(r.X.shape[0], r.screen.limit_row[_LIMIT_NAMES.index(name)]) for r in reqs])


def _levels(model: LinearModel, rows: _Rows, reqs: Sequence[Request], s: ActuatorState,
            nominal: dict, f: Figures, learned: list[bool]) -> None:
    is_high = nominal[s][0]
    bits = [r.screen.all_dc if r.full else np.array(r.screen.dc_bits[s]) for r in reqs]
    V, m = rows.vertices(bits, *rows.leak_range(is_high))
    dc = dc_solve(model, s, V)
    n = rows.X.shape[0]
    sc = reqs[0].screen
    rx_v = dc.rx_v.reshape(n, m)
    # The margin at each vertex against the threshold the part has at that vertex's supply.
    V3 = V.reshape(n, m, V.shape[1])
    req = np.where(is_high[:, None], rows.at_supply(V3, lambda t: t.high_required, limits_of(reqs, "high_req")),
                   rows.at_supply(V3, lambda t: t.low_required, limits_of(reqs, "low_req")))
    bad = np.where(np.isnan(rx_v), -np.inf, np.where(is_high, -1.0, 1.0)[:, None] * (rx_v - req))
    pull = (np.max(np.abs(dc.i_res[:, sc.pull_cols]), axis=1).reshape(n, m) if sc.pull_cols
            else np.full((n, m), -np.inf))
    closed = sc.closed[s]
    through = np.abs(dc.i_throw[:, closed]) if closed else None
    contact = through.min(axis=1).reshape(n, m) if through is not None else np.full((n, m), np.inf)
    most = through.max(axis=1).reshape(n, m) if through is not None else np.full((n, m), -np.inf)
    at = np.argmax(bad, axis=1)
    ar = np.arange(n)
    f.high[s], f.worst[s], f.pull[s] = is_high, bad.max(axis=1), pull.max(axis=1)
    f.required[s], f.level[s] = req[ar, at], rx_v[ar, at]
    f.contact[s], f.closed[s] = contact.min(axis=1), most.max(axis=1)
    first = np.cumsum([0] + rows.sizes[:-1])
    for k, r in enumerate(reqs):
        if r.full:
            i0, b = first[k], bits[k]
            picks = {int(np.argmax(bad[i0]))}
            if r.screen.learns_pull:
                picks.add(int(np.argmax(pull[i0])))
            if r.screen.learns_contact and closed:
                picks.add(int(np.argmin(contact[i0])))
            if r.screen.learns_closed and closed:
                picks.add(int(np.argmax(most[i0])))
            for i in picks:
                learned[k] |= _add(r.screen.dc_bits[s], b[i] if i < b.shape[0] else b[0])


def _edges(model: LinearModel, rows: _Rows, reqs: Sequence[Request], edge: Edge, nominal: dict,
           f: Figures, learned: list[bool], need: np.ndarray) -> None:
    """One edge's figures for the rows in `need`; the others get optimistic ones."""
    a, b = EDGE_STATES[edge]
    va, vb, high_b = nominal[a][1], nominal[b][1], nominal[b][0]
    rising = np.where(vb != va, vb > va, high_b)
    n = rows.X.shape[0]
    lo, hi = rows.leak_range(rising)
    bits = [r.screen.all_edge if r.all_edges else np.array(r.screen.edge_bits[edge]) for r in reqs]
    V, m = rows.vertices(bits, lo, hi)
    idx = np.flatnonzero(need)
    V = V.reshape(n, m, -1)[idx].reshape(-1, V.shape[1])
    k = idx.size
    parts = single_cap_parts(model, a, b, V)
    if parts is None:
        raise ValueError("no closed form")
    up = rising[idx][:, None]
    V3 = V.reshape(k, m, V.shape[1])
    inner = np.where(up, rows.at_supply(V3, lambda t: t.rising[:, 0], rows.rising_thr[:, 0], idx),
                     rows.at_supply(V3, lambda t: t.falling[:, 2], rows.falling_thr[:, 2], idx))
    outer = np.where(up, rows.at_supply(V3, lambda t: t.rising[:, 2], rows.rising_thr[:, 2], idx),
                     rows.at_supply(V3, lambda t: t.falling[:, 0], rows.falling_thr[:, 0], idx))
    direction = np.repeat(np.where(rising[idx], 1.0, -1.0), m)
    t_in = single_cap_times(parts, inner.ravel(), direction).t.reshape(k, m)
    t_out = single_cap_times(parts, outer.ravel(), direction).t.reshape(k, m)
    fast = np.where(np.isnan(t_in), np.inf, t_in)
    slow = np.where(np.isnan(t_out), np.inf, t_out)
    f.rising[edge] = rising
    # The level the edge starts from at the nominal corner (the leakage midpoint of its direction).
    f.start[edge] = nominal[a][2] - 0.5 * (lo + hi) * nominal[a][3]
    f.fast[edge] = np.full(n, np.inf)
    f.fast[edge][idx] = fast.min(axis=1)
    f.slow[edge] = np.zeros(n)
    f.slow[edge][idx] = slow.max(axis=1)
    back = _pull_back_floors(model, rows, reqs, edge, V, np.where(up, 1.0, -1.0), inner, outer, idx)
    f.back[edge] = np.zeros(n)
    f.back[edge][idx] = back.max(axis=1)
    first = np.cumsum([0] + rows.sizes[:-1])
    for q, r in enumerate(reqs):
        if r.all_edges:
            j, bt = int(np.searchsorted(idx, first[q])), bits[q]
            for i in {int(np.argmin(fast[j])), int(np.argmax(slow[j])), int(np.argmax(back[j]))}:
                learned[q] |= _add(r.screen.edge_bits[edge], bt[i] if i < bt.shape[0] else bt[0])


def _pull_back_floors(model: LinearModel, rows: _Rows, reqs: Sequence[Request], edge: Edge, V: np.ndarray,
                      d: np.ndarray, inner: np.ndarray, outer: np.ndarray, idx: np.ndarray) -> np.ndarray:
    """(k, m): at each vertex of the rows `idx`, the least capacitor factor at which
    bounce-window's closure-and-opening reading can pass this edge (an input with
    hysteresis; the rule passes an edge by that reading or by its own time), and inf
    where the reading does not apply (a plain input). Optimistic as the rest: the
    vertices are a subset of the reading's box (it spans both levels' leakage)."""
    k, m = inner.shape
    out = np.full((k, m), np.inf)
    schmitt = limits_of(reqs, "schmitt")[idx] > 0
    if not schmitt.any() or model.k != 1 or model.rx < 0:  # the reading needs the capacitor to follow
        return out
    opposite = np.where(d > 0, rows.at_supply(V.reshape(k, m, -1), lambda t: t.falling[:, 2],
                                              rows.falling_thr[:, 2], idx),
                        rows.at_supply(V.reshape(k, m, -1), lambda t: t.rising[:, 0], rows.rising_thr[:, 0], idx))
    per_row = lambda a: np.repeat(a[idx], m)  # noqa: E731
    dd = np.repeat(d.ravel(), m) if d.size == k else d.ravel()
    pairs = threshold_pairs(dd, inner.ravel(), outer.ravel(), opposite.ravel(), per_row(limits_of(reqs, "hysteresis")))
    back = bounce_state(reqs[0].screen.stage, edge)  # the throws are structural: one for the group
    floor = pull_back_floor(model, edge, back, V, dd, pairs, per_row(limits_of(reqs, "need")),
                            per_row(limits_of(reqs, "min_closure"))).reshape(k, m)
    return np.where(schmitt[:, None], floor, np.inf)


# ---------------------------------------------------------------- helpers

def _structure(stage: Stage, model: LinearModel) -> tuple[list[int], dict[ActuatorState, list[int]],
                                                          dict[ActuatorState, bool], list[Edge]]:
    """Pull resistor columns, closed throws per state, whether the receiver floats in each
    state (no DC path, as dc_solve decides it), and the edges that are timed."""
    circuit = stage.circuit
    pull_cols = [i for i, r in enumerate(circuit.resistors) if r.role in PULL_ROLES]
    closed = {s: [j for j, t in enumerate(circuit.throws) if t.closed_when == s] for s in ACTUATOR_STATES}
    floating = {s: bool(model.rx >= 0 and not model.topology(s, ()).dc_nodes[model.rx]) for s in ACTUATOR_STATES}
    timed = [e for e, (a, b) in EDGE_STATES.items() if not (floating[a] or floating[b])]
    return pull_cols, closed, floating, timed


def _tolerance_factors(stage: Stage) -> tuple[tuple[str, ...], np.ndarray, np.ndarray, np.ndarray]:
    """Parameter names, nominal values, and each one's low and high limit as a factor."""
    names, nom, lo, hi = param_table(stage.circuit)
    nom_a = np.array(nom)  # float64: param_table always ends with a leakage column of 0.0
    safe = np.where(nom_a != 0.0, nom_a, 1.0)
    return (names, nom_a, np.where(nom_a != 0.0, np.array(lo) / safe, 1.0),
            np.where(nom_a != 0.0, np.array(hi) / safe, 1.0))


def _all_bits(columns: tuple[int, ...], p: int, exclude: set[int] | None = None) -> np.ndarray:
    """Every vertex over `columns` (less `exclude`) as bit rows over all p parameter columns."""
    cols = [c for c in columns if not exclude or c not in exclude]
    u = len(cols)
    idx = np.arange(2 ** u)[:, None]
    bits = np.zeros((2 ** u, p), dtype=np.int8)
    bits[:, cols] = (idx >> np.arange(u)[None, :]) & 1
    return bits


def _add(bits: list[np.ndarray], new: np.ndarray) -> bool:
    if any(np.array_equal(b, new) for b in bits):
        return False
    bits.append(new.copy())
    return True


def _time(x: float) -> float | None:
    return None if not math.isfinite(x) else x


def _same(a: float, b: float) -> bool:
    """Equal up to rounding, at any scale (zero only to zero)."""
    return abs(a - b) <= _AGREE_REL * max(abs(a), abs(b))


def _close(a: float | None, b: float | None) -> bool:
    if a is None or b is None:
        return a is None and b is None
    return abs(a - b) <= _AGREE_ABS + _AGREE_REL * max(abs(a), abs(b))
