"""A recognised input stage and the small circuit it reduces to.

The circuit holds what lies between one contact and one receiver pin:
resistors, capacitors, diodes, rails as fixed node voltages, the contact's
throws as switches, and every receiver input on those nets as a load (its
leakage, a TTL input's current, its clamp diodes), the stage's own receiver
first. A load's supply is a rail of the circuit: the pull rail itself where
the receiver's part is supplied from it (one physical rail, one corner
variable), else a rail of its own with that rail's tolerance. Ground is the
net "0". Tolerances are fractions (0.05 = ±5 %), possibly asymmetric.
"""

from __future__ import annotations

from collections.abc import Iterable, Iterator
from dataclasses import dataclass
from enum import StrEnum

from drc.board.board import Contact, Receiver
from drc.library.entries import TtlInput


class StageKind(StrEnum):
    """What debounces an input path, if anything (see `recognise` for the tests, in order)."""

    DIRECT = "direct"  # nothing between the contact and the pin
    PULL_ONLY = "pull-only"  # a pull resistor, no charged capacitor
    RC = "rc"  # a capacitor charged through a resistance, into a plain input
    RC_SCHMITT = "rc-schmitt"  # the same into a Schmitt input
    LATCH = "latch"  # a changeover into a cross-coupled gate pair
    FIRMWARE = "firmware"  # an MCU pin with a declared firmware debounce
    DEDICATED = "dedicated"  # the receiving part debounces (e.g. 4490)


STAGE_KINDS = tuple(StageKind)


class ResistorRole(StrEnum):
    """What a resistor does for the stage."""

    PULL = "pull"  # one end held (rail or ground), one free
    SERIES = "series"  # on a route from the contact to the receiver
    INTERNAL_PULL = "internal-pull"  # the receiver pin's own pull resistor
    OTHER = "other"


class ActuatorState(StrEnum):
    """The state of a contact's actuator (button, lever): a throw is closed in one of them."""

    PRESSED = "pressed"
    RELEASED = "released"


@dataclass(frozen=True, slots=True)
class Resistor:
    designator: str
    a: str
    b: str
    ohms: float
    tol_minus: float = 0.05
    tol_plus: float = 0.05
    role: ResistorRole = ResistorRole.OTHER


@dataclass(frozen=True, slots=True)
class Capacitor:
    designator: str
    a: str
    b: str
    farads: float
    tol_minus: float = 0.20
    tol_plus: float = 0.20


@dataclass(frozen=True, slots=True)
class DiodeCard:
    """A diode's .model card as the analysis uses it: the Shockley diode with its
    series resistance. `defaulted` names the parameters the card left out (taken
    at SPICE's defaults, rules/limits.toml)."""

    saturation_a: float  # IS
    emission: float  # N
    series_ohms: float  # RS
    model: str = ""
    defaulted: tuple[str, ...] = ()


@dataclass(frozen=True, slots=True)
class Diode:
    """A diode. Without a card: Vf in series with Ron while conducting (piecewise
    linear, rules/limits.toml). With a card: the Shockley diode of the card, and
    forward_v / on_ohms its piecewise-linear stand-in at 1 mA (the starting
    guess of the numerical solution)."""

    designator: str
    anode: str
    cathode: str
    forward_v: float = 0.6
    on_ohms: float = 10.0
    card: DiodeCard | None = None


@dataclass(frozen=True, slots=True)
class InputLoad:
    """One receiver input on the stage's nets, as the network sees it.

    ref: "U1:3"; node: its net in the circuit; supply_net: the rail of the
    circuit its part is supplied from. leak_high_a / leak_low_a: the current
    into the pin (negative: out of it) as a (min, max) range at a high and a
    low level, as rules/families.toml gives them. A load is a constant
    current unless its family's inputs need more: `ttl` (a TTL input, whose
    current depends on its voltage) and `clamp` (forward volts, on ohms of its
    clamp diodes, to ground and, when `clamp_to_supply`, to its supply); the
    analysis (`analysis/physics/loads`) turns them into circuit elements.
    """

    ref: str
    node: str
    family: str
    supply_net: str
    leak_high_a: tuple[float, float]
    leak_low_a: tuple[float, float]
    ttl: TtlInput | None = None
    clamp: tuple[float, float] | None = None
    clamp_to_supply: bool = False


@dataclass(frozen=True, slots=True)
class RailSource:
    net: str
    volts: float
    tolerance: float = 0.05


@dataclass(frozen=True, slots=True)
class Throw:
    """One switched path of the contact: closed while pressed or while released."""

    a: str
    b: str
    closed_when: ActuatorState
    closed_ohms: float = 0.1


def two_terminal_nets(resistors: Iterable[Resistor], capacitors: Iterable[Capacitor],
                      diodes: Iterable[Diode], throws: Iterable[Throw]) -> Iterator[str]:
    """Both nets of every part, resistors first, then capacitors, diodes and throws."""
    for r in resistors:
        yield r.a
        yield r.b
    for c in capacitors:
        yield c.a
        yield c.b
    for d in diodes:
        yield d.anode
        yield d.cathode
    for t in throws:
        yield t.a
        yield t.b


@dataclass(frozen=True, slots=True)
class StageCircuit:
    """The stage's network. loads: every receiver input on its nets, the stage's
    own receiver first; none (hand-built circuits) means one load at
    receiver_node whose leakage the receiver's data gives."""

    resistors: tuple[Resistor, ...]
    capacitors: tuple[Capacitor, ...]
    diodes: tuple[Diode, ...]
    rails: tuple[RailSource, ...]
    throws: tuple[Throw, ...]
    receiver_node: str
    loads: tuple[InputLoad, ...] = ()

    def nodes(self) -> tuple[str, ...]:
        """Every non-ground net of the circuit, in a stable order."""
        seen = dict.fromkeys(two_terminal_nets(self.resistors, self.capacitors, self.diodes,
                                               self.throws))
        for s in self.rails:
            seen.setdefault(s.net)
        seen.setdefault(self.receiver_node)
        for load in self.loads:
            seen.setdefault(load.node)
        seen.pop("0", None)
        return tuple(seen)

    def supply_of_receiver(self) -> str | None:
        """The rail the stage's own receiver is supplied from, when the circuit says."""
        return self.loads[0].supply_net if self.loads else None


@dataclass(frozen=True, slots=True)
class Stage:
    """One (contact, receiver pin) input path, recognised.

    parts: designators of every passive part in the path (contact and
    receiver excluded), in a stable order. A contact reaching several
    receivers has one stage per receiver over the same circuit; the first
    of them (in stage order) is its `lead`, where rules about the contact
    and its pull resistors (held current, wetting, surge, shorts) report,
    so one pull resistor gives one finding, not one per receiver.
    """

    contact: Contact
    receiver: Receiver
    kind: StageKind
    parts: tuple[str, ...]
    circuit: StageCircuit
    nets: tuple[str, ...]
    links: tuple[str, ...] = ()  # 0 Ω resistors and inductors on the path: wires
    notes: tuple[str, ...] = ()  # what recognition read specially (an unfitted 0 F capacitor)
    lead: bool = True  # the contact's first stage: contact-level findings are given here only

    @property
    def name(self) -> str:
        return f"{self.contact.designator} -> {self.receiver.ref}"
