"""Bounce injection: drive one stage with random contact chatter and count output edges.

The analysis answers "how long does an edge take"; this module answers the
question a designer then asks: "does the receiver's output switch exactly once
when this contact bounces?". Each trial draws a press and a release bounce
train (drc.simulation.chatter) and integrates the stage's circuit exactly between the
switching instants: between two toggles the circuit is linear, so with the
capacitor voltages u carried across each toggle, the reduced system of the
physics package (C du/dt = h - Y u, receiver voltage cv + Mv u, from
drc.analysis.physics.mna.reduce_dynamic) is solved in closed form by its
eigen-decomposition, for all trials at once. The receiver is a Schmitt input
(output rises at VT+ typ, falls at VT- typ) or a plain input with one switching
point (the typical threshold, where every crossing counts). Between two
instants the receiver voltage is a sum of exponentials: with one capacitor it
is monotonic, with two its single stationary point is found in closed form, so
checking the thresholds at the instants and at that point catches every
crossing exactly; three or more capacitors are sampled on a grid of their
time constants inside each interval (noted in the result).

While the contact bounces during a press it alternates between its pressed
state and "no throw closed" (a changeover's common between its throws); a
contact whose new state closes nothing (a normally-open contact released)
re-makes into its old state instead. Leakage and the starting steady state
follow the analysis' convention for each edge (drc.analysis.stage_analysis.edge_setup),
at the nominal corner. `chatter_deck` writes one recorded trial as an ngspice
deck (drc.simulation.spice_deck's element lines, with the chatter as PWL
controls), and `replay_trial` integrates the same schedule, so the two can be
compared. drc.report.simulation_view words a result.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from drc.analysis.physics.compiled import LinearModel, compile_circuit
from drc.analysis.physics.mna import cap_voltages, dc_solve, reduce_dynamic
from drc.analysis.receiver import ReceiverElectrical
from drc.analysis.results import EDGE_STATES, Edge
from drc.analysis.stage_analysis import EdgeSetup, edge_setup
from drc.board.stage import Stage
from drc.errors import UsageError
from drc.simulation.chatter import ChatterTrial, draw_trains, train_from_row
from drc.simulation.spice_deck import deck_number, stage_deck

TRANSIT = "transit"  # no throw closed: a topology state the model builds like any other
SETTLE_TAUS = 40.0  # e^-40: the last interval of an actuation runs until nothing moves
_DECK_SETTLE_TAUS = 16.0  # e^-16 = 1e-7 of the swing left when the deck's next actuation starts
_DECK_PRESS_AT = 100e-6  # s: the deck's first toggle, after a short quiet start
_DECK_HALF_EDGE = 0.5e-9  # s: half the PWL control ramp; the switch flips mid-ramp, at the instant
_DECK_MAX_POINTS = 250_000
_GRID_FRACTIONS = np.array([0.03, 0.1, 0.3, 1.0, 3.0])  # multiples of each tau, 3+ capacitors


# ---------------------------------------------------------------- results

@dataclass(frozen=True, slots=True)
class EdgeStatistics:
    """Output edges per actuation of one kind over all trials.

    clean_trials: exactly one output edge; missed_trials: none at all (the
    level never crosses); histogram: number of output edges -> trials.
    """

    edge: Edge
    trials: int
    clean_trials: int
    missed_trials: int
    max_edges: int
    mean_edges: float
    histogram: dict[int, int]


@dataclass(frozen=True, eq=False)
class SimulationResult:
    """The outcome of `simulate_stage`. clean_trials: both actuations clean."""

    stage: str
    kind: str
    contact_class: str
    trials: int
    seed: int
    bounce_s: float
    receiver_model: str  # "schmitt" or "single-threshold"
    upper_v: float  # VT+ typ (or the single threshold)
    lower_v: float  # VT- typ (or the single threshold)
    edges: dict[Edge, EdgeStatistics]
    clean_trials: int
    worst_trial: int
    worst_edges: dict[Edge, int]
    notes: tuple[str, ...] = ()
    trains: dict[Edge, np.ndarray] = field(default_factory=dict, repr=False)

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


# ---------------------------------------------------------------- the linear system per state

class _Mode:
    """One linear configuration (actuator state, leakage) diagonalised once.

    z = Q^T (u / d) with d = C^-1/2 decouples C du/dt = h - Y u into
    dz/dt = r - lam z; the receiver voltage is c + w . z.
    """

    def __init__(self, model: LinearModel, state: str, row: np.ndarray):
        red = reduce_dynamic(model, model.topology(state, ()), row[None, :])
        k = model.k
        if model.rx >= 0:
            c = float(red.cv[0, model.rx])
            m_rx = red.Mv[0, model.rx]
        else:  # the receiver sits on a rail or ground
            c = float(red.vfix[0, -1 - model.rx])
            m_rx = np.zeros(k)
        self.c = c
        if k == 0:
            self.d = self.lam = self.r = self.w = self.zinf = np.zeros(0)
            self.Q, self.pos = np.zeros((0, 0)), np.zeros(0, dtype=bool)
            return
        C = red.C[0]
        d = 1.0 / np.sqrt(C)
        S = d[:, None] * red.Y[0] * d[None, :]
        lam, Q = np.linalg.eigh((S + S.T) * 0.5)
        scale = max(float(np.max(np.abs(lam))), 1e-300)
        lam = np.where(lam < 1e-12 * scale, 0.0, lam)  # no decay: a floating capacitor
        pos = lam > 0
        r = Q.T @ (d * red.h[0])
        self.d, self.Q, self.lam, self.pos, self.r = d, Q, lam, pos, r
        self.zinf = np.where(pos, r / np.where(pos, lam, 1.0), 0.0)
        self.w = (np.nan_to_num(m_rx) * d) @ Q

    def taus(self) -> list[float]:
        return [1.0 / x for x in self.lam[self.pos]]

    def to_z(self, u: np.ndarray) -> np.ndarray:
        return (u / self.d) @ self.Q if self.d.size else u

    def to_u(self, z: np.ndarray) -> np.ndarray:
        return self.d * (z @ self.Q.T) if self.d.size else z

    def advance(self, z0: np.ndarray, t: np.ndarray) -> np.ndarray:
        """z after t seconds (t broadcast over trials)."""
        t = t[:, None]
        decay = self.zinf + (z0 - self.zinf) * np.exp(-self.lam * t)
        return np.where(self.pos, decay, z0 + self.r * t)

    def rx_v(self, z: np.ndarray) -> np.ndarray:
        return self.c + z @ self.w

    def stationary_v(self, z0: np.ndarray, dt: np.ndarray) -> np.ndarray:
        """(N, j) receiver voltages at interior points that split each interval into monotonic pieces."""
        n = z0.shape[0]
        k = self.lam.size
        if k <= 1:
            return np.zeros((n, 0))
        if k == 2:
            a = np.where(self.pos, self.w * (z0 - self.zinf), 0.0)
            s = float(np.dot(self.w[~self.pos], self.r[~self.pos]))
            l1, l2 = self.lam
            with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
                if self.pos.all() and l1 != l2:
                    # f'(t) = -l1 a1 e^(-l1 t) - l2 a2 e^(-l2 t) = 0
                    t = np.log(-(l1 * a[:, 0]) / (l2 * a[:, 1])) / (l1 - l2)
                elif self.pos.any() and not self.pos.all():
                    i = int(np.flatnonzero(self.pos)[0])
                    # f'(t) = -lam a e^(-lam t) + s = 0
                    t = np.log(self.lam[i] * a[:, i] / s) / self.lam[i]
                else:
                    return np.zeros((n, 0))
            ok = np.isfinite(t) & (t > 0) & (t < dt)
            t = np.where(ok, t, 0.0)
            v = self.rx_v(self.advance(z0, t))
            return np.where(ok, v, np.nan)[:, None]
        # Three or more capacitors: sample on multiples of each time constant.
        pts = np.unique(np.concatenate([tau * _GRID_FRACTIONS for tau in self.taus()] or [np.zeros(0)]))
        out = np.full((n, pts.size), np.nan)
        for j, tp in enumerate(pts):
            inside = tp < dt
            out[:, j] = np.where(inside, self.rx_v(self.advance(z0, np.full(n, tp))), np.nan)
        return out


class _Receiver:
    """Output state with hysteresis (upper > lower) or one switching point (equal)."""

    def __init__(self, upper: float, lower: float, vcc: float):
        self.upper, self.lower, self.vcc = upper, lower, vcc

    def initial(self, v: np.ndarray) -> np.ndarray:
        between = np.where(v >= self.upper, True, np.where(v < self.lower, False, v > self.vcc / 2))
        return between if self.upper != self.lower else v >= self.upper

    def step(self, out: np.ndarray, edges: np.ndarray, v: np.ndarray) -> None:
        """Apply one voltage point (NaN: no change); one monotonic piece ends at each point."""
        rise = ~out & (v >= self.upper)
        fall = out & (v < self.lower)
        flip = rise | fall
        out ^= flip
        edges += flip


class _StageSystem:
    """A compiled stage with its modes, thresholds and per-edge parameter rows."""

    def __init__(self, stage: Stage, rx: ReceiverElectrical):
        self.stage = stage
        self.model = compile_circuit(stage.circuit)
        if self.model.has_diodes:
            raise UsageError(f"cannot simulate {stage.name}: chatter simulation covers stages "
                             f"without diodes (diodes: {', '.join(d.designator for d in stage.circuit.diodes)})")
        self.setups: dict[Edge, EdgeSetup] = {}
        for edge in EDGE_STATES:
            try:
                self.setups[edge] = edge_setup(self.model, rx, edge)
            except ValueError as exc:
                raise UsageError(f"cannot simulate {stage.name}: {exc}") from None
        self.schmitt = rx.schmitt
        if rx.schmitt:
            self.receiver = _Receiver(rx.rising_threshold[1], rx.falling_threshold[1], rx.vcc)
        else:
            self.receiver = _Receiver(rx.rising_threshold[1], rx.rising_threshold[1], rx.vcc)
        self._modes: dict[tuple, _Mode] = {}
        throws = stage.circuit.throws
        self.alternate: dict[Edge, str] = {}
        for edge, (a, b) in EDGE_STATES.items():
            # Bouncing on the new throw opens it (all open); a new state that
            # closes nothing can only re-make into the old one.
            self.alternate[edge] = TRANSIT if any(t.closed_when == b for t in throws) else a

    def row(self, edge: Edge) -> np.ndarray:
        return self.setups[edge].box.nominal

    def mode(self, state: str, edge: Edge) -> _Mode:
        key = (state, edge)
        if key not in self._modes:
            self._modes[key] = _Mode(self.model, state, self.row(edge))
        return self._modes[key]

    def modes_for(self, edge: Edge) -> tuple[_Mode, _Mode]:
        """(the new state, the bounce state) of an actuation."""
        return self.mode(EDGE_STATES[edge][1], edge), self.mode(self.alternate[edge], edge)

    def start_u(self, edge: Edge) -> tuple[np.ndarray, float]:
        dc = dc_solve(self.model, EDGE_STATES[edge][0], self.row(edge)[None, :])
        return cap_voltages(self.model, dc)[0], float(dc.rx_v[0])

    def taus(self) -> list[float]:
        out = []
        for edge in EDGE_STATES:
            for m in self.modes_for(edge):
                out += m.taus()
        out += self.mode(EDGE_STATES[Edge.RELEASE][0], Edge.RELEASE).taus()
        return [t for t in out if math.isfinite(t) and t > 0]


def _integrate(modes: list[_Mode], dt: np.ndarray, u0: np.ndarray, receiver: _Receiver,
               out: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Run N trials through columns of intervals; column j uses modes[j], NaN dt skips.

    Returns (edges per trial, receiver voltage at the end of each interval
    (N, M), final u, final output state). Every value between two checked
    points is monotonic, so checking the thresholds at the points is exact.
    """
    n, m = dt.shape
    u = np.array(np.broadcast_to(u0, (n, u0.shape[-1])), dtype=float)
    edges = np.zeros(n, dtype=np.int64)
    v_end = np.full((n, m), np.nan)
    for j in range(m):
        mode = modes[j]
        step = dt[:, j]
        valid = ~np.isnan(step)
        if not valid.any():
            continue
        span = np.where(valid, step, 0.0)
        z0 = mode.to_z(u)
        v0 = np.where(valid, mode.rx_v(z0), np.nan)
        receiver.step(out, edges, v0)  # the jump at the toggle itself
        for v in mode.stationary_v(z0, span).T:
            receiver.step(out, edges, np.where(valid, v, np.nan))
        z1 = mode.advance(z0, span)
        v1 = np.where(valid, mode.rx_v(z1), np.nan)
        receiver.step(out, edges, v1)
        v_end[:, j] = v1
        u = np.where(valid[:, None], mode.to_u(z1), u)
    return edges, v_end, u, out


