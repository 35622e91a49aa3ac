"""Recognise an input path as a stage and reduce it to its small circuit.

The circuit keeps every passive part of the path's region: resistors with
their role (pull to a rail or ground, series between contact and receiver,
the pin's internal pull, other), capacitors, diodes as piecewise-linear
parts, the rails touched, and the contact's throws. Inductors (ferrite
beads) and zero-ohm resistors are shorts: their nets are merged, keeping
ground, then a rail, then the receiver's net as the surviving name. Other
contacts in the region rest in their released state (an NC throw is a
closed contact resistance, an NO throw is open): the stage describes this
contact being operated alone.

The kind, first match wins: dedicated (the receiver's part debounces),
firmware (an MCU pin with a declared debounce), latch (a changeover whose
two throws reach two cross-coupled gates), rc-schmitt / rc (a capacitor
charged through a resistance, into a Schmitt / plain input), pull-only (a
pull resistor, internal or external, and no such capacitor), direct.
"""

from __future__ import annotations

import math
import re
from collections import deque
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field, replace

from drc.board.board import Board, Contact, Rail, Receiver
from drc.board.classify import parse_tolerance
from drc.board.stage import (
    ActuatorState,
    Capacitor,
    Diode,
    DiodeCard,
    InputLoad,
    RailSource,
    Resistor,
    ResistorRole,
    Stage,
    StageCircuit,
    StageKind,
    Throw,
    two_terminal_nets,
)
from drc.board.trace import InputPath, TraceIndex, build_index, trace_paths
from drc.caching import Memo, memoized
from drc.config.settings import Config
from drc.errors import NetlistError
from drc.library.entries import ContactForm, Family, PinRole, PullDirection
from drc.netlist.elements import GROUND, Element, ModelCard, key
from drc.units import unevaluable

_DIGITS = re.compile(r"(\d+)")

# Designators and part names recur in every stage's sort and parts list.
_NATURAL: Memo[str, tuple] = Memo("board.natural_key", 100_000)


def natural_key(text: str) -> tuple:
    """Sort key that puts SW2 before SW10."""
    found = _NATURAL.get(text)
    if found is None:
        found = _NATURAL.put(text, tuple(int(part) if part.isdigit() else part.casefold()
                                         for part in _DIGITS.split(text)))
    return found


def stages_for_board(board: Board, config: Config,
                     paths: Iterable[InputPath] | None = None) -> list[Stage]:
    """Every stage of the board (or of the given paths: the ones the survey found
    checkable, drc/board/coverage.py), by contact designator then receiver; the
    first stage of each contact is its lead (see Stage)."""
    diode = _DiodeDefaults(config)
    if paths is None:
        index = build_index(board)
        paths = trace_paths(board, index)
    stages = [_recognise(path, board, config, path.index or build_index(board), diode)
              for path in paths]
    stages.sort(key=lambda s: (natural_key(s.contact.designator),
                               natural_key(s.receiver.part), s.receiver.pin))
    seen: set[str] = set()
    for i, st in enumerate(stages):
        contact = key(st.contact.designator)
        if contact in seen:
            stages[i] = replace(st, lead=False)
        seen.add(contact)
    return stages


def recognise(path: InputPath, board: Board, config: Config) -> Stage:
    """The stage one input path forms, with its reduced circuit."""
    index = path.index or build_index(board)
    return _recognise(path, board, config, index, _DiodeDefaults(config))


# ---------------------------------------------------------------- defaults

