"""Exact switching transients of a stage: closed forms and modal solutions.

One capacitor charging towards a Thevenin source (Vf, R) follows
    v(t) = Vf + (V0 - Vf) * exp(-t / tau),      tau = R * C,
and reaches Vth after
    t = tau * ln((Vf - V0) / (Vf - Vth)),
defined only when Vth lies strictly between V0 and Vf (otherwise the
threshold is never reached: None). Several capacitors are solved exactly by
eigen-decomposition of the reduced system C du/dt = h - Y u (symmetric after
scaling by C^-1/2, as the network is reciprocal), so every node voltage is a
sum of exponentials; the threshold crossing is bracketed on a grid spaced by
the system's own time constants and then refined with Brent's method. A
diode changing state is an event: its crossing time is found the same way,
the linear system is switched and the solution continues from there. The
same segments give the plotted waveform, so a plot is the analysis' own data.
"""

from __future__ import annotations

import math
from collections.abc import Iterator
from dataclasses import dataclass

import numpy as np

from drc.analysis.physics.compiled import LinearModel
from drc.analysis.physics.mna import Reduced, cap_voltages, dc_solve, node_voltage, reduce_dynamic
from drc.analysis.physics.nonlinear import nonlinear, numeric_edge
from drc.analysis.physics.oneport import one_cap_edge
from drc.analysis.physics.roots import brent_root

MAX_EVENTS = 32  # diode state changes followed during one edge
_GRID = np.geomspace(1e-4, 60.0, 56)  # multiples of each time constant
_LAMBDA_ZERO = 1e-12  # relative: an eigenvalue this small is a mode with no decay
_I_TOL = 1e-12
_V_TOL = 1e-9


def rc_voltage(t, v0, vf, tau):
    """v(t) = vf + (v0 - vf) * exp(-t / tau); broadcasts over numpy arrays."""
    if isinstance(t, np.ndarray) or isinstance(tau, np.ndarray):
        return vf + (v0 - vf) * np.exp(-np.asarray(t) / tau)
    return vf + (v0 - vf) * math.exp(-t / tau)


def rc_time_to_threshold(v0: float, vf: float, vth: float, tau: float) -> float | None:
    """t = tau * ln((vf - v0) / (vf - vth)); None unless v0 < vth < vf or v0 > vth > vf."""
    if not (min(v0, vf) < vth < max(v0, vf)):
        return None
    return tau * math.log((vf - v0) / (vf - vth))


@dataclass(frozen=True, slots=True)
class ExpSum:
    """f(t) = c + sum(a_i * exp(-lam_i * t)) + s * t, for t >= 0."""

    c: float
    a: np.ndarray
    lam: np.ndarray
    s: float = 0.0

    def __call__(self, t: float) -> float:
        return float(self.c + self.s * t + np.dot(self.a, np.exp(-self.lam * t)))

    def many(self, t: np.ndarray) -> np.ndarray:
        return self.c + self.s * t + np.exp(-np.outer(t, self.lam)) @ self.a

    def deriv(self, t: float) -> float:
        return float(self.s - np.dot(self.a * self.lam, np.exp(-self.lam * t)))

    def combine(self, other: ExpSum, k_self: float, k_other: float, const: float = 0.0) -> ExpSum:
        """k_self * self + k_other * other + const (same modes; a constant has none)."""
        a_self, a_other, lam = self.a, other.a, self.lam
        if a_self.size == 0 and a_other.size:
            a_self, lam = np.zeros_like(a_other), other.lam
        elif a_other.size == 0 and a_self.size:
            a_other = np.zeros_like(a_self)
        return ExpSum(k_self * self.c + k_other * other.c + const, k_self * a_self + k_other * a_other,
                      lam, k_self * self.s + k_other * other.s)


def sorted_distinct(values: np.ndarray) -> np.ndarray:
    """np.unique of finite floats without its check for masked arrays, which imports
    numpy.ma (12 ms of a small board's start-up)."""
    ordered = np.sort(values)
    if ordered.size < 2:
        return ordered
    return ordered[np.concatenate(([True], ordered[1:] != ordered[:-1]))]


