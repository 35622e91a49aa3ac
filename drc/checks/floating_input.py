"""Rule floating-input: one actuator state leaves the receiver with no defined level."""

from __future__ import annotations

from drc.analysis.results import StageResult
from drc.checks.common import contact_name, receiver_name
from drc.checks.context import RuleContext
from drc.checks.examples import debounced_stage, netlist
from drc.checks.registry import rule
from drc.checks.ruledoc import RuleDoc

DOC = RuleDoc(
    id="floating-input",
    title="Receiver floats in one contact state",
    severity="error",
    what=("Flags a stage where, with the contact released or pressed, the receiver pin has no DC "
          "path to a rail or to ground: its level is set by nothing but leakage and noise."),
    why=("A floating CMOS input drifts through its threshold, picks up hum and the neighbouring "
         "traces, and can bias the input stage half-on so that it draws supply current. A contact "
         "to ground with no pull-up is the classic case."),
    how=("DC nodal analysis of the stage in each contact state: a receiver node with no resistive "
         "path (resistor, closed contact, conducting diode) to a fixed voltage is undefined."),
    fix="Add a pull-up (contact to ground) or a pull-down (contact to the rail) at the contact node.",
    failing_example=netlist("SW1 to ground with a filter but no pull-up: released, the pin floats",
                            "V1 vcc 0 DC 5", "SW1 n1 0 TACTILE", "R2 n1 in 39k", "C1 in 0 1u"),
    passing_example=netlist("The same filter with an 8.2 kΩ pull-up", *debounced_stage()),
)


def check(result: StageResult, ctx: RuleContext):
    stage = result.stage
    for state, level in result.levels.items():
        if level.logic != "undefined":
            continue
        # Which way the missing resistor should pull: against the contact's own rail.
        toward = "a pull-up" if _contact_pulls_low(stage) else "a pull resistor"
        yield ctx.stage_finding(
            result, measured=None, limit=None,
            message=(f"with {contact_name(result)} {state}, {receiver_name(result)} has no DC path "
                     f"to a defined level (floating)"),
            fix=f"add {toward} at the contact node of {stage.contact.designator} so the {state} state reads a level")


# Registered by a call, not a decorator: mutation testing (mutmut) leaves decorated
# functions alone, and the rule body is what its tests must pin down.
rule(DOC, kind="stage")(check)


def _contact_pulls_low(stage) -> bool:
    return any("0" in (t.a, t.b) for t in stage.circuit.throws)