class _DiodeDefaults:
    """(forward_v, on_ohms) of the piecewise-linear diode from rules/limits.toml
    and the config's limits (board diodes and receiver inputs' clamp diodes). Also holds, for
    one board, what every stage of a receiver asks again: its supply rail and
    its family's record."""

    def __init__(self, config: Config) -> None:
        self.config = config
        self.value: tuple[float, float] | None = None
        self.supplies: dict[tuple[str, int], str | None] = {}  # (part, pin) -> rail key
        self.families: dict[str, Family] = {}
        self.models: Mapping[str, ModelCard] = {}  # the board's .model cards

    def get(self) -> tuple[float, float]:
        if self.value is None:
            self.value = (self.limit("diode_forward_voltage"), self.limit("diode_on_resistance"))
        return self.value

    def limit(self, name: str) -> float:
        limits = dict(_library_limits())
        limits.update(self.config.limits)
        return float(limits[name])

    def diode(self, element: Element, a: str, b: str, models: Mapping[str, ModelCard]) -> Diode:
        """A board diode: the Shockley diode of its .model card (IS, N, RS; a parameter the
        card leaves out at the SPICE default of rules/limits.toml), or without a card the
        piecewise-linear diode."""
        card = None
        if element.model:
            card = models.get(element.model) or next(
                (c for name, c in models.items() if name.casefold() == element.model.casefold()), None)
        if card is None or str(card.type).casefold() != "d":
            return Diode(element.designator, a, b, *self.get())
        values, defaulted = [], []
        for name, limit in (("is", "diode_saturation_current"), ("n", "diode_emission_coefficient"),
                            ("rs", "diode_series_resistance")):
            given = card.params.get(name)
            if isinstance(given, int | float) and not isinstance(given, bool):
                values.append(float(given))
            else:
                values.append(self.limit(limit))
                defaulted.append(name.upper())
        i_s, n, rs = values
        # The piecewise-linear stand-in at 1 mA: where the numerical solution starts from.
        nvt = n * _THERMAL_V
        vf = nvt * math.log(1e-3 / i_s + 1.0) + 1e-3 * rs
        return Diode(element.designator, a, b, vf, rs + nvt / 1e-3,
                     DiodeCard(i_s, n, rs, card.name, tuple(defaulted)))

    def family(self, name: str) -> Family:
        found = self.families.get(name)
        if found is None:
            found = self.families[name] = _library().family(name)
        return found


# kT/q at 27 °C (300.15 K), SPICE's nominal temperature (CODATA k and q).
_THERMAL_V = 1.380649e-23 * 300.15 / 1.602176634e-19


@memoized(limit=1)
def _library_limits() -> tuple[tuple[str, float], ...]:
    return tuple((k, v.value) for k, v in _library().limits.items())


def _tolerance(element: Element, default: float) -> float:
    for name in ("tol", "tolerance"):
        if name in element.params:
            value = parse_tolerance(element.params[name])
            if value is None:
                raise NetlistError(f"{element.designator}: tolerance "
                                   f"{element.params[name]!r} is not a number or a percentage",
                                   element.location, element.text or None)
            return value
    return default


# ---------------------------------------------------------------- nets

class _Nets:
    """Canonical net names for one path, with shorted nets merged."""

    def __init__(self, index: TraceIndex, board: Board, receiver_net: str) -> None:
        self.index = index
        self.rails = board.rails
        self.receiver = key(receiver_net)
        self.parent: dict[str, str] = {}

    def _rank(self, k: str) -> tuple:
        # The surviving name of merged nets: ground, a rail, the receiver's net.
        return (k != key(GROUND), k not in self.rails, k != self.receiver, k)

    def find(self, k: str) -> str:
        root = k
        while self.parent.get(root, root) != root:
            root = self.parent[root]
        while self.parent.get(k, k) != root:
            self.parent[k], k = root, self.parent[k]
        return root

    def short(self, a: str, b: str) -> None:
        ra, rb = self.find(key(a)), self.find(key(b))
        if ra != rb:
            keep, drop = sorted((ra, rb), key=self._rank)
            self.parent[drop] = keep

    def name(self, net: str) -> str:
        root = self.find(key(net))
        return GROUND if root == key(GROUND) else self.index.names.get(root, net)

    def rail(self, name: str) -> Rail | None:
        return self.rails.get(name.casefold())


def _is_short(element: Element) -> bool:
    """Inductors (ferrite beads) and 0 Ω resistors (links, common on real boards) are wires."""
    if element.kind == "L":
        return True
    return element.kind == "R" and element.value is not None and element.value.si == 0


