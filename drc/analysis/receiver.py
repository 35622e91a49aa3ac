"""The electrical view of one receiver pin at its supply voltage.

This is what the analysis needs from the logic-family data, already evaluated
at the receiver's VCC: threshold ranges, leakage ranges, limits. It is built
here, by `receiver_electrical()`, from the family records the library read
from rules/families.toml, and consumed by the analysis; neither side restates
the other's figures. The library keeps the raw curves; deciding which of them
a given pin uses (VT+/VT- or the VIL/VIH band, a transition limit or none) is
an analysis decision and lives here.

Thresholds follow the supply. With a supply tolerance the record also holds
the thresholds at sample points across the supply's range (its ends and every
point where a family curve bends or jumps), so the corner search can put the
receiver's VCC anywhere in its tolerance band and read the thresholds a part
has at that VCC: one physical rail is one corner variable. Between two sample
points every curve is linear, so linear interpolation is exact there.

Conventions:
- A threshold range is (min, typ, max) in volts. For a Schmitt input the
  rising range is VT+ and the falling range VT-. For a plain input both are
  the band a real input may switch in: (VIL max, midpoint, VIH min).
- Leakage is the current INTO the pin, in amperes, as a (min, max) range at
  each logic level; a negative value flows out of the pin (TTL's IIL).
"""

from __future__ import annotations

import bisect
from dataclasses import dataclass

from drc.caching import memoized
from drc.library.catalogue import Library
from drc.library.curves import Bands, Curve, Table
from drc.library.entries import Family, SchmittData

Threshold = tuple[float, float, float]
# Either side of a curve's jump (a VCC band edge) the thresholds are sampled this far off it.
_JUMP = 1e-6


@dataclass(frozen=True, slots=True)
class SupplyPoint:
    """The thresholds of the pin at one supply voltage."""

    vcc: float
    rising: Threshold
    falling: Threshold
    vih_min: float
    vil_max: float


@dataclass(frozen=True, slots=True)
class ReceiverElectrical:
    family: str
    vcc: float
    schmitt: bool
    rising_threshold: Threshold
    falling_threshold: Threshold
    vih_min: float
    vil_max: float
    leak_high_a: tuple[float, float]
    leak_low_a: tuple[float, float]
    abs_max_input_v: float
    tolerant: bool
    transition_limit_s_per_v: float | None  # plain inputs only; None = no limit known
    supply_tolerance: float = 0.0  # fraction; 0 = thresholds taken at the nominal VCC only
    # The thresholds at sample points across [vcc (1 - tol), vcc (1 + tol)], ascending
    # VCC (empty: the thresholds above hold at any VCC, as for hand-built data).
    supply_points: tuple[SupplyPoint, ...] = ()
    hysteresis_min_v: float | None = None  # VH min of a Schmitt input at the nominal VCC

    @property
    def high_required_v(self) -> float:
        """The level a steady high must reach at worst: VT+ max or VIH min."""
        return self.rising_threshold[2] if self.schmitt else self.vih_min

    @property
    def low_required_v(self) -> float:
        """The level a steady low must stay under at worst: VT- min or VIL max."""
        return self.falling_threshold[0] if self.schmitt else self.vil_max

    @property
    def tracks_supply(self) -> bool:
        """Whether the thresholds move with the receiver's supply voltage."""
        return len(self.supply_points) > 1

    def supply_breaks(self, lo: float, hi: float) -> tuple[float, ...]:
        """Sample points strictly inside (lo, hi): where a corner search splits the VCC range."""
        return tuple(p.vcc for p in self.supply_points if lo < p.vcc < hi)

    def at_supply(self, vcc: float) -> SupplyPoint:
        """Thresholds at `vcc` (linear between sample points, the end point outside them)."""
        pts = self.supply_points
        if not pts:
            return SupplyPoint(self.vcc, self.rising_threshold, self.falling_threshold,
                               self.vih_min, self.vil_max)
        xs = [p.vcc for p in pts]
        i = bisect.bisect_left(xs, vcc)
        if i < len(pts) and xs[i] == vcc:
            return pts[i]
        if i == 0:
            return pts[0]
        if i == len(pts):
            return pts[-1]
        a, b = pts[i - 1], pts[i]
        t = (vcc - a.vcc) / (b.vcc - a.vcc)

        def lerp3(x: Threshold, y: Threshold) -> Threshold:
            return (x[0] + t * (y[0] - x[0]), x[1] + t * (y[1] - x[1]), x[2] + t * (y[2] - x[2]))

        return SupplyPoint(vcc, lerp3(a.rising, b.rising), lerp3(a.falling, b.falling),
                           a.vih_min + t * (b.vih_min - a.vih_min), a.vil_max + t * (b.vil_max - a.vil_max))


def _thresholds(fam: Family, schmitt_data: SchmittData | None, vcc: float,
                schmitt: bool) -> SupplyPoint:
    vih, vil = fam.vih_at(vcc), fam.vil_at(vcc)
    band = (vil, 0.5 * (vil + vih), vih)
    rising = falling = band
    if schmitt and schmitt_data is not None:
        t = schmitt_data.at(vcc)
        rising, falling = t.vt_plus, t.vt_minus
    return SupplyPoint(vcc, rising, falling, vih, vil)


