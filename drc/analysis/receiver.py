"""The electrical view of one receiver pin at its supply voltage.

This is what the analysis needs from the logic-family data, already evaluated
at the receiver's VCC: threshold ranges, leakage ranges, limits. It is built
by `library.receiver_electrical()` from rules/families.toml and consumed by
`analysis`; neither side restates the other's figures.

Conventions:
- A threshold range is (min, typ, max) in volts. For a Schmitt input the
  rising range is VT+ and the falling range VT-. For a plain input both are
  the band a real input may switch in: (VIL max, midpoint, VIH min).
- Leakage is the current INTO the pin, in amperes, as a (min, max) range at
  each logic level; a negative value flows out of the pin (TTL's IIL).
"""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True, slots=True)
class ReceiverElectrical:
    family: str
    vcc: float
    schmitt: bool
    rising_threshold: tuple[float, float, float]
    falling_threshold: tuple[float, float, float]
    vih_min: float
    vil_max: float
    leak_high_a: tuple[float, float]
    leak_low_a: tuple[float, float]
    abs_max_input_v: float
    tolerant: bool
    transition_limit_s_per_v: float | None  # plain inputs only; None = no limit known

    @property
    def high_required_v(self) -> float:
        """The level a steady high must reach at worst: VT+ max or VIH min."""
        return self.rising_threshold[2] if self.schmitt else self.vih_min

    @property
    def low_required_v(self) -> float:
        """The level a steady low must stay under at worst: VT- min or VIL max."""
        return self.falling_threshold[0] if self.schmitt else self.vil_max
