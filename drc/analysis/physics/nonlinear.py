"""Stages that are not piecewise linear: diodes from their .model card, solved numerically.

A diode with a model card is the Shockley diode with its series resistance,
I = IS (exp((V - I RS) / (N Vt)) - 1), solved for I in closed form with
Wright's omega function (W(exp(y)), so it never overflows). A stage holding
one is no longer linear: its steady states are found by Newton's method on
the nodal equations (started from the piecewise-linear solution, steps
limited to half a volt). With one capacitor its edges are quadratures
(`oneport`); with several, the capacitor voltages are integrated with
scipy's Radau method (stiff: a diode's nanoseconds beside a pull-up's
milliseconds) with an event at the threshold (`numeric_edge`); at each step
the rest of the network is solved by Newton with the capacitors as voltage
sources (`CapacitorSystem`). Other
diodes of such a stage (piecewise linear: TTL input stages, clamps, diodes
without a card) keep their piecewise-linear current in the same equations.
Every free node has 1e-12 S to ground (SPICE's gmin), so a node left
floating by a blocking diode stays defined. Stages without a card diode keep
the exact closed forms and event solutions of `mna` and `transient`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from drc.analysis.physics.compiled import LinearModel, conductances
from drc.board.stage import Diode

# kT/q at 27 °C (300.15 K), SPICE's nominal temperature: CODATA k and q.
THERMAL_V = 1.380649e-23 * 300.15 / 1.602176634e-19
GMIN = 1e-12  # S from every free node to ground, as SPICE adds
_STEP_V = 0.5  # largest Newton step of any node voltage
_MAX_NEWTON = 200
_EXP_MAX = 80.0  # exp() argument beyond which a diode without RS continues linearly


def nonlinear(model: LinearModel) -> bool:
    """Whether the stage holds a diode with a model card (numerical path)."""
    return any(d.card is not None for d in model.circuit.diodes)


def diode_current(d: Diode, vak: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(I, dI/dV) of one diode at anode-cathode voltages vak (arrays)."""
    vak = np.asarray(vak, dtype=float)
    if d.card is None:  # piecewise linear: Vf in series with Ron while conducting
        on = vak > d.forward_v
        g = 1.0 / d.on_ohms
        return np.where(on, (vak - d.forward_v) * g, 0.0), np.where(on, g, 0.0)
    i_s, nvt, rs = d.card.saturation_a, d.card.emission * THERMAL_V, d.card.series_ohms
    if rs > 0:
        from scipy.special import wrightomega

        y = math.log(i_s * rs / nvt) + (vak + i_s * rs) / nvt
        w = np.real(wrightomega(y))
        return nvt / rs * w - i_s, (w / (1.0 + w)) / rs
    x = vak / nvt
    xc = np.minimum(x, _EXP_MAX)
    ex = np.exp(xc)
    i = i_s * (ex * (1.0 + (x - xc)) - 1.0)
    return i, i_s * ex / nvt


def _diode_scalar(d: Diode, vak: float) -> tuple[float, float]:
    """`diode_current` at one voltage, without arrays (the transient's inner loop)."""
    if d.card is None:
        return ((vak - d.forward_v) / d.on_ohms, 1.0 / d.on_ohms) if vak > d.forward_v else (0.0, 0.0)
    i_s, nvt, rs = d.card.saturation_a, d.card.emission * THERMAL_V, d.card.series_ohms
    if rs > 0:
        from scipy.special import wrightomega

        w = float(np.real(wrightomega(math.log(i_s * rs / nvt) + (vak + i_s * rs) / nvt)))
        return nvt / rs * w - i_s, (w / (1.0 + w)) / rs
    x = vak / nvt
    xc = min(x, _EXP_MAX)
    ex = math.exp(xc)
    return i_s * (ex * (1.0 + (x - xc)) - 1.0), i_s * ex / nvt


@dataclass(frozen=True, slots=True)
class _Network:
    """The resistive part of one actuator state (every diode taken out) at N rows."""

    A: np.ndarray  # (m, n)
    g: np.ndarray  # (N, m)
    vb: np.ndarray  # (N, m)
    vfix: np.ndarray  # (N, nf)
    leak: np.ndarray  # (N, n) current leaving each free node through the loads


def _network(model: LinearModel, state: str, P: np.ndarray) -> _Network:
    topo = model.topology(state, (False,) * len(model.circuit.diodes))
    g = conductances(topo, P)
    vfix = model.fixed_voltages(P)
    vb = vfix @ topo.Af.T - topo.e
    leak = np.zeros((P.shape[0], model.n))
    for c, node in zip(model.leak_cols, model.leak_nodes, strict=True):
        if node >= 0:
            leak[:, node] += P[:, c]
    return _Network(topo.A, g, vb, vfix, leak)


