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
    # An analog switch's channel or common pin (4051, 4067): it passes a level
    # on and has no threshold of its own.
    ANALOG = "analog"
    # The input side of an isolation barrier: an optocoupler's LED.
    ISOLATED = "isolated"


class PartKind(StrEnum):
    """What a part type is (parts.toml `kind`): how its inputs are judged."""

    LOGIC = "logic"  # thresholds from its logic family
    COMPARATOR = "comparator"  # thresholds from the resistors around it and its supply
    OPTOCOUPLER = "optocoupler"  # an isolated input: the stage behind it is not checked


class ComparatorOutput(StrEnum):
    """How a comparator's output drives: a transistor to ground, or both ways."""

    OPEN_COLLECTOR = "open-collector"
    PUSH_PULL = "push-pull"


class OtherKind(StrEnum):
    """Parts that are not logic inputs (parts.toml [loads] and [connections])."""

    LOAD = "load"  # a lamp, motor, relay coil, LED...: what the contact drives
    CONNECTION = "connection"  # a connector or test point: the net passes through


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

# A part's numbering: 74/54 series, CMOS 4000 series, or a name of its own
# (comparators, optocouplers: LM393, PC817) read as maker letters + name + suffix.
Series = Literal["74", "4000", "name"]
SERIES: tuple[Series, ...] = ("74", "4000", "name")
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
class TtlInput:
    """A bipolar TTL input as the circuit it is (families.toml `ttl_input`): a resistor
    from VCC to a node that feeds the pin through the input diode and is held at
    open level + diode_v by the input transistors once the pin rises past it."""

    resistor_ohms: tuple[float, float]  # (min, max)
    diode_v: float
    open_v: tuple[float, float]  # (min, max): where an open input floats


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
    ttl_input: TtlInput | None = None

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
class ComparatorData:
    """What the thresholds of a comparator stage need beyond its resistors.

    offset_v: the input offset voltage, worst case (either sign); output_low_v:
    the output's low level, worst case (the low level is 0 .. output_low_v).
    """

    output: ComparatorOutput
    offset_v: float
    output_low_v: float
    source: str


@dataclass(frozen=True, slots=True)
class PartType:
    """A generic part type. series: its main numbering; numberings: every
    numbering it resolves in (a 4000-series function also made as 74HC4051).
    families: the only 74-series families it is made in (None: any); a part
    of kind comparator or optocoupler names its own family."""

    name: str
    title: str
    series: Series
    pin_count: int
    pins: dict[int, PinSpec]
    debounces: bool
    source: str
    aliases: tuple[str, ...] = ()
    families: tuple[str, ...] | None = None  # None: any family of the series
    numberings: tuple[Series, ...] = ()
    kind: PartKind = PartKind.LOGIC
    latch: bool = False  # each gate is a set-reset latch ('279, 4043, 4044)
    family: str | None = None  # the family of a part with a name of its own
    comparator: ComparatorData | None = None

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
    """A part number read: its type, family, the number as written, and how it was read."""

    part_type: PartType
    family: str
    part_number: str
    how: str = ""


@dataclass(frozen=True, slots=True)
class OtherPart:
    """A kind of part that is not a logic input: a load (lamp, motor, relay
    coil, LED) or a connection (connector, test point), known by its model
    name or its designator letters."""

    name: str
    title: str
    kind: OtherKind
    models: tuple[str, ...]  # case-insensitive globs on the model / subcircuit name
    designators: tuple[str, ...]  # designator letters, followed by a digit (LP1, DS3)
    source: str


@dataclass(frozen=True, slots=True)
class PinNames:
    """Port names of a `.subckt` line (or a config `pins` list) and the roles they
    name: supply, ground, generic input and output words, and groups of names
    that name one pin (CK, CP and CLOCK name CLK)."""

    supply: frozenset[str]
    ground: frozenset[str]
    inputs: frozenset[str]
    outputs: frozenset[str]
    synonyms: tuple[frozenset[str], ...]
    source: str

    def group(self, name: str) -> frozenset[str]:
        """The names that name the same pin as `name` (itself included)."""
        for group in self.synonyms:
            if name in group:
                return group
        return frozenset((name,))


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
    """One rules/limits.toml entry. range: which values a config may set it to
    (drc.units.Range: "positive" unless the file says "non-negative" or "fraction")."""

    key: str
    value: float
    unit: str
    description: str
    source: str
    range: str = "positive"
