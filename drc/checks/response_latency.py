"""Rule response-latency: the filter makes the input answer too late (or never)."""

from __future__ import annotations

from drc.analysis.results import EDGES, StageResult
from drc.checks.common import contact_name, target_level_defined, threshold_name, timing_parts, timing_text
from drc.checks.context import RuleContext, figure
from drc.checks.context import quantity_text as fq
from drc.checks.examples import debounced_stage, netlist
from drc.checks.registry import rule
from drc.checks.ruledoc import RuleDoc

LATENCY = "latency_limit"

DOC = RuleDoc(
    id="response-latency",
    title="Input answers later than the latency limit",
    severity="warning",
    what=("Checks that on both edges the time to the receiver's threshold at the slowest corner "
          "stays under the latency limit, and that the threshold is reached at all."),
    why=("Past about 100 ms a person notices that a button lags; an over-sized filter also "
         "hides short real events. A threshold never reached at the slowest corner means some "
         "boards will not register the press or release at all."),
    how=("Time to threshold at the slowest corner: R and C at their maximum, the outer thresholds "
         "(VT+ max rising, VT- min falling), the final value nearest. Compared with "
         "`latency_limit`."),
    fix=("Lower the resistance or capacitance on the slow edge while keeping the fastest corner "
         "above the bounce time; drc proposes standard values."),
    failing_example=netlist("39 kΩ × 4.7 µF: the release edge takes about 400 ms at the slowest corner",
                            *debounced_stage(c1="4.7u")),
    passing_example=netlist("The same stage with 1 µF: under 100 ms", *debounced_stage()),
    limits=(LATENCY,),
    figure="slowest crossing", bound="max", unmeasured="never",
)


def check(result: StageResult, ctx: RuleContext):
    limit = ctx.limit(LATENCY)
    for name in EDGES:
        edge = result.edges.get(name)
        if edge is None or not target_level_defined(result, edge):
            continue
        th = f"{threshold_name(result, edge)} {fq(edge.threshold_slowest_v, 'V')}"
        rising = edge.direction == "rising"
        if edge.slowest_s is None and (edge.start_v >= edge.threshold_slowest_v if rising
                                       else edge.start_v <= edge.threshold_slowest_v):
            # The level never left the far side of the threshold: there is no edge to be
            # late; the steady level's own rule (leakage-headroom) reports the cause.
            continue
        if edge.slowest_s is None:
            yield ctx.stage_finding(
                result, parts=timing_parts(result, name), measured=None, limit=figure(limit, "s"),
                message=(f"{name} edge of {contact_name(result)} never reaches {th} at "
                         f"{result.stage.receiver.ref} at the slowest corner (it settles at "
                         f"{fq(edge.final_v, 'V')} nominal)"),
                fix=("move the steady level past the threshold: lower the series or pull resistance "
                     "or remove the divider that holds it short of the threshold"))
        elif edge.slowest_s > limit:
            yield ctx.stage_finding(
                result, parts=timing_parts(result, name),
                measured=figure(edge.slowest_s, "s"), limit=figure(limit, "s"),
                message=(f"{name} edge of {contact_name(result)} reaches {th} at "
                         f"{result.stage.receiver.ref} in {fq(edge.slowest_s, 's')} at the slowest "
                         f"corner, over the {fq(limit, 's')} latency limit"),
                fix=f"speed the {name} edge up: lower the resistance or capacitance of {timing_text(result, name)}")


# Registered by a call, not a decorator: mutation testing (mutmut) leaves decorated
# functions alone, and the rule body is what its tests must pin down.
rule(DOC, kind="stage")(check)