def _settle_s(system: _StageSystem, bounce_s: float) -> float:
    taus = system.taus()
    return SETTLE_TAUS * max(taus) if taus else max(bounce_s, 1e-6)


def _actuation_columns(system: _StageSystem, edge: Edge, toggles: np.ndarray,
                       tail_s: np.ndarray) -> tuple[list[_Mode], np.ndarray]:
    """Modes and interval lengths of one actuation: toggles (N, M) NaN-padded, tail after the last."""
    new, bounce = system.modes_for(edge)
    nxt = np.concatenate([toggles[:, 1:], np.full((toggles.shape[0], 1), np.nan)], axis=1)
    dt = nxt - toggles
    last = ~np.isnan(toggles) & np.isnan(nxt)
    dt = np.where(last, tail_s[:, None], dt)
    modes = [new if j % 2 == 0 else bounce for j in range(toggles.shape[1])]
    return modes, dt


def _statistics(edge: Edge, counts: np.ndarray) -> EdgeStatistics:
    values, freq = np.unique(counts, return_counts=True)
    return EdgeStatistics(
        edge=edge, trials=int(counts.size), clean_trials=int(np.sum(counts == 1)),
        missed_trials=int(np.sum(counts == 0)), max_edges=int(counts.max(initial=0)),
        mean_edges=float(counts.mean()) if counts.size else 0.0,
        histogram={int(v): int(f) for v, f in zip(values, freq, strict=True)})