# ---------------------------------------------------------------- building

@dataclass(slots=True)
class _Passives:
    """The path's parts as the stage circuit holds them, gathered element by element."""

    resistors: list[Resistor] = field(default_factory=list)
    capacitors: list[Capacitor] = field(default_factory=list)
    diodes: list[Diode] = field(default_factory=list)
    parts: list[str] = field(default_factory=list)  # every designator, shorts included
    resting: set[str] = field(default_factory=set)  # other contacts, closed at rest
    links: list[str] = field(default_factory=list)  # 0 Ω resistors and inductors: wires
    notes: list[str] = field(default_factory=list)


def _recognise(path: InputPath, board: Board, config: Config, index: TraceIndex,
               diode_defaults: _DiodeDefaults) -> Stage:
    contact, receiver = path.contact, path.receiver
    nets = _Nets(index, board, receiver.net)
    for element in path.elements:
        if _is_short(element) and len(element.nodes) == 2:
            nets.short(*element.nodes)
    receiver_node = nets.name(receiver.net)
    found = _Passives()
    diode_defaults.models = board.netlist.models
    for element in path.elements:
        _add_passive(found, element, nets, config, diode_defaults)
    _add_resting_contacts(found, path.contacts, nets)

    rails_used: dict[str, RailSource] = {}
    internal = _internal_pull(receiver, receiver_node, board, nets, rails_used)
    loads = _loads(path, board, nets, diode_defaults)
    throws = _throws(contact, nets)
    resistors = _with_roles(found.resistors, throws, receiver_node, nets)
    # A resting contact is neither a pull nor a series resistor for the rules.
    resistors = [r if r.designator not in found.resting else replace(r, role=ResistorRole.OTHER)
                 for r in resistors]
    if internal is not None:
        resistors.append(internal)
        found.parts.append(internal.designator)

    for net in two_terminal_nets(resistors, found.capacitors, found.diodes, throws):
        rail = nets.rail(net)
        if rail is not None and net not in rails_used:
            rails_used[net] = RailSource(net, rail.voltage, rail.tolerance)
    # The loads' supplies join the rails; a supply no part touches is not one of the stage's nets.
    supply_only = [n for n in loads.supplies if n not in rails_used]
    for net, supply in loads.supplies.items():
        rails_used.setdefault(net, supply)
    circuit = StageCircuit(
        resistors=tuple(resistors), capacitors=tuple(found.capacitors), diodes=tuple(found.diodes),
        rails=tuple(rails_used[n] for n in sorted(rails_used, key=natural_key)),
        throws=throws, receiver_node=receiver_node, loads=loads.loads)
    nodes = circuit.nodes()
    kind = _kind(path, circuit, nets, index)
    return Stage(contact=contact, receiver=receiver, kind=kind,
                 parts=tuple(sorted(dict.fromkeys(found.parts), key=natural_key)),
                 circuit=circuit, nets=tuple(n for n in nodes if n not in supply_only) if supply_only else nodes,
                 links=tuple(sorted(dict.fromkeys(found.links), key=natural_key)),
                 notes=tuple(dict.fromkeys(found.notes)))


def _add_passive(found: _Passives, element: Element, nets: _Nets, config: Config,
                 diode_defaults: _DiodeDefaults) -> None:
    """One element of the path into the circuit: shorts merged already, a part on one net dropped."""
    found.parts.append(element.designator)
    if _is_short(element):
        found.links.append(element.designator)
        return
    a, b = (nets.name(n) for n in element.nodes[:2])
    kind = element.kind
    value = _value(element) if kind in "RC" else 0.0
    if kind == "C" and value == 0:
        found.notes.append(f"{element.designator} is 0 F: read as not fitted (left out of the stage)")
        return
    if a == b:
        return  # both ends on one net: carries nothing
    if kind == "R":
        tol = _tolerance(element, config.tolerances.resistor)
        found.resistors.append(Resistor(element.designator, a, b, value, tol, tol))
    elif kind == "C":
        tol = _tolerance(element, config.tolerances.capacitor)
        found.capacitors.append(Capacitor(element.designator, a, b, value, tol, tol))
    elif kind == "D":
        found.diodes.append(diode_defaults.diode(element, a, b, diode_defaults.models))


