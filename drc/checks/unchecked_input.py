"""Rule unchecked-input: a contact reaches an input the checker could not check.

The fail-closed rule. Every contact ends in a checked stage, a load that is
not a logic input (named in the report), or a finding of this rule with its
reason (`UncheckedReason`, drc/board/board.py); a gate never passes an input
it did not check. The reasons come from classification and the survey of
every contact (drc/board/coverage.py); this rule only words them.
"""

from __future__ import annotations

from drc.board.board import UncheckedReason
from drc.board.coverage import UncheckedInput
from drc.checks.context import RuleContext
from drc.checks.examples import debounced_stage, netlist
from drc.checks.registry import rule
from drc.checks.ruledoc import RuleDoc

DOC = RuleDoc(
    id="unchecked-input",
    title="Contact reaches an input the checker could not check",
    severity="error",
    what=("Flags every contact input that no rule could judge, with its reason: the receiver is a "
          "part the library, the config and the netlist do not describe (unknown-receiver); a known "
          "part written one gate per instance without port names or a config pin list "
          "(unknown-pin-order); an element on the path the reader could not evaluate "
          "(unevaluable-element); the contact reaches no logic input and no known load (no-path); an "
          "optocoupler between the contact and the logic (isolated-input); a receiver whose supply "
          "lies outside its family's range (supply-out-of-range) or on no rail of known voltage "
          "(unknown-supply); an analog switch channel (analog-input); a transistor (discrete-input); "
          "a comparator input whose thresholds cannot be computed (feedback-input, "
          "unknown-threshold)."),
    why=("A gate that passes a board it never checked is worse than no gate: `0 errors` reads as "
         "`all inputs are fine`. Exports write logic parts in many ways (one gate per instance, "
         "library prefixes, vendor models); whatever the checker cannot read must show, so that "
         "someone either describes the part or accepts the input knowingly (a waiver)."),
    how=("Classification records every part whose inputs cannot be judged; the survey walks each "
         "contact's passive region (the tracer's walk) and reports every such part, every element "
         "with a reading problem on it, and a contact that reaches nothing. A contact that drives "
         "only loads that are not logic inputs (lamp, motor, relay coil, LED) is named in the "
         "report, not flagged."),
    fix=("Describe the receiver: a `[[parts]]` entry with `part-number` (and `pins` for a per-gate "
         "instance), the model's `.subckt` line with pin names, a `[[mcu]]` pin, a rail voltage; "
         "fix the element the reader could not evaluate; or waive the finding with a reason."),
    failing_example=netlist("SW1 into a part named SCHMITT_HEX, which no library or config "
                            "describes", *debounced_stage(), part="SCHMITT_HEX"),
    passing_example=netlist("The same stage into a 74HC14", *debounced_stage()),
)


def check(item: UncheckedInput, ctx: RuleContext):
    contact = item.contact
    target = f" → {item.receiver}" if item.receiver else ""
    parts = (contact.designator, *item.parts)
    location = ctx.location(contact.designator) or contact.location
    yield ctx.finding(
        parts=tuple(dict.fromkeys(parts)), contact=contact.designator, receiver=item.receiver,
        nets=item.nets, measured=None, limit=None, location=location,
        related=tuple(loc for loc in item.related if loc != location),
        message=f"{contact.designator}{target} not checked ({item.reason}): {item.detail}",
        fix=_FIXES[item.reason], reason=str(item.reason))


# Registered by a call, not a decorator: mutation testing (mutmut) leaves decorated
# functions alone, and the rule body is what its tests must pin down.
rule(DOC, kind="input")(check)


_FIXES: dict[UncheckedReason, str] = {
    UncheckedReason.UNKNOWN_RECEIVER: ("describe the part: a [[parts]] entry with part-number (and pins), "
                                       "a [[mcu]] pin, or a waiver if it is not a logic input"),
    UncheckedReason.UNKNOWN_PIN_ORDER: ("name the pins: give the model's .subckt line (A Y VCC GND ...) "
                                        "or a [[parts]] entry with pins = [...] in node order"),
    UncheckedReason.UNEVALUABLE_ELEMENT: "fix the element's value or statement so that it can be evaluated",
    UncheckedReason.NO_PATH: ("connect the contact to its input, or describe the part it drives; a "
                              "contact wired to nothing is a schematic error"),
    UncheckedReason.ISOLATED_INPUT: ("check the optocoupler stage by hand (LED current, CTR, output "
                                     "pull-up and edge) or waive the finding with the reason"),
    UncheckedReason.SUPPLY_OUT_OF_RANGE: ("supply the part within its family's range, or use a family "
                                          "made for this supply"),
    UncheckedReason.UNKNOWN_SUPPLY: "give the supply rail's voltage in the config's [[rails]]",
    UncheckedReason.ANALOG_INPUT: ("check the stage at the input that reads the multiplexer's common "
                                   "pin, or waive the finding with the reason"),
    UncheckedReason.DISCRETE_INPUT: "check the transistor stage by hand, or waive the finding with the reason",
    UncheckedReason.FEEDBACK_INPUT: ("use the inverting Schmitt (signal on IN-, divider and feedback on "
                                     "IN+), or check the stage by hand"),
    UncheckedReason.UNKNOWN_THRESHOLD: ("give the comparator's reference input a resistive path to a rail "
                                        "and ground, or check the stage by hand"),
}
