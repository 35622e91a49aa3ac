"""Findings: one rule violation at one stage (or one part), immutable.

Rules create findings; reports format them; nothing else touches them.
"""

from __future__ import annotations

from dataclasses import dataclass

from drc.errors import SourceLocation

SEVERITIES = ("note", "warning", "error")
SEVERITY_RANK = {name: rank for rank, name in enumerate(SEVERITIES)}


@dataclass(frozen=True, slots=True)
class Figure:
    """A measured figure or a limit: SI value, its unit symbol, and a display text."""

    value: float
    unit: str
    text: str

    def as_json(self) -> dict:
        return {"value": self.value, "unit": self.unit, "text": self.text}


@dataclass(frozen=True, slots=True)
class Finding:
    rule: str
    severity: str
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
    suppression: str | None = None  # None, "waiver", "annotation", "baseline"
    justification: str | None = None

    def identity(self) -> tuple:
        """What a baseline or waiver matches on: no line numbers."""
        return (self.rule, self.contact or "", self.receiver or "", tuple(sorted(self.parts)))
