"""The electrical view of one receiver pin at its supply voltage.

This is what the analysis needs from the logic-family data, already evaluated
at the receiver's VCC: threshold ranges, leakage ranges, limits. It is built
here, by `receiver_electrical()`, from the family records the library read
from rules/families.toml, and consumed by the analysis; neither side restates
the other's figures. The library keeps the raw curves; deciding which of them
a given pin uses (VT+/VT- or the VIL/VIH band, a transition limit or none) is
an analysis decision and lives here.

Conventions:
- A threshold range is (min, typ, max) in volts. For a Schmitt input the
  rising range is VT+ and the falling range VT-. For a plain input both are
  the band a real input may switch in: (VIL max, midpoint, VIH min).
- Leakage is the current INTO the pin, in amperes, as a (min, max) range at
  each logic level; a negative value flows out of the pin (TTL's IIL).
"""

from __future__ import annotations

from dataclasses import dataclass

from drc.caching import memoized
from drc.library.catalogue import Library


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


@memoized(limit=4096)
def receiver_electrical(library: Library, family: str, vcc: float, schmitt: bool) -> ReceiverElectrical:
    """Thresholds, leakage and limits of one input pin of `family` at `vcc`.

    Schmitt input: rising = VT+ and falling = VT- (min, typ, max). Plain
    input, or a Schmitt input of a family with no Schmitt data recorded:
    both = (VIL max, midpoint, VIH min) - for the latter no hysteresis is
    credited, which is conservative for both bounce rejection (the
    thresholds nearest the start) and latency (the farthest); see
    receiver_notes(). Raises UnknownFamily or SupplyOutOfRange.
    """
    fam = library.family(family)
    fam.check_supply(vcc)
    vih, vil = fam.vih_at(vcc), fam.vil_at(vcc)
    band = (vil, 0.5 * (vil + vih), vih)
    rising = falling = band
    if schmitt and fam.schmitt is not None:
        thresholds = fam.schmitt.at(vcc)
        rising, falling = thresholds.vt_plus, thresholds.vt_minus
    return ReceiverElectrical(
        family=fam.name, vcc=float(vcc), schmitt=bool(schmitt),
        rising_threshold=rising, falling_threshold=falling,
        vih_min=vih, vil_max=vil,
        leak_high_a=fam.leak_high_a, leak_low_a=fam.leak_low_a,
        abs_max_input_v=fam.abs_max_input_at(vcc), tolerant=fam.tolerant,
        # A Schmitt input switches cleanly on a slow edge: no limit applies.
        transition_limit_s_per_v=None if schmitt else fam.transition_limit_at(vcc),
    )


def receiver_notes(library: Library, family: str, vcc: float, schmitt: bool) -> tuple[str, ...]:
    """Caveats on receiver_electrical()'s figures, for reports and `drc trace`."""
    fam = library.family(family)
    notes: list[str] = []
    if schmitt and fam.schmitt is None:
        notes.append(f"no Schmitt threshold data for family {fam.name}: thresholds taken "
                     f"as the VIL/VIH band, no hysteresis credited; use the part's own data")
    elif schmitt and fam.schmitt is not None:
        # A midpoint typ is routine; derived min/max bounds are worth saying.
        derived = [d for d in fam.schmitt.at(vcc).derived if "_typ" not in d]
        if derived:
            notes.append("Schmitt thresholds derived: " + "; ".join(derived))
    if not schmitt and fam.transition is None:
        notes.append(f"no input transition limit known for family {fam.name}"
                     + (f" ({fam.transition_note})" if fam.transition_note else ""))
    return tuple(notes)
