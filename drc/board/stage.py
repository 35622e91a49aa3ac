"""A recognised input stage and the small linear circuit it reduces to.

The circuit holds only what lies between one contact and one receiver pin:
resistors, capacitors, diodes (piecewise linear: Vf in series with Ron when
forward biased, open otherwise), rails as fixed node voltages, and the
contact's throws as switches. Ground is the net "0". Tolerances are fractions
(0.05 = ±5 %), possibly asymmetric.
"""

from __future__ import annotations

from dataclasses import dataclass

from drc.board.board import Contact, Receiver

STAGE_KINDS = ("direct", "pull-only", "rc", "rc-schmitt", "latch", "firmware", "dedicated")


@dataclass(frozen=True, slots=True)
class Resistor:
    designator: str
    a: str
    b: str
    ohms: float
    tol_minus: float = 0.05
    tol_plus: float = 0.05
    role: str = "other"  # "pull", "series", "internal-pull", "other"


@dataclass(frozen=True, slots=True)
class Capacitor:
    designator: str
    a: str
    b: str
    farads: float
    tol_minus: float = 0.20
    tol_plus: float = 0.20


@dataclass(frozen=True, slots=True)
class Diode:
    designator: str
    anode: str
    cathode: str
    forward_v: float = 0.6
    on_ohms: float = 10.0


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
    closed_when: str  # "pressed" or "released"
    closed_ohms: float = 0.1


@dataclass(frozen=True, slots=True)
class StageCircuit:
    resistors: tuple[Resistor, ...]
    capacitors: tuple[Capacitor, ...]
    diodes: tuple[Diode, ...]
    rails: tuple[RailSource, ...]
    throws: tuple[Throw, ...]
    receiver_node: str

    def nodes(self) -> tuple[str, ...]:
        """Every non-ground net of the circuit, in a stable order."""
        seen: dict[str, None] = {}
        for r in self.resistors:
            seen.setdefault(r.a); seen.setdefault(r.b)
        for c in self.capacitors:
            seen.setdefault(c.a); seen.setdefault(c.b)
        for d in self.diodes:
            seen.setdefault(d.anode); seen.setdefault(d.cathode)
        for t in self.throws:
            seen.setdefault(t.a); seen.setdefault(t.b)
        for s in self.rails:
            seen.setdefault(s.net)
        seen.setdefault(self.receiver_node)
        seen.pop("0", None)
        return tuple(seen)


@dataclass(frozen=True, slots=True)
class Stage:
    """One (contact, receiver pin) input path, recognised.

    parts: designators of every passive part in the path (contact and
    receiver excluded), in a stable order.
    """

    contact: Contact
    receiver: Receiver
    kind: str
    parts: tuple[str, ...]
    circuit: StageCircuit
    nets: tuple[str, ...]

    @property
    def name(self) -> str:
        return f"{self.contact.designator} -> {self.receiver.ref}"
