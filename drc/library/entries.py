"""The typed records of the engineering library, one per kind of entry in rules/*.toml.

Logic families (families.toml), generic part types and their pins
(parts.toml), contact classes (contacts.toml) and rule limits (limits.toml)
become the frozen records below, with the closed vocabularies of those files
(pin roles, contact forms, pull directions) as enums whose values are the
strings the files use. The records answer questions about their own data
(a family's VIH at some VCC, a part's gates); finding a record by a name is
the catalogue's job, turning a part number into one is `part_numbers`'.
"""

from __future__ import annotations

from dataclasses import dataclass
from enum import StrEnum
from typing import Literal

from drc.errors import DrcError
from drc.library.curves import EPS, Curve

# ------------------------------------------------------------------ vocabularies


class PinRole(StrEnum):
    """What a pin of a logic part does (parts.toml `role`)."""

    INPUT = "input"
    OUTPUT = "output"
    SUPPLY = "supply"
    GROUND = "ground"
    NC = "nc"


class ContactForm(StrEnum):
    """How a contact switches: normally open, normally closed, or changeover."""

    SPST_NO = "SPST-NO"
    SPST_NC = "SPST-NC"
    SPDT = "SPDT"


class PullDirection(StrEnum):
    """Where a resistor inside a pin pulls it."""

    UP = "up"
    DOWN = "down"


# The choices as the plain strings the files use (and error messages list).
ROLES = tuple(role.value for role in PinRole)
FORMS = tuple(form.value for form in ContactForm)

# A logic part's numbering: 74/54 series or CMOS 4000 series.
Series = Literal["74", "4000"]
# How families.toml gives an input transition limit: a 10-90 % rise time or a dt/dV slope.
TransitionKind = Literal["rise_time", "slope"]

# ------------------------------------------------------------------ errors


class UnknownFamily(DrcError, KeyError):
    """A family name the library does not know; `matches` holds close names."""

    def __init__(self, name: str, matches: tuple[str, ...]) -> None:
        hint = f"; did you mean {', '.join(matches)}?" if matches else ""
        super().__init__(f"unknown logic family '{name}'{hint}")
        self.name = name
        self.matches = matches


class SupplyOutOfRange(DrcError, ValueError):
    """A receiver's VCC lies outside its family's supply range."""

    def __init__(self, family: str, vcc: float, vcc_min: float, vcc_max: float) -> None:
        self.family = family
        self.vcc = vcc
        self.vcc_min = vcc_min
        self.vcc_max = vcc_max
        super().__init__(
            f"VCC {vcc:g} V is outside the {family} supply range "
            f"{vcc_min:g}-{vcc_max:g} V")


# ------------------------------------------------------------------ families


@dataclass(frozen=True, slots=True)
class SchmittThresholds:
    """VT+ and VT- as (min, typ, max) at one VCC; `derived` names computed bounds."""

    vt_plus: tuple[float, float, float]
    vt_minus: tuple[float, float, float]
    vh_min: float | None
    derived: tuple[str, ...]


@dataclass(frozen=True, slots=True)
class SchmittData:
    """A family's Schmitt-input thresholds as curves against VCC."""

    curves: tuple[tuple[str, Curve], ...]  # quantity name -> curve
    source: str

    def at(self, vcc: float) -> SchmittThresholds:
        """VT+/VT- at vcc; VT+min = VT-min + VHmin and VT-max = VT+max - VHmin
        where only the outer limits are known (families.md); typ = midpoint."""
        got = {name: curve.at(vcc, "high") for name, curve in self.curves}
        derived: list[str] = []
        vh = got.get("vh_min")
        if "vt_plus_min" not in got:
            got["vt_plus_min"] = got["vt_minus_min"] + (vh or 0.0)
            derived.append("vt_plus_min = vt_minus_min + vh_min")
        if "vt_minus_max" not in got:
            got["vt_minus_max"] = got["vt_plus_max"] - (vh or 0.0)
            derived.append("vt_minus_max = vt_plus_max - vh_min")
        for side in ("vt_plus", "vt_minus"):
            if f"{side}_typ" not in got:
                got[f"{side}_typ"] = 0.5 * (got[f"{side}_min"] + got[f"{side}_max"])
                derived.append(f"{side}_typ = midpoint of min and max")
        return SchmittThresholds(
            vt_plus=(got["vt_plus_min"], got["vt_plus_typ"], got["vt_plus_max"]),
            vt_minus=(got["vt_minus_min"], got["vt_minus_typ"], got["vt_minus_max"]),
            vh_min=vh,
            derived=tuple(derived),
        )


@dataclass(frozen=True, slots=True)
class AbsMaxInput:
    """Absolute-maximum input voltage: fixed, or min(VCC + vcc_plus, cap)."""

    fixed: float | None
    vcc_plus: float | None
    cap: float | None

    def at(self, vcc: float) -> float:
        if self.fixed is not None:
            return self.fixed
        assert self.vcc_plus is not None
        value = vcc + self.vcc_plus
        return min(value, self.cap) if self.cap is not None else value


@dataclass(frozen=True, slots=True)
class TransitionLimit:
    """Input transition limit of plain inputs.

    kind "rise_time": curve of a 10-90 % time (s); the dt/dV limit at VCC is
    t / (0.8 x VCC) (families.md note 3). kind "slope": curve of dt/dV (s/V).
    """

    kind: TransitionKind
    curve: Curve

    def seconds_per_volt(self, vcc: float) -> float:
        value = self.curve.at(vcc, "low")
        return value / (0.8 * vcc) if self.kind == "rise_time" else value


