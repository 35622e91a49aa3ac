"""How a logic input reads a voltage, for many trials at once: thresholds, the undefined band, latches.

A Schmitt input switches at VT+ going up and VT- going down (typical values:
the simulation runs the nominal corner). A plain input switches at one point
(the middle of its VIL-VIH band), and between VIL max and VIH min its output
is not defined: a real gate there may oscillate or draw through-current, so
an actuation whose input lingers in the band longer than the family's
transition limit allows (the limit in s/V times the band's width: the time
a ramp at the limit takes to cross it) is not clean, however many edges the
switching point counts. `Band` measures the longest stay per trial.

A latch stage feeds one input of a cross-coupled pair of gates; the contact's
other throw feeds the other gate. `Latch` holds both gates' outputs and
applies their truth table at each input change: NAND gates (the '00, '132,
4011, 4093) set on a low input and hold while both inputs are high; NOR
gates set on a high input and hold while both are low. The edges that count
are those of the gate the stage's pin belongs to.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True, slots=True)
class Thresholds:
    """Where an input switches: up at `upper`, down below `lower` (equal: one point)."""

    upper: float
    lower: float
    vcc: float

    def initial(self, v: np.ndarray) -> np.ndarray:
        """The output state a steady voltage gives (between Schmitt thresholds: above mid-rail)."""
        if self.upper == self.lower:
            return v >= self.upper
        return np.where(v >= self.upper, True, np.where(v < self.lower, False, v > self.vcc / 2))

    def flips(self, state: np.ndarray, v: np.ndarray) -> np.ndarray:
        """Where a voltage point (NaN: none) flips the state."""
        return (~state & (v >= self.upper)) | (state & (v < self.lower))

    def level(self, state: np.ndarray) -> np.ndarray:
        """The threshold a trial in `state` crosses next."""
        return np.where(state, self.lower, self.upper)


class Band:
    """The longest continuous stay of each trial inside [low, high] (the undefined band)."""

    def __init__(self, low: float, high: float, n: int):
        self.low, self.high = low, high
        self.run = np.zeros(n)  # the current stay, up to the end of the last piece
        self.longest = np.zeros(n)

    def reset(self) -> None:
        self.run[:] = 0.0
        self.longest[:] = 0.0

    def inside(self, v: np.ndarray) -> np.ndarray:
        return (v >= self.low) & (v <= self.high)

    def piece(self, t0: np.ndarray, t1: np.ndarray, enter: np.ndarray, leave: np.ndarray,
              valid: np.ndarray) -> None:
        """One monotonic piece [t0, t1] whose stay in the band is [enter, leave] (NaN: none)."""
        some = valid & ~np.isnan(enter)
        continues = some & (enter <= t0) & (self.run > 0)
        stay = np.where(some, leave - enter, 0.0)
        self.run = np.where(valid, np.where(continues, self.run + stay, stay), self.run)
        self.longest = np.maximum(self.longest, np.where(valid, self.run, 0.0))
        left = valid & (~some | (leave < t1))
        self.run = np.where(left, 0.0, self.run)


class Latch:
    """Two cross-coupled gates; `out` is the output of the stage's own gate."""

    def __init__(self, logic: str, this_high: np.ndarray, other_high: np.ndarray):
        """Gates of `logic` ("nand" or "nor") settled on inputs reading high or low."""
        if logic not in ("nand", "nor"):
            raise ValueError(f"latch gates are 'nand' or 'nor', not {logic!r}")
        self.active = logic == "nand"  # the output level an asserted input forces on its gate
        n = this_high.shape[0]
        self.out = np.full(n, not self.active)
        self.other = np.full(n, self.active)
        self.update(self.asserted(this_high), self.asserted(other_high))

    def asserted(self, reading_high: np.ndarray) -> np.ndarray:
        """Whether inputs reading high/low force their gate (NAND: a low input; NOR: a high one)."""
        return asserted(self.active, reading_high)

    def update(self, this: np.ndarray, other: np.ndarray) -> np.ndarray:
        """Apply the inputs (asserted or not); returns where the stage's gate output changed."""
        act = self.active
        new_out = np.where(this, act, np.where(other, not act, self.out))
        new_other = np.where(other, act, np.where(this, not act, self.other))
        # Both released together from both asserted: the stage's gate keeps its level.
        race = ~this & ~other & (self.out == self.other)
        new_other = np.where(race, ~new_out, new_other)
        changed = new_out != self.out
        self.out, self.other = new_out, new_other
        return changed


def asserted(nand: bool, reading_high: np.ndarray) -> np.ndarray:
    """Whether an input forces its gate: NAND gates a low input, NOR gates a high one."""
    return ~reading_high if nand else reading_high
