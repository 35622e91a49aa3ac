"""Reading ngspice waveforms the way a receiver would: edges through hysteresis."""

from __future__ import annotations


def count_edges(times, volts, start, stop, upper, lower, vcc=None):
    """Output edges of a receiver with thresholds `upper`/`lower` seeing `volts`
    between `start` and `stop` (a Schmitt input: rise at or above `upper`, fall
    below `lower`). The starting state is high at or above `upper`; with `vcc`
    given and hysteresis present, a start inside the band is high above vcc/2."""
    points = [(t, v) for t, v in zip(times, volts, strict=True) if start <= t <= stop]
    v0 = points[0][1]
    if vcc is None or upper == lower or v0 >= upper or v0 < lower:
        high = v0 >= upper
    else:
        high = v0 > vcc / 2
    edges = 0
    for _, v in points[1:]:
        if not high and v >= upper:
            high, edges = True, edges + 1
        elif high and v < lower:
            high, edges = False, edges + 1
    return edges
