"""IEC 60063 preferred-number series (E3 to E192) and searches over them.

The series are defined by IEC 60063 (third edition, 2015): E48, E96 and E192
follow 10^(i/N) rounded to three figures, except 920 in E192 (the formula
gives 919); E3 to E24 have two figures and E24 departs from the formula in
eight places (27, 30, 33, 36, 39, 43, 47, 82), so it is written out. E12, E6
and E3 take every 2nd, 4th and 8th E24 value. Values are handled as exact
integers of a decade (10..91 or 100..988) so membership never depends on
float rounding; tests compare every table with the `eseries` package.
"""

from __future__ import annotations

import math

from drc.caching import memoized

SERIES = ("E3", "E6", "E12", "E24", "E48", "E96", "E192")

# IEC 60063 E24, written out because eight values are off the formula.
_E24 = (10, 11, 12, 13, 15, 16, 18, 20, 22, 24, 27, 30, 33, 36,
        39, 43, 47, 51, 56, 62, 68, 75, 82, 91)
_E192_EXCEPTIONS = {919: 920}  # IEC 60063: the one irregular E192 value


def _check(name: str) -> str:
    upper = name.upper()
    if upper not in SERIES:
        raise ValueError(f"unknown E-series {name!r}; choose one of {', '.join(SERIES)}")
    return upper


@memoized(limit=16)
def decade_codes(name: str) -> tuple[int, ...]:
    """The series' values in one decade as integers: E24 -> (10, 11, ..., 91), E96 -> (100, ..., 976)."""
    name = _check(name)
    if name in ("E3", "E6", "E12", "E24"):
        step = {"E3": 8, "E6": 4, "E12": 2, "E24": 1}[name]
        return _E24[::step]
    n = int(name[1:])
    codes = (round(100 * 10 ** (i / n)) for i in range(n))
    return tuple(_E192_EXCEPTIONS.get(c, c) if n == 192 else c for c in codes)


@memoized(limit=16)
def mantissas(name: str) -> tuple[float, ...]:
    """The series' values in [1, 10): E12 -> (1.0, 1.2, 1.5, ...)."""
    codes = decade_codes(name)
    scale = 10 if codes[0] == 10 else 100
    return tuple(c / scale for c in codes)


def values_between(name: str, low: float, high: float) -> list[float]:
    """Every value of the series in [low, high] (SI floats, ascending)."""
    if not (low > 0 and high >= low):
        raise ValueError(f"need 0 < low <= high, got {low!r}, {high!r}")
    out: list[float] = []
    decade = math.floor(math.log10(low)) - 1
    while True:
        factor = 10.0 ** decade
        for m in mantissas(name):
            v = float(f"{m * factor:.6g}")  # round away float noise: 4.7e3 not 4699.999
            if v > high * (1 + 1e-12):
                return out
            if v >= low * (1 - 1e-12):
                out.append(v)
        decade += 1


def is_member(name: str, value: float) -> bool:
    """True when `value` (> 0) is a value of the series in some decade."""
    if value <= 0:
        return False
    exponent = math.floor(math.log10(value))
    codes = decade_codes(name)
    digits = len(str(codes[0]))  # 2 or 3 figures
    code = value / 10.0 ** (exponent - digits + 1)
    nearest = round(code)
    if nearest == 10 ** digits:  # 9.9999e3 rounding up into the next decade
        nearest = 10 ** (digits - 1)
    return abs(code - round(code)) < 1e-6 * code and nearest in codes


def nearest(name: str, value: float) -> float:
    """The series value nearest to `value` on a logarithmic scale (ties go up)."""
    if value <= 0:
        raise ValueError(f"E-series values are positive, got {value!r}")
    candidates = values_between(name, value / 10.0, value * 10.0)
    return min(candidates, key=lambda v: (abs(math.log(v / value)), -v))


def by_closeness(name: str, value: float, low: float, high: float) -> list[float]:
    """Series values in [low, high] ordered by |log(v / value)|, nearest first."""
    return sorted(values_between(name, low, high), key=lambda v: (abs(math.log(v / value)), v))