def _value(element: Element) -> float:
    """A resistor's or capacitor's value in SI units; a NetlistError when it has none
    or it is negative (no fitted part has a negative resistance or capacitance)."""
    if element.value is None:
        raise NetlistError(f"{element.designator} has no value", element.location,
                           element.text or None)
    value = element.value.si
    what = "resistance" if element.kind == "R" else "capacitance"
    if value < 0:
        raise NetlistError(f"{element.designator} has a negative {what} ({value:g}): no part "
                           f"has one; check the value", element.location, element.text or None)
    outside = unevaluable(value, what)
    if outside is not None:  # 1e30 for 10k: infinities in the analysis, not a finding
        raise NetlistError(f"{element.designator} has {outside}; check the value",
                           element.location, element.text or None)
    return value


def _add_resting_contacts(found: _Passives, contacts: Iterable[Contact], nets: _Nets) -> None:
    """Other contacts closed at rest join the circuit as their closed resistance."""
    for other in contacts:
        if other.form not in (ContactForm.SPST_NC, ContactForm.SPDT):
            continue  # only a contact closed at rest joins the circuit
        for throw in _throws(other, nets):
            if throw.closed_when == ActuatorState.RELEASED and throw.a != throw.b:
                found.resistors.append(Resistor(other.designator, throw.a, throw.b,
                                                other.closed_resistance, 0.0, 0.0))
                found.parts.append(other.designator)
                found.resting.add(other.designator)


def _throws(contact: Contact, nets: _Nets) -> tuple[Throw, ...]:
    """The contact's switched paths: which terminals join in which state."""
    t = [nets.name(n) for n in contact.terminals]
    ohms = contact.closed_resistance
    if contact.form == ContactForm.SPDT and len(t) >= 3:
        return (Throw(t[0], t[1], ActuatorState.RELEASED, ohms),
                Throw(t[0], t[2], ActuatorState.PRESSED, ohms))
    state = ActuatorState.RELEASED if contact.form == ContactForm.SPST_NC else ActuatorState.PRESSED
    return (Throw(t[0], t[1], state, ohms),)


@dataclass(frozen=True, slots=True)
class _Loads:
    loads: tuple[InputLoad, ...]
    supplies: dict[str, RailSource]  # the rails the loads' parts are supplied from


def _loads(path: InputPath, board: Board, nets: _Nets, shared: _DiodeDefaults) -> _Loads:
    """Every receiver input the contact reaches, as loads: the stage's own receiver first."""
    own = path.receiver
    others = [r for r in path.reached if r is not own and r.ref != own.ref]
    loads: list[InputLoad] = []
    supplies: dict[str, RailSource] = {}
    for r in (own, *others):
        where = (r.part, r.pin)
        if where not in shared.supplies:
            found = _supply_net(r, board, nets)
            shared.supplies[where] = None if found is None else key(found)
        rail_key = shared.supplies[where]
        supply = None if rail_key is None else nets.name(rail_key)
        if supply is None:
            # No rail net: a rail of the part's own, at its VCC and tolerance.
            supply = f"{r.part}:VDD"
            supplies[supply] = RailSource(supply, r.supply_v, r.supply_tolerance)
        else:
            rail = nets.rail(supply)
            assert rail is not None  # _supply_net names rails only
            supplies[supply] = RailSource(supply, rail.voltage, rail.tolerance)
        family = shared.family(r.family)
        loads.append(InputLoad(r.ref, nets.name(r.net), family.name, supply,
                               family.leak_high_a, family.leak_low_a, ttl=family.ttl_input,
                               clamp=shared.get(), clamp_to_supply=not family.tolerant))
    return _Loads(tuple(loads), supplies)


@memoized(limit=1)
def _library():
    from drc.library.catalogue import load_library
    return load_library()


