"""Fail closed: what became of every contact of a board.

Every contact ends in exactly one of three ways: it reaches logic inputs
whose stages are checked; it drives only loads that are not logic inputs (a
lamp, a motor, a relay coil, an LED, named as such); or it is not checked,
and each reason is an `UncheckedInput` that the `unchecked-input` rule
reports. A contact is not checked when its nets reach a part the checker
cannot judge (an unknown part, a part whose pin order is unknown, an
optocoupler, a receiver whose supply is outside its family's range, a
transistor, a simulator element: `Board.uncheckable`, found by
classification), when an element the reader could not evaluate
(`Element.problem`) lies on its path (its stages are then not analysed), or
when it reaches nothing at all. A contact can have checked stages and
unchecked inputs at once; it then counts as not checked.

The walk is the tracer's (drc/board/trace.py): the connected passive region
around the contact's terminals, shared by every contact in it. What hangs on
a region (uncheckable parts, loads, elements with a problem) is looked up
once per region through net indexes built in one pass, so a board of a
hundred thousand elements is surveyed in linear time.
"""

from __future__ import annotations

from collections import defaultdict
from dataclasses import dataclass
from enum import StrEnum

from drc.board.board import Board, Contact, Load, UncheckablePart, UncheckedReason
from drc.board.trace import InputPath, TraceIndex, build_index, contact_region
from drc.errors import SourceLocation
from drc.library.catalogue import Library
from drc.library.entries import OtherKind, PinRole
from drc.netlist.elements import GROUND, Element, key


class ContactStatus(StrEnum):
    """How a contact ended; the values are the words reports print."""

    CHECKED = "checked"  # every input it reaches is a checked stage
    NOT_CHECKED = "not checked"  # at least one unchecked input (an unchecked-input finding)
    LOAD_ONLY = "non-logic load"  # it drives only loads that are not logic inputs


@dataclass(frozen=True, slots=True)
class UncheckedInput:
    """One input a contact reaches that could not be checked, and why.

    receiver: the pin or part shown as the receiver ("U3:1", "Q2"), where
    known; parts: the designators involved besides the contact.
    """

    contact: Contact
    reason: UncheckedReason
    detail: str
    receiver: str | None
    parts: tuple[str, ...]
    nets: tuple[str, ...]
    related: tuple[SourceLocation, ...] = ()


@dataclass(frozen=True, slots=True)
class ContactOutcome:
    """What became of one contact: its status, the receivers checked, the loads driven."""

    contact: str
    status: ContactStatus
    receivers: tuple[str, ...] = ()
    loads: tuple[str, ...] = ()  # "lamp LP1"
    reasons: tuple[UncheckedReason, ...] = ()


@dataclass(frozen=True, slots=True)
class Survey:
    """Every contact's outcome: the paths to analyse, the unchecked inputs, the outcomes."""

    paths: tuple[InputPath, ...]
    unchecked: tuple[UncheckedInput, ...]
    outcomes: tuple[ContactOutcome, ...]

    def count(self, status: ContactStatus) -> int:
        return sum(1 for o in self.outcomes if o.status == status)


@dataclass(frozen=True, slots=True)
class _Hanging:
    """What hangs on one region: uncheckable pins, loads, elements with a problem."""

    blocked: tuple[tuple[UncheckablePart, str, str], ...]  # (part, pin shown, net)
    loads: tuple[Load, ...]
    problems: tuple[Element, ...]


class _Attachments:
    """Net key -> what hangs on the net, built once per board."""

    def __init__(self, board: Board, index: TraceIndex, library: Library) -> None:
        self.blocked: defaultdict[str, list[tuple[UncheckablePart, str, str]]] = defaultdict(list)
        for part in board.uncheckable:
            for ref, net in part.pins:
                self.blocked[key(net)].append((part, ref, net))
        self.loads: defaultdict[str, list[Load]] = defaultdict(list)
        for load in board.loads:
            for net in dict.fromkeys(load.nets):
                self.loads[key(net)].append(load)
        # A contact that switches a part's supply is a power switch, not an input.
        for logic in board.parts.values():
            for pin in logic.pins:
                if pin.role == PinRole.SUPPLY:
                    self.loads[key(pin.net)].append(Load(logic.designator, logic.part_number,
                                                         "supply of", (pin.net,), logic.location))
        self.problems: defaultdict[str, list[Element]] = defaultdict(list)
        for element in index.elements:
            if element.problem is not None:
                for net in dict.fromkeys(element.nodes):
                    self.problems[key(net)].append(element)
        self.library = library
        self.index = index

    def hanging(self, nets: tuple[str, ...], element_ids: tuple[int, ...]) -> _Hanging:
        blocked: dict[tuple[str, str], tuple[UncheckablePart, str, str]] = {}
        loads: dict[str, Load] = {}
        problems: dict[str, Element] = {}
        for net in nets:
            for item in self.blocked.get(net, ()):
                blocked.setdefault((item[0].designator, item[1]), item)
            for load in self.loads.get(net, ()):
                loads.setdefault(load.designator, load)
            for element in self.problems.get(net, ()):
                problems.setdefault(element.designator, element)
        elements = self.index.elements
        for i in element_ids:
            element = elements[i]
            if element.problem is not None:
                problems.setdefault(element.designator, element)
            elif element.kind == "D":
                other = self.library.other_part_for(element.designator, element.model)
                if other is not None and other.kind == OtherKind.LOAD:
                    loads.setdefault(element.designator, Load(
                        element.designator, element.model or "", other.title, element.nodes,
                        element.location))
        return _Hanging(tuple(blocked.values()), tuple(loads.values()), tuple(problems.values()))


