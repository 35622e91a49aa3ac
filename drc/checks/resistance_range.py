"""Rule resistance-range: a pull or series resistor outside the usual window."""

from __future__ import annotations

from drc.analysis.results import StageResult
from drc.checks.common import contact_name
from drc.checks.context import RuleContext, figure, part_figure, part_value_text
from drc.checks.context import quantity_text as fq
from drc.checks.examples import debounced_stage, netlist
from drc.checks.registry import rule
from drc.checks.ruledoc import RuleDoc

LOW = "resistance_min"
HIGH = "resistance_max"

DOC = RuleDoc(
    id="resistance-range",
    title="Pull or series resistance outside the usual window",
    severity="note",
    what=("Flags a pull or series resistor in a switch stage whose nominal value lies outside the "
          "window `resistance_min`..`resistance_max` (1 kΩ-50 kΩ by default; common "
          "practice, no source)."),
    why=("Below the window a closed contact wastes current; above it leakage, noise pick-up and "
         "board contamination start to set the level. Outside the window is not wrong by itself, "
         "which is why this is a note: the other rules check the actual margins."),
    how="The resistor's nominal value, compared with the two limits.",
    fix=("Scale the resistor into the window, and the capacitor the other way to keep the time "
         "constant (R × k, C / k)."),
    failing_example=netlist("56 kΩ series resistor with 680 nF: about the reference stage's timing",
                            *debounced_stage(r2="56k", c1="680n")),
    passing_example=netlist("39 kΩ with 1 µF", *debounced_stage()),
    limits=(LOW, HIGH),
    figure="resistance",
)


def check(result: StageResult, ctx: RuleContext):
    low, high = ctx.limit(LOW), ctx.limit(HIGH)
    window = f"{fq(low, 'Ω')}-{fq(high, 'Ω')}"
    lead = result.stage.lead
    for r in result.stage.circuit.resistors:
        if r.role not in ("pull", "series") or low <= r.ohms <= high:
            continue
        if r.role == "pull" and not lead:
            continue  # a pull resistor is the contact's: reported on its first stage only
        bound = low if r.ohms < low else high
        where = "below" if r.ohms < low else "above"
        yield ctx.stage_finding(
            result, parts=(r.designator,),
            measured=part_figure(r.ohms, "Ω"), limit=figure(bound, "Ω"),
            message=(f"{r.role} resistor {r.designator} {part_value_text(r.ohms, 'Ω')} at {contact_name(result)} "
                     f"is {where} the usual {window} window"),
            fix=(f"choose {r.designator} within {window}, scaling the capacitor inversely to keep "
                 f"the time constant"))


# Registered by a call, not a decorator: mutation testing (mutmut) leaves decorated
# functions alone, and the rule body is what its tests must pin down.
rule(DOC, kind="stage")(check)