def _internal_pull(receiver: Receiver, node: str, board: Board, nets: _Nets,
                   rails_used: dict[str, RailSource]) -> Resistor | None:
    """The MCU pin's own pull resistor: nominal at mid-range, tolerance covering it."""
    pull = receiver.internal_pull
    if pull is None:
        return None
    nominal = (pull.r_min + pull.r_max) / 2
    spread = (pull.r_max - pull.r_min) / 2 / nominal
    if pull.direction == PullDirection.DOWN:
        end = GROUND
    else:
        supply = _supply_net(receiver, board, nets)
        # No rail net: a node of the pin's own supply.
        end = supply if supply is not None else f"{receiver.part}:VDD"
        rail = nets.rail(end)
        rails_used[end] = RailSource(end, rail.voltage if rail else receiver.supply_v,
                                     rail.tolerance if rail else receiver.supply_tolerance)
    return Resistor(f"{receiver.part}:{receiver.pin}/pull", end, node, nominal,
                    spread, spread, ResistorRole.INTERNAL_PULL)


def _supply_net(receiver: Receiver, board: Board, nets: _Nets) -> str | None:
    """The rail the receiver's part is supplied from, by its supply pins or voltage."""
    part = board.parts.get(key(receiver.part))
    if part is not None:
        for pin in part.pins:
            if pin.role == PinRole.SUPPLY and key(pin.net) in board.rails:
                rail = board.rails[key(pin.net)]
                if abs(rail.voltage - receiver.supply_v) <= 1e-9 * max(1.0, rail.voltage):
                    return nets.name(pin.net)
    matching = [r for r in board.rails.values()
                if abs(r.voltage - receiver.supply_v) <= 1e-9 * max(1.0, r.voltage)]
    if matching:
        return nets.name(min(matching, key=lambda r: natural_key(r.net)).net)
    return None


# ---------------------------------------------------------------- roles

def _with_roles(resistors: list[Resistor], throws: tuple[Throw, ...], receiver_node: str,
                nets: _Nets) -> list[Resistor]:
    """Pull: one end held (rail or ground), one free. Series: on a route from the
    contact's terminals to the receiver. Other: the rest."""
    held_memo: dict[str, bool] = {}

    def held(n: str) -> bool:
        found = held_memo.get(n)
        if found is None:
            found = held_memo[n] = n == GROUND or nets.rail(n) is not None
        return found

    # Conducting links between free nets, the contact's own throws left out.
    links: dict[str, list[tuple[int, str]]] = {}
    for i, r in enumerate(resistors):
        if not held(r.a) and not held(r.b):
            links.setdefault(r.a, []).append((i, r.b))
            links.setdefault(r.b, []).append((i, r.a))
    starts = {n for t in throws for n in (t.a, t.b) if not held(n)}

    def reaches(sources: Iterable[str], target: str, avoid: str) -> bool:
        seen = {s for s in sources if s != avoid}
        queue = deque(seen)
        while queue:
            n = queue.popleft()
            if n == target:
                return True
            for _, m in links.get(n, ()):
                if m != avoid and m not in seen:
                    seen.add(m)
                    queue.append(m)
        return False

    out: list[Resistor] = []
    for r in resistors:
        if held(r.a) != held(r.b):
            role = ResistorRole.PULL
        elif held(r.a):
            role = ResistorRole.OTHER
        elif ((reaches(starts, r.a, r.b) and reaches((r.b,), receiver_node, r.a))
              or (reaches(starts, r.b, r.a) and reaches((r.a,), receiver_node, r.b))):
            role = ResistorRole.SERIES
        else:
            role = ResistorRole.OTHER
        out.append(Resistor(r.designator, r.a, r.b, r.ohms, r.tol_minus, r.tol_plus, role))
    return out


# ---------------------------------------------------------------- kinds