def survey_board(board: Board, library: Library, index: TraceIndex | None = None) -> Survey:
    """What became of every contact of the board (see the module docstring)."""
    index = index or build_index(board)
    attachments = _Attachments(board, index, library)
    cache: dict[tuple, tuple] = {}
    hanging_by_region: dict[tuple, _Hanging] = {}
    paths: list[InputPath] = []
    unchecked: list[UncheckedInput] = []
    outcomes: list[ContactOutcome] = []
    for contact_index in range(len(board.contacts)):
        memo_key, shared = contact_region(index, contact_index, cache)
        hanging = hanging_by_region.get(memo_key)
        if hanging is None:
            hanging = hanging_by_region[memo_key] = attachments.hanging(shared[5], shared[0])
        outcome = _contact_outcome(index, contact_index, shared, hanging, paths, unchecked)
        outcomes.append(outcome)
    return Survey(tuple(paths), tuple(unchecked), tuple(outcomes))


def _contact_outcome(index: TraceIndex, contact_index: int, shared: tuple, hanging: _Hanging,
                     paths: list[InputPath], unchecked: list[UncheckedInput]) -> ContactOutcome:
    """One contact's outcome; its checkable paths and unchecked inputs appended to the lists."""
    board = index.board
    contact = board.contacts[contact_index]
    element_ids, interior, boundary, contact_ids, reached, _driven = shared
    here: list[UncheckedInput] = []
    checked: tuple[str, ...] = ()
    if reached:
        elements = tuple(index.elements[i] for i in element_ids)
        others = tuple(board.contacts[i] for i in contact_ids if i != contact_index)
        contact_paths = [InputPath(contact, receiver, elements, interior + boundary, boundary,
                                   others, reached, index) for receiver in reached]
        if hanging.problems:
            here.extend(_unevaluable(contact, hanging.problems, p.receiver.ref, interior)
                        for p in contact_paths)
        else:
            paths.extend(contact_paths)
            checked = tuple(p.receiver.ref for p in contact_paths)
    elif hanging.problems:
        here.append(_unevaluable(contact, hanging.problems, None, interior))
    here.extend(_blocked(contact, part, ref, net, index) for part, ref, net in hanging.blocked)
    loads = _loads(hanging, interior, _driven, boundary)
    if not (reached or hanging.blocked or loads or hanging.problems):
        here.append(_no_path(contact, interior, boundary))
    unchecked.extend(here)
    status = (ContactStatus.NOT_CHECKED if here else
              ContactStatus.CHECKED if checked else ContactStatus.LOAD_ONLY)
    return ContactOutcome(contact.designator, status, checked, loads,
                          tuple(dict.fromkeys(u.reason for u in here)))


def _loads(hanging: _Hanging, interior: tuple[str, ...], driven: tuple[str, ...],
           boundary: tuple[str, ...]) -> tuple[str, ...]:
    """The non-logic loads a contact drives ("lamp LP1"); a contact with every terminal
    on a rail or ground is a power switch between supplies."""
    loads = tuple(f"{load.title} {load.designator}" for load in hanging.loads)
    if not interior and not driven:
        loads += tuple(f"supply rail {net}" for net in boundary if key(net) != key(GROUND))
    return loads


def _unevaluable(contact: Contact, problems: tuple[Element, ...], receiver: str | None,
                 nets: tuple[str, ...]) -> UncheckedInput:
    names = ", ".join(f"{e.designator} ({e.problem})" for e in problems)
    return UncheckedInput(contact, UncheckedReason.UNEVALUABLE_ELEMENT,
                          f"an element on the path cannot be evaluated: {names}", receiver,
                          tuple(e.designator for e in problems), nets,
                          tuple(e.location for e in problems))


def _blocked(contact: Contact, part: UncheckablePart, ref: str, net: str,
             index: TraceIndex) -> UncheckedInput:
    detail = part.detail
    receiver = ref
    if part.beyond:
        behind = _receivers_beyond(index, part.beyond)
        if behind:
            receiver = behind[0]
            detail += f"; the logic input behind it: {', '.join(behind)}"
    return UncheckedInput(contact, part.reason, detail, receiver, (part.designator,), (net,),
                          (part.location,))


def _receivers_beyond(index: TraceIndex, nets: tuple[str, ...]) -> list[str]:
    """Receivers on the far side of an isolating part: on its output nets, or one
    passive region away from them."""
    found: dict[str, None] = {}
    for net in nets:
        k = key(net)
        if k in index.stops:
            continue  # an emitter to ground: the receivers on ground are not behind it
        for receiver in index.receivers_at.get(k, ()):
            found.setdefault(receiver.ref)
        for i in index.passives_at(k, net):
            for node in index.elements[i].nodes:
                other = key(node)
                if other == k or index.is_boundary(other):
                    continue
                region = index.region_id(other, node)
                for n in index.region_nets(region):
                    for receiver in index.receivers_at.get(n, ()):
                        found.setdefault(receiver.ref)
    return list(found)


def _no_path(contact: Contact, interior: tuple[str, ...], boundary: tuple[str, ...]) -> UncheckedInput:
    nets = interior + boundary
    ends = ", ".join(nets) if nets else "nothing"
    return UncheckedInput(contact, UncheckedReason.NO_PATH,
                          f"its nets ({ends}) reach no logic input and no known load", None, (), nets)
