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
    # How a finding's headline names its figure: "margin -3.7 V (min 0.25 V)".
    figure: str = ""  # what the measured figure is ("margin", "held current"); "" = not named
    bound: str = "limit"  # what the limit is to the figure: "min", "max", or "limit" (either side)
    unmeasured: str = ""  # the word for a finding with a limit but no figure ("never")

    def headline_figure(self, measured: str | None, limit: str | None) -> str:
        """"margin -3.7 V (min 0.25 V)": a finding's figure against its limit, in words."""
        value = measured if measured is not None else (self.unmeasured or None)
        named = f"{self.figure} {value}".strip() if value is not None else ""
        if limit is None:
            return named
        bound = f"{self.bound} {limit}"
        return f"{named} ({bound})" if named else bound

    def full_text(self) -> str:
        return (f"{self.id}: {self.title}\n\nWhat it checks\n{self.what}\n\nWhy it matters\n{self.why}\n\n"
                f"How it is computed\n{self.how}\n\nHow to fix it\n{self.fix}")
