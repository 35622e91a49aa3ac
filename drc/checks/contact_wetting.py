"""Rule contact-wetting: the closed contact carries less than its class's wetting current."""

from __future__ import annotations

from drc.analysis.results import StageResult
from drc.checks.common import contact_name, pull_resistors, resistor_text
from drc.checks.context import RuleContext, figure
from drc.checks.context import quantity_text as fq
from drc.checks.examples import debounced_stage, netlist
from drc.checks.registry import rule
from drc.checks.ruledoc import RuleDoc

DOC = RuleDoc(
    id="contact-wetting",
    title="Closed contact carries less than its wetting current",
    severity="warning",
    what=("For contact classes whose data set a minimum (wetting) current, checks the smallest "
          "steady current through the closed contact (rail minimum, resistors at maximum)."),
    why=("Silver and other non-gold contacts grow an oxide or sulphide film; without enough "
         "current to break it at each closure the contact becomes intermittent after months in "
         "the field. Gold-plated signal contacts do not need it."),
    how="DC nodal analysis in the closed state; compared with the class's `wetting` figure in rules/contacts.toml.",
    fix=("Lower the pull resistor until the closed-contact current reaches the wetting minimum, "
         "add a small capacitor discharged through the contact as a wetting pulse, or use a "
         "gold-contact (dry-circuit) part."),
    failing_example=netlist("A snap-action switch (1 mA wetting minimum) carrying about 0.55 mA "
                            "through an 8.2 kΩ pull-up",
                            *debounced_stage(contact="SNAP")),
    passing_example=netlist("A tactile switch (its class sets no wetting minimum) in the same stage",
                            *debounced_stage()),
    figure="closed current", bound="min",
)


def check(result: StageResult, ctx: RuleContext):
    contact = result.stage.contact
    current = result.contact_current_a
    if not result.stage.lead or contact.wetting_a is None or current is None or current >= contact.wetting_a:
        return
    pulls = pull_resistors(result)
    names = ", ".join(resistor_text(r) for r in pulls) or "the pull resistor"
    yield ctx.stage_finding(
        result, parts=tuple(r.designator for r in pulls),
        measured=figure(current, "A"), limit=figure(contact.wetting_a, "A"),
        message=(f"{contact_name(result)} carries {fq(current, 'A')} when closed, under its class's "
                 f"{fq(contact.wetting_a, 'A')} wetting minimum"),
        fix=(f"lower {names} so the closed current reaches {fq(contact.wetting_a, 'A')}, add a "
             f"wetting capacitor, or use a gold-contact part"))


# Registered by a call, not a decorator: mutation testing (mutmut) leaves decorated
# functions alone, and the rule body is what its tests must pin down.
rule(DOC, kind="stage")(check)