def _constant(value: float) -> ExpSum:
    return ExpSum(float(value), np.zeros(0), np.zeros(0), 0.0)


def first_crossing(f: ExpSum, target: float, direction: int, t_max: float = math.inf) -> float | None:
    """First t in [0, t_max] with direction * (f(t) - target) >= 0, or None.

    Brackets on a grid of multiples of every time constant (plus the exact
    stationary points of each pair of modes), then refines with brentq.
    """
    def g(t: float) -> float:
        return direction * (f(t) - target)

    if g(0.0) >= 0:
        return 0.0
    grid = _bracket_grid(f, target, t_max)
    if grid.size == 0:
        return None
    vals = direction * (f.many(grid) - target)
    hits = np.flatnonzero(vals >= 0)
    if hits.size == 0:
        return None
    i = int(hits[0])
    hi = float(grid[i])
    lo = float(grid[i - 1]) if i > 0 else 0.0
    if vals[i] == 0:
        return hi
    return brent_root(g, lo, hi, xtol=max(hi * 1e-15, 1e-300), rtol=1e-13, maxiter=200)


def _bracket_grid(f: ExpSum, target: float, t_max: float) -> np.ndarray:
    """Ascending instants to look for the first crossing at; empty when f never moves."""
    decaying = f.lam[(f.lam > 0) & (f.a != 0)]
    if decaying.size == 0 and f.s == 0:
        return np.zeros(0)
    pts = [(1.0 / lam) * _GRID for lam in decaying] + _pair_stationary_points(f)
    tail = max((60.0 / lam for lam in decaying), default=0.0)
    if f.s != 0:
        t_lin = abs(target - f.c) / abs(f.s)
        tail = max(tail, 2.0 * t_lin + 1e-30)
        pts.append(np.geomspace(max(t_lin * 1e-6, 1e-30), 2.0 * t_lin + 1e-30, 60))
    grid = sorted_distinct(np.concatenate(pts)) if pts else np.zeros(0)
    # Extend the tail geometrically: a final value within 1e-26 of the
    # threshold is reached only after the exponentials have died further.
    if decaying.size:
        grid = np.concatenate([grid, tail * np.geomspace(1.5, 1e4, 24)])
    if math.isfinite(t_max):
        grid = np.append(grid[grid < t_max], t_max)
    return grid


def _pair_stationary_points(f: ExpSum) -> list[np.ndarray]:
    """The stationary point of each pair of modes: extrema the grid could straddle."""
    pts = []
    for i in range(f.lam.size):
        for j in range(i + 1, f.lam.size):
            li, lj, ai, aj = f.lam[i], f.lam[j], f.a[i], f.a[j]
            if li > 0 and lj > 0 and li != lj and ai * aj != 0:
                ratio = -(li * ai) / (lj * aj)
                if ratio > 0:
                    ts = math.log(ratio) / (li - lj)
                    if ts > 0:
                        pts.append(np.array([ts]))
    return pts


@dataclass(frozen=True, slots=True)
class Segment:
    """One linear stretch of an edge, from t0 (absolute) for `duration`."""

    t0: float
    duration: float
    rx: ExpSum  # receiver voltage in local time


@dataclass(frozen=True, slots=True)
class EdgeSolution:
    """The exact receiver waveform of one edge at one corner."""

    start_v: float  # steady level before the edge
    final_v: float  # the level the edge settles to
    crossing_s: float | None
    slope_v_per_s: float | None
    segments: tuple[Segment, ...]
    time_constants: tuple[float, ...]
    samples: tuple[np.ndarray, np.ndarray] | None = None  # (t, v) of a numerical solution

    def voltage(self, t: np.ndarray) -> np.ndarray:
        if self.samples is not None:
            return np.interp(t, self.samples[0], self.samples[1])
        out = np.empty_like(t, dtype=float)
        for seg in self.segments:
            sel = (t >= seg.t0) & (t <= seg.t0 + seg.duration)
            out[sel] = seg.rx.many(t[sel] - seg.t0)
        return out


