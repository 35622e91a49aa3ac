"""A state's trajectory from any capacitor voltages: where it is after a time, when it
reaches a level.

Why: the edge solvers start from a steady state, but the closure-and-opening
reading of a bouncing contact (analysis.first_edge) starts each interval
where the last one left the capacitors. One interface over the two exact
paths: stages without a card diode follow `transient.walk` (exponential
sums between diode events, any number of capacitors); one capacitor with a
card diode follows `oneport.OnePort` (quadrature of C / i(u)). Several
capacitors with a card diode have no such path here (`flow` gives None).
"""

from __future__ import annotations

import math

import numpy as np

from drc.analysis.physics.compiled import LinearModel
from drc.analysis.physics.mna import cap_voltages, dc_solve
from drc.analysis.physics.nonlinear import nonlinear
from drc.analysis.physics.oneport import OnePort
from drc.analysis.physics.transient import first_crossing, walk


class Flow:
    """One actuator state at one corner (a parameter row)."""

    def after(self, u0: np.ndarray, t: float) -> np.ndarray:
        """The capacitor voltages a time t after they were u0."""
        raise NotImplementedError

    def reach(self, u0: np.ndarray, vth: float, direction: int) -> tuple[float, np.ndarray] | None:
        """(time, capacitor voltages) when the receiver first gets to vth from the
        `direction` side (0 when it is past already); None: never."""
        raise NotImplementedError

    def receiver(self, u: np.ndarray) -> float:
        """The receiver's voltage with capacitor voltages u."""
        raise NotImplementedError

    def steady(self) -> np.ndarray:
        """The capacitor voltages the state settles to."""
        raise NotImplementedError


class _Exponential(Flow):
    def __init__(self, model: LinearModel, state: str, row: np.ndarray) -> None:
        self.model, self.state, self.row = model, state, row
        self.on = tuple(bool(x) for x in dc_solve(model, state, row[None, :]).diodes_on[0])

    def after(self, u0: np.ndarray, t: float) -> np.ndarray:
        for s in walk(self.model, self.state, self.row, u0, self.on):
            if t <= s.t0 + s.duration:
                return s.u_at(t - s.t0)
        return s.u_at(s.duration)  # MAX_EVENTS stretches: where the last ended

    def reach(self, u0: np.ndarray, vth: float, direction: int) -> tuple[float, np.ndarray] | None:
        for s in walk(self.model, self.state, self.row, u0, self.on):
            tc = first_crossing(s.rx, vth, direction, s.duration)
            if tc is not None:
                return s.t0 + tc, s.u_at(tc)
        return None

    def receiver(self, u: np.ndarray) -> float:
        s = next(walk(self.model, self.state, self.row, u, self.on))
        return s.rx(0.0)

    def steady(self) -> np.ndarray:
        return cap_voltages(self.model, dc_solve(self.model, self.state, self.row[None, :]))[0]


class _Quadrature(Flow):
    def __init__(self, model: LinearModel, state: str, row: np.ndarray) -> None:
        guess = dc_solve(model, state, row[None, :], exact=False).v[0]
        self.port = OnePort(model, state, row, guess)

    def after(self, u0: np.ndarray, t: float) -> np.ndarray:
        return np.array([self.port.level_after(float(u0[0]), t)])

    def reach(self, u0: np.ndarray, vth: float, direction: int) -> tuple[float, np.ndarray] | None:
        u_c = self.port.reach(float(u0[0]), vth, direction)
        if u_c is None:
            return None
        t = self.port.time_between(float(u0[0]), u_c)
        return (t, np.array([u_c])) if math.isfinite(t) else None

    def receiver(self, u: np.ndarray) -> float:
        return float(self.port.solve(np.array([float(u[0])]))[1][0])

    def steady(self) -> np.ndarray:
        return np.array([self.port.u_inf])


def flow(model: LinearModel, state: str, row: np.ndarray) -> Flow | None:
    """The trajectory of `state` at `row`; None for several capacitors with a card diode."""
    row = np.asarray(row, dtype=float)
    if not nonlinear(model):
        return _Exponential(model, state, row)
    return _Quadrature(model, state, row) if model.k == 1 else None


__all__ = ["Flow", "flow"]
