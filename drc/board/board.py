"""The board: a netlist classified into rails, contacts, receivers and parts.

Classification turns designators and subcircuit names into engineering roles
using the library under rules/ and the board's config. Everything here is
frozen data; the functions that build it live in `classify`, and nothing
after classification changes a board (firmware debounces written as
netlist annotations are an input of classification, not a later patch).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from enum import StrEnum

from drc.errors import SourceLocation
from drc.library.entries import ContactForm, PinRole, PullDirection
from drc.netlist.elements import Diagnostic, Netlist


class UncheckedReason(StrEnum):
    """Why a contact's input could not be checked (the `unchecked-input` rule's reasons).

    The values are the words every report prints.
    """

    UNKNOWN_RECEIVER = "unknown-receiver"  # a part the library, config and netlist do not describe
    UNKNOWN_PIN_ORDER = "unknown-pin-order"  # a known part whose instance's pin order is not known
    UNEVALUABLE_ELEMENT = "unevaluable-element"  # an element on the path the reader could not evaluate
    NO_PATH = "no-path"  # the contact reaches no logic input and no known load
    ISOLATED_INPUT = "isolated-input"  # an optocoupler between the contact and the logic
    SUPPLY_OUT_OF_RANGE = "supply-out-of-range"  # the receiver's VCC is outside its family's range
    UNKNOWN_SUPPLY = "unknown-supply"  # the receiver's supply pin is on no rail of known voltage
    ANALOG_INPUT = "analog-input"  # an analog switch channel (4051, 4067): no threshold of its own
    DISCRETE_INPUT = "discrete-input"  # a transistor's base or gate: discrete receivers are not modelled
    FEEDBACK_INPUT = "feedback-input"  # a comparator input carrying positive feedback from its output
    UNKNOWN_THRESHOLD = "unknown-threshold"  # a comparator whose reference level cannot be computed


class ContactOrigin(StrEnum):
    """What made an element a contact."""

    ELEMENT = "element"  # an S line of our contact form
    SUBCIRCUIT = "subcircuit"  # an X instance whose name is a contact class
    CONFIG = "config"  # a designator glob of the config or of a `*@drc contact` annotation


@dataclass(frozen=True, slots=True)
class Rail:
    """A net held at a DC voltage. tolerance is a fraction (0.05 = ±5 %)."""

    net: str
    voltage: float
    tolerance: float
    source: str  # designator of the source, or "config"


@dataclass(frozen=True, slots=True)
class Contact:
    """One mechanical switching element.

    terminals: nets, common first for a changeover (SPDT: common, NC, NO);
    for SPST the two nets.
    wetting_a / rating_a: the class's minimum wetting current and contact
    rating (None where the class sets none).
    """

    designator: str
    contact_class: str
    form: ContactForm
    terminals: tuple[str, ...]
    bounce_s: float
    wetting_a: float | None
    rating_a: float | None
    location: SourceLocation
    origin: ContactOrigin
    closed_resistance: float = 0.1
    static: bool = False  # read as configuration (e.g. DIP), not as events


@dataclass(frozen=True, slots=True)
class InternalPull:
    """A pull resistor inside a receiver pin (microcontroller GPIO)."""

    direction: PullDirection
    r_min: float
    r_max: float


@dataclass(frozen=True, slots=True)
class Receiver:
    """One logic input pin of a part.

    pin is counted from 1 in the instance line's node order.
    supply_v is the receiver's VCC (nominal) and supply_tolerance a fraction.
    function names the pin's role in its part ("data", "clock", "clear", ...).
    """

    part: str
    pin: int
    net: str
    part_type: str
    family: str
    schmitt: bool
    edge_sensitive: bool
    function: str
    supply_v: float
    supply_tolerance: float
    location: SourceLocation
    internal_pull: InternalPull | None = None
    firmware_debounce_s: float | None = None
    dedicated_debounce: bool = False
    gate: str | None = None  # which gate/section of the part the pin belongs to
    # Thresholds computed for this pin (a comparator's, from its resistors and
    # supply): (rising (min, typ, max), falling (min, typ, max)), volts; None:
    # the family's. threshold_note says how they were found.
    thresholds: tuple[tuple[float, float, float], tuple[float, float, float]] | None = None
    threshold_note: str | None = None

    @property
    def ref(self) -> str:
        return f"{self.part}:{self.pin}"


@dataclass(frozen=True, slots=True)
class PartPin:
    number: int
    net: str
    role: PinRole
    name: str


@dataclass(frozen=True, slots=True)
class Part:
    """A logic part (X instance recognised by the library or the config)."""

    designator: str
    part_type: str  # the generic entry, e.g. "14"
    part_number: str  # as written, e.g. "SN74HC14N"
    family: str
    pins: tuple[PartPin, ...]
    location: SourceLocation
    resolution: str = ""  # how the part number and the pins were read (for `drc trace`)
    latch: bool = False  # each gate is a set-reset latch ('279)


@dataclass(frozen=True, slots=True)
class UncheckablePart:
    """A part (or element) whose inputs a contact may reach but the checker cannot judge.

    pins: (name shown as the receiver, net) of the pins a contact may reach;
    beyond: nets on the far side (an optocoupler's output), to name the logic
    input behind it.
    """

    designator: str
    model: str
    reason: UncheckedReason
    detail: str
    pins: tuple[tuple[str, str], ...]
    location: SourceLocation
    beyond: tuple[str, ...] = ()


@dataclass(frozen=True, slots=True)
class Load:
    """A part that is not a logic input but that a contact may drive (a lamp, a motor...)."""

    designator: str
    model: str
    title: str  # "lamp", "relay coil", "LED"
    nets: tuple[str, ...]
    location: SourceLocation


@dataclass(frozen=True, slots=True)
class Board:
    """A classified netlist. Built whole by `classify`; the lists are not changed afterwards.

    rails: key(net) -> Rail; parts: key(designator) -> Part. uncheckable:
    parts whose inputs cannot be judged (with why); loads: parts a contact may
    drive that are not logic inputs.
    """

    path: str
    netlist: Netlist
    rails: dict[str, Rail] = field(default_factory=dict)
    contacts: list[Contact] = field(default_factory=list)
    receivers: list[Receiver] = field(default_factory=list)
    parts: dict[str, Part] = field(default_factory=dict)
    diagnostics: list[Diagnostic] = field(default_factory=list)
    config_path: str | None = None
    uncheckable: list[UncheckablePart] = field(default_factory=list)
    loads: list[Load] = field(default_factory=list)
