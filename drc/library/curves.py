"""A datasheet quantity as a function of the supply voltage.

Logic-family figures (VIH, VIL, Schmitt thresholds, transition limits) depend
on VCC, and rules/families.toml writes that dependence in one of four ways: a
fixed value, a fraction of VCC, a table against VCC, or VCC bands each with
its own fixed value or fraction. Each way is one small frozen record with an
`at(vcc, demanding)` method, so the family records and the receiver view
evaluate every figure the same way and no caller needs to know which form
the file used.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal

# Float slack when comparing a VCC with a range edge (values come from
# arithmetic such as 5.0 * 1.05).
EPS = 1e-9

# Which neighbour wins where VCC bands overlap or leave a gap: "high" takes the
# larger value (a VIH), "low" the smaller (a VIL, a transition limit).
Demanding = Literal["high", "low"]


@dataclass(frozen=True, slots=True)
class Fixed:
    """A value independent of VCC."""

    value: float

    def at(self, vcc: float, demanding: Demanding) -> float:
        return self.value


@dataclass(frozen=True, slots=True)
class Fraction:
    """A value proportional to VCC: fraction x VCC."""

    fraction: float

    def at(self, vcc: float, demanding: Demanding) -> float:
        return self.fraction * vcc


@dataclass(frozen=True, slots=True)
class Table:
    """Tabulated against VCC: linear inside, proportional to VCC outside.

    CMOS levels track VCC, so beyond the table the end value is scaled by
    vcc / vcc_end rather than extending the end segment (which can cross zero).
    """

    vcc: tuple[float, ...]
    values: tuple[float, ...]

    def at(self, vcc: float, demanding: Demanding) -> float:
        xs, ys = self.vcc, self.values
        if vcc <= xs[0]:
            return ys[0] * vcc / xs[0]
        if vcc >= xs[-1]:
            return ys[-1] * vcc / xs[-1]
        for i in range(1, len(xs)):
            if vcc <= xs[i]:
                t = (vcc - xs[i - 1]) / (xs[i] - xs[i - 1])
                return ys[i - 1] + t * (ys[i] - ys[i - 1])
        raise AssertionError("unreachable: vcc inside the table")


@dataclass(frozen=True, slots=True)
class Band:
    vcc_min: float
    vcc_max: float
    curve: Fixed | Fraction


@dataclass(frozen=True, slots=True)
class Bands:
    """Piecewise by VCC range.

    Where bands overlap (a shared edge) or leave a gap, the more demanding
    neighbour applies: `demanding` is "high" (take the larger: VIH) or "low"
    (take the smaller: VIL, a transition limit). Outside all bands the
    nearest band applies.
    """

    bands: tuple[Band, ...]

    def at(self, vcc: float, demanding: Demanding) -> float:
        inside = [b for b in self.bands if b.vcc_min - EPS <= vcc <= b.vcc_max + EPS]
        if not inside:
            below = [b for b in self.bands if b.vcc_max < vcc]
            above = [b for b in self.bands if b.vcc_min > vcc]
            if below:
                inside.append(max(below, key=lambda b: b.vcc_max))
            if above:
                inside.append(min(above, key=lambda b: b.vcc_min))
        values = [b.curve.at(vcc, demanding) for b in inside]
        return max(values) if demanding == "high" else min(values)


Curve = Fixed | Fraction | Table | Bands
