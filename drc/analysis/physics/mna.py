"""Modified nodal analysis of a compiled stage, batched over corners.

Two solves live here. `dc_solve` gives the steady state of one actuator
state (capacitors open): node voltages, the Thevenin equivalent the receiver
sees (the network without the receiver's own leakage), branch currents, and
whether the receiver floats (no DC path to a rail or ground). Diodes are
piecewise linear (Vf in series with Ron when conducting, open otherwise); their
states are iterated to consistency, corner by corner, grouped so each group is
one batched linear solve. `reduce_dynamic` replaces each capacitor by a
voltage source u and solves the resistive rest once, giving the linear maps
C du/dt = h - Y u and v = cv + Mv u that the transient solver integrates
exactly. Leakage is the current INTO the receiver pin, so it leaves the node.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from drc.analysis.physics.compiled import LinearModel, Topology, conductances
from drc.analysis.physics.nonlinear import dc_refined, nonlinear

_DIODE_I_TOL = 1e-12  # A: a conducting diode may carry this much reverse current (rounding)
_DIODE_V_TOL = 1e-9  # V: a blocking diode may see this much forward voltage over Vf


@dataclass(frozen=True, slots=True)
class DcBatch:
    """Steady state of one actuator state at N corners (arrays over corners)."""

    v: np.ndarray  # (N, n) free node voltages; 0 where a node floats
    vfix: np.ndarray  # (N, nf)
    rx_v: np.ndarray  # (N,) receiver voltage, leakage included
    thevenin_v: np.ndarray  # (N,) open-circuit voltage at the receiver (no leakage)
    thevenin_ohms: np.ndarray  # (N,)
    floating: np.ndarray  # (N,) bool: receiver has no DC path to a fixed node
    i_res: np.ndarray  # (N, nR) current through each resistor, a -> b
    i_throw: np.ndarray  # (N, nT) current through each throw, a -> b (0 when open)
    diodes_on: np.ndarray  # (N, nd) bool
    i_diode: np.ndarray  # (N, nd) forward current of each diode (0 when blocking)


@dataclass(frozen=True, slots=True)
class Reduced:
    """The network seen by its capacitors, at N corners.

    C du/dt = h - Y u for the capacitor voltages u (merged branches, a - b);
    free node voltages v = cv + Mv u. `active[j]` is False for a capacitor on
    an island with no path to a fixed node: its voltage stays constant.
    """

    C: np.ndarray  # (N, k)
    Y: np.ndarray  # (N, k, k)
    h: np.ndarray  # (N, k)
    Mv: np.ndarray  # (N, n, k)
    cv: np.ndarray  # (N, n); nan for nodes with no path at all
    vfix: np.ndarray  # (N, nf)
    nodes: np.ndarray  # (n,) bool: nodes the solution defines


def node_voltage(v: np.ndarray, vfix: np.ndarray, code: int) -> np.ndarray:
    """Voltage of a node code (free >= 0, fixed < 0) across corners."""
    return v[:, code] if code >= 0 else vfix[:, -1 - code]


# Up to this many unknowns a stacked system is solved by unrolled elimination
# over the stack (a few dozen whole-array operations), faster than LAPACK's
# per-matrix calls for the hundreds of thousands of tiny systems a board has.
_UNROLL_MAX = 6


def _assemble_g(A: np.ndarray, g: np.ndarray) -> np.ndarray:
    """Nodal matrices A^T diag(g) A as (n, n, N): one matrix product, stack last.

    The stack runs along the last axis so each matrix entry is one contiguous
    vector: the elimination below then works on whole vectors.
    """
    m, n = A.shape
    W = (A[:, :, None] * A[:, None, :]).reshape(m, n * n)  # per-branch outer products
    if g.shape[0] == 1:
        # One row would be a matrix-vector product, summed in another order than the
        # matrix product of many rows: the same stage alone and in a batch must agree
        # to the last bit.
        return (W.T @ np.vstack([g, g]).T)[:, :1].reshape(n, n, 1)
    return (W.T @ g.T).reshape(n, n, g.shape[0])


def spd_solve(GT: np.ndarray, R: np.ndarray) -> np.ndarray:
    """Solve G X = R for stacks of symmetric positive definite G.

    GT: (n, n, N) (stack last, as `_assemble_g` gives it); R: (N, n, r).
    Returns X as (N, n, r). Nodal matrices of a network where every node
    reaches a fixed node are SPD, so elimination needs no pivoting.
    """
    n = GT.shape[0]
    if n > _UNROLL_MAX:
        return np.linalg.solve(np.moveaxis(GT, 2, 0), R)
    r = R.shape[2]
    g: list[list[Any]] = [[GT[i, j].copy() if j >= i else None for j in range(n)] for i in range(n)]
    rr = [[np.ascontiguousarray(R[:, i, c]) for c in range(r)] for i in range(n)]
    for j in range(n):
        inv = 1.0 / g[j][j]
        for i in range(j + 1, n):
            f = g[j][i] * inv  # symmetric: G[i, j] == G[j, i]
            for k in range(i, n):
                g[i][k] -= f * g[j][k]
            for c in range(r):
                rr[i][c] -= f * rr[j][c]
    X = np.empty(R.shape)
    xs: list[Any] = [None] * n
    for i in range(n - 1, -1, -1):
        inv = 1.0 / g[i][i]
        row = []
        for c in range(r):
            acc = rr[i][c]
            for j in range(i + 1, n):
                acc = acc - g[i][j] * xs[j][c]
            row.append(acc * inv)
            X[:, i, c] = row[c]
        xs[i] = row
    return X


def _dc_fixed(model: LinearModel, topo: Topology, P: np.ndarray):
    """DC solve with the diode states of `topo`.

    Returns (v, v0, vfix, unit, g, vb): v with every load's leakage, v0 the
    network alone, unit the response to 1 A drawn at the receiver (its
    Thevenin resistance at the receiver's node), and the open-circuit
    voltage at the receiver with the other loads' leakage as v0_rx in
    `thevenin_v` (see `_assemble`).
    """
    N, n = P.shape[0], model.n
    g = conductances(topo, P)
    vfix = model.fixed_voltages(P)
    vb = vfix @ topo.Af.T - topo.e  # fixed-node part of each branch voltage
    b = -(g * vb) @ topo.A
    v0 = np.zeros((N, n))
    unit = np.zeros((N, n))
    others = np.zeros((N, n))  # the other loads' leakage alone
    leaking = [(c, node) for c, node in zip(model.leak_cols, model.leak_nodes, strict=True)
               if node >= 0 and topo.dc_nodes[node]]
    idx = np.flatnonzero(topo.dc_nodes)
    if idx.size:
        G = _assemble_g(topo.A[:, idx], g)
        rhs = np.zeros((N, idx.size, 2 + len(leaking)))
        rhs[:, :, 0] = b[:, idx]
        if model.rx >= 0 and topo.dc_nodes[model.rx]:
            rhs[:, int(np.searchsorted(idx, model.rx)), 1] = 1.0
        for j, (_c, node) in enumerate(leaking):
            # 1 A drawn at the load's node, scaled by its leakage below (into the pin).
            rhs[:, int(np.searchsorted(idx, node)), 2 + j] = -1.0
        sol = spd_solve(G, rhs)
        v0[:, idx] = sol[:, :, 0]
        unit[:, idx] = sol[:, :, 1]
        for j, (c, _node) in enumerate(leaking):
            if c != model.leak_col:  # the own receiver's leakage is not part of its Thevenin source
                others[:, idx] += sol[:, :, 2 + j] * P[:, c][:, None]
    own = P[:, model.leak_col] if any(c == model.leak_col for c, _ in leaking) else np.zeros(N)
    v = v0 + others - own[:, None] * unit
    return v, v0 + others, vfix, unit, g, vb


def _consistent(model: LinearModel, topo: Topology, v, vfix, g, vb) -> np.ndarray:
    """(N, nd) diode states implied by a solution (True = conducting)."""
    out = np.empty((v.shape[0], len(model.circuit.diodes)), dtype=bool)
    for j, d in enumerate(model.circuit.diodes):
        col = topo.diode_cols[j]
        if col is not None:
            i = g[:, col] * (v @ topo.A[col] + vb[:, col])
            out[:, j] = i >= -_DIODE_I_TOL
        else:
            vak = (node_voltage(v, vfix, model.node_code(d.anode))
                   - node_voltage(v, vfix, model.node_code(d.cathode)))
            out[:, j] = vak > d.forward_v + _DIODE_V_TOL
    return out


def dc_solve(model: LinearModel, state: str, P: np.ndarray, exact: bool = True) -> DcBatch:
    """Steady state of `state` ("released"/"pressed") at each row of P.

    A stage with a diode from its model card (`nonlinear`) is refined by Newton's
    method from the piecewise-linear solution (exact=False stops before that);
    the Thevenin figures stay those of the piecewise-linear network."""
    P = np.atleast_2d(P)
    pwl = _dc_pwl(model, state, P)
    if not exact:
        return pwl
    return dc_refined(model, state, P, pwl) if nonlinear(model) else pwl


def _dc_pwl(model: LinearModel, state: str, P: np.ndarray) -> DcBatch:
    N, nd = P.shape[0], len(model.circuit.diodes)
    # Start with every diode conducting: the most connected network, so a
    # node fed only through a diode is not declared floating too early.
    states = np.ones((N, nd), dtype=bool)
    parts = _solve_groups(model, state, P, states)
    for _ in range(2 * nd + 4):
        new = parts["diodes"]
        if np.array_equal(new, states):
            break
        states = new
        parts = _solve_groups(model, state, P, states)
    parts["diodes"] = states
    return _assemble(model, parts)


def _solve_groups(model: LinearModel, state: str, P: np.ndarray, states: np.ndarray) -> dict:
    N = P.shape[0]
    n, nR, nT = model.n, len(model.circuit.resistors), len(model.circuit.throws)
    out = {
        "v": np.zeros((N, n)), "vfix": np.zeros((N, len(model.fixed))),
        "v0": np.zeros((N, n)), "unit": np.zeros((N, n)),
        "floating": np.zeros(N, dtype=bool), "i_res": np.zeros((N, nR)),
        "i_throw": np.zeros((N, nT)), "diodes": states.copy(),
        "i_diode": np.zeros((N, states.shape[1])),
    }
    groups: list[tuple[tuple[bool, ...], Any]]
    if states.shape[1] == 0:
        groups = [((), slice(None))]
    else:
        uniq, inverse = np.unique(states, axis=0, return_inverse=True)
        groups = [(tuple(bool(x) for x in row), inverse.ravel() == i) for i, row in enumerate(uniq)]
    for key, sel in groups:
        topo = model.topology(state, key)
        Ps = P[sel]
        v, v0, vfix, unit, g, vb = _dc_fixed(model, topo, Ps)
        out["v"][sel] = v
        out["v0"][sel] = v0
        out["unit"][sel] = unit
        out["vfix"][sel] = vfix
        out["floating"][sel] = model.rx >= 0 and not topo.board_dc_nodes[model.rx]
        i = g * (v @ topo.A.T + vb)
        out["i_res"][sel] = i[:, topo.res_cols]
        for t, col in enumerate(topo.throw_cols):
            if col is not None:
                out["i_throw"][sel, t] = i[:, col]
        for j, col in enumerate(topo.diode_cols):
            if col is not None:
                out["i_diode"][sel, j] = i[:, col]
        if states.shape[1]:
            out["diodes"][sel] = _consistent(model, topo, v, vfix, g, vb)
    return out


def _assemble(model: LinearModel, parts: dict) -> DcBatch:
    v, vfix = parts["v"], parts["vfix"]
    if model.rx >= 0:
        rx_v = v[:, model.rx].copy()
        th_v = parts["v0"][:, model.rx].copy()
        th_r = parts["unit"][:, model.rx].copy()
        floating = parts["floating"]
        rx_v[floating] = np.nan
        th_v[floating] = np.nan
        th_r[floating] = np.nan
    else:  # the receiver sits on a rail or on ground
        rx_v = vfix[:, -1 - model.rx].copy()
        th_v, th_r = rx_v.copy(), np.zeros_like(rx_v)
        floating = np.zeros(v.shape[0], dtype=bool)
    return DcBatch(v=v, vfix=vfix, rx_v=rx_v, thevenin_v=th_v, thevenin_ohms=th_r,
                   floating=floating, i_res=parts["i_res"], i_throw=parts["i_throw"],
                   diodes_on=parts["diodes"], i_diode=parts["i_diode"])


def cap_voltages(model: LinearModel, dc: DcBatch) -> np.ndarray:
    """(N, k) capacitor branch voltages of a steady state (initial conditions)."""
    return dc.v @ model.Ac.T + dc.vfix @ model.Acf.T


def reduce_dynamic(model: LinearModel, topo: Topology, P: np.ndarray) -> Reduced:
    """Solve the resistive network with each capacitor as a voltage source u."""
    P = np.atleast_2d(P)
    N, n, k = P.shape[0], model.n, model.k
    g = conductances(topo, P)
    vfix = model.fixed_voltages(P)
    vb = vfix @ topo.Af.T - topo.e
    b = -(g * vb) @ topo.A
    for c, node in zip(model.leak_cols, model.leak_nodes, strict=True):
        if node >= 0:
            b[:, node] -= P[:, c]  # leakage is current into the pin: it leaves the node
    C = model.capacitances(P)
    idx = np.flatnonzero(topo.tr_nodes)
    # A capacitor is active when it touches the connected part (either end, or
    # a fixed node); one on an isolated island keeps its voltage.
    active = np.array([(a < 0 or topo.tr_nodes[a]) or (bb < 0 or topo.tr_nodes[bb])
                       for a, bb in model.cap_nodes], dtype=bool)
    kidx = np.flatnonzero(active)
    ni, ki = idx.size, kidx.size
    Y, h, Mv = np.zeros((N, k, k)), np.zeros((N, k)), np.zeros((N, n, k))
    cv = np.full((N, n), np.nan)
    if ni + ki:
        G = _assemble_g(topo.A[:, idx], g)
        Acs = model.Ac[np.ix_(kidx, idx)]
        afv = vfix @ model.Acf[kidx].T  # (N, ki) fixed part of each cap voltage
        bs = b[:, idx]
        if ni and np.array_equal(topo.dc_nodes, topo.tr_nodes):
            # Every node has a DC path, so G is SPD: the bordered system
            # [[G, B^T], [B, 0]] (B = Acs) inverts by its Schur complement
            # S = -B G^-1 B^T (k x k) instead of a general inverse.
            X = spd_solve(G, np.concatenate([bs[:, :, None], np.broadcast_to(Acs.T, (N, ni, ki))], axis=2))
            x_b, X_u = X[:, :, 0], X[:, :, 1:]  # G^-1 b, G^-1 B^T
            S = np.einsum("ki,Nij->Nkj", Acs, X_u)  # B G^-1 B^T = -S
            Sinv = -np.linalg.inv(S) if ki > 1 else -1.0 / S
            # Kinv = [[Gi + Gi B^T Si B Gi, -Gi B^T Si], [-Si B Gi, Si]] with Si = S^-1
            K_vu = -np.einsum("Nik,Nkj->Nij", X_u, Sinv)
            K_iu = Sinv
            Bx = x_b @ Acs.T  # (N, ki): B G^-1 b
            v_b = x_b + np.einsum("Nik,Nk->Ni", X_u, np.einsum("Nkj,Nj->Nk", Sinv, Bx))
            i_b = -np.einsum("Nkj,Nj->Nk", Sinv, Bx)
            Mv[:, idx[:, None], kidx[None, :]] = K_vu
            cv[:, idx] = v_b - np.einsum("Nij,Nj->Ni", K_vu, afv)
            Y[:, kidx[:, None], kidx[None, :]] = -K_iu
            h[:, kidx] = i_b - np.einsum("Nij,Nj->Ni", K_iu, afv)
        else:
            K = np.zeros((N, ni + ki, ni + ki))
            K[:, :ni, :ni] = np.moveaxis(G, 2, 0)
            K[:, :ni, ni:] = Acs.T
            K[:, ni:, :ni] = Acs
            Kinv = np.linalg.inv(K)
            K_vb, K_vu = Kinv[:, :ni, :ni], Kinv[:, :ni, ni:]
            K_ib, K_iu = Kinv[:, ni:, :ni], Kinv[:, ni:, ni:]
            Mv[:, idx[:, None], kidx[None, :]] = K_vu
            cv[:, idx] = np.einsum("Nij,Nj->Ni", K_vb, bs) - np.einsum("Nij,Nj->Ni", K_vu, afv)
            Y[:, kidx[:, None], kidx[None, :]] = -K_iu
            h[:, kidx] = np.einsum("Nij,Nj->Ni", K_ib, bs) - np.einsum("Nij,Nj->Ni", K_iu, afv)
    nodes = topo.tr_nodes.copy()
    return Reduced(C=C, Y=Y, h=h, Mv=Mv, cv=cv, vfix=vfix, nodes=nodes)


def thevenin(model: LinearModel, state: str, P: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(V, R) of the network seen at the receiver, per corner (no leakage)."""
    dc = dc_solve(model, state, P)
    return dc.thevenin_v, dc.thevenin_ohms
