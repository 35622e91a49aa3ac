"""Trace every contact to the receiver inputs it reaches through passive parts.

From each contact's terminals the walk crosses resistors, capacitors,
inductors (ferrite beads are written as L), diodes and other contacts, and
stops at rails and ground (held nets) and at nets driven by a part output.
Every receiver input on a reached net gives one InputPath; a receiver on an
output-driven net counts only when the contact itself lands on that net.

Speed: the only index is net -> passive elements (and net -> contacts),
built in one pass over the netlist. The connected passive region around a
net is walked once and shared by every contact in it, so a board with a
hundred thousand elements and thousands of contacts is traced in one linear
pass. No graph of every pin is built.

Memory: the reader writes each net with one spelling (the first it met, for
every element on the net), so the passive index is keyed by the spellings
the elements already hold (no folded copy of every net name), and a net with
one passive pin, most nets of a large board, holds its element's index
itself rather than a list: at a million elements that is about 150 MB less.
Lookups by key go through the spelling (`TraceIndex.passives_at`).
"""

from __future__ import annotations

from collections import defaultdict
from collections.abc import Sequence
from dataclasses import dataclass, field

from drc.board.board import Board, Contact, Receiver
from drc.netlist.elements import GROUND, Element, key

# Element letters the walk crosses: resistors, capacitors, inductors and
# ferrite beads, diodes.
PASSIVE_KINDS = frozenset("RCLD")


@dataclass(frozen=True, slots=True)
class InputPath:
    """One (contact, receiver pin) pair and the passive region joining them.

    elements: the passive elements of the region (pull resistors to rails,
    capacitors to ground, series parts, diodes), in netlist order.
    nets: every net of the region, interior nets first (in walk order),
    then the boundary. boundary: the rails, ground and output-driven nets the
    region touches. contacts: other contacts inside the region (a series or
    matrix contact). reached: every receiver the contact reaches (shared by
    the contact's paths). index: the board's trace index, for canonical net
    spellings and lookups in `recognise`.
    """

    contact: Contact
    receiver: Receiver
    elements: tuple[Element, ...]
    nets: tuple[str, ...]
    boundary: tuple[str, ...] = ()
    contacts: tuple[Contact, ...] = ()
    reached: tuple[Receiver, ...] = ()
    index: TraceIndex | None = field(default=None, compare=False, repr=False)

    @property
    def name(self) -> str:
        return f"{self.contact.designator} -> {self.receiver.ref}"


@dataclass(slots=True)
class _Region:
    nets: list[str] = field(default_factory=list)  # interior net keys
    elements: set[int] = field(default_factory=set)
    contacts: set[int] = field(default_factory=set)
    leaves: set[str] = field(default_factory=set)  # boundary net keys


