"""One linear configuration of a stage, solved in closed form for many trials at once.

Between two switching instants a stage is linear: with the capacitor voltages
u carried across each toggle, the reduced system of the physics package
(C du/dt = h - Y u, node voltages cv + Mv u, from
drc.analysis.physics.mna.reduce_dynamic) is diagonalised once per state and
advanced exactly for every trial. The voltages watched (the receiver pin, and
a latch's other input) are sums of exponentials; `pieces` splits an interval
where each is monotonic (one capacitor: nowhere; two: at its one stationary
point, in closed form; three or more: on a grid of the time constants, which
`_notes` in injection states), and `crossing` finds where a monotonic piece
crosses a level, by bisection on the exact solution.
"""

from __future__ import annotations

import numpy as np

from drc.analysis.physics.compiled import LinearModel
from drc.analysis.physics.mna import reduce_dynamic

_GRID_FRACTIONS = np.array([0.03, 0.1, 0.3, 1.0, 3.0])  # multiples of each tau, 3+ capacitors
_BISECTIONS = 60  # halvings of a piece: below 1e-18 of it


class Mode:
    """One linear configuration (actuator state, leakage) diagonalised once.

    z = Q^T (u / d) with d = C^-1/2 decouples C du/dt = h - Y u into
    dz/dt = r - lam z; the watched voltages are c + z @ W (one column each).
    """

    def __init__(self, model: LinearModel, state: str, row: np.ndarray, nodes: tuple[int, ...]):
        red = reduce_dynamic(model, model.topology(state, ()), row[None, :])
        k = model.k
        c, m = [], []
        for node in nodes:
            if node >= 0:
                c.append(float(red.cv[0, node]))
                m.append(np.nan_to_num(red.Mv[0, node]))
            else:  # the node is a rail or ground
                c.append(float(red.vfix[0, -1 - node]))
                m.append(np.zeros(k))
        self.c = np.array(c)
        if k == 0:
            self.d = self.lam = self.r = self.zinf = np.zeros(0)
            self.W = np.zeros((0, len(nodes)))
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
        self.W = ((np.array(m) * d[None, :]) @ Q).T  # (k, nodes)

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

    def volts(self, z: np.ndarray) -> np.ndarray:
        """(N, nodes): the watched voltages."""
        return self.c[None, :] + z @ self.W

    def at(self, z0: np.ndarray, t: np.ndarray) -> np.ndarray:
        """(N, nodes) at time t (per trial) into the interval."""
        return self.volts(self.advance(z0, t))

    def pieces(self, z0: np.ndarray, dt: np.ndarray) -> np.ndarray:
        """(N, j) instants inside (0, dt) splitting it into pieces where every watched
        voltage is monotonic, ascending, NaN-padded."""
        n, k = z0.shape[0], self.lam.size
        if k <= 1:
            return np.zeros((n, 0))
        if k == 2:
            cols = [self._stationary(z0, dt, j) for j in range(self.W.shape[1])]
            return np.sort(np.column_stack(cols), axis=1)
        pts = np.unique(np.concatenate([tau * _GRID_FRACTIONS for tau in self.taus()] or [np.zeros(0)]))
        out = np.where(pts[None, :] < dt[:, None], pts[None, :], np.nan)
        return np.sort(out, axis=1)

    def _stationary(self, z0: np.ndarray, dt: np.ndarray, j: int) -> np.ndarray:
        """The one stationary instant of watched voltage j (two capacitors), NaN if none inside."""
        w = self.W[:, j]
        a = np.where(self.pos, w * (z0 - self.zinf), 0.0)
        s = float(np.dot(w[~self.pos], self.r[~self.pos]))
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
                return np.full(z0.shape[0], np.nan)
        return np.where(np.isfinite(t) & (t > 0) & (t < dt), t, np.nan)

    def crossing(self, z0: np.ndarray, j: int, ta: np.ndarray, tb: np.ndarray, level: np.ndarray | float,
                 rising: np.ndarray) -> np.ndarray:
        """Where voltage j crosses `level` inside the monotonic piece [ta, tb] (it must)."""
        lo, hi = ta.astype(float).copy(), tb.astype(float).copy()
        for _ in range(_BISECTIONS):
            mid = 0.5 * (lo + hi)
            v = self.at(z0, mid)[:, j]
            before = np.where(rising, v < level, v > level)
            lo = np.where(before, mid, lo)
            hi = np.where(before, hi, mid)
        return hi
