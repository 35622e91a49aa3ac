"""One capacitor and card diodes: times between levels by quadrature, not step by step.

Why: a stage with one capacitor is one-dimensional whatever its diodes do.
With the capacitor as a voltage source u, the rest of the network (resistors,
closed throws, Shockley diodes, the loads' elements) is a one-port whose
current i(u) into the capacitor depends on u alone, so C du/dt = i(u) and
the time from one level to another is an integral,

    t = integral of C / i(u) du,

and the level after a given time is that integral's inverse. Both are
computed by adaptive Gauss-Legendre quadrature (8 nodes, each panel checked
against its two halves, 1e-10 relative) in w = ln|u_inf - u|, u_inf the
state's steady level, where the integrand C |u_inf - u| / |i(u)| is the
local time constant: constant for a linear network, smooth through a diode's
exponential, bounded at the steady level. i(u) and the receiver's voltage
come from Newton's method on the nodal equations (nonlinear.CapacitorSystem's
matrices) for every quadrature node at once, and the receiver's slope from
the same Jacobian (d x / d u = J^-1 e_u). This replaces step-by-step Radau
integration (thousands of scalar Newton solves per edge, kept for several
capacitors) with a few batched solves, to the quadrature's tolerance.
"""

from __future__ import annotations

import math

import numpy as np

from drc.analysis.physics.compiled import LinearModel
from drc.analysis.physics.nonlinear import THERMAL_V, CapacitorSystem, NumericEdge, dc_newton, diode_current
from drc.analysis.physics.roots import brent_root
from drc.caching import memoized

RTOL = 1e-10  # relative accuracy of every time
_FLOOR = 1e-9  # relative distance to the steady level that counts as the steady level
_MAX_PANELS = 4096  # panels refined at once: beyond, the finest estimates stand
_STEP_V = 0.5  # largest Newton step of any node voltage
_MAX_NEWTON = 100
_MAX_ROUNDS = 40
_GRID = 161  # points of the search for a level along the way


@memoized(1)
def _gauss_legendre() -> tuple[np.ndarray, np.ndarray]:
    """The 8-point Gauss-Legendre nodes and weights on [-1, 1] (Golub-Welsch: the
    eigenvalues of the Jacobi matrix of the Legendre polynomials; numpy.polynomial
    would cost a small board's start-up 13 ms)."""
    k = np.arange(1, 8)
    beta = k / np.sqrt(4.0 * k * k - 1.0)
    x, vectors = np.linalg.eigh(np.diag(beta, 1) + np.diag(beta, -1))
    return x, 2.0 * vectors[0] ** 2