class _Modal:
    """Eigen solution of one segment: C du/dt = h - Y u from u0."""

    def __init__(self, C, Y, h, u0):
        k = C.size
        self.k = k
        if k == 0:
            return
        d = 1.0 / np.sqrt(C)
        S = d[:, None] * Y * d[None, :]
        lam, Q = np.linalg.eigh((S + S.T) * 0.5)
        scale = max(float(np.max(np.abs(lam))), 1e-300)
        lam = np.where(lam < _LAMBDA_ZERO * scale, 0.0, lam)
        self.d, self.Q, self.lam = d, Q, lam
        z0 = Q.T @ (u0 / d)
        r = Q.T @ (d * h)
        pos = lam > 0
        zinf = np.where(pos, r / np.where(pos, lam, 1.0), 0.0)
        self.z0, self.r, self.zinf, self.pos = z0, r, zinf, pos

    def expr(self, w_u: np.ndarray, const: float) -> ExpSum:
        """f = const + w_u . u(t) as an exponential sum."""
        if self.k == 0:
            return _constant(const)
        w = (w_u * self.d) @ self.Q
        pos = self.pos
        c = const + float(np.dot(w[pos], self.zinf[pos])) + float(np.dot(w[~pos], self.z0[~pos]))
        a = np.where(pos, w * (self.z0 - self.zinf), 0.0)
        s = float(np.dot(w[~pos], self.r[~pos]))
        return ExpSum(c, a, self.lam, s)

    def u_at(self, t: float) -> np.ndarray:
        if self.k == 0:
            return np.zeros(0)
        z = np.where(self.pos, self.zinf + (self.z0 - self.zinf) * np.exp(-self.lam * t), self.z0 + self.r * t)
        return self.d * (self.Q @ z)

    def time_constants(self) -> list[float]:
        return [] if self.k == 0 else [1.0 / x for x in self.lam[self.pos]]


def _node_expr(model: LinearModel, red: Reduced, modal: _Modal, code: int) -> ExpSum:
    if code < 0:
        return _constant(float(red.vfix[0, -1 - code]))
    if not red.nodes[code]:
        return _constant(math.nan)
    return modal.expr(red.Mv[0, code], float(red.cv[0, code]))


def _diode_exprs(model: LinearModel, red: Reduced, modal: _Modal,
                 on: tuple[bool, ...]) -> list[tuple[ExpSum, float, int]]:
    """Per diode: (watched quantity, event target, direction)."""
    out = []
    for d, is_on in zip(model.circuit.diodes, on, strict=True):
        vak = _node_expr(model, red, modal, model.node_code(d.anode)).combine(
            _node_expr(model, red, modal, model.node_code(d.cathode)), 1.0, -1.0)
        if is_on:  # conducting: event when the forward current reverses
            cur = vak.combine(vak, 1.0 / d.on_ohms, 0.0, -d.forward_v / d.on_ohms)
            out.append((cur, -_I_TOL, -1))
        else:  # blocking: event when the forward voltage reaches Vf
            out.append((vak, d.forward_v + _V_TOL, +1))
    return out


def _diode_events(model: LinearModel, red: Reduced, modal: _Modal,
                  on: tuple[bool, ...]) -> list[tuple[float, int]]:
    """(time, diode index) of each diode's next change of state in this segment."""
    events = []
    for j, (f, target, sign) in enumerate(_diode_exprs(model, red, modal, on)):
        t = first_crossing(f, target, sign)
        if t is not None:
            events.append((t, j))
    return events