def _bends(curve: Curve) -> tuple[tuple[float, bool], ...]:
    """(VCC, jumps) where a curve bends (a table point where the slope changes; outside
    the table the end value scales with VCC) or jumps (band edges)."""
    if isinstance(curve, Table):
        xs, ys = curve.vcc, curve.values
        slopes = [ys[0] / xs[0]] + [(ys[i + 1] - ys[i]) / (xs[i + 1] - xs[i]) for i in range(len(xs) - 1)]
        slopes.append(ys[-1] / xs[-1])
        return tuple((x, False) for i, x in enumerate(xs)
                     if abs(slopes[i + 1] - slopes[i]) > 1e-9 * max(1.0, abs(slopes[i])))
    if isinstance(curve, Bands):
        return tuple((x, True) for b in curve.bands for x in (b.vcc_min, b.vcc_max))
    return ()


def _supply_points(fam: Family, schmitt_data: SchmittData | None, vcc: float, tolerance: float,
                   schmitt: bool) -> tuple[SupplyPoint, ...]:
    if tolerance <= 0:
        return ()
    lo, hi = vcc * (1 - tolerance), vcc * (1 + tolerance)
    curves: list[Curve] = [fam.vih, fam.vil]
    if schmitt and schmitt_data is not None:
        curves += [c for _, c in schmitt_data.curves]
    points = {lo, hi}
    for curve in curves:
        for x, jumps in _bends(curve):
            for p in ((x - _JUMP, x, x + _JUMP) if jumps else (x,)):
                if lo < p < hi:
                    points.add(p)
    return tuple(_thresholds(fam, schmitt_data, p, schmitt) for p in sorted(points))


@memoized(limit=4096)
def receiver_electrical(library: Library, family: str, vcc: float, schmitt: bool,
                        part_type: str | None = None, supply_tolerance: float = 0.0) -> ReceiverElectrical:
    """Thresholds, leakage and limits of one input pin of `family` at `vcc`.

    Schmitt input: rising = VT+ and falling = VT- (min, typ, max); a part type
    with data of its own (families.toml `part_variants`, e.g. single-gate
    parts) takes its variant's thresholds and supply range. Plain input, or a
    Schmitt input of a family with no Schmitt data recorded: both = (VIL max,
    midpoint, VIH min) - for the latter no hysteresis is credited, which is
    conservative for both bounce rejection (the thresholds nearest the start)
    and latency (the farthest); see receiver_notes(). supply_tolerance: the
    receiver's rail tolerance (fraction); the thresholds are then also given
    across that band (`supply_points`). Raises UnknownFamily or SupplyOutOfRange.
    """
    fam = library.family(family)
    fam.check_supply(vcc, part_type)
    schmitt_data = fam.schmitt_for(part_type)
    nominal = _thresholds(fam, schmitt_data, vcc, schmitt)
    hysteresis = None
    if schmitt and schmitt_data is not None:
        hysteresis = schmitt_data.at(vcc).vh_min
    return ReceiverElectrical(
        family=fam.name, vcc=float(vcc), schmitt=bool(schmitt),
        rising_threshold=nominal.rising, falling_threshold=nominal.falling,
        vih_min=nominal.vih_min, vil_max=nominal.vil_max,
        leak_high_a=fam.leak_high_a, leak_low_a=fam.leak_low_a,
        abs_max_input_v=fam.abs_max_input_at(vcc), tolerant=fam.tolerant,
        # A Schmitt input switches cleanly on a slow edge: no limit applies.
        transition_limit_s_per_v=None if schmitt else fam.transition_limit_at(vcc),
        supply_tolerance=float(supply_tolerance),
        supply_points=_supply_points(fam, schmitt_data, vcc, supply_tolerance, schmitt),
        hysteresis_min_v=hysteresis,
    )


def receiver_notes(library: Library, family: str, vcc: float, schmitt: bool,
                   part_type: str | None = None) -> tuple[str, ...]:
    """Caveats on receiver_electrical()'s figures, for reports and `drc trace`."""
    fam = library.family(family)
    schmitt_data = fam.schmitt_for(part_type)
    notes: list[str] = []
    if schmitt and schmitt_data is None:
        notes.append(f"no Schmitt threshold data for family {fam.name}: thresholds taken "
                     f"as the VIL/VIH band, no hysteresis credited; use the part's own data")
    elif schmitt and schmitt_data is not None:
        # A midpoint typ is routine; derived min/max bounds are worth saying.
        derived = [d for d in schmitt_data.at(vcc).derived if "_typ" not in d]
        if derived:
            notes.append("Schmitt thresholds derived: " + "; ".join(derived))
    variant = fam.variant(part_type)
    if variant is not None:
        notes.append(f"{part_type}: {variant.title} (thresholds and supply range of their own)")
    if not schmitt and fam.transition is None:
        notes.append(f"no input transition limit known for family {fam.name}"
                     + (f" ({fam.transition_note})" if fam.transition_note else ""))
    return tuple(notes)