def simulate_stage(stage: Stage, rx: ReceiverElectrical, *, trials: int = 1000, seed: int = 0,
                   bounce_s: float | None = None) -> SimulationResult:
    """Inject `trials` random press and release bounce trains; count the receiver's output edges.

    bounce_s: the longest burst (default: the contact's bounce time). The
    nominal corner is simulated (typical thresholds, nominal parts).
    """
    if trials < 1:
        raise UsageError(f"trials must be at least 1, not {trials}")
    system = _StageSystem(stage, rx)
    bounce = stage.contact.bounce_s if bounce_s is None else float(bounce_s)
    if not (bounce >= 0 and math.isfinite(bounce)):
        raise UsageError(f"bounce time must be a non-negative number of seconds, not {bounce_s!r}")
    rng = np.random.default_rng(seed)
    settle = _settle_s(system, bounce)
    trains: dict[Edge, np.ndarray] = {}
    counts: dict[Edge, np.ndarray] = {}
    for edge in EDGE_STATES:
        toggles = draw_trains(rng, trials, bounce)
        trains[edge] = toggles
        modes, dt = _actuation_columns(system, edge, toggles, np.full(trials, settle))
        u0, v0 = system.start_u(edge)
        out = system.receiver.initial(np.full(trials, v0))
        counts[edge] = _integrate(modes, dt, u0, system.receiver, out)[0]
    total = counts[Edge.PRESS] + counts[Edge.RELEASE]
    clean = int(np.sum((counts[Edge.PRESS] == 1) & (counts[Edge.RELEASE] == 1)))
    worst = int(np.argmax(total))
    notes = list(_notes(stage, system))
    return SimulationResult(
        stage=stage.name, kind=stage.kind, contact_class=stage.contact.contact_class,
        trials=trials, seed=seed, bounce_s=bounce,
        receiver_model="schmitt" if system.schmitt else "single-threshold",
        upper_v=system.receiver.upper, lower_v=system.receiver.lower,
        edges={e: _statistics(e, counts[e]) for e in EDGE_STATES}, clean_trials=clean,
        worst_trial=worst, worst_edges={e: int(counts[e][worst]) for e in EDGE_STATES},
        notes=tuple(notes), trains=trains)


