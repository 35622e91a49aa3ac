"""Rule contact-surge: a charged capacitor is dumped through the bare contact."""

from __future__ import annotations

from drc.analysis.results import StageResult
from drc.checks.common import contact_name
from drc.checks.context import RuleContext, figure
from drc.checks.context import quantity_text as fq
from drc.checks.examples import debounced_stage, netlist
from drc.checks.registry import rule
from drc.checks.ruledoc import RuleDoc

DOC = RuleDoc(
    id="contact-surge",
    title="Capacitor discharges through the bare contact above its rating",
    severity="warning",
    what=("Checks the peak current when the contact closes onto a charged capacitor (capacitor "
          "voltage divided by the resistance between them: contact resistance plus any series "
          "resistor) against the contact's current rating."),
    why=("A capacitor straight across a contact delivers amperes for a few microseconds at every "
         "closure: the contact arcs, pits and welds, and the current loop radiates. A series "
         "resistor of a few hundred ohms to a kilohm between contact and capacitor prevents it."),
    how=("I_peak = V_cap / (R_contact + R_series) from the analysis; compared with the class's "
         "`rating` in rules/contacts.toml."),
    fix="Put a resistor (100 Ω-1 kΩ is usual) in series between the contact and the capacitor.",
    failing_example=netlist("A 10 nF capacitor straight across SW1",
                            *debounced_stage(extra=("C2 n1 0 10n",))),
    passing_example=netlist("The filter capacitor sits behind the 39 kΩ series resistor",
                            *debounced_stage()),
    figure="closing peak", bound="max",
)


def check(result: StageResult, ctx: RuleContext):
    contact = result.stage.contact
    peak = result.surge_peak_a
    if not result.stage.lead or contact.rating_a is None or peak is None or peak <= contact.rating_a:
        return
    caps = tuple(c.designator for c in result.stage.circuit.capacitors)
    yield ctx.stage_finding(
        result, parts=caps,
        measured=figure(peak, "A"), limit=figure(contact.rating_a, "A"),
        message=(f"{contact_name(result)} closes onto a charged capacitor ({', '.join(caps)}) with a "
                 f"peak of {fq(peak, 'A')}, over its {fq(contact.rating_a, 'A')} rating"),
        fix=(f"put a resistor in series between {contact.designator} and the capacitor (100 Ω-1 kΩ "
             f"is usual) so the peak stays under {fq(contact.rating_a, 'A')}"))


# Registered by a call, not a decorator: mutation testing (mutmut) leaves decorated
# functions alone, and the rule body is what its tests must pin down.
rule(DOC, kind="stage")(check)