def _kind(path: InputPath, circuit: StageCircuit, nets: _Nets, index: TraceIndex) -> StageKind:
    receiver = path.receiver
    if receiver.dedicated_debounce:
        return StageKind.DEDICATED
    if receiver.firmware_debounce_s is not None and receiver.firmware_debounce_s > 0:
        return StageKind.FIRMWARE
    if _is_latch(path, index):
        return StageKind.LATCH
    if _charged_capacitor(circuit, nets):
        return StageKind.RC_SCHMITT if receiver.schmitt else StageKind.RC
    if any(r.role in (ResistorRole.PULL, ResistorRole.INTERNAL_PULL) for r in circuit.resistors):
        return StageKind.PULL_ONLY
    return StageKind.DIRECT


def _charged_capacitor(circuit: StageCircuit, nets: _Nets) -> bool:
    """A capacitor with a free end on a net some resistor reaches."""
    resistive = {n for r in circuit.resistors for n in (r.a, r.b)}
    for c in circuit.capacitors:
        for end in (c.a, c.b):
            if end != GROUND and nets.rail(end) is None and end in resistive:
                return True
    return False


def _side(path: InputPath, start: str, index: TraceIndex) -> set[str]:
    """Net keys reachable from one throw terminal without crossing the contact
    itself, a rail, ground or a capacitor."""
    if index.is_boundary(start):
        return {key(start)}
    links: dict[str, list[str]] = {}
    for element in path.elements:
        if element.kind == "C" or len(element.nodes) < 2:
            continue
        a, b = key(element.nodes[0]), key(element.nodes[1])
        links.setdefault(a, []).append(b)
        links.setdefault(b, []).append(a)
    for other in path.contacts:
        ks = [key(t) for t in other.terminals]
        for a in ks:
            for b in ks:
                if a != b:
                    links.setdefault(a, []).append(b)
    seen = {key(start)}
    queue = deque(seen)
    while queue:
        n = queue.popleft()
        for m in links.get(n, ()):
            if m not in seen:
                seen.add(m)
                if not (m in index.stops or m in index.driven):
                    queue.append(m)
    return seen


def _is_latch(path: InputPath, index: TraceIndex) -> bool:
    """A changeover whose NC and NO throws reach inputs of two gates, each
    gate's output feeding an input of the other (a cross-coupled pair)."""
    contact, receiver = path.contact, path.receiver
    gate = receiver.gate
    if contact.form != ContactForm.SPDT or len(contact.terminals) < 3 or gate is None:
        return False
    nc_side = _side(path, contact.terminals[1], index)
    no_side = _side(path, contact.terminals[2], index)
    here = key(receiver.net)
    if here in nc_side and here not in no_side:
        other_side = no_side
    elif here in no_side and here not in nc_side:
        other_side = nc_side
    else:
        return False
    mine = (key(receiver.part), gate)
    if _is_latch_part(path, index, mine, other_side):
        return True
    for other in path.reached:
        if other.gate is None:
            continue
        theirs = (key(other.part), other.gate)
        if theirs == mine or key(other.net) not in other_side:
            continue
        if _feeds(index, mine[0], theirs) and _feeds(index, theirs[0], mine):
            return True
    return False


def _is_latch_part(path: InputPath, index: TraceIndex, mine: tuple[str, str],
                   other_side: set[str]) -> bool:
    """The two throws reach the set and the reset input of one latch inside a part ('279)."""
    part = index.board.parts.get(mine[0])
    if part is None or not part.latch or path.receiver.function not in ("set", "reset"):
        return False
    wanted = {"set", "reset"} - {path.receiver.function}
    return any((key(other.part), other.gate) == mine and other.function in wanted
               and key(other.net) in other_side for other in path.reached)


def _feeds(index: TraceIndex, part_key: str, gate: tuple[str, str]) -> bool:
    """Does an output of part `part_key` drive an input of (part, gate)?

    The part data names the gate of input pins only (Receiver.gate), so the
    driving output is known by part, not by gate: in one package a chain
    through a third gate would also pass this test.
    """
    part = index.board.parts.get(part_key)
    if part is None:
        return False
    for pin in part.pins:
        if pin.role != PinRole.OUTPUT:
            continue
        for r in index.receivers_at.get(key(pin.net), ()):
            if (key(r.part), r.gate) == gate:
                return True
    return False
