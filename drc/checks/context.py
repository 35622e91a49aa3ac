"""What the engine hands a rule: its limits, its severity and a finding builder.

A rule states facts (which parts, which figures, what message and fix); the
context fills in what is the same for every rule: the board name, the
severity (the rule's default, or a per-finding one the rule gives), and the
netlist locations of the parts involved. The user's severity overrides are
not applied here: what a finding counts for is the gate's decision
(drc.gate.decision). Locations are looked up in a designator index built
once per board, not per finding.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field
from operator import attrgetter

from drc.analysis.results import StageResult
from drc.caching import memoized
from drc.checks.findings import Figure, Finding, Severity
from drc.errors import LibraryError, SourceLocation
from drc.netlist.elements import key
from drc.units import format_part_value, format_quantity


def figure(value: float, unit: str) -> Figure:
    """A Figure with its display text ("11.8 ms", "4.7 kΩ")."""
    value = float(value)
    if not value:  # 0.0 and -0.0 are equal keys: each is built with its own sign
        return Figure(value=value, unit=unit, text=quantity_text(value, unit))
    return _figure(value, unit)


# Limits and standard values recur across stages and boards; a Figure is frozen.
@memoized(50_000)
def _figure(value: float, unit: str) -> Figure:
    return Figure(value=value, unit=unit, text=quantity_text(value, unit))


def part_figure(value: float, unit: str) -> Figure:
    """A part's value as a Figure, with the figures written on the part ("4.7 kΩ", "2.215 kΩ")."""
    return Figure(value=float(value), unit=unit, text=part_value_text(value, unit))


@memoized(50_000)
def part_value_text(value: float, unit: str) -> str:
    """units.format_part_value, remembered: a board repeats a few dozen values."""
    return format_part_value(value, unit)


def quantity_text(value: float | None, unit: str) -> str:
    """units.format_quantity, remembered: part values and limits recur in every stage."""
    try:
        return _quantity_text(value.__class__, value, unit)
    except TypeError:  # an unhashable value: format it as it is
        return format_quantity(value, unit)


@memoized(50_000)
def _quantity_text(_kind: type, value: float | None, unit: str) -> str:
    # The value's class is part of the key: 1 and 1.0 are equal keys but may format apart.
    return format_quantity(value, unit)


_DESIGNATOR = attrgetter("designator")


class Locations(Mapping):
    """Designator key -> netlist location, for every element and part of a board.

    Elements are indexed by designator (the first of a duplicate wins) and
    their location made only when a finding asks for it: a board has a
    hundred thousand elements and a few thousand findings. The index is made
    on first use, keyed by the designators as written (the reader refuses two
    designators that differ only in case, so the spelling finds the element);
    the folded keys of every element are made only if a lookup needs them
    (at a million elements they are 100 MB).
    """

    __slots__ = ("_elements", "_others", "_near", "_spelled", "_shadow", "_folded")

    def __init__(self, elements, others: dict[str, SourceLocation], near: Iterable = ()) -> None:
        self._elements = elements
        self._others = others
        # Elements asked about most (on the checked paths): found by their designator as
        # written before any index of the whole board is made (designators are unique).
        self._near: dict[str, object] = {e.designator: e for e in near}
        self._spelled: dict[str, object] | None = None
        self._shadow: dict[str, object] | None = None
        self._folded: dict[str, object] | None = None

    def _by_key(self) -> dict:
        if self._folded is None:
            backwards = self._elements[::-1]  # later duplicates first, so the first one wins
            self._folded = dict(zip(map(str.casefold, map(_DESIGNATOR, backwards)), backwards, strict=True))
        return self._folded

    def find(self, designator: str) -> SourceLocation | None:
        """What `get(key(designator))` gives, without folding every designator of the board:
        an element near the findings written so; for a part's or contact's name, the first
        element of that key (one pass, keeping only those), else the part or contact;
        else the element written so (an index of the designators as written)."""
        if self._folded is not None:
            return self.get(designator.casefold())
        element = self._near.get(designator)
        if element is not None:
            return element.location  # type: ignore[attr-defined]
        k = designator.casefold()
        if k in self._others:
            element = self._shadowed().get(k)
            return element.location if element is not None else self._others[k]  # type: ignore[attr-defined]
        if self._spelled is None:
            backwards = self._elements[::-1]
            self._spelled = dict(zip(map(_DESIGNATOR, backwards), backwards, strict=True))
        element = self._spelled.get(designator)
        if element is not None:
            return element.location  # type: ignore[attr-defined]
        return self.get(k)  # written otherwise than in the netlist: every key, once

    def _shadowed(self) -> dict[str, object]:
        """The first element of each part's or contact's key (most have none: a contact
        of an X instance is named without its X)."""
        if self._shadow is None:
            shadow: dict[str, object] = {}
            others = self._others
            for e in self._elements:
                folded = e.designator.casefold()
                if folded in others and folded not in shadow:
                    shadow[folded] = e
            self._shadow = shadow
        return self._shadow

    def get(self, k, default=None):
        element = self._by_key().get(k)
        if element is not None:
            return element.location
        return self._others.get(k, default)

    def __getitem__(self, k) -> SourceLocation:
        found = self.get(k, _MISSING)
        if found is _MISSING:
            raise KeyError(k)
        return found

    def __iter__(self):
        folded = self._by_key()
        yield from folded
        yield from (k for k in self._others if k not in folded)

    def __len__(self) -> int:
        folded = self._by_key()
        return len(folded) + sum(1 for k in self._others if k not in folded)


