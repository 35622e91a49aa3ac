"""How serious a finding is: note < warning < error.

A leaf of its own because the config (severity overrides, the fail level),
the rules, the gate and the reports all speak of severities, and the config
sits upstream of the rules. The values are the words every report writes.
"""

from __future__ import annotations

from enum import StrEnum


class Severity(StrEnum):
    """How serious a finding is; the order note < warning < error is `rank`."""

    NOTE = "note"
    WARNING = "warning"
    ERROR = "error"

    @property
    def rank(self) -> int:
        return SEVERITY_RANK[self]


SEVERITIES: tuple[Severity, ...] = (Severity.NOTE, Severity.WARNING, Severity.ERROR)
# Plain strings look up the same ranks: a StrEnum member hashes and compares as its value.
SEVERITY_RANK: dict[str, int] = {name: rank for rank, name in enumerate(SEVERITIES)}
