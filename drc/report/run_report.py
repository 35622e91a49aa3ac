"""What every report format renders: the boards of a run, their stages and findings.

Reports never compute; they format these records. The records sort their
contents on construction (stages by contact then receiver, findings by a
total key over every field) so that every format is deterministic: the same
boards in any order give byte-identical output.
"""

from __future__ import annotations

import math
import re
from collections import Counter
from collections.abc import Iterable
from dataclasses import dataclass, field
from enum import StrEnum

from drc.analysis.results import StageResult
from drc.caching import memoized
from drc.checks.findings import SEVERITIES, SEVERITY_RANK, Finding
from drc.checks.ruledoc import RuleDoc
from drc.gate.baseline import BaselineEntry, entry_sort_key

CAUTION = ("Design guidance from models and typical data: verify on the real board and "
           "against the parts' own data, and follow the applicable standards and licensed "
           "engineering practice. Safety functions (emergency stops, interlocks) need "
           "safety-rated design, which this tool does not assess.")
CAUTION_SHORT = ("Guidance from models and typical data: verify on the real board; safety "
                 "functions need safety-rated design this tool does not assess.")

_DIGITS = re.compile(r"(\d+)")


# Designators, refs and board paths recur in every finding of a board: split each once.
@memoized(100_000)
def natural_key(text: str | None) -> tuple:
    """"SW2" before "SW10"; case-insensitive, then exact text to stay total."""
    text = text or ""
    parts = tuple((0, int(p), "") if p.isdigit() else (1, 0, p.casefold())
                  for p in _DIGITS.split(text) if p)
    return (parts, text)


def _figure_key(figure) -> tuple:
    return (0, 0.0, "", "") if figure is None else (1, figure.value, figure.unit, figure.text)


def finding_sort_key(finding: Finding) -> tuple:
    """Findings in reading order: by contact, receiver, rule, then every other field."""
    location = finding.location
    return (natural_key(finding.board), natural_key(finding.contact), natural_key(finding.receiver),
            finding.rule, tuple(natural_key(p) for p in finding.parts),
            -SEVERITY_RANK.get(finding.severity, 0), finding.message, finding.fix,
            _figure_key(finding.measured), _figure_key(finding.limit), finding.nets,
            (location.file, location.line, location.column) if location else ("", 0, 0),
            tuple((r.file, r.line, r.column) for r in finding.related),
            finding.suppression or "", finding.justification or "", finding.reason or "")


def stage_sort_key(result: StageResult) -> tuple:
    stage = result.stage
    return (natural_key(stage.contact.designator), natural_key(stage.receiver.part),
            stage.receiver.pin, stage.kind, stage.parts)


@dataclass(frozen=True, slots=True)
class Inventory:
    """What a board's netlist holds after flattening.

    parts: element count per element letter (X instances left as parts count
    under "X"); rails: net -> nominal volts; instances: subcircuit instances
    that were flattened.
    """

    parts: dict[str, int]
    nets: int
    rails: dict[str, float]
    instances: int

    def as_json(self) -> dict:
        return {"parts": dict(sorted(self.parts.items())), "nets": self.nets,
                "rails": dict(sorted(self.rails.items())), "instances": self.instances}

    def text(self) -> str:
        parts = ", ".join(f"{kind} {n}" for kind, n in sorted(self.parts.items()) if n)
        parts = f" ({parts})" if parts else ""
        rails = ", ".join(f"{net} {volts:g} V" for net, volts in sorted(self.rails.items())) or "none"
        return (f"{sum(self.parts.values())} parts{parts}, {self.nets} nets, rails {rails}, "
                f"{self.instances} subcircuit instances")


def times_apply(result: StageResult) -> bool:
    """Whether a stage's edge times mean anything: a stage with no capacitor (pull-only,
    latch, firmware, direct) follows its contact at once, so its "0 s" are not a
    figure to show; reports say "n/a" (a time that never comes stays "never")."""
    return bool(result.stage.circuit.capacitors)


NOT_APPLICABLE = "n/a"

UNCHECKED_RULE = "unchecked-input"  # the fail-closed rule: a contact the tool could not check


