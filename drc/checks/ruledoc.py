"""The self-documentation every rule carries.

One text serves `drc rules`, `drc handbook ID`, the SARIF `driver.rules[]`
and the generated docs; the examples are netlists that the test-suite runs
(the failing one must fire the rule, the passing one must not).
"""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True, slots=True)
class RuleDoc:
    id: str
    title: str  # one line
    severity: str  # default: "error", "warning" or "note"
    what: str  # what it checks
    why: str  # why it matters in practice
    how: str  # how the figure is computed
    fix: str  # how to fix it
    failing_example: str  # a netlist on which the rule fires
    passing_example: str  # a netlist on which it does not
    limits: tuple[str, ...] = ()  # keys into rules/limits.toml

    def full_text(self) -> str:
        return (f"{self.id}: {self.title}\n\nWhat it checks\n{self.what}\n\nWhy it matters\n{self.why}\n\n"
                f"How it is computed\n{self.how}\n\nHow to fix it\n{self.fix}")