@dataclass(slots=True)
class TraceIndex:
    """What tracing needs from a board, built once (linear in the netlist)."""

    board: Board
    elements: list[Element]
    names: dict[str, str]  # key(net) -> spelling of its first appearance
    passives: dict[str, int | list[int]]  # net as spelled -> index (or indices) into elements
    contacts_at: dict[str, list[int]]  # key(net) -> indices into board.contacts
    stops: frozenset[str]  # rails and ground
    driven: frozenset[str]  # nets a part output drives
    receivers_at: dict[str, list[Receiver]]
    outputs_at: dict[str, list[tuple[str, int]]]  # key(net) -> (part key, pin)
    _region_of: dict[str, int] = field(default_factory=dict)
    _regions: list[_Region] = field(default_factory=list)
    _folded: dict[str, str] | None = None

    def name(self, net: str) -> str:
        return self.names.get(key(net), net)

    def passives_at(self, net_key: str, spelled: str | None = None) -> Sequence[int]:
        """Indices of the passive elements on the net of key `net_key`, in netlist order
        (`spelled`: the net as written, where the caller has it)."""
        if spelled is None:
            spelled = self.names.get(net_key)
            if spelled is None:  # a net no walk has met: its spelling from a pass over the index
                spelled = self._spellings().get(net_key, net_key)
        found = self.passives.get(spelled)
        if found is None:
            return ()
        return (found,) if found.__class__ is int else found  # type: ignore[return-value]

    def is_boundary(self, net: str) -> bool:
        k = key(net)
        return k in self.stops or k in self.driven

    def _spellings(self) -> dict[str, str]:
        """key(net) -> its spelling, for every net of the index (made once, when first needed)."""
        if self._folded is None:
            self._folded = {spelled.casefold(): spelled for spelled in reversed(self.passives)}
        return self._folded

    def region_nets(self, rid: int) -> list[str]:
        """The interior net keys of region `rid` (see region_id)."""
        return self._regions[rid].nets

    def region_id(self, start: str, spelled: str | None = None) -> int:
        """The number of the connected passive region containing interior net key `start`
        (`spelled`: the net as written, where the caller has it).

        Regions are walked on first use and remembered by the index.
        """
        found = self._region_of.get(start)
        if found is not None:
            return found
        if spelled is not None:
            self.names.setdefault(start, spelled)
        rid = len(self._regions)
        region = _Region()
        self._regions.append(region)
        region_of, stops, driven, names = self._region_of, self.stops, self.driven, self.names
        contacts_at = self.contacts_at
        elements, contacts = self.elements, self.board.contacts
        region_of[start] = rid
        stack = [start]
        while stack:
            net = stack.pop()
            region.nets.append(net)
            neighbours: list[str] = []
            for index in self.passives_at(net):
                if index not in region.elements:
                    region.elements.add(index)
                    neighbours.extend(elements[index].nodes)
            for index in contacts_at.get(net, ()):
                if index not in region.contacts:
                    region.contacts.add(index)
                    neighbours.extend(contacts[index].terminals)
            for spelled in neighbours:
                other = spelled.casefold()
                if other not in names:
                    names[other] = spelled
                if other in stops or other in driven:
                    region.leaves.add(other)
                elif other not in region_of:
                    region_of[other] = rid
                    stack.append(other)
        return rid


def build_index(board: Board) -> TraceIndex:
    """Index the board's nets for tracing, in one pass over the netlist."""
    elements = board.netlist.elements
    kinds = PASSIVE_KINDS
    # Every passive pin of the board passes here (a plain loop: a list of every
    # (pin, index) pair first cost 180 MB at 1M elements). Keyed by the net's
    # spelling: one per net, the reader's (see the module docstring); one pin's
    # net holds the bare index, a list starts at the second pin, in element order.
    passives: dict[str, int | list[int]] = {}
    get = passives.get
    for index, element in enumerate(elements):
        if element.kind in kinds:
            for node in element.nodes:
                found = get(node)
                if found is None:
                    passives[node] = index
                elif found.__class__ is int:
                    passives[node] = [found, index]
                else:
                    found.append(index)  # type: ignore[union-attr]
    # Spellings: the reader keeps one spelling per net, so any occurrence
    # names it; board objects first, element nodes as regions are walked.
    names: dict[str, str] = {key(GROUND): GROUND}
    contacts_at: defaultdict[str, list[int]] = defaultdict(list)
    for index, contact in enumerate(board.contacts):
        for terminal in dict.fromkeys(contact.terminals):
            k = key(terminal)
            names.setdefault(k, terminal)
            contacts_at[k].append(index)
    receivers_at: defaultdict[str, list[Receiver]] = defaultdict(list)
    for receiver in board.receivers:
        k = key(receiver.net)
        names.setdefault(k, receiver.net)
        receivers_at[k].append(receiver)
    outputs_at: defaultdict[str, list[tuple[str, int]]] = defaultdict(list)
    for part_key, part in board.parts.items():
        for pin in part.pins:
            if pin.role == "output":
                outputs_at[key(pin.net)].append((part_key, pin.number))
    for k, rail in board.rails.items():
        names.setdefault(k, rail.net)
    stops = frozenset(board.rails) | {key(GROUND)}
    driven = frozenset(outputs_at) - stops
    return TraceIndex(board, elements, names, passives, dict(contacts_at), stops,
                      driven, dict(receivers_at), dict(outputs_at))


def _receiver_order(receiver: Receiver) -> tuple:
    return (key(receiver.part), receiver.pin)


# What the contacts of one set of regions share: element ids, interior net
# names, boundary net names, contact ids, receivers reached, and the keys of
# the nets a contact there drives (interior nets and output-driven nets it
# lands on).
_RegionSummary = tuple[tuple[int, ...], tuple[str, ...], tuple[str, ...], tuple[int, ...],
                       tuple[Receiver, ...], tuple[str, ...]]