class BoardStatus(StrEnum):
    """What a board's check came to, worst first; the words the archive view prints."""

    NOT_READ = "not read"  # the netlist could not be read (board.error)
    NO_PARTS = "no parts"  # read, but it holds no element (an empty or comments-only file)
    NO_CONTACTS = "no contacts"  # parts, but no contact: no input was checked
    ERRORS = "errors"
    WARNINGS = "warnings"
    NOTES = "notes"
    CLEAN = "clean"


_STATUS_RANK = {status: rank for rank, status in enumerate(BoardStatus)}


@dataclass(frozen=True, slots=True)
class Coverage:
    """What became of a board's contacts (drc/board/coverage.py), or of a run's.

    checked: every input the contact reaches is a checked stage; not_checked:
    at least one input could not be checked (an unchecked-input finding);
    load_only: the contact drives only loads that are not logic inputs.
    loads: (contact, loads it drives, e.g. "lamp LP1") for every contact
    that drives a non-logic load.
    """

    checked: int = 0
    not_checked: int = 0
    load_only: int = 0
    loads: tuple[tuple[str, tuple[str, ...]], ...] = ()

    def __add__(self, other: Coverage) -> Coverage:
        return Coverage(self.checked + other.checked, self.not_checked + other.not_checked,
                        self.load_only + other.load_only, self.loads + other.loads)

    def as_json(self) -> dict:
        return {"checked": self.checked, "not_checked": self.not_checked,
                "non_logic_load": self.load_only,
                "loads": {contact: list(loads) for contact, loads in self.loads}}

    def text(self) -> str:
        """"contacts: 3 checked, 1 not checked, 1 non-logic load only"."""
        text = f"contacts: {self.checked} checked, {self.not_checked} not checked"
        if self.load_only:
            text += f", {self.load_only} non-logic load only"
        return text

    def text_with_loads(self) -> str:
        """text() and the loads: "...; non-logic loads: SW9 drives lamp LP1"."""
        loads = "; ".join(f"{contact} drives {', '.join(driven)}" for contact, driven in self.loads)
        return self.text() + (f"; non-logic loads: {loads}" if loads else "")


@dataclass(frozen=True, slots=True)
class BoardReport:
    """One board's results. error: why the board could not be checked (then no stages)."""

    path: str
    stages: tuple[StageResult, ...] = ()
    findings: tuple[Finding, ...] = ()
    contacts: int = 0
    stage_kinds: dict[str, int] = field(default_factory=dict)
    diagnostics: tuple[str, ...] = ()
    notes: tuple[str, ...] = ()  # netlist lines not read and not needed (a simulator's own library)
    config_path: str | None = None
    error: str | None = None
    files: tuple[str, ...] = ()  # every file the netlist was read from (includes too)
    inventory: Inventory | None = None  # what the netlist holds (None when it was not read)
    coverage: Coverage | None = None  # what became of the contacts (None when not checked)

    def __post_init__(self) -> None:
        # Frozen record: normalise once here so every format sees the same order.
        object.__setattr__(self, "stages", tuple(sorted(self.stages, key=stage_sort_key)))
        object.__setattr__(self, "findings", tuple(sorted(self.findings, key=finding_sort_key)))
        object.__setattr__(self, "stage_kinds", dict(sorted(self.stage_kinds.items())))
        object.__setattr__(self, "diagnostics", tuple(self.diagnostics))
        object.__setattr__(self, "notes", tuple(self.notes))

    def active(self) -> tuple[Finding, ...]:
        """Findings no waiver, annotation or baseline suppresses."""
        return tuple(f for f in self.findings if f.suppression is None)

    def counts(self) -> dict[str, int]:
        """Active findings per severity (every severity present), plus "suppressed"."""
        counter = Counter(f.severity for f in self.active())
        out = {str(severity): counter.get(severity, 0) for severity in SEVERITIES}
        out["suppressed"] = sum(1 for f in self.findings if f.suppression is not None)
        return out

    def status(self) -> BoardStatus:
        """Not read, no parts, no contacts, else the worst active severity, else clean."""
        if self.error:
            return BoardStatus.NOT_READ
        if self.inventory is not None and not sum(self.inventory.parts.values()):
            return BoardStatus.NO_PARTS
        counts = self.counts()
        if counts["error"]:
            return BoardStatus.ERRORS
        if not self.contacts:
            return BoardStatus.NO_CONTACTS
        if counts["warning"]:
            return BoardStatus.WARNINGS
        return BoardStatus.NOTES if counts["note"] else BoardStatus.CLEAN

    def contacts_not_checked(self) -> int:
        """Contacts not checked: the survey's count, else those the fail-closed rule
        reports (waived or not)."""
        if self.coverage is not None:
            return self.coverage.not_checked
        return len({f.contact or f.receiver or f.parts for f in self.findings if f.rule == UNCHECKED_RULE})

    def needs_attention(self) -> bool:
        """Not read, nothing checked, an error, a contact not checked or a negative margin."""
        if self.status() in (BoardStatus.NOT_READ, BoardStatus.NO_PARTS, BoardStatus.NO_CONTACTS,
                             BoardStatus.ERRORS):
            return True
        margin = self.worst_margin_v()
        return self.contacts_not_checked() > 0 or (margin is not None and margin < 0)

    def worst_first_key(self) -> tuple:
        """Archive order: not read, no parts, no contacts, errors, warnings, notes, clean;
        within one status most errors, most warnings, smallest margin, then the path."""
        counts = self.counts()
        margin = self.worst_margin_v()
        return (_STATUS_RANK[self.status()], -counts["error"], -counts["warning"],
                margin if margin is not None else math.inf, natural_key(self.path))

    def worst_margin_v(self) -> float | None:
        """The smallest DC level margin over all stages (negative: fails), None if none."""
        margins = [level.margin_v for result in self.stages for level in result.levels.values()
                   if level.margin_v is not None]
        return min(margins) if margins else None