def settle_diodes(model: LinearModel, state: str, P: np.ndarray, u: np.ndarray,
                  on: tuple[bool, ...]) -> tuple[tuple[bool, ...], Reduced]:
    """Diode states consistent with capacitor voltages u at the start of a segment."""
    for _ in range(2 * len(on) + 4):
        topo = model.topology(state, on)
        red = reduce_dynamic(model, topo, P)
        v = red.cv[0] + red.Mv[0] @ u if model.k else red.cv[0]
        new = []
        for d, is_on in zip(model.circuit.diodes, on, strict=True):
            va = node_voltage(v[None], red.vfix, model.node_code(d.anode))[0]
            vc = node_voltage(v[None], red.vfix, model.node_code(d.cathode))[0]
            vak = va - vc
            if math.isnan(vak):
                new.append(False)
            elif is_on:
                new.append((vak - d.forward_v) / d.on_ohms >= -_I_TOL)
            else:
                new.append(vak > d.forward_v + _V_TOL)
        new_t = tuple(new)
        if new_t == on:
            return on, red
        on = new_t
    return on, reduce_dynamic(model, model.topology(state, on), P)


@dataclass(frozen=True, slots=True)
class Stretch:
    """One linear stretch of a state's trajectory from given capacitor voltages: from t0
    (absolute) for `duration` (inf: the last), the receiver as an exponential sum in local
    time, and the capacitor voltages at any local time (`u_at`)."""

    t0: float
    duration: float
    rx: ExpSum
    modal: _Modal

    def u_at(self, t: float) -> np.ndarray:
        return self.modal.u_at(t)


def walk(model: LinearModel, state: str, params: np.ndarray, u0: np.ndarray,
         on: tuple[bool, ...]) -> Iterator[Stretch]:
    """The trajectory of `state` from capacitor voltages u0, stretch by stretch (a diode
    changing state ends one): what `solve_edge` follows from a steady state, from any start.
    on: a first guess of the diodes' states (settled against u0 here)."""
    P = np.atleast_2d(np.asarray(params, dtype=float))
    u = np.asarray(u0, dtype=float)
    t_abs = 0.0
    for _ in range(MAX_EVENTS):
        on, red = settle_diodes(model, state, P, u, on)
        modal = _Modal(red.C[0], red.Y[0], red.h[0], u)
        events = _diode_events(model, red, modal, on)
        t_event = min((t for t, _ in events), default=math.inf)
        yield Stretch(t_abs, t_event, _node_expr(model, red, modal, model.rx), modal)
        if not math.isfinite(t_event):
            return
        u = modal.u_at(t_event)
        flips = {j for t, j in events if t <= t_event * (1 + 1e-12)}
        on = tuple((not x) if j in flips else x for j, x in enumerate(on))
        t_abs += t_event


def solve_edge(model: LinearModel, from_state: str, to_state: str, params: np.ndarray,
               vth: float, direction: int, *, full: bool = False, exact: bool = True) -> EdgeSolution:
    """The edge from the steady state of `from_state` into `to_state`.

    direction: +1 rising, -1 falling. The crossing is None when the steady
    level before the edge is not strictly on the near side of vth, or when
    the waveform never reaches it. With full=False the solution stops at the
    crossing (enough for timing); full=True follows every segment (plots).
    A stage with a card diode is integrated numerically (`nonlinear`); exact=False
    solves it with every diode piecewise linear instead (its stand-in).
    """
    P = np.atleast_2d(np.asarray(params, dtype=float))
    if exact and nonlinear(model):
        return _numeric_solution(model, from_state, to_state, P, vth, direction, full)
    dc0 = dc_solve(model, from_state, P, exact=exact)
    start_v = float(dc0.rx_v[0])
    u = cap_voltages(model, dc0)[0]
    on = tuple(bool(x) for x in dc0.diodes_on[0])
    before = direction * (vth - start_v) > 0
    t_abs = 0.0
    crossing: float | None = None
    slope: float | None = None
    segments: list[Segment] = []
    taus: list[float] = []
    final_v = math.nan
    for _ in range(MAX_EVENTS):
        on, red = settle_diodes(model, to_state, P, u, on)
        modal = _Modal(red.C[0], red.Y[0], red.h[0], u)
        taus.extend(modal.time_constants())
        rx = _node_expr(model, red, modal, model.rx)
        final_v = rx.c if rx.s == 0 else math.copysign(math.inf, rx.s)
        events = _diode_events(model, red, modal, on)
        t_event = min((t for t, _ in events), default=math.inf)
        if crossing is None and before:
            tc = first_crossing(rx, vth, direction, t_event)
            if tc is not None:
                crossing = t_abs + tc
                # tc == 0: the receiver jumps past the threshold as the contact moves
                slope = math.inf if tc == 0.0 else abs(rx.deriv(tc))
        segments.append(Segment(t_abs, t_event, rx))
        if not math.isfinite(t_event) or (crossing is not None and not full):
            break
        u = modal.u_at(t_event)
        flips = {j for t, j in events if t <= t_event * (1 + 1e-12)}
        on = tuple((not x) if j in flips else x for j, x in enumerate(on))
        t_abs += t_event
    return EdgeSolution(start_v, final_v, crossing, slope, tuple(segments), tuple(taus))