def trace_contact(index: TraceIndex, contact_index: int,
                  cache: dict[tuple, _RegionSummary] | None = None) -> list[InputPath]:
    """The input paths of one contact (board.contacts[contact_index])."""
    contact = index.board.contacts[contact_index]
    memo_key, shared = contact_region(index, contact_index, cache)
    element_ids, interior, boundary, contact_ids, reached, _driven = shared
    if not reached:
        return []
    elements = tuple(index.elements[i] for i in element_ids)
    others = tuple(index.board.contacts[i] for i in contact_ids if i != contact_index)
    nets = interior + boundary
    return [InputPath(contact, receiver, elements, nets, boundary, others, reached, index)
            for receiver in reached]


def contact_region(index: TraceIndex, contact_index: int,
                   cache: dict[tuple, _RegionSummary] | None = None) -> tuple[tuple, _RegionSummary]:
    """(the key contacts of one region share, what that region holds) for one contact.

    The summary: element ids, interior net names, boundary net names, ids of
    the contacts in it, receivers reached, keys of the nets the contact drives.
    """
    contact = index.board.contacts[contact_index]
    region_ids: list[int] = []
    leaves: set[str] = set()
    landed_driven: list[str] = []
    for terminal in dict.fromkeys(key(t) for t in contact.terminals):
        if terminal in index.stops:
            leaves.add(terminal)
        elif terminal in index.driven:
            leaves.add(terminal)
            landed_driven.append(terminal)
        else:
            rid = index.region_id(terminal)
            if rid not in region_ids:
                region_ids.append(rid)
    memo_key = (tuple(sorted(region_ids)), tuple(landed_driven), frozenset(leaves))
    shared = cache.get(memo_key) if cache is not None else None
    if shared is None:
        shared = _region_summary(index, region_ids, landed_driven, leaves)
        if cache is not None:
            cache[memo_key] = shared
    return memo_key, shared


def _region_summary(index: TraceIndex, region_ids: list[int], landed_driven: list[str],
                    leaves: set[str]) -> _RegionSummary:
    element_ids: set[int] = set()
    contact_ids: set[int] = set()
    interior: list[str] = []
    boundary = set(leaves)
    for rid in region_ids:
        region = index._regions[rid]
        element_ids |= region.elements
        contact_ids |= region.contacts
        interior.extend(region.nets)
        boundary |= region.leaves
    # On an output-driven net the contact lands on, keep the parts that only
    # tie that net to a rail or ground (its pull resistor, a capacitor).
    for net in landed_driven:
        for i in index.passives_at(net):
            if all(key(n) in index.stops or key(n) == net for n in index.elements[i].nodes):
                element_ids.add(i)
                boundary.update(key(n) for n in index.elements[i].nodes)
    reached: list[Receiver] = []
    for net in interior + landed_driven:
        reached.extend(index.receivers_at.get(net, ()))
    reached.sort(key=_receiver_order)
    ground = key(GROUND)
    boundary_names = tuple(sorted((index.name(n) for n in boundary if n != ground),
                                  key=str.casefold))
    if ground in boundary:
        boundary_names += (GROUND,)
    return (tuple(sorted(element_ids)), tuple(index.name(n) for n in interior),
            boundary_names, tuple(sorted(contact_ids)), tuple(reached),
            tuple(interior) + tuple(landed_driven))


def trace_paths(board: Board, index: TraceIndex | None = None) -> list[InputPath]:
    """Every (contact, receiver pin) input path of the board.

    Contacts come in board order, each contact's receivers ordered by part
    and pin. A contact that reaches no receiver gives no path (see
    `untraced_contacts`).
    """
    index = index or build_index(board)
    cache: dict[tuple, _RegionSummary] = {}  # shared regions, for this call only
    paths: list[InputPath] = []
    for contact_index in range(len(board.contacts)):
        paths.extend(trace_contact(index, contact_index, cache))
    return paths


def untraced_contacts(board: Board, paths: list[InputPath]) -> list[Contact]:
    """Contacts that reach no receiver input (wired to nothing checked)."""
    traced = {p.contact for p in paths}
    return [c for c in board.contacts if c not in traced]