@dataclass(frozen=True, slots=True)
class BaselineInfo:
    path: str
    matched: int  # findings the baseline accepted
    new: int  # active findings not in the baseline
    written: bool = False  # the run wrote this baseline instead of applying it
    waived: int = 0  # entries whose finding is still there, now waived or annotated (not fixed)


@dataclass(frozen=True, slots=True)
class RunReport:
    """A whole run: boards (sorted by path), the rule catalogue and the gate settings.

    waiver_notes: expired, stale and unused-annotation messages.
    fixed: baseline entries no finding matched any more (the finding is gone).
    baseline_waived: baseline entries whose finding is still there, now accepted
    by a waiver or an annotation (waived, not fixed).
    """

    boards: tuple[BoardReport, ...]
    rule_docs: tuple[RuleDoc, ...] = ()
    fail_level: str = "error"  # a Severity
    waiver_notes: tuple[str, ...] = ()
    baseline: BaselineInfo | None = None
    fixed: tuple[BaselineEntry, ...] = ()
    caution: str = CAUTION
    baseline_waived: tuple[BaselineEntry, ...] = ()

    def __post_init__(self) -> None:
        object.__setattr__(self, "boards", tuple(sorted(self.boards, key=lambda b: natural_key(b.path))))
        object.__setattr__(self, "rule_docs", tuple(sorted(self.rule_docs, key=lambda d: d.id)))
        object.__setattr__(self, "waiver_notes", tuple(sorted(self.waiver_notes)))
        object.__setattr__(self, "fixed", tuple(sorted(self.fixed, key=entry_sort_key)))
        object.__setattr__(self, "baseline_waived", tuple(sorted(self.baseline_waived, key=entry_sort_key)))

    def findings(self) -> Iterable[Finding]:
        for board in self.boards:
            yield from board.findings

    def counts(self) -> dict[str, int]:
        total: Counter[str] = Counter()
        for board in self.boards:
            total.update(board.counts())
        return {str(key): total.get(key, 0) for key in (*SEVERITIES, "suppressed")}

    def coverage(self) -> Coverage:
        """Contacts checked / not checked over every board that was checked."""
        total = Coverage()
        for board in self.boards:
            if board.coverage is not None:
                total = total + board.coverage
        return total

    def rule_doc(self, rule_id: str) -> RuleDoc | None:
        for doc in self.rule_docs:
            if doc.id == rule_id:
                return doc
        return None
