"""Findings: one rule violation at one stage (or one part), immutable.

Rules create findings; the gate (drc.gate.decision) marks the ones a waiver,
an annotation or a baseline accepts; reports format them. The two choices a
finding carries, its severity and its suppression, are string enums whose
values are the words every report writes, so a report never needs to
translate them.
"""

from __future__ import annotations

from dataclasses import dataclass
from enum import StrEnum

from drc.errors import SourceLocation
from drc.severity import SEVERITIES, SEVERITY_RANK, Severity

__all__ = ["SEVERITIES", "SEVERITY_RANK", "Figure", "Finding", "Severity", "Suppression"]


class Suppression(StrEnum):
    """What accepted a finding, so that it no longer fails the run."""

    WAIVER = "waiver"  # a [[waivers]] entry of the config, with an expiry date
    ANNOTATION = "annotation"  # a `*@drc waive` line in the netlist
    BASELINE = "baseline"  # an entry of the baseline file


@dataclass(frozen=True, slots=True)
class Figure:
    """A measured figure or a limit: SI value, its unit symbol, and a display text."""

    value: float
    unit: str
    text: str


@dataclass(frozen=True, slots=True)
class Finding:
    rule: str
    severity: Severity
    board: str
    contact: str | None
    receiver: str | None
    parts: tuple[str, ...]
    nets: tuple[str, ...]
    measured: Figure | None
    limit: Figure | None
    message: str
    fix: str
    location: SourceLocation | None
    related: tuple[SourceLocation, ...] = ()
    # Set by the gate (waivers, annotations, baselines), never by rules.
    suppression: Suppression | None = None
    justification: str | None = None
    # Why an input was not checked (the unchecked-input rule's reason word), else None.
    reason: str | None = None

    def identity(self) -> tuple:
        """What a baseline or waiver matches on: no line numbers."""
        return (self.rule, self.contact or "", self.receiver or "", tuple(sorted(self.parts)))
