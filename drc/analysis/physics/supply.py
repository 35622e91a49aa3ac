"""A receiver's thresholds as functions of its supply, for the corner searches.

The record `ReceiverElectrical` samples the thresholds across the receiver's
supply band (drc.analysis.receiver); here those samples become arrays that
np.interp evaluates at each corner row's supply voltage (exact: every curve
is linear between two samples), and a tolerance box is cut where a curve
bends, so each piece is searched at its vertices.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from drc.analysis.physics.compiled import LinearModel
from drc.analysis.physics.corners import Box
from drc.analysis.receiver import ReceiverElectrical
from drc.caching import Memo


@dataclass(frozen=True, slots=True)
class SupplyTable:
    """A receiver's thresholds at its supply sample points, as arrays (np.interp-ready)."""

    vcc: np.ndarray  # (K,)
    rising: np.ndarray  # (K, 3)
    falling: np.ndarray  # (K, 3)
    high_required: np.ndarray  # (K,)
    low_required: np.ndarray  # (K,)


_TABLES: Memo[ReceiverElectrical, SupplyTable] = Memo("analysis.supply-tables", 4096)


def supply_table(rx: ReceiverElectrical) -> SupplyTable:
    """The thresholds of `rx` across its supply band (a single point if they do not track it)."""
    found = _TABLES.get(rx)
    if found is None:
        pts = rx.supply_points or (rx.at_supply(rx.vcc),)
        req_h = [p.rising[2] if rx.schmitt else p.vih_min for p in pts]
        req_l = [p.falling[0] if rx.schmitt else p.vil_max for p in pts]
        found = _TABLES.put(rx, SupplyTable(np.array([p.vcc for p in pts]), np.array([p.rising for p in pts]),
                                            np.array([p.falling for p in pts]), np.array(req_h), np.array(req_l)))
    return found


def supply_column(model: LinearModel, rx: ReceiverElectrical) -> int | None:
    """The column the receiver's thresholds follow: its supply rail, when it tracks one."""
    return model.supply_col if rx.tracks_supply else None


def supply_pieces(box: Box, rx: ReceiverElectrical | None, col: int | None) -> list[Box]:
    """`box` cut at the receiver's threshold bends inside its supply range; itself if none."""
    if rx is None or col is None or col not in box.cols:
        return [box]
    lo, hi = float(box.lo[col]), float(box.hi[col])
    cuts = [lo, *rx.supply_breaks(lo, hi), hi]
    if len(cuts) == 2:
        return [box]
    out = []
    for a, b in zip(cuts, cuts[1:], strict=False):
        plo, phi = box.lo.copy(), box.hi.copy()
        plo[col], phi[col] = a, b
        out.append(Box(box.nominal, plo, phi, box.cols, box.ties))
    return out