def _ends(model: LinearModel) -> list[tuple[int, int]]:
    return [(model.node_code(d.anode), model.node_code(d.cathode)) for d in model.circuit.diodes]


def _voltage(v: np.ndarray, vfix: np.ndarray, code: int) -> np.ndarray:
    return v[:, code] if code >= 0 else vfix[:, -1 - code]


def _residual(model: LinearModel, net: _Network, v: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(F, J, diode currents): KCL residual per free node (current leaving), its Jacobian."""
    N, n = v.shape
    i_br = net.g * (v @ net.A.T + net.vb)
    F = i_br @ net.A + net.leak + GMIN * v
    J = np.einsum("Nm,mi,mj->Nij", net.g, net.A, net.A) + GMIN * np.eye(n)[None]
    currents = np.zeros((N, len(model.circuit.diodes)))
    for j, (d, (a, c)) in enumerate(zip(model.circuit.diodes, _ends(model), strict=True)):
        i, di = diode_current(d, _voltage(v, net.vfix, a) - _voltage(v, net.vfix, c))
        currents[:, j] = i
        for node, sign in ((a, 1.0), (c, -1.0)):
            if node >= 0:
                F[:, node] += sign * i
        for p, sp in ((a, 1.0), (c, -1.0)):
            for q, sq in ((a, 1.0), (c, -1.0)):
                if p >= 0 and q >= 0:
                    J[:, p, q] += sp * sq * di
    return F, J, currents


def dc_newton(model: LinearModel, state: str, P: np.ndarray, v0: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Free node voltages (N, n) and diode currents (N, nd) of a steady state, from a guess v0."""
    P = np.atleast_2d(P)
    net = _network(model, state, P)
    v = np.array(v0, dtype=float)
    v[~np.isfinite(v)] = 0.0
    for _ in range(_MAX_NEWTON):
        F, J, _i = _residual(model, net, v)
        dv = np.linalg.solve(J, -F[:, :, None])[:, :, 0]
        big = np.max(np.abs(dv), axis=1, keepdims=True)
        v = v + dv * np.minimum(1.0, _STEP_V / np.maximum(big, 1e-300))
        if float(np.max(big)) < 1e-12:
            break
    _F, _J, currents = _residual(model, net, v)
    return v, currents


class CapacitorSystem:
    """C du/dt = i_c(u): the capacitor currents of a state, with the rest solved by Newton.

    One row: the linear part of the nodal matrix is assembled once; each Newton
    step adds only the diodes' stamps."""

    def __init__(self, model: LinearModel, state: str, row: np.ndarray, v_guess: np.ndarray) -> None:
        self.model = model
        net = _network(model, state, row[None, :])
        n, k = model.n, model.k
        self.C = model.capacitances(row[None, :])[0]
        self.afix = (net.vfix @ model.Acf.T)[0]
        g = net.g[0]
        K0 = np.zeros((n + k, n + k))
        K0[:n, :n] = (net.A.T * g) @ net.A + GMIN * np.eye(n)
        K0[:n, n:], K0[n:, :n] = model.Ac.T, model.Ac
        self.K0 = K0
        self.b0 = (g * net.vb[0]) @ net.A + net.leak[0]
        vfix = net.vfix[0]
        self.diodes = [(d, a, c, vfix[-1 - a] if a < 0 else 0.0, vfix[-1 - c] if c < 0 else 0.0)
                       for d, (a, c) in zip(model.circuit.diodes, _ends(model), strict=True)]
        self.v = np.array(v_guess, dtype=float)
        self.ic = np.zeros(k)

    def solve(self, u: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """(free node voltages, capacitor currents a -> b) with capacitor voltages u."""
        n = self.model.n
        x = np.concatenate([self.v, self.ic])
        rhs_fixed = np.concatenate([self.b0, self.afix - u])
        for _ in range(_MAX_NEWTON):
            K = self.K0.copy()
            r = K @ x + rhs_fixed
            for d, a, c, va_fix, vc_fix in self.diodes:
                vak = (x[a] if a >= 0 else va_fix) - (x[c] if c >= 0 else vc_fix)
                i0, g0 = _diode_scalar(d, vak)
                if a >= 0:
                    r[a] += i0
                    K[a, a] += g0
                    if c >= 0:
                        K[a, c] -= g0
                if c >= 0:
                    r[c] -= i0
                    K[c, c] += g0
                    if a >= 0:
                        K[c, a] -= g0
            step = np.linalg.solve(K, -r)
            big = float(np.max(np.abs(step[:n]))) if n else 0.0
            x = x + (min(1.0, _STEP_V / big) if big > 0 else 1.0) * step
            if big < 1e-12:
                break
        self.v, self.ic = x[:n], x[n:]
        return self.v, self.ic

    def rhs(self, _t: float, u: np.ndarray) -> np.ndarray:
        return self.solve(u)[1] / self.C


@dataclass(frozen=True, slots=True)
class NumericEdge:
    """One edge integrated numerically at one corner."""

    start_v: float
    final_v: float
    crossing_s: float | None
    slope_v_per_s: float | None
    t: np.ndarray  # samples of the receiver voltage (for plots)
    v: np.ndarray


def _rx(model: LinearModel, v: np.ndarray, vfix: np.ndarray) -> float:
    return float(v[model.rx]) if model.rx >= 0 else float(vfix[-1 - model.rx])


def numeric_edge(model: LinearModel, from_state: str, to_state: str, row: np.ndarray, vth: float,
                 direction: int, horizon_s: float, pwl_starts: tuple[np.ndarray, np.ndarray], *,
                 full: bool = False) -> NumericEdge:
    """The edge from the steady state of `from_state`: time to vth (None when not reached
    within `horizon_s` or when the level starts past it), slope there, samples.

    pwl_starts: the piecewise-linear steady-state node voltages (N=1 rows) of
    `from_state` and `to_state` (mna.dc_solve with exact=False), Newton's start."""
    from scipy.integrate import solve_ivp

    row = np.asarray(row, dtype=float)
    P = row[None, :]
    v_start, _ = dc_newton(model, from_state, P, pwl_starts[0])
    v_end, _ = dc_newton(model, to_state, P, pwl_starts[1])
    vfix = model.fixed_voltages(P)[0]
    start_v, final_v = _rx(model, v_start[0], vfix), _rx(model, v_end[0], vfix)
    before = direction * (vth - start_v) > 0
    if model.k == 0:
        crossing = 0.0 if before and direction * (final_v - vth) >= 0 else None
        return NumericEdge(start_v, final_v, crossing, math.inf if crossing == 0.0 else None,
                           np.array([0.0]), np.array([final_v]))
    # The capacitor branch voltages of the starting state (as mna.cap_voltages).
    u0 = (v_start @ model.Ac.T + model.fixed_voltages(P) @ model.Acf.T)[0]
    sys = CapacitorSystem(model, to_state, row, v_start[0])
    v_jump = _rx(model, sys.solve(u0)[0], vfix)
    if before and direction * (v_jump - vth) >= 0:  # the receiver jumps past the threshold
        return NumericEdge(start_v, final_v, 0.0, math.inf, np.array([0.0]), np.array([v_jump]))

    def event(_t: float, u: np.ndarray) -> float:
        return _rx(model, sys.solve(u)[0], vfix) - vth

    event.terminal = not full  # type: ignore[attr-defined]
    event.direction = float(direction)  # type: ignore[attr-defined]
    sol = solve_ivp(sys.rhs, (0.0, horizon_s), u0, method="Radau", rtol=1e-8, atol=1e-10,
                    events=event if before else None)
    crossing = slope = None
    if before and sol.t_events and sol.t_events[0].size:
        crossing = float(sol.t_events[0][0])
        u_c = sol.y_events[0][0]
        eps = max(crossing * 1e-6, 1e-15)
        v_a = _rx(model, sys.solve(u_c)[0], vfix)
        v_b = _rx(model, sys.solve(u_c + sys.rhs(0.0, u_c) * eps)[0], vfix)
        slope = abs(v_b - v_a) / eps
    ts = sol.t
    vs = np.array([_rx(model, sys.solve(u)[0], vfix) for u in sol.y.T])
    if crossing is not None:  # the crossing is a sample: a plotted curve passes through its mark
        at = int(np.searchsorted(ts, crossing))
        ts, vs = np.insert(ts, at, crossing), np.insert(vs, at, vth)
    return NumericEdge(start_v, final_v, crossing, slope, ts, vs)


def dc_refined(model: LinearModel, state: str, P: np.ndarray, pwl):
    """A piecewise-linear DcBatch with the Shockley diodes' exact steady state."""
    from dataclasses import replace

    v, currents = dc_newton(model, state, P, pwl.v)
    net = _network(model, state, P)
    topo = model.topology(state, (False,) * len(model.circuit.diodes))
    i_br = net.g * (v @ net.A.T + net.vb)
    i_throw = np.zeros_like(pwl.i_throw)
    for t, col in enumerate(topo.throw_cols):
        if col is not None:
            i_throw[:, t] = i_br[:, col]
    floating = pwl.floating
    rx_v = v[:, model.rx].copy() if model.rx >= 0 else pwl.rx_v.copy()
    rx_v[floating] = np.nan
    v = np.where(floating[:, None], pwl.v, v)
    return replace(pwl, v=v, rx_v=rx_v, i_res=i_br[:, topo.res_cols], i_throw=i_throw,
                   diodes_on=currents > 0, i_diode=np.maximum(currents, 0.0))
