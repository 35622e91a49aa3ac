"""Worst-case corners: the vertices of the tolerance box that bound a figure.

Every resistor, capacitor and rail may sit anywhere in its tolerance band,
the leakage anywhere in its range; a switching threshold anywhere in its
(min, max) spread. Timing and steady levels are taken as monotonic in each
of these, so their extremes sit at vertices of that box. With few varying
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
    """Parameter ranges for one question (an edge or a steady level)."""

    nominal: np.ndarray
    lo: np.ndarray
    hi: np.ndarray
    cols: tuple[int, ...]  # the columns that vary


def make_box(nominal: np.ndarray, lo: np.ndarray, hi: np.ndarray, leak_col: int,
             leak_range: tuple[float, float], exclude: tuple[int, ...] = ()) -> Box:
    """Fill in the leakage range (nominal = its midpoint) and list varying columns."""
    nominal, lo, hi = nominal.copy(), lo.copy(), hi.copy()
    lo[leak_col], hi[leak_col] = min(leak_range), max(leak_range)
    nominal[leak_col] = 0.5 * (lo[leak_col] + hi[leak_col])
    cols = tuple(int(i) for i in np.flatnonzero(hi != lo) if int(i) not in exclude)
    return Box(nominal, lo, hi, cols)


@memoized(64)
def vertex_bits(count: int) -> np.ndarray:
    """All 2**count vertices as a 0/1 matrix (row i = binary digits of i); shared, do not modify."""
    idx = np.arange(2 ** count)[:, None]
    bits = ((idx >> np.arange(count)[None, :]) & 1).astype(float)
    bits.flags.writeable = False
    return bits


def vertices(box: Box) -> np.ndarray:
    """Every vertex of the box over its varying columns, one per row."""
    bits = vertex_bits(len(box.cols))
    P = np.tile(box.nominal, (bits.shape[0], 1))
    if box.cols:
        cols = list(box.cols)
        P[:, cols] = box.lo[cols] + bits * (box.hi[cols] - box.lo[cols])
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
        trial[2 * j, c] = box.lo[c]
        trial[2 * j + 1, c] = box.hi[c]
    vals = badness(trial)
    current = box.nominal.copy()
    for j, c in enumerate(cols):
        current[c] = box.hi[c] if vals[2 * j + 1] >= vals[2 * j] else box.lo[c]
    best = float(badness(current[None, :])[0])
    # Confirm: move to a better single-parameter neighbour until none is better.
    for _ in range(len(cols)):
        flips = np.tile(current, (len(cols), 1))
        for j, c in enumerate(cols):
            flips[j, c] = box.lo[c] if current[c] == box.hi[c] else box.hi[c]
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
        trial[j + 1, c] = box.hi[c]
    vals = badness(trial)
    current = box.nominal.copy()
    for j, c in enumerate(cols):
        current[c] = box.hi[c] if vals[j + 1] >= vals[0] else box.lo[c]
    best = -np.inf
    for round_ in range(len(cols) + 1):
        flips = np.tile(current, (len(cols) + 1, 1))
        for j, c in enumerate(cols):
            flips[j + 1, c] = box.lo[c] if current[c] == box.hi[c] else box.hi[c]
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
