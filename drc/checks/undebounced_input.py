"""Rule undebounced-input: a contact reaches a receiver with nothing that debounces it."""

from __future__ import annotations

from drc.analysis.results import StageResult
from drc.checks.common import contact_name, receiver_name
from drc.checks.context import RuleContext
from drc.checks.examples import debounced_stage, netlist
from drc.checks.registry import rule
from drc.checks.ruledoc import RuleDoc

DOC = RuleDoc(
    id="undebounced-input",
    title="Contact reaches a logic input with no debouncing",
    severity="error",
    what=("Flags every contact-to-input path recognised as `direct` (nothing between contact and "
          "pin) or `pull-only` (only a pull resistor): no RC filter, no latch, no dedicated "
          "debouncer and no declared firmware debounce."),
    why=("A mechanical contact bounces for milliseconds on make and on break. A level input then "
         "reads a burst of transitions; a clock, counter or interrupt input counts every one of "
         "them, so one press becomes several counts or interrupts."),
    how=("Structural: the stage kind found by recognition. Edge-sensitive receivers (clock, "
         "counter, interrupt pins) are named as such in the message."),
    fix=("Add a series resistor and a capacitor at the pin and feed a Schmitt-trigger input, use an "
         "SPDT contact into a latch, or declare the firmware debounce of a microcontroller pin in "
         "the config."),
    failing_example=netlist("SW1 straight into a 74HC14 input with only a pull-up",
                            "V1 vcc 0 DC 5", "R1 vcc in 8.2k", "SW1 in 0 TACTILE"),
    passing_example=netlist("SW1 through an RC filter into a 74HC14 input", *debounced_stage()),
)


def check(result: StageResult, ctx: RuleContext):
    stage = result.stage
    if stage.kind not in ("direct", "pull-only"):
        return
    rx = stage.receiver
    what = "nothing between the contact and the pin" if stage.kind == "direct" else "only a pull resistor"
    severity = None
    if rx.edge_sensitive:
        effect = f"; {rx.ref} is edge-sensitive ({rx.function}), so every bounce counts as an edge"
    elif stage.contact.static:
        # A configuration switch (DIP) read while idle does not need debouncing: say so quietly.
        effect = "; fine if it is only read as configuration while idle, not polled for changes"
        severity = "note"
    else:
        effect = "; the input reads every bounce"
    yield ctx.stage_finding(
        result, measured=None, limit=None, severity=severity,
        message=f"{contact_name(result)} reaches {receiver_name(result)} with {what}{effect}",
        fix=(f"add a series resistor and capacitor at {rx.ref} into a Schmitt-trigger input, an SPDT "
             f"latch, or declare firmware debounce for {rx.ref}"))


# Registered by a call, not a decorator: mutation testing (mutmut) leaves decorated
# functions alone, and the rule body is what its tests must pin down.
rule(DOC, kind="stage")(check)