def _numeric_solution(model: LinearModel, from_state: str, to_state: str, P: np.ndarray, vth: float,
                      direction: int, full: bool) -> EdgeSolution:
    """A stage with a card diode: integrated numerically (`nonlinear`). The horizon and the
    time constants reported are those of its piecewise-linear stand-in, generously (one
    capacitor needs no horizon, and timing alone, full=False, no time constants)."""
    starts = (dc_solve(model, from_state, P[:1], exact=False).v, dc_solve(model, to_state, P[:1], exact=False).v)
    taus: list[float] = []
    if model.k != 1 or full:
        pwl = _pwl_edge(model, from_state, to_state, P, vth, direction)
        taus = [t for t in pwl.time_constants if math.isfinite(t) and t > 0]
        horizon = 200.0 * max(taus, default=1e-6) + 10.0 * (pwl.crossing_s or 0.0)
    if model.k == 1:  # one-dimensional: by quadrature (oneport)
        got = one_cap_edge(model, from_state, to_state, P[0], vth, direction, starts, full=full)
    else:
        got = numeric_edge(model, from_state, to_state, P[0], vth, direction, horizon, starts, full=full)
    # The crossing time joins the time scales: a diode's edge is far faster than its stand-in's.
    scales = taus + ([got.crossing_s] if got.crossing_s else [])
    return EdgeSolution(got.start_v, got.final_v, got.crossing_s, got.slope_v_per_s, (), tuple(scales),
                        (got.t, got.v))


def _pwl_edge(model: LinearModel, from_state: str, to_state: str, P: np.ndarray, vth: float,
              direction: int) -> EdgeSolution:
    """The edge with every diode piecewise linear (card diodes at their 1 mA stand-in)."""
    return solve_edge(model, from_state, to_state, P, vth, direction, full=True, exact=False)


@dataclass(frozen=True, slots=True)
class EdgeBatch:
    """Edge timing at N corners: nan where the threshold is never reached."""

    t: np.ndarray
    slope: np.ndarray
    start_v: np.ndarray
    final_v: np.ndarray


def edge_batch(model: LinearModel, from_state: str, to_state: str, P: np.ndarray,
               vth: np.ndarray, direction: int) -> EdgeBatch:
    """Time to threshold at every row of P (vectorised for one capacitor, no diodes)."""
    P = np.atleast_2d(P)
    vth = np.broadcast_to(np.asarray(vth, dtype=float), (P.shape[0],))
    if model.k <= 1 and not model.has_diodes and model.rx >= 0:
        out = _single_cap_batch(model, from_state, to_state, P, vth, direction)
        if out is not None:
            return out
    n = P.shape[0]
    t, slope = np.full(n, np.nan), np.full(n, np.nan)
    s0, sf = np.empty(n), np.empty(n)
    for i in range(n):
        sol = solve_edge(model, from_state, to_state, P[i], float(vth[i]), direction)
        s0[i], sf[i] = sol.start_v, sol.final_v
        if sol.crossing_s is not None:
            t[i], slope[i] = sol.crossing_s, sol.slope_v_per_s
    return EdgeBatch(t, slope, s0, sf)


