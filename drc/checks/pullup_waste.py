"""Rule pullup-waste: the pull resistor draws too much current while the contact is held."""

from __future__ import annotations

from drc.analysis.results import StageResult
from drc.checks.common import contact_name, pull_resistors, resistor_text
from drc.checks.context import RuleContext, figure
from drc.checks.context import quantity_text as fq
from drc.checks.examples import debounced_stage, netlist
from drc.checks.registry import rule
from drc.checks.ruledoc import RuleDoc
from drc.checks.shorted_pull import SHORT, closed_current

BUDGET = "pull_current_budget"

DOC = RuleDoc(
    id="pullup-waste",
    title="Pull resistor wastes current while the contact is held",
    severity="warning",
    what=("Checks the current through the pull resistor(s) while the contact is held in its "
          "current-drawing state, at the rail's maximum and the resistor's minimum, against a "
          "per-contact budget."),
    why=("A button held down, a DIP switch left on or a reed switch that sits closed draws this "
         "current for hours; on battery boards a few low-value pull-ups can dominate the sleep "
         "current, and they warm up for nothing."),
    how=("I = V_rail,max / R_pull,min (DC nodal analysis in the closed state), compared with "
         "`pull_current_budget`. From `short_current` up the contact shorts its rail: that is "
         "shorted-pull's finding, not this one. Reported once per contact, on its first stage."),
    fix="Raise the pull resistor (keep the leakage headroom and the timing in view); drc proposes a standard value.",
    failing_example=netlist("A 3.3 kΩ pull-up draws about 1.7 mA while SW1 is held",
                            *debounced_stage(r1="3.3k")),
    passing_example=netlist("An 8.2 kΩ pull-up draws about 0.7 mA", *debounced_stage()),
    limits=(BUDGET, SHORT),
    figure="held current", bound="max",
)


def check(result: StageResult, ctx: RuleContext):
    budget = ctx.limit(BUDGET)
    current = result.pull_current_a
    if not result.stage.lead or current is None or current <= budget:
        return
    held = closed_current(result)
    if held is not None and held >= ctx.limit(SHORT):
        return  # a short, not waste: shorted-pull reports it
    pulls = pull_resistors(result)
    names = ", ".join(resistor_text(r) for r in pulls) or "the pull resistor"
    yield ctx.stage_finding(
        result, parts=tuple(r.designator for r in pulls),
        measured=figure(current, "A"), limit=figure(budget, "A"),
        message=(f"{names} draws {fq(current, 'A')} while {contact_name(result)} is held, over the "
                 f"{fq(budget, 'A')} budget"),
        fix=f"raise {names} so the held current stays under {fq(budget, 'A')}")


# Registered by a call, not a decorator: mutation testing (mutmut) leaves decorated
# functions alone, and the rule body is what its tests must pin down.
rule(DOC, kind="stage")(check)
