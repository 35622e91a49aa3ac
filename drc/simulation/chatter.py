"""Random contact-bounce trains: the chatter a contact makes as it changes state.

A bounce train is the list of instants at which a contact toggles during one
actuation, counted from the first touch (t = 0). It starts with the contact
reaching its new state, then alternates break and make intervals until the
burst ends in the new state, so the number of toggles is always odd. The burst
lasts up to the contact's bounce time (drawn between `min_fraction` of it and
all of it), and each interval is drawn log-uniform over decades (1 µs to 1 ms
by default): contacts chatter both in sub-microsecond sparks and in
millisecond re-makes, and a log-uniform draw gives every decade equal weight.
These distributions are a modelling choice of ours (common practice, no
source); the bounce time itself comes from the contact's class in
rules/contacts.toml or from the config. Trains for many trials are drawn at
once from a numpy Generator into a padded array, so they are reproducible
from a seed.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from drc.analysis.results import Edge

INTERVAL_S = (1e-6, 1e-3)  # log-uniform range of one make or break interval
MIN_FRACTION = 0.5  # shortest burst, as a fraction of the bounce time


@dataclass(frozen=True, slots=True)
class BounceTrain:
    """One actuation's toggles, in seconds from the first touch (first is 0.0, count odd)."""

    edge: Edge
    toggles: tuple[float, ...]

    @property
    def duration_s(self) -> float:
        """From the first touch to the last toggle, after which the contact rests."""
        return self.toggles[-1]


@dataclass(frozen=True, slots=True)
class ChatterTrial:
    """One recorded trial: a press train and a release train."""

    index: int
    press: BounceTrain
    release: BounceTrain

    def train(self, edge: str) -> BounceTrain:
        return self.press if edge == Edge.PRESS else self.release


def draw_trains(rng: np.random.Generator, trials: int, bounce_s: float, *,
                interval_s: tuple[float, float] = INTERVAL_S,
                min_fraction: float = MIN_FRACTION) -> np.ndarray:
    """(trials, M) toggle instants, NaN-padded; each row starts at 0 and has an odd count.

    A burst of duration D (uniform in [min_fraction * bounce_s, bounce_s]) is
    filled with intervals drawn log-uniform in interval_s; toggles after D are
    dropped, then the last one too if needed so the row ends in the new state.
    bounce_s <= 0 gives a single clean toggle per row.
    """
    if trials <= 0:
        return np.zeros((0, 1))
    if bounce_s <= 0:
        return np.zeros((trials, 1))
    lo, hi = math.log(interval_s[0]), math.log(interval_s[1])
    duration = bounce_s * rng.uniform(min_fraction, 1.0, size=trials)
    mean = (interval_s[1] - interval_s[0]) / (hi - lo)  # mean of the log-uniform law
    columns = int(math.ceil(2.0 * bounce_s / mean)) + 16
    while True:  # rarely loops: a row of very short intervals needs more columns
        intervals = np.exp(rng.uniform(lo, hi, size=(trials, columns)))
        times = np.cumsum(intervals, axis=1)
        if np.all(times[:, -1] >= duration):
            break
        columns *= 2
    times = np.concatenate([np.zeros((trials, 1)), times], axis=1)
    inside = times <= duration[:, None]
    count = inside.sum(axis=1)
    count = np.where(count % 2 == 0, count - 1, count)  # end in the new state
    width = int(count.max())
    out = np.where(np.arange(width)[None, :] < count[:, None], times[:, :width], np.nan)
    return out


def train_from_row(edge: str, row: np.ndarray) -> BounceTrain:
    """A BounceTrain from one padded row of `draw_trains`."""
    return BounceTrain(Edge(edge), tuple(float(x) for x in row if not math.isnan(x)))


__all__ = ["INTERVAL_S", "MIN_FRACTION", "BounceTrain", "ChatterTrial", "draw_trains", "train_from_row"]