def _notes(stage: Stage, system: _StageSystem) -> list[str]:
    notes = []
    if system.model.k >= 3:
        notes.append("three or more capacitors: crossings inside an interval are checked on a grid "
                     "of the stage's time constants, not exactly")
    if stage.kind == "latch":
        notes.append("latch: edges are counted at this input pin; the cross-coupled pair that "
                     "absorbs them is not simulated")
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


def replay_trial(stage: Stage, rx: ReceiverElectrical, trial: ChatterTrial) -> TrialReplay:
    """Integrate one trial on the same schedule `chatter_deck` writes (press, hold, release)."""
    system = _StageSystem(stage, rx)
    sch = _schedule(system, trial)
    receiver = system.receiver
    u, v0 = system.start_u(Edge.PRESS)
    out = receiver.initial(np.array([v0]))
    edges: dict[Edge, int] = {}
    v_before = [v0]
    # press: its toggles, the last interval running to the leakage switch
    tp = np.array([trial.press.toggles])
    modes, dt = _actuation_columns(system, Edge.PRESS, tp, np.array([sch.leak_switch - sch.press_at - tp[0, -1]]))
    count, v_end, u, out = _integrate(modes, dt, u, receiver, out)
    edges[Edge.PRESS] = int(count[0])
    v_before += [float(x) for x in v_end[0, :-1]]
    # hold: pressed, with the release edge's leakage, until the release train starts
    held = system.mode(EDGE_STATES[Edge.RELEASE][0], Edge.RELEASE)
    count, v_end, u, out = _integrate([held], np.array([[sch.release_at - sch.leak_switch]]), u[0], receiver, out)
    hold_edges = int(count[0])
    v_before.append(float(v_end[0, 0]))
    tr = np.array([trial.release.toggles])
    modes, dt = _actuation_columns(system, Edge.RELEASE, tr, np.array([sch.t_stop - sch.release_at - tr[0, -1]]))
    count, v_end, u, out = _integrate(modes, dt, u[0], receiver, out)
    edges[Edge.RELEASE] = int(count[0]) + hold_edges  # a late edge while held belongs to neither: counted with release
    v_before += [float(x) for x in v_end[0, :-1]]
    instants = tuple(sch.press_at + t for t in trial.press.toggles) + \
        tuple(sch.release_at + t for t in trial.release.toggles)
    return TrialReplay(instants=instants, v_before=tuple(v_before), v_end=float(v_end[0, -1]),
                       t_stop=sch.t_stop, leak_switch_s=sch.leak_switch, release_at=sch.release_at,
                       edges=edges, upper_v=receiver.upper, lower_v=receiver.lower,
                       receiver_model="schmitt" if system.schmitt else "single-threshold")


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


__all__ = ["EdgeStatistics", "SimulationResult", "TrialReplay", "chatter_deck", "replay_trial", "simulate_stage"]