_MISSING = object()


def locations_of(board, near: Iterable = ()) -> Mapping[str, SourceLocation]:
    """Designator key -> netlist location, for every element and part of a board
    (`near`: elements of the board asked about most, see `Locations`)."""
    if board is None:
        return {}
    others: dict[str, SourceLocation] = {}
    for part in getattr(board, "parts", {}).values():
        others.setdefault(key(part.designator), part.location)
    for contact in getattr(board, "contacts", ()):
        others.setdefault(key(contact.designator), contact.location)
    netlist = getattr(board, "netlist", None)
    if netlist is None:
        return others
    return Locations(netlist.elements, others, near)


@dataclass(slots=True)
class RuleContext:
    """Per-run facts for one rule.

    limits: key -> SI float (library defaults overridden by config).
    """

    rule_id: str
    default_severity: Severity
    board_name: str
    limits: Mapping[str, float]
    locations: Mapping[str, SourceLocation] = field(default_factory=dict)

    def limit(self, limit_key: str) -> float:
        """The limit `limit_key`; a missing key is a library bug, said plainly."""
        try:
            return float(self.limits[limit_key])
        except KeyError:
            raise LibraryError(f"rule {self.rule_id!r} needs limit {limit_key!r}, which "
                               f"rules/limits.toml does not define") from None

    def severity(self, finding_default: str | None = None) -> Severity:
        """The rule's severity, or the one the rule gives this finding."""
        return Severity(finding_default) if finding_default else self.default_severity

    def location(self, designator: str) -> SourceLocation | None:
        locations = self.locations
        if isinstance(locations, Locations):
            return locations.find(designator)
        return locations.get(key(designator))

    def finding(self, *, parts: tuple[str, ...], message: str, fix: str,
                measured: Figure | None, limit: Figure | None,
                contact: str | None = None, receiver: str | None = None,
                nets: tuple[str, ...] = (), severity: str | None = None,
                location: SourceLocation | None = None,
                related: tuple[SourceLocation, ...] | None = None,
                reason: str | None = None) -> Finding:
        """A Finding located at its first part, related to the others'."""
        if location is None and parts:
            location = self.location(parts[0])
        if related is None:
            found = (self.location(p) for p in parts[1:])
            related = tuple(dict.fromkeys(loc for loc in found if loc is not None and loc != location))
        return Finding(rule=self.rule_id, severity=self.severity(severity), board=self.board_name,
                       contact=contact, receiver=receiver, parts=tuple(parts), nets=tuple(nets),
                       measured=measured, limit=limit, message=message, fix=fix,
                       location=location, related=related, reason=reason)

    def stage_finding(self, result: StageResult, *, parts: tuple[str, ...] | None = None,
                      **kwargs) -> Finding:
        """A finding about one stage: contact, receiver and nets filled in.

        parts: the parts involved; the contact comes first and the receiver's
        part last whatever the caller lists.
        """
        stage = result.stage
        middle = tuple(p for p in (parts if parts is not None else stage.parts)
                       if p not in (stage.contact.designator, stage.receiver.part))
        everything = (stage.contact.designator, *middle, stage.receiver.part)
        location = self.location(stage.contact.designator) or stage.contact.location
        related = [self.location(p) for p in everything[1:-1]]
        related.append(stage.receiver.location)
        related_t = tuple(dict.fromkeys(loc for loc in related if loc is not None and loc != location))
        return self.finding(parts=everything, contact=stage.contact.designator,
                            receiver=stage.receiver.ref, nets=tuple(stage.nets),
                            location=location, related=related_t, **kwargs)