def _single_cap_batch(model: LinearModel, from_state: str, to_state: str, P: np.ndarray, vth: np.ndarray,
                      direction: int) -> EdgeBatch | None:
    parts = single_cap_parts(model, from_state, to_state, P)
    return None if parts is None else single_cap_times(parts, vth, direction)


@dataclass(frozen=True, slots=True)
class SingleCapEdge:
    """One capacitor, no diodes: v(t) = vinf + (v0p - vinf) exp(-t / tau), per row.

    The threshold enters only at the end, so one set of these serves every
    threshold (the fastest and the slowest corners share their parameter rows).
    """

    start: np.ndarray  # steady receiver level before the edge
    v0p: np.ndarray  # receiver level just after the contact moves
    vinf: np.ndarray  # the level the edge settles to
    tau: np.ndarray
    q: np.ndarray  # nan where the receiver has no path at all


def single_cap_parts(model: LinearModel, from_state: str, to_state: str, P: np.ndarray) -> SingleCapEdge | None:
    """The closed-form edge at every row of P; None when it does not apply."""
    dc0 = dc_solve(model, from_state, P)
    start = dc0.rx_v
    red = reduce_dynamic(model, model.topology(to_state, ()), P)
    q = red.cv[:, model.rx]
    if model.k == 0:
        vinf, v0p, tau = q.copy(), q, np.ones_like(q)
    else:
        Y, C, h = red.Y[:, 0, 0], red.C[:, 0], red.h[:, 0]
        if np.any(Y <= 0):
            return None  # a capacitor with no DC path: leave it to the modal solver
        u0 = cap_voltages(model, dc0)[:, 0]
        pgain = red.Mv[:, model.rx, 0]
        tau = C / Y
        vinf = q + pgain * (h / Y)
        v0p = q + pgain * u0
    return SingleCapEdge(start, v0p, vinf, tau, q)


def single_cap_times(e: SingleCapEdge, vth, direction) -> EdgeBatch:
    """Time to `vth` (per row) and the slope there; direction may be per row too."""
    start, v0p, vinf, tau = e.start, e.v0p, e.vinf, e.tau
    with np.errstate(divide="ignore", invalid="ignore"):
        before = direction * (vth - start) > 0
        past0 = direction * (v0p - vth) >= 0
        reach = direction * (vinf - vth) > 0
        t = np.where(past0, 0.0, tau * np.log((vinf - v0p) / (vinf - vth)))
        slope = np.where(past0, np.inf, np.abs(vinf - vth) / tau)
    bad = ~before | (~past0 & ~reach) | np.isnan(e.q)
    t[bad] = np.nan
    slope[bad] = np.nan
    return EdgeBatch(t, slope, start, vinf)


def sample(solution: EdgeSolution, points: int = 600) -> tuple[np.ndarray, np.ndarray]:
    """Dense (t, v) samples of an edge, linear and logarithmic in time.

    Starts with the steady level before the edge at t = 0, then v(0+), so a
    jump shows as a vertical step. Ends after the slowest mode has settled.
    """
    taus = [x for x in solution.time_constants if math.isfinite(x) and x > 0]
    t_settle = 7.0 * max(taus) if taus else 1e-6
    t_end = max(t_settle, 1.5 * (solution.crossing_s or 0.0))
    tmin = min(taus) if taus else t_end
    grid = np.concatenate([np.linspace(0.0, t_end, points),
                           np.geomspace(max(tmin * 1e-3, t_end * 1e-9), t_end, points // 3)])
    extra = [solution.crossing_s] if solution.crossing_s is not None else []
    extra += [seg.t0 for seg in solution.segments]
    grid = sorted_distinct(np.concatenate([grid, np.array(extra, dtype=float)]))
    grid = grid[grid <= t_end]
    v = solution.voltage(grid)
    return np.concatenate([[0.0], grid]), np.concatenate([[solution.start_v], v])