class OnePort:
    """One capacitor in one actuator state at one corner (a parameter row)."""

    def __init__(self, model: LinearModel, state: str, row: np.ndarray, v_guess: np.ndarray) -> None:
        if model.k != 1:
            raise ValueError("a one-port needs exactly one capacitor")
        self.model = model
        self.sys = CapacitorSystem(model, state, row, v_guess)
        self.n = model.n
        self.C = float(self.sys.C[0])
        vfix = model.fixed_voltages(np.asarray(row, dtype=float)[None, :])[0]
        self.rx_fixed = None if model.rx >= 0 else float(vfix[-1 - model.rx])
        v_end, _ = dc_newton(model, state, np.asarray(row, dtype=float)[None, :], v_guess[None, :])
        self.v_end = v_end[0]
        u_end = self.v_end @ model.Ac[0] + vfix @ model.Acf[0]
        self.u_inf = float(u_end)
        x_end = np.concatenate([self.v_end, [0.0]])
        self._anchors: list[tuple[float, np.ndarray]] = [(self.u_inf, x_end)]
        self._single = self._one_diode() if len(self.sys.diodes) == 1 else None

    def _one_diode(self) -> tuple:
        """The network's linear responses for a single diode: x = x0 + xu u + xd i, with i
        the diode's current, so i follows in closed form (see `_solve_single`)."""
        sys, n = self.sys, self.n
        d, a, c, va_fix, vc_fix = sys.diodes[0]
        rhs = np.zeros((n + 1, 3))
        rhs[:n, 0], rhs[n, 0] = -sys.b0, -sys.afix[0]
        rhs[n, 1] = 1.0
        if a >= 0:
            rhs[a, 2] -= 1.0
        if c >= 0:
            rhs[c, 2] += 1.0
        X = np.linalg.solve(sys.K0, rhs)

        def across(col: np.ndarray, fixed: bool) -> float:
            va = col[a] if a >= 0 else (va_fix if fixed else 0.0)
            return va - (col[c] if c >= 0 else (vc_fix if fixed else 0.0))

        # open-circuit voltage = v0 + vu u; the network's resistance seen by the diode: rho
        return d, X[:, 0], X[:, 1], X[:, 2], across(X[:, 0], True), across(X[:, 1], False), -across(X[:, 2], False)

    def _solve_single(self, u: np.ndarray, slopes: bool):
        """One diode: its current from the open-circuit voltage it sees and the network's
        resistance rho in closed form (the Shockley diode behind RS + rho with Wright's omega;
        the piecewise-linear one behind Ron + rho), then every node by superposition."""
        assert self._single is not None
        d, x0, xu, xd, v0, vu, rho = self._single
        voc = v0 + vu * u
        if d.card is None:
            r_t = d.on_ohms + rho
            on = voc > d.forward_v
            i = np.where(on, (voc - d.forward_v) / r_t, 0.0)
            di = np.where(on, 1.0 / r_t, 0.0)
        else:
            i_s, nvt, r_t = d.card.saturation_a, d.card.emission * THERMAL_V, d.card.series_ohms + rho
            if r_t > 0:
                from scipy.special import wrightomega

                w = np.real(wrightomega(math.log(i_s * r_t / nvt) + (voc + i_s * r_t) / nvt))
                i = nvt / r_t * w - i_s
            else:
                i = i_s * (np.exp(np.minimum(voc / nvt, 700.0)) - 1.0)
            with np.errstate(divide="ignore"):  # i = -IS exactly: a blocked diode, no slope
                di = 1.0 / (r_t + nvt / (i + i_s))
        n = self.n
        ic = x0[n] + xu[n] * u + xd[n] * i
        if self.rx_fixed is not None:
            vrx = np.full(u.size, self.rx_fixed)
            drx = np.zeros(u.size)
        else:
            k = self.model.rx
            vrx = x0[k] + xu[k] * u + xd[k] * i
            drx = xu[k] + xd[k] * di * vu
        deriv = np.column_stack([xu[n] + xd[n] * di * vu, drx]) if slopes else None
        return ic, vrx, deriv

    # ------------------------------------------------------------ the network at given u

    def _guess(self, u: np.ndarray) -> np.ndarray:
        """Starting points for Newton: the anchors' solutions interpolated in u."""
        anchors = sorted(self._anchors, key=lambda a: a[0])
        us = np.array([a[0] for a in anchors])
        xs = np.stack([a[1] for a in anchors])
        if len(anchors) == 1:
            return np.tile(xs[0], (u.size, 1))
        return np.stack([np.interp(u, us, xs[:, j]) for j in range(xs.shape[1])], axis=1)

    def _jacobian(self, x: np.ndarray, u: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        sys, M = self.sys, x.shape[0]
        r = x @ sys.K0.T
        r[:, :self.n] += sys.b0
        r[:, self.n] += sys.afix[0] - u
        J = np.broadcast_to(sys.K0, (M, *sys.K0.shape)).copy()
        for d, a, c, va_fix, vc_fix in sys.diodes:
            vak = (x[:, a] if a >= 0 else va_fix) - (x[:, c] if c >= 0 else vc_fix)
            i0, g0 = diode_current(d, np.asarray(vak, dtype=float))
            for node, sign in ((a, 1.0), (c, -1.0)):
                if node >= 0:
                    r[:, node] += sign * i0
            for p, sp in ((a, 1.0), (c, -1.0)):
                for q, sq in ((a, 1.0), (c, -1.0)):
                    if p >= 0 and q >= 0:
                        J[:, p, q] += sp * sq * g0
        return r, J

    def solve(self, u, slopes: bool = False) -> tuple[np.ndarray, np.ndarray, np.ndarray | None]:
        """(current into the capacitor, receiver voltage, and with slopes=True the
        derivatives of both by u as an (M, 2) array) at each capacitor voltage u."""
        u = np.atleast_1d(np.asarray(u, dtype=float))
        if self._single is not None:
            return self._solve_single(u, slopes)
        x = self._guess(u)
        n = self.n
        for _ in range(_MAX_NEWTON):
            r, J = self._jacobian(x, u)
            step = np.linalg.solve(J, -r[:, :, None])[:, :, 0]
            big = np.max(np.abs(step[:, :n]), axis=1) if n else np.zeros(u.size)
            x = x + step * np.minimum(1.0, _STEP_V / np.maximum(big, 1e-300))[:, None]
            if float(np.max(big, initial=0.0)) < 1e-12:
                break
        ic = x[:, n]
        vrx = np.full(u.size, self.rx_fixed) if self.rx_fixed is not None else x[:, self.model.rx]
        deriv = None
        if slopes:
            _r, J = self._jacobian(x, u)
            e = np.zeros((u.size, n + 1, 1))
            e[:, n, 0] = 1.0
            dx = np.linalg.solve(J, e)[:, :, 0]
            drx = np.zeros(u.size) if self.rx_fixed is not None else dx[:, self.model.rx]
            deriv = np.column_stack([dx[:, n], drx])
        return ic, vrx, deriv

    def anchor(self, u: float) -> None:
        """Remember the solution at u as a starting point for later solves near it."""
        if self._single is not None:
            return
        x = self._guess(np.array([u]))
        for _ in range(_MAX_NEWTON):
            r, J = self._jacobian(x, np.array([u]))
            step = np.linalg.solve(J, -r[:, :, None])[:, :, 0]
            big = float(np.max(np.abs(step[:, :self.n]), initial=0.0))
            x = x + step * min(1.0, _STEP_V / big if big > 0 else 1.0)
            if big < 1e-12:
                break
        self._anchors.append((float(u), x[0]))

    # ------------------------------------------------------------ along the way to the steady level

    def _u(self, u_a: float, w: np.ndarray) -> np.ndarray:
        return self.u_inf - math.copysign(1.0, self.u_inf - u_a) * np.exp(w)

    def _w(self, u: float) -> float:
        d = abs(self.u_inf - u)
        return math.log(d) if d > 0 else -math.inf

    def _floor(self, u_a: float) -> float:
        return math.log(max(abs(self.u_inf - u_a), 1e-300) * _FLOOR)

    def _integrand(self, u_a: float, w: np.ndarray) -> np.ndarray:
        u = self._u(u_a, w)
        ic = self.solve(u)[0]
        d = self.u_inf - u
        with np.errstate(divide="ignore", invalid="ignore"):
            f = self.C * d / ic
        return np.where(np.isfinite(f) & (f > 0), f, np.inf)  # not moving that way: never there

    def _panels(self, u_a: float, w_top: float, w_bottom: float) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """(tops, bottoms, integrals) of accepted panels from w_top down to w_bottom, in order."""
        gx, gw = _gauss_legendre()
        tops = np.linspace(w_top, w_bottom, 17)[:-1]
        bots = np.linspace(w_top, w_bottom, 17)[1:]
        done_t, done_b, done_i = [], [], []
        scale = None
        span = abs(w_top - w_bottom)
        for _ in range(_MAX_ROUNDS):
            h = (tops - bots) / 2.0
            mid = (tops + bots) / 2.0
            q = h / 2.0
            nodes = np.concatenate([mid[:, None] + h[:, None] * gx[None, :],
                                    (mid - q)[:, None] + q[:, None] * gx[None, :],
                                    (mid + q)[:, None] + q[:, None] * gx[None, :]], axis=1)
            f = self._integrand(u_a, nodes.ravel()).reshape(nodes.shape)
            whole = h * (f[:, :8] @ gw)
            halves = q * (f[:, 8:16] @ gw + f[:, 16:] @ gw)
            if not np.all(np.isfinite(halves)):
                bad = int(np.flatnonzero(~np.isfinite(halves))[0])
                done_t.append(tops[bad])
                done_b.append(bots[bad])
                done_i.append(math.inf)
                keep = np.arange(tops.size) < bad
                tops, bots, whole, halves = tops[keep], bots[keep], whole[keep], halves[keep]
            if scale is None:
                scale = float(np.sum(np.abs(halves))) or 1e-300
            # Near the steady level the current is a small difference of large ones: a panel
            # agrees with its halves to rounding (1e-13 of the levels over the distance left)
            # or to the tolerance, whichever is looser; splitting it further gains nothing.
            d_low = np.exp(bots)
            noise = 1e-13 * (abs(self.u_inf) + d_low) / d_low * np.abs(halves)
            ok = np.abs(whole - halves) <= np.maximum(RTOL * scale * (tops - bots) / span, noise)
            done_t += list(tops[ok])
            done_b += list(bots[ok])
            done_i += list(halves[ok])
            tops, bots = tops[~ok], bots[~ok]
            if tops.size == 0:
                break
            if tops.size > _MAX_PANELS:  # rounding noise, not shape: the finest estimates stand
                done_t += list(tops)
                done_b += list(bots)
                done_i += list(halves[~ok])
                break
            mids = (tops + bots) / 2.0
            tops, bots = np.concatenate([tops, mids]), np.concatenate([mids, bots])
        else:  # not converged to the tolerance: take the finest estimate (never seen on a stage)
            done_t += list(tops)
            done_b += list(bots)
            done_i += list(halves[~ok])
        order = np.argsort(-np.array(done_t))
        T, B, I_ = np.array(done_t)[order], np.array(done_b)[order], np.array(done_i)[order]
        stop = np.flatnonzero(~np.isfinite(I_))  # nothing beyond a level it never passes
        if stop.size:
            T, B, I_ = T[:stop[0] + 1], B[:stop[0] + 1], I_[:stop[0] + 1]
        return T, B, I_

    def time_between(self, u_a: float, u_b: float) -> float:
        """The time from u_a to u_b on the way to the steady level (inf: never)."""
        w_a, w_b = self._w(u_a), self._w(u_b)
        if (u_b - u_a) * (self.u_inf - u_a) < 0 or w_b > w_a:
            return math.inf if u_b != u_a else 0.0
        if (u_b - self.u_inf) * (self.u_inf - u_a) > 0:  # past the steady level: never (no overshoot)
            return math.inf
        if w_b == w_a:
            return 0.0
        if not math.isfinite(w_b):
            return math.inf
        self.anchor(u_a)
        return float(np.sum(self._panels(u_a, w_a, w_b)[2]))

    def level_after(self, u_a: float, t: float) -> float:
        """The capacitor voltage a time t after it was u_a."""
        w_a = self._w(u_a)
        if t <= 0 or not math.isfinite(w_a):
            return u_a
        self.anchor(u_a)
        T, B, I_ = self._panels(u_a, w_a, self._floor(u_a))
        cum = np.cumsum(I_)
        j = int(np.searchsorted(cum, t))
        if j >= cum.size:
            return float(self._u(u_a, np.array([B[-1]]))[0]) if np.isfinite(cum[-1]) else self.u_inf
        before = float(cum[j - 1]) if j else 0.0
        if not math.isfinite(I_[j]):
            return float(self._u(u_a, np.array([T[j]]))[0])
        top = float(T[j])
        gx, gw = _gauss_legendre()

        def g(w: float) -> float:
            h = (top - w) / 2.0
            f = self._integrand(u_a, (top + w) / 2.0 + h * gx)
            return before + h * float(f @ gw) - t

        w = brent_root(g, float(B[j]), top, xtol=1e-14, rtol=1e-13, maxiter=200)
        return float(self._u(u_a, np.array([w]))[0])

    def reach(self, u_a: float, vth: float, direction: int) -> float | None:
        """The first capacitor voltage, from u_a on the way to the steady level, where the
        receiver is at vth coming from the `direction` side (u_a itself when it is past
        already); None when it never gets there."""
        v_a = float(self.solve(np.array([u_a]))[1][0])
        if direction * (v_a - vth) >= 0:
            return u_a
        w_a = self._w(u_a)
        if not math.isfinite(w_a):
            return None
        self.anchor(u_a)
        ws = np.linspace(w_a, self._floor(u_a), _GRID)
        v = self.solve(self._u(u_a, ws))[1]
        past = np.flatnonzero(direction * (v - vth) >= 0)
        if past.size == 0:
            return None
        i = int(past[0])

        def g(w: float) -> float:
            return direction * (float(self.solve(self._u(u_a, np.array([w])))[1][0]) - vth)

        w = brent_root(g, float(ws[i]), float(ws[i - 1]), xtol=1e-15, rtol=1e-14, maxiter=200)
        return float(self._u(u_a, np.array([w]))[0])

    def samples(self, u_a: float, u_b: float) -> tuple[np.ndarray, np.ndarray]:
        """(t, receiver voltage) at the panel ends from u_a to u_b (for plots)."""
        w_a, w_b = self._w(u_a), self._w(u_b)
        if not (math.isfinite(w_a) and math.isfinite(w_b)) or w_b >= w_a:
            return np.array([0.0]), self.solve(np.array([u_a]))[1]
        T, B, I_ = self._panels(u_a, w_a, w_b)
        w = np.concatenate([[w_a], B])
        t = np.concatenate([[0.0], np.cumsum(I_)])
        ok = np.isfinite(t)
        return t[ok], self.solve(self._u(u_a, w[ok]))[1]


def one_cap_edge(model: LinearModel, from_state: str, to_state: str, row: np.ndarray, vth: float,
                 direction: int, pwl_starts: tuple[np.ndarray, np.ndarray], *, full: bool = False) -> NumericEdge:
    """`nonlinear.numeric_edge` for one capacitor, by quadrature: the time to vth from
    the steady state of `from_state` (None when it starts past vth or never gets there),
    the slope there and samples (to the crossing, or to the steady level with full=True)."""
    row = np.asarray(row, dtype=float)
    P = row[None, :]
    v_start, _ = dc_newton(model, from_state, P, pwl_starts[0])
    vfix = model.fixed_voltages(P)[0]
    start_v = float(v_start[0, model.rx]) if model.rx >= 0 else float(vfix[-1 - model.rx])
    u0 = float(v_start[0] @ model.Ac[0] + vfix @ model.Acf[0])
    port = OnePort(model, to_state, row, pwl_starts[1][0])
    final_v = float(port.v_end[model.rx]) if model.rx >= 0 else start_v
    before = direction * (vth - start_v) > 0
    v_jump = float(port.solve(np.array([u0]))[1][0])
    if before and direction * (v_jump - vth) >= 0:  # the receiver jumps past the threshold
        return NumericEdge(start_v, final_v, 0.0, math.inf, np.array([0.0]), np.array([v_jump]))
    u_c = port.reach(u0, vth, direction) if before else None
    crossing = slope = None
    if u_c is not None:
        crossing = port.time_between(u0, u_c)
        if not math.isfinite(crossing):
            crossing = None
        else:
            ic, _v, d = port.solve(np.array([u_c]), slopes=True)
            assert d is not None
            slope = abs(float(d[0, 1]) * float(ic[0]) / port.C)
    if not full:  # timing alone: the start and the crossing
        ts = np.array([0.0] if crossing is None else [0.0, crossing])
        vs = np.array([v_jump] if crossing is None else [v_jump, vth])
        return NumericEdge(start_v, final_v, crossing, slope, ts, vs)
    ts, vs = port.samples(u0, port.u_inf - (port.u_inf - u0) * _FLOOR)
    if crossing is not None:  # the crossing is a sample: a plotted curve passes through its mark
        at = int(np.searchsorted(ts, crossing))
        ts, vs = np.insert(ts, at, crossing), np.insert(vs, at, vth)
    return NumericEdge(start_v, final_v, crossing, slope, ts, vs)


__all__ = ["RTOL", "OnePort", "one_cap_edge"]
