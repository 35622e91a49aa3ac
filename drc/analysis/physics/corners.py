"""Worst-case corners: the vertices of the tolerance box that bound a figure.

Every resistor, capacitor and rail may sit anywhere in its tolerance band,
the leakage anywhere in its range; a switching threshold anywhere in its
(min, max) spread. Timing and steady levels are taken as monotonic in each
of these, so their extremes sit at vertices of that box. The leakages of the
loads on one stage move together, all at the bottom or all at the top of
their ranges (one axis of the box): a current drawn at any node of a
resistor-capacitor network lowers every node's voltage at every instant
(the network's response to it is non-negative), so all of them together at
one end is the extreme, and 2**loads vertices would add nothing. With few varying
parameters every vertex is evaluated (one batched solve); with many, the
direction of each parameter is read from one-at-a-time sensitivities at
nominal and the resulting vertex is confirmed by a local search over its
single-parameter neighbours. Thresholds need no search: the inner limit (the
one nearest the start) is always fastest, the outer one slowest.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from drc.caching import memoized

ENUMERATE_MAX = 12  # up to 2**12 vertices are evaluated outright


@dataclass(frozen=True, slots=True)
class Box:
    """Parameter ranges for one question (an edge or a steady level).

    cols: one column per axis that varies; ties: column -> the other columns
    that move with it (the loads' leakages), each to its own lo or hi.
    """

    nominal: np.ndarray
    lo: np.ndarray
    hi: np.ndarray
    cols: tuple[int, ...]  # the columns that vary (the first of each tied group)
    ties: tuple[tuple[int, tuple[int, ...]], ...] = ()

    def tied(self, col: int) -> tuple[int, ...]:
        """The columns set together with `col` (itself first)."""
        for lead, others in self.ties:
            if lead == col:
                return (col, *others)
        return (col,)

    def with_cols(self, cols: tuple[int, ...]) -> Box:
        return Box(self.nominal, self.lo, self.hi, cols, tuple(t for t in self.ties if t[0] in cols))


def make_box(nominal: np.ndarray, lo: np.ndarray, hi: np.ndarray, leak_cols: int | tuple[int, ...],
             leak_range: tuple[float, float] | tuple[tuple[float, float], ...],
             exclude: tuple[int, ...] = ()) -> Box:
    """Fill in each leakage range (nominal = its midpoint), tie the leakages, list varying columns.

    leak_cols / leak_range: one column and its (min, max), or one range per column.
    """
    nominal, lo, hi = nominal.copy(), lo.copy(), hi.copy()
    cols_l = (leak_cols,) if isinstance(leak_cols, int) else tuple(leak_cols)
    ranges = (leak_range,) if isinstance(leak_range[0], (int, float)) else leak_range
    for c, rng in zip(cols_l, ranges, strict=True):
        lo[c], hi[c] = min(rng), max(rng)
        nominal[c] = 0.5 * (lo[c] + hi[c])
    varying = [int(i) for i in np.flatnonzero(hi != lo) if int(i) not in exclude]
    leaking = [c for c in cols_l if c in varying]
    ties: tuple[tuple[int, tuple[int, ...]], ...] = ()
    if len(leaking) > 1:
        ties = ((leaking[0], tuple(leaking[1:])),)
        varying = [c for c in varying if c not in leaking[1:]]
    return Box(nominal, lo, hi, tuple(varying), ties)


def _put(P: np.ndarray, box: Box, col: int, upper) -> None:
    """Set `col` and the columns tied to it to their hi (upper true) or lo, in rows of P."""
    for c in box.tied(col):
        P[..., c] = np.where(upper, box.hi[c], box.lo[c])


@memoized(64)
def vertex_bits(count: int) -> np.ndarray:
    """All 2**count vertices as a 0/1 matrix (row i = binary digits of i); shared, do not modify."""
    idx = np.arange(2 ** count)[:, None]
    bits = ((idx >> np.arange(count)[None, :]) & 1).astype(float)
    bits.flags.writeable = False
    return bits


def vertices(box: Box) -> np.ndarray:
    """Every vertex of the box over its varying columns (tied ones together), one per row."""
    bits = vertex_bits(len(box.cols))
    P = np.tile(box.nominal, (bits.shape[0], 1))
    for j, c in enumerate(box.cols):
        _put(P, box, c, bits[:, j] > 0)
    return P


def worst_vertex(box: Box, badness: Callable[[np.ndarray], np.ndarray]) -> tuple[np.ndarray, float]:
    """The vertex where `badness` (evaluated on rows of parameters) is largest."""
    if len(box.cols) <= ENUMERATE_MAX:
        P = vertices(box)
        vals = badness(P)
        i = int(np.argmax(vals))
        return P[i], float(vals[i])
    return _sensitivity_search(box, badness)


def _sensitivity_search(box: Box, badness: Callable[[np.ndarray], np.ndarray]) -> tuple[np.ndarray, float]:
    cols = list(box.cols)
    trial = np.tile(box.nominal, (2 * len(cols), 1))
    for j, c in enumerate(cols):
        _put(trial[2 * j], box, c, False)
        _put(trial[2 * j + 1], box, c, True)
    vals = badness(trial)
    current = box.nominal.copy()
    for j, c in enumerate(cols):
        _put(current, box, c, vals[2 * j + 1] >= vals[2 * j])
    best = float(badness(current[None, :])[0])
    # Confirm: move to a better single-parameter neighbour until none is better.
    for _ in range(len(cols)):
        flips = np.tile(current, (len(cols), 1))
        for j, c in enumerate(cols):
            _put(flips[j], box, c, current[c] != box.hi[c])
        fv = badness(flips)
        j = int(np.argmax(fv))
        if not fv[j] > best:
            break
        current, best = flips[j], float(fv[j])
    return current, best


def sign_search(box: Box, badness: Callable[[np.ndarray], np.ndarray]) -> tuple[np.ndarray, float]:
    """The worst vertex from the sign of each parameter's effect, then confirmed.

    For figures that cost one exact solve per corner (several capacitors,
    diodes). n + 1 evaluations (nominal, and each varying parameter moved to
    its upper limit) give the direction of every parameter; the vertex they
    point at and its n single-parameter neighbours are evaluated together,
    and the search moves to a better neighbour until there is none (at most
    n rounds). With the figure monotonic in each parameter the first vertex
    is already the worst, so a stage costs 2n + 2 solves instead of 2**n.
    """
    cols = list(box.cols)
    if not cols:
        return box.nominal.copy(), float(badness(box.nominal[None, :])[0])
    trial = np.tile(box.nominal, (len(cols) + 1, 1))
    for j, c in enumerate(cols):
        _put(trial[j + 1], box, c, True)
    vals = badness(trial)
    current = box.nominal.copy()
    for j, c in enumerate(cols):
        _put(current, box, c, vals[j + 1] >= vals[0])
    best = -np.inf
    for round_ in range(len(cols) + 1):
        flips = np.tile(current, (len(cols) + 1, 1))
        for j, c in enumerate(cols):
            _put(flips[j + 1], box, c, current[c] != box.hi[c])
        if round_ == 0:  # the vertex itself once, then only its neighbours
            fv = badness(flips)
            best, fv = float(fv[0]), fv[1:]
        else:
            fv = badness(flips[1:])
        j = int(np.argmax(fv))
        if not fv[j] > best:
            break
        current, best = flips[j + 1].copy(), float(fv[j])
    return current, best


def corner_dict(names: tuple[str, ...], row: np.ndarray, extra: dict[str, float]) -> dict[str, float]:
    """A corner as {parameter name: value}, plus the threshold and the like."""
    out = {name: float(v) for name, v in zip(names, row, strict=True)}
    out.update(extra)
    return out
