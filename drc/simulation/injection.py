"""Bounce injection: drive one stage with random contact chatter and count output edges.

The analysis answers "how long does an edge take"; this module answers the
question a designer then asks: "does the receiver's output switch exactly once
when this contact bounces?". Each trial draws a press and a release bounce
train (drc.simulation.chatter) and integrates the stage's circuit exactly between the
switching instants (drc.simulation.modes: closed form per linear state, all
trials at once). How the pin reads its voltage is drc.simulation.readers:

- a Schmitt input switches at VT+ typ going up and VT- typ going down;
- a plain input switches at the middle of its VIL-VIH band, and an actuation
  whose voltage stays inside the band longer than the family's transition
  limit allows (its s/V limit times the band's width) is not clean whatever
  its edge count: the same story as the slow-edge rule tells of the check;
- a latch stage simulates the latch: both inputs of the cross-coupled pair
  (this pin and the contact's other throw, through the same circuit), the
  gates' truth table at every input change, and the stage's own gate's
  output edges counted; a latch whose gates or other input are not known is
  reported as not simulated, never as unclean.

While the contact bounces during a press it alternates between its pressed
state and "no throw closed" (a changeover's common between its throws); a
contact whose new state closes nothing (a normally-open contact released)
re-makes into its old state instead. Bursts are made of intervals of at
least 1 µs (chatter.INTERVAL_S, the analysis' minimum closure for a
first-edge stage; `min_closure_s` sets another, `drc simulate` passes the
[limits] min-closure), so a stage with a capacitor across its contact is
counted by the same reading the check applies, and the result's notes give
that reading's figure (how long an opening must last to bring the input
back) against the longest interval drawn: the check's worst case is one
opening as long as the bounce, at the fastest corner, which random chatter
of at most 1 ms intervals never draws. Leakage and the starting steady state
follow the analysis' convention for each edge (drc.analysis.stage_analysis.edge_setup),
at the nominal corner. `chatter_deck` writes one recorded trial as an ngspice
deck (drc.simulation.spice_deck's element lines, with the chatter as PWL
controls), and `replay_trial` integrates the same schedule, so the two can be
compared. drc.report.simulation_view words a result.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace

import numpy as np

from drc.analysis.physics.compiled import compile_circuit
from drc.analysis.physics.mna import cap_voltages, dc_solve
from drc.analysis.receiver import ReceiverElectrical
from drc.analysis.results import EDGE_STATES, Edge
from drc.analysis.stage_analysis import EdgeSetup, edge_setup
from drc.board.stage import Stage
from drc.errors import UsageError
from drc.library.catalogue import Library
from drc.simulation.chatter import INTERVAL_S, ChatterTrial, draw_trains, train_from_row
from drc.simulation.modes import Mode
from drc.simulation.readers import Band, Latch, Thresholds
from drc.simulation.spice_deck import deck_number, stage_deck

TRANSIT = "transit"  # no throw closed: a topology state the model builds like any other
SETTLE_TAUS = 40.0  # e^-40: the last interval of an actuation runs until nothing moves
_DECK_SETTLE_TAUS = 16.0  # e^-16 = 1e-7 of the swing left when the deck's next actuation starts
_DECK_PRESS_AT = 100e-6  # s: the deck's first toggle, after a short quiet start
_DECK_HALF_EDGE = 0.5e-9  # s: half the PWL control ramp; the switch flips mid-ramp, at the instant
_DECK_MAX_POINTS = 250_000


# ---------------------------------------------------------------- results

@dataclass(frozen=True, slots=True)
class EdgeStatistics:
    """Output edges per actuation of one kind over all trials.

    clean_trials: exactly one output edge and no lingering; missed_trials: none
    at all (the level never crosses); lingering_trials: the input stayed in a
    plain input's undefined band longer than the transition limit allows
    (longest_stay_s: the longest such stay of any trial); histogram: number of
    output edges -> trials.
    """

    edge: Edge
    trials: int
    clean_trials: int
    missed_trials: int
    max_edges: int
    mean_edges: float
    histogram: dict[int, int]
    lingering_trials: int = 0
    longest_stay_s: float = 0.0  # the longest stay in a plain input's band, over all trials


@dataclass(frozen=True, slots=True)
class LatchGates:
    """What a latch stage's simulation needs beyond the stage: the net of the other gate's
    input (the contact's other throw) and the gates' logic, "nand" or "nor"."""

    partner_net: str
    logic: str


@dataclass(frozen=True, eq=False)
class SimulationResult:
    """The outcome of `simulate_stage`. clean_trials: both actuations clean.

    simulated: False when the stage could not be simulated as what it is (a
    latch whose gates are not known): no trials were run and `notes` says why.
    receiver_model: "schmitt", "plain" (one switching point and the undefined
    VIL-VIH band) or "latch". band_v / linger_limit_s: a plain input's band and
    the longest stay in it an actuation may make (None: no limit known).
    """

    stage: str
    kind: str
    contact_class: str
    trials: int
    seed: int
    bounce_s: float
    receiver_model: str
    upper_v: float  # VT+ typ (or the single threshold)
    lower_v: float  # VT- typ (or the single threshold)
    edges: dict[Edge, EdgeStatistics]
    clean_trials: int
    worst_trial: int
    worst_edges: dict[Edge, int]
    notes: tuple[str, ...] = ()
    trains: dict[Edge, np.ndarray] = field(default_factory=dict, repr=False)
    simulated: bool = True
    band_v: tuple[float, float] | None = None
    linger_limit_s: float | None = None

    def trial(self, index: int) -> ChatterTrial:
        """The recorded bounce trains of one trial (e.g. the worst) for replay or a deck."""
        return ChatterTrial(index, train_from_row(Edge.PRESS, self.trains[Edge.PRESS][index]),
                            train_from_row(Edge.RELEASE, self.trains[Edge.RELEASE][index]))


@dataclass(frozen=True, slots=True)
class TrialReplay:
    """One trial integrated on the deck's schedule (absolute times from t = 0).

    instants: every toggle of both actuations; v_before: the receiver voltage
    just before each toggle; edges: output edges per actuation.
    """

    instants: tuple[float, ...]
    v_before: tuple[float, ...]
    v_end: float
    t_stop: float
    leak_switch_s: float
    release_at: float
    edges: dict[Edge, int]
    upper_v: float
    lower_v: float
    receiver_model: str


# ---------------------------------------------------------------- the stage

class _StageSystem:
    """A compiled stage with its modes, how its pins read, and per-edge parameter rows."""

    def __init__(self, stage: Stage, rx: ReceiverElectrical, latch: LatchGates | None = None):
        self.stage = stage
        self.model = compile_circuit(stage.circuit)
        if self.model.has_diodes:
            diodes = ", ".join(d.designator for d in self.model.circuit.diodes)
            raise UsageError(f"cannot simulate {stage.name}: chatter simulation covers stages without "
                             f"diodes, TTL inputs or conducting clamps (here: {diodes})")
        self.setups: dict[Edge, EdgeSetup] = {}
        for edge in EDGE_STATES:
            try:
                self.setups[edge] = edge_setup(self.model, rx, edge)
            except ValueError as exc:
                raise UsageError(f"cannot simulate {stage.name}: {exc}") from None
        self.schmitt = rx.schmitt
        if rx.schmitt:
            self.reader = Thresholds(rx.rising_threshold[1], rx.falling_threshold[1], rx.vcc)
        else:
            self.reader = Thresholds(rx.rising_threshold[1], rx.rising_threshold[1], rx.vcc)
        # A plain input's undefined band and the longest stay in it the transition limit allows.
        self.band: tuple[float, float, float] | None = None
        if not rx.schmitt and rx.transition_limit_s_per_v is not None:
            low, high = rx.vil_max, rx.vih_min
            self.band = (low, high, rx.transition_limit_s_per_v * (high - low))
        self.latch = latch
        nodes = [self.model.node_code(stage.circuit.receiver_node)]
        if latch is not None:
            nodes.append(self.model.node_code(latch.partner_net))
        self.nodes = tuple(nodes)
        self._modes: dict[tuple, Mode] = {}
        throws = stage.circuit.throws
        self.alternate: dict[Edge, str] = {}
        for edge, (a, b) in EDGE_STATES.items():
            # Bouncing on the new throw opens it (all open); a new state that
            # closes nothing can only re-make into the old one.
            self.alternate[edge] = TRANSIT if any(t.closed_when == b for t in throws) else a

    @property
    def model_name(self) -> str:
        return "latch" if self.latch else ("schmitt" if self.schmitt else "plain")

    def row(self, edge: Edge) -> np.ndarray:
        return self.setups[edge].box.nominal

    def mode(self, state: str, edge: Edge) -> Mode:
        key = (state, edge)
        if key not in self._modes:
            self._modes[key] = Mode(self.model, state, self.row(edge), self.nodes)
        return self._modes[key]

    def modes_for(self, edge: Edge) -> tuple[Mode, Mode]:
        """(the new state, the bounce state) of an actuation."""
        return self.mode(EDGE_STATES[edge][1], edge), self.mode(self.alternate[edge], edge)

    def start(self, edge: Edge) -> tuple[np.ndarray, np.ndarray]:
        """Capacitor voltages and watched voltages of the steady state before `edge`."""
        dc = dc_solve(self.model, EDGE_STATES[edge][0], self.row(edge)[None, :])
        volts = np.array([dc.v[0, n] if n >= 0 else dc.vfix[0, -1 - n] for n in self.nodes])
        return cap_voltages(self.model, dc)[0], volts

    def taus(self) -> list[float]:
        out = []
        for edge in EDGE_STATES:
            for m in self.modes_for(edge):
                out += m.taus()
        out += self.mode(EDGE_STATES[Edge.RELEASE][0], Edge.RELEASE).taus()
        return [t for t in out if math.isfinite(t) and t > 0]


# ---------------------------------------------------------------- one actuation for many trials

class _Run:
    """The pins' readings, the output edges and the band stays of N trials, across intervals."""

    def __init__(self, system: _StageSystem, volts: np.ndarray):
        self.system = system
        n = volts.shape[0]
        reader = system.reader
        self.state = [reader.initial(volts[:, j]) for j in range(volts.shape[1])]
        self.edges = np.zeros(n, dtype=np.int64)
        self.band = Band(system.band[0], system.band[1], n) if system.band else None
        self.latch = Latch(system.latch.logic, self.state[0], self.state[1]) if system.latch else None

    def begin_actuation(self) -> None:
        self.edges = np.zeros_like(self.edges)
        if self.band is not None:
            self.band.reset()

    def lingering(self) -> np.ndarray:
        if self.band is None or self.system.band is None:
            return np.zeros(self.edges.shape[0], dtype=bool)
        return self.band.longest > self.system.band[2]

    def interval(self, mode: Mode, u: np.ndarray, dt: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Run every valid trial (dt not NaN) through one interval of `mode`; returns
        (capacitor voltages after it, receiver voltage at its end)."""
        valid = ~np.isnan(dt)
        span = np.where(valid, dt, 0.0)
        z0 = mode.to_z(u)
        v0 = mode.volts(z0)
        self._jump(v0, valid)  # the toggle itself
        cuts = mode.pieces(z0, span)
        points = np.column_stack([np.zeros_like(span), cuts, span])
        ta, va = points[:, 0], v0
        for j in range(1, points.shape[1]):
            tb = points[:, j]
            ok = valid & ~np.isnan(tb)
            tb_safe = np.where(ok, tb, ta)
            vb = mode.at(z0, tb_safe)
            self._piece(mode, z0, ta, tb_safe, va, vb, ok)
            ta, va = np.where(ok, tb_safe, ta), np.where(ok[:, None], vb, va)
        z1 = mode.advance(z0, span)
        u1 = np.where(valid[:, None], mode.to_u(z1), u)
        return u1, np.where(valid, mode.volts(z1)[:, 0], np.nan)

    def _jump(self, v: np.ndarray, valid: np.ndarray) -> None:
        flips = [self.system.reader.flips(s, v[:, j]) & valid for j, s in enumerate(self.state)]
        self._apply(flips)
        if self.band is not None:  # a jump out of the band ends a stay
            self.band.run = np.where(valid & ~self.band.inside(v[:, 0]), 0.0, self.band.run)

    def _piece(self, mode: Mode, z0: np.ndarray, ta: np.ndarray, tb: np.ndarray, va: np.ndarray,
               vb: np.ndarray, ok: np.ndarray) -> None:
        """One piece where every watched voltage is monotonic."""
        if self.band is not None:
            enter, leave = self._band_stay(mode, z0, ta, tb, va[:, 0], vb[:, 0], ok)
            self.band.piece(ta, tb, enter, leave, ok)
        reader = self.system.reader
        flips = [reader.flips(s, vb[:, j]) & ok for j, s in enumerate(self.state)]
        if len(flips) == 1:
            self._apply(flips)
            return
        both = flips[0] & flips[1]
        first_this = np.ones_like(both)
        if both.any():
            idx = np.flatnonzero(both)
            times = [mode.crossing(z0[idx], j, ta[idx], tb[idx], reader.level(self.state[j][idx]),
                                   vb[idx, j] > va[idx, j]) for j in (0, 1)]
            first_this[idx] = times[0] <= times[1]
        self._apply([flips[0] & (~flips[1] | first_this), flips[1] & (~flips[0] | ~first_this)])
        self._apply([both & ~first_this, both & first_this])

    def _apply(self, flips: list[np.ndarray]) -> None:
        """Flip the readings where given; count the edges of the stage's output."""
        for j, f in enumerate(flips):
            self.state[j] = self.state[j] ^ f
        if self.latch is None:
            self.edges += flips[0]
            return
        changed = self.latch.update(self.latch.asserted(self.state[0]), self.latch.asserted(self.state[1]))
        self.edges += changed & (flips[0] | flips[1])

    def _band_stay(self, mode: Mode, z0: np.ndarray, ta: np.ndarray, tb: np.ndarray, va: np.ndarray,
                   vb: np.ndarray, ok: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """[enter, leave] of the receiver voltage's stay in the band during a monotonic piece."""
        assert self.band is not None
        low, high = self.band.low, self.band.high
        up = vb >= va
        touches = ok & np.where(up, (va <= high) & (vb >= low), (va >= low) & (vb <= high))
        edge_in = np.where(up, low, high)  # the band edge it comes in through
        edge_out = np.where(up, high, low)
        starts_in = np.where(up, va >= low, va <= high)
        ends_in = np.where(up, vb <= high, vb >= low)
        enter = np.where(touches & starts_in, ta, np.nan)
        leave = np.where(touches & ends_in, tb, np.nan)
        for target, level, want in ((enter, edge_in, touches & ~starts_in), (leave, edge_out, touches & ~ends_in)):
            idx = np.flatnonzero(want)
            if idx.size:
                target[idx] = mode.crossing(z0[idx], 0, ta[idx], tb[idx], level[idx], up[idx])
        return enter, leave


def _settle_s(system: _StageSystem, bounce_s: float) -> float:
    taus = system.taus()
    return SETTLE_TAUS * max(taus) if taus else max(bounce_s, 1e-6)


def _actuation(run: _Run, system: _StageSystem, edge: Edge, toggles: np.ndarray, tail_s: np.ndarray,
               u: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """One actuation (toggles (N, M) NaN-padded, then `tail_s`): the capacitor voltages after
    it and the receiver voltage at the end of each interval (N, M)."""
    new, bounce = system.modes_for(edge)
    nxt = np.concatenate([toggles[:, 1:], np.full((toggles.shape[0], 1), np.nan)], axis=1)
    dt = nxt - toggles
    last = ~np.isnan(toggles) & np.isnan(nxt)
    dt = np.where(last, tail_s[:, None], dt)
    v_end = np.full(toggles.shape, np.nan)
    for j in range(toggles.shape[1]):
        if np.isnan(dt[:, j]).all():
            continue
        u, v_end[:, j] = run.interval(new if j % 2 == 0 else bounce, u, dt[:, j])
    return u, v_end


def _statistics(edge: Edge, counts: np.ndarray, lingering: np.ndarray, stays: np.ndarray) -> EdgeStatistics:
    values, freq = np.unique(counts, return_counts=True)
    return EdgeStatistics(
        edge=edge, trials=int(counts.size), clean_trials=int(np.sum((counts == 1) & ~lingering)),
        missed_trials=int(np.sum(counts == 0)), max_edges=int(counts.max(initial=0)),
        mean_edges=float(counts.mean()) if counts.size else 0.0,
        histogram={int(v): int(f) for v, f in zip(values, freq, strict=True)},
        lingering_trials=int(np.sum(lingering)), longest_stay_s=float(stays.max(initial=0.0)))


def latch_gates(stage: Stage, library: Library) -> LatchGates | None:
    """A latch stage's gates: the logic from its part's title ("NAND", "NOR" in
    rules/parts.toml) and the other input's net (the free end of the contact's other
    throw). None when either is not known."""
    part = library.part_types.get(stage.receiver.part_type)
    title = part.title.upper() if part else ""
    logic = "nand" if "NAND" in title else ("nor" if "NOR" in title else None)
    fixed = {"0", *(r.net for r in stage.circuit.rails)}
    ends = [t.b if t.a in fixed else t.a for t in stage.circuit.throws]
    node = stage.circuit.receiver_node
    if logic is None or len(ends) != 2 or node not in ends or ends[0] == ends[1]:
        return None
    return LatchGates(ends[1] if ends[0] == node else ends[0], logic)


def not_simulated(stage: Stage, rx: ReceiverElectrical, reason: str, seed: int = 0,
                  bounce_s: float | None = None) -> SimulationResult:
    """A result that says the stage was not simulated, and why (no trials, no verdict)."""
    empty = {e: EdgeStatistics(e, 0, 0, 0, 0, 0.0, {}) for e in EDGE_STATES}
    return SimulationResult(
        stage=stage.name, kind=stage.kind, contact_class=stage.contact.contact_class, trials=0, seed=seed,
        bounce_s=stage.contact.bounce_s if bounce_s is None else float(bounce_s),
        receiver_model="latch" if stage.kind == "latch" else ("schmitt" if rx.schmitt else "plain"),
        upper_v=rx.rising_threshold[1], lower_v=rx.falling_threshold[1], edges=empty, clean_trials=0,
        worst_trial=0, worst_edges={e: 0 for e in EDGE_STATES}, notes=(f"not simulated: {reason}",),
        simulated=False)


def simulate_stage(stage: Stage, rx: ReceiverElectrical, *, trials: int = 1000, seed: int = 0,
                   bounce_s: float | None = None, latch: LatchGates | None = None,
                   min_closure_s: float | None = None) -> SimulationResult:
    """Inject `trials` random press and release bounce trains; count the receiver's output edges.

    bounce_s: the longest burst (default: the contact's bounce time). latch: for a
    latch stage, its gates (without them the result says "not simulated").
    min_closure_s: the shortest make or break interval (default 1 µs, the analysis'
    minimum closure). The nominal corner is simulated (typical thresholds, nominal parts).
    """
    if trials < 1:
        raise UsageError(f"trials must be at least 1, not {trials}")
    if stage.kind == "latch" and latch is None:
        return not_simulated(stage, rx, "a latch stage needs its gates (their logic and the other input); "
                                        "none are known for this stage", seed, bounce_s)
    bounce = stage.contact.bounce_s if bounce_s is None else float(bounce_s)
    if not (bounce >= 0 and math.isfinite(bounce)):
        raise UsageError(f"bounce time must be a non-negative number of seconds, not {bounce_s!r}")
    interval = (min_closure_s or INTERVAL_S[0], INTERVAL_S[1])
    model = compile_circuit(stage.circuit)
    if model.has_diodes:
        for edge in EDGE_STATES:
            try:
                edge_setup(model, rx, edge)
            except ValueError as exc:
                raise UsageError(f"cannot simulate {stage.name}: {exc}") from None
        return _with_diodes(stage, rx, model.circuit.diodes, interval, seed, bounce, latch is not None)
    system = _StageSystem(stage, rx, latch)
    rng = np.random.default_rng(seed)
    settle = _settle_s(system, bounce)
    trains: dict[Edge, np.ndarray] = {}
    counts: dict[Edge, np.ndarray] = {}
    lingering: dict[Edge, np.ndarray] = {}
    stays: dict[Edge, np.ndarray] = {}
    for edge in EDGE_STATES:
        toggles = draw_trains(rng, trials, bounce, interval_s=interval)
        trains[edge] = toggles
        u0, v0 = system.start(edge)
        run = _Run(system, np.tile(v0, (trials, 1)))
        _actuation(run, system, edge, toggles, np.full(trials, settle), np.tile(u0, (trials, 1)))
        counts[edge], lingering[edge] = run.edges, run.lingering()
        stays[edge] = run.band.longest if run.band is not None else np.zeros(trials)
    clean_each = {e: (counts[e] == 1) & ~lingering[e] for e in EDGE_STATES}
    total = counts[Edge.PRESS] + counts[Edge.RELEASE]
    clean = int(np.sum(clean_each[Edge.PRESS] & clean_each[Edge.RELEASE]))
    worst = int(np.argmax(total))
    return SimulationResult(
        stage=stage.name, kind=stage.kind, contact_class=stage.contact.contact_class,
        trials=trials, seed=seed, bounce_s=bounce, receiver_model=system.model_name,
        upper_v=system.reader.upper, lower_v=system.reader.lower,
        edges={e: _statistics(e, counts[e], lingering[e], stays[e]) for e in EDGE_STATES}, clean_trials=clean,
        worst_trial=worst, worst_edges={e: int(counts[e][worst]) for e in EDGE_STATES},
        notes=tuple(_notes(stage, system) + _reading_notes(stage, rx, interval, system)), trains=trains,
        band_v=(system.band[0], system.band[1]) if system.band else None,
        linger_limit_s=system.band[2] if system.band else None)


def _with_diodes(stage: Stage, rx: ReceiverElectrical, diodes, interval: tuple[float, float], seed: int,
                 bounce: float, latch: bool) -> SimulationResult:
    """A stage with diodes (a board's, a TTL input's, a clamp's) is not simulated (the
    trials are solved in closed form per linear state); the result says why, and what
    the check's closure-and-opening reading says of its first edges."""
    names = ", ".join(d.designator for d in diodes)
    out = not_simulated(stage, rx, f"chatter simulation covers stages without diodes, TTL inputs or "
                                   f"conducting clamps (here: {names}); the check's readings apply", seed, bounce)
    notes = out.notes + tuple(_reading_notes(stage, rx, interval, latch, simulated=False))
    return replace(out, notes=notes)


def _reading_notes(stage: Stage, rx: ReceiverElectrical, interval: tuple[float, float],
                   system: _StageSystem | bool, simulated: bool = True) -> list[str]:
    """What the check's closure-and-opening reading says of the same stage at this corner:
    the opening (or re-closure) that brings the input back, against the longest drawn here
    (system: the simulated stage, or whether it is a latch when it was not simulated)."""
    latch = system if isinstance(system, bool) else system.latch is not None
    if latch or not rx.schmitt:
        return []
    from drc.analysis.first_edge import pull_back
    out = []
    for edge in EDGE_STATES:
        pb = pull_back(stage, rx, edge, interval[0])
        if pb is None or pb.nominal_s is None or pb.first_crossing_s is None or pb.first_crossing_s > interval[0]:
            continue  # only an edge that crosses within one closure (a first-edge stage)
        way = "opening" if pb.bounce_state == TRANSIT or edge == Edge.PRESS else "re-closure"
        verdict = ("so none drawn here can" if pb.nominal_s > interval[1]
                   else "so the trials with a longer one count extra edges")
        tail = (f"intervals drawn here last {_seconds(interval[0])} to {_seconds(interval[1])}, {verdict}"
                if simulated else f"after a {_seconds(interval[0])} closure, at the nominal corner")
        out.append(f"{edge} crosses at once (a first-edge stage); after that an {way} longer than "
                   f"{_seconds(pb.nominal_s)} brings the input back across the other threshold (the check's "
                   f"closure-and-opening reading, {tail}); the check's worst case is one as long as the "
                   f"bounce, at the fastest corner")
    return out


def _seconds(t: float) -> str:
    for unit, scale in (("s", 1.0), ("ms", 1e-3), ("µs", 1e-6), ("ns", 1e-9)):
        if t >= scale:
            return f"{t / scale:.3g} {unit}"
    return f"{t:.3g} s"


def _notes(stage: Stage, system: _StageSystem) -> list[str]:
    notes = []
    if system.model.k >= 3:
        notes.append("three or more capacitors: crossings inside an interval are checked on a grid "
                     "of the stage's time constants, not exactly")
    if system.latch is not None:
        notes.append(f"latch: the cross-coupled {system.latch.logic.upper()} pair is simulated with both "
                     f"inputs (this pin and {system.latch.partner_net}); edges are the output of this "
                     f"pin's gate")
    if not system.schmitt and system.band is None:
        notes.append("plain input with no transition limit known: the VIL-VIH band is not timed")
    if stage.kind == "firmware":
        notes.append("firmware: edges are counted at the pin, before the firmware's debounce")
    if stage.kind == "dedicated":
        notes.append("dedicated debouncer: edges are counted at its input, before it filters them")
    return notes


# ---------------------------------------------------------------- one trial on a fixed schedule

@dataclass(frozen=True, slots=True)
class _Schedule:
    press_at: float
    hold: float
    leak_switch: float
    release_at: float
    t_stop: float
    settle: float


def _schedule(system: _StageSystem, trial: ChatterTrial) -> _Schedule:
    taus = system.taus()
    settle = _DECK_SETTLE_TAUS * max(taus) if taus else 10e-6
    press_at = _DECK_PRESS_AT
    hold = 2.0 * (trial.press.duration_s + settle)
    release_at = press_at + hold
    return _Schedule(press_at, hold, press_at + 0.5 * hold, release_at,
                     release_at + trial.release.duration_s + settle, settle)


def replay_trial(stage: Stage, rx: ReceiverElectrical, trial: ChatterTrial,
                 latch: LatchGates | None = None) -> TrialReplay:
    """Integrate one trial on the same schedule `chatter_deck` writes (press, hold, release)."""
    system = _StageSystem(stage, rx, latch)
    sch = _schedule(system, trial)
    u, v0 = system.start(Edge.PRESS)
    run = _Run(system, v0[None, :])
    u = u[None, :]
    edges: dict[Edge, int] = {}
    v_before = [float(v0[0])]
    # press: its toggles, the last interval running to the leakage switch
    tp = np.array([trial.press.toggles])
    u, v_end = _actuation(run, system, Edge.PRESS, tp, np.array([sch.leak_switch - sch.press_at - tp[0, -1]]), u)
    edges[Edge.PRESS] = int(run.edges[0])
    v_before += [float(x) for x in v_end[0, :-1]]
    # hold: pressed, with the release edge's leakage, until the release train starts
    run.begin_actuation()
    held = system.mode(EDGE_STATES[Edge.RELEASE][0], Edge.RELEASE)
    u, v_held = run.interval(held, u, np.array([sch.release_at - sch.leak_switch]))
    hold_edges = int(run.edges[0])
    v_before.append(float(v_held[0]))
    run.begin_actuation()
    tr = np.array([trial.release.toggles])
    u, v_end = _actuation(run, system, Edge.RELEASE, tr, np.array([sch.t_stop - sch.release_at - tr[0, -1]]), u)
    # A late edge while held belongs to neither actuation: it is counted with the release.
    edges[Edge.RELEASE] = int(run.edges[0]) + hold_edges
    v_before += [float(x) for x in v_end[0, :-1]]
    instants = tuple(sch.press_at + t for t in trial.press.toggles) + \
        tuple(sch.release_at + t for t in trial.release.toggles)
    return TrialReplay(instants=instants, v_before=tuple(v_before), v_end=float(v_end[0, -1]),
                       t_stop=sch.t_stop, leak_switch_s=sch.leak_switch, release_at=sch.release_at,
                       edges=edges, upper_v=system.reader.upper, lower_v=system.reader.lower,
                       receiver_model=system.model_name)


# ---------------------------------------------------------------- the ngspice deck of one trial

def _time(t: float) -> str:
    """A time with 15 significant figures: the 1 ns control ramps stay distinct after a second."""
    return f"{t:.15g}"


def _pwl(points: list[tuple[float, float]]) -> str:
    return "PWL(" + " ".join(f"{_time(t)} {v:g}" for t, v in points) + ")"


def _control_points(instants: list[float], levels: list[int], initial: int) -> list[tuple[float, float]]:
    """A PWL that holds `initial`, then ramps to levels[i] across each instant (mid-ramp = instant)."""
    pts = [(0.0, float(initial))]
    now = initial
    for t, lv in zip(instants, levels, strict=True):
        if lv == now:
            continue
        pts.append((t - _DECK_HALF_EDGE, float(now)))
        pts.append((t + _DECK_HALF_EDGE, float(lv)))
        now = lv
    return pts


def _stage_elements(deck: str) -> tuple[str | None, list[str]]:
    """The receiver node a stage deck measures, and its lines without its controls,
    analysis and measurements (the chatter deck writes its own)."""
    node = None
    kept: list[str] = []
    for line in deck.splitlines():
        if line.startswith(".meas") and " TARG " in line:
            node = line.split(" TARG ", 1)[1].split()[0]
        if line.startswith(("Vctl ", "Vctlb ", ".tran", ".meas", ".end", "* t_press", "* t_release",
                            "* Look for", "* edge (control", "* A '.meas", "* ctl is")):
            continue
        kept.append(line)
    return node, kept


def _toggle_states(system: _StageSystem, sch: _Schedule, trial: ChatterTrial) -> tuple[list[float], list[str]]:
    """Every toggle's instant and the contact's state after it: a burst alternates
    between the new state and the bounce state."""
    instants: list[float] = []
    states: list[str] = []
    for edge, at in ((Edge.PRESS, sch.press_at), (Edge.RELEASE, sch.release_at)):
        new, old = EDGE_STATES[edge][1], system.alternate[edge]
        for i, t in enumerate(trial.train(edge).toggles):
            instants.append(at + t)
            states.append(new if i % 2 == 0 else old)
    return instants, states


def chatter_deck(stage: Stage, rx: ReceiverElectrical, trial: ChatterTrial) -> str:
    """A standalone ngspice deck of `stage` replaying one chatter trial.

    The stage's elements come from drc.simulation.spice_deck (nominal corner); the
    contact's throws are driven by PWL controls that follow the trial's
    toggles; `.meas` lines report the receiver voltage just before every
    toggle and the first and last threshold crossing of each actuation.
    """
    system = _StageSystem(stage, rx)
    sch = _schedule(system, trial)
    replay = replay_trial(stage, rx, trial)
    node, kept = _stage_elements(stage_deck(stage, rx, corner="nominal", press_at=sch.press_at, hold=sch.hold))
    if node is None:
        raise UsageError(f"cannot write a chatter deck for {stage.name}: the stage deck has no receiver node")
    instants, states = _toggle_states(system, sch, trial)
    ctl = _control_points(instants, [1 if s == "pressed" else 0 for s in states], 0)
    ctlb = _control_points(instants, [1 if s == "released" else 0 for s in states], 1)

    taus = system.taus()
    t_max = min(taus) / 50.0 if taus else sch.t_stop / 2000.0
    t_max = max(t_max, sch.t_stop / _DECK_MAX_POINTS)
    up, lo = replay.upper_v, replay.lower_v
    thresholds = (f"VT+ {deck_number(up)} V and VT- {deck_number(lo)} V (typical; Schmitt input)" if up != lo
                  else f"{deck_number(up)} V (typical switching point of a plain input: every crossing counts)")
    header = [
        f"* drc chatter deck: {stage.name} ({stage.kind}), trial {trial.index}, nominal corner",
        f"* Receiver node {node}; thresholds {thresholds}.",
        f"* Press burst: {len(trial.press.toggles)} toggles from {deck_number(sch.press_at)} s; release burst: "
        f"{len(trial.release.toggles)} toggles from {deck_number(sch.release_at)} s; leakage switches at "
        f"{deck_number(sch.leak_switch)} s.",
        f"* drc's event integration counts {replay.edges[Edge.PRESS]} output edge(s) on press and "
        f"{replay.edges[Edge.RELEASE]} on release; one each means this burst is debounced.",
        "* Look for: vNNN = the receiver voltage just before toggle NNN; press_first/press_last and",
        "* release_first/release_last = the first and last threshold crossing of each actuation.",
        "* Several crossings alternating through both thresholds mean several output edges.",
    ]
    lines = header + kept
    lines += [
        "* ctl is 1 V while the contact rests on its pressed throw(s), ctlb while on its released",
        "* throw(s); both 0 V while a changeover's common is between throws",
        f"Vctl ctl 0 {_pwl(ctl)}",
        f"Vctlb ctlb 0 {_pwl(ctlb)}",
        f".tran {deck_number(t_max)} {_time(sch.t_stop)} 0 {deck_number(t_max)}",
    ]
    for i, t in enumerate(instants):
        lines.append(f".meas tran v{i:03d} FIND {node} AT={_time(t - _DECK_HALF_EDGE)}")
    lines.append(f".meas tran vend FIND {node} AT={_time(sch.t_stop)}")
    for edge, start in ((Edge.PRESS, sch.press_at), (Edge.RELEASE, sch.release_at)):
        es = system.setups[edge]
        vth = up if es.direction > 0 else lo
        way = "RISE" if es.direction > 0 else "FALL"
        td = _time(start - _DECK_HALF_EDGE)
        lines.append(f"* {edge}: the receiver should {way.lower()} through {deck_number(vth)} V once")
        lines.append(f".meas tran {edge}_first WHEN {node}={deck_number(vth)} {way}=1 TD={td}")
        lines.append(f".meas tran {edge}_last WHEN {node}={deck_number(vth)} {way}=LAST TD={td}")
    lines.append(".end")
    return "\n".join(lines) + "\n"


__all__ = ["EdgeStatistics", "LatchGates", "SimulationResult", "TrialReplay", "chatter_deck", "latch_gates",
           "not_simulated", "replay_trial", "simulate_stage"]