@dataclass(frozen=True, slots=True)
class PartVariant:
    """Generic part types of a family with data of their own (families.toml `part_variants`)."""

    title: str
    part_types: tuple[str, ...]
    supply_min: float
    supply_max: float
    schmitt: SchmittData | None
    source: str


@dataclass(frozen=True, slots=True)
class Family:
    name: str
    title: str
    aliases: tuple[str, ...]
    supply_min: float
    supply_max: float
    vih: Curve
    vil: Curve
    leak_high_a: tuple[float, float]
    leak_low_a: tuple[float, float]
    abs_max_input: AbsMaxInput
    tolerant: bool
    transition: TransitionLimit | None
    schmitt: SchmittData | None
    clamp_current_a: float | None = None
    ttl_high_extra_supply_a: float | None = None
    internal_pull_ohms: tuple[float, float] | None = None
    transition_note: str | None = None
    sources: tuple[tuple[str, str], ...] = ()
    part_variants: tuple[PartVariant, ...] = ()

    @property
    def supply_range(self) -> tuple[float, float]:
        return (self.supply_min, self.supply_max)

    def variant(self, part_type: str | None) -> PartVariant | None:
        """The part variant covering generic part type `part_type` ("1G14"), if any."""
        if part_type is None:
            return None
        wanted = part_type.casefold()
        return next((v for v in self.part_variants
                     if any(t.casefold() == wanted for t in v.part_types)), None)

    def supply_range_for(self, part_type: str | None) -> tuple[float, float]:
        """The supply range of a part of this family: its variant's, else the family's."""
        v = self.variant(part_type)
        return (v.supply_min, v.supply_max) if v is not None else self.supply_range

    def schmitt_for(self, part_type: str | None) -> SchmittData | None:
        """The Schmitt thresholds of a part of this family: its variant's, else the family's."""
        v = self.variant(part_type)
        return v.schmitt if v is not None and v.schmitt is not None else self.schmitt

    def source(self, quantity: str) -> str | None:
        """The source text of one quantity (a key of families.toml, e.g. "vih_v")."""
        return dict(self.sources).get(quantity)

    def check_supply(self, vcc: float, part_type: str | None = None) -> None:
        lo, hi = self.supply_range_for(part_type)
        if not (lo - EPS <= vcc <= hi + EPS):
            raise SupplyOutOfRange(self.name, vcc, lo, hi)

    def vih_at(self, vcc: float) -> float:
        return self.vih.at(vcc, "high")

    def vil_at(self, vcc: float) -> float:
        return self.vil.at(vcc, "low")

    def abs_max_input_at(self, vcc: float) -> float:
        return self.abs_max_input.at(vcc)

    def transition_limit_at(self, vcc: float) -> float | None:
        return self.transition.seconds_per_volt(vcc) if self.transition else None

    def schmitt_at(self, vcc: float) -> SchmittThresholds | None:
        return self.schmitt.at(vcc) if self.schmitt else None


# ------------------------------------------------------------------ parts


@dataclass(frozen=True, slots=True)
class PinSpec:
    number: int
    name: str
    role: PinRole
    schmitt: bool
    edge_sensitive: bool
    function: str
    gate: str | None
    active_low: bool = False
    internal_pull: PullDirection | None = None  # the part pulls the input


@dataclass(frozen=True, slots=True)
class GateSpec:
    name: str
    inputs: tuple[int, ...]
    outputs: tuple[int, ...]


@dataclass(frozen=True, slots=True)
class PartType:
    name: str
    title: str
    series: Series
    pin_count: int
    pins: dict[int, PinSpec]
    debounces: bool
    source: str
    aliases: tuple[str, ...] = ()
    families: tuple[str, ...] | None = None  # None: any family of the series

    def inputs(self) -> tuple[PinSpec, ...]:
        return tuple(p for p in self.pins.values() if p.role == PinRole.INPUT)

    def gates(self) -> dict[str, GateSpec]:
        """Gate/section name -> its input and output pin numbers."""
        found: dict[str, tuple[list[int], list[int]]] = {}
        for pin in self.pins.values():
            if pin.gate is None:
                continue
            ins, outs = found.setdefault(pin.gate, ([], []))
            if pin.role == PinRole.INPUT:
                ins.append(pin.number)
            elif pin.role == PinRole.OUTPUT:
                outs.append(pin.number)
        return {g: GateSpec(g, tuple(i), tuple(o)) for g, (i, o) in found.items()}


@dataclass(frozen=True, slots=True)
class ResolvedPart:
    part_type: PartType
    family: str
    part_number: str


# ------------------------------------------------------------------ contacts


@dataclass(frozen=True, slots=True)
class ContactClass:
    name: str
    title: str
    bounce_s: float
    wetting_a: float | None
    rating_a: float | None
    default_form: ContactForm
    patterns: tuple[str, ...]
    bounce_source: str
    wetting_source: str | None
    rating_source: str | None
    static: bool = False  # read as configuration, not as events


@dataclass(frozen=True, slots=True)
class ContactMatch:
    contact_class: ContactClass
    form: ContactForm
    terminal_count: int


# ------------------------------------------------------------------ limits


@dataclass(frozen=True, slots=True)
class Limit:
    key: str
    value: float
    unit: str
    description: str
    source: str
