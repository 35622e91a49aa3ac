"""Rule bounce-window: an RC filter passes an edge sooner than the contact stops bouncing."""

from __future__ import annotations

from drc.analysis.results import EDGES, StageResult
from drc.checks.common import RC_KINDS, contact_name, threshold_name, timing_parts, timing_text
from drc.checks.context import RuleContext, figure
from drc.checks.context import quantity_text as fq
from drc.checks.examples import debounced_stage, netlist
from drc.checks.registry import rule
from drc.checks.ruledoc import RuleDoc

MARGIN = "bounce_margin"

DOC = RuleDoc(
    id="bounce-window",
    title="RC filter reaches the threshold before the contact stops bouncing",
    severity="error",
    what=("For RC stages (plain or Schmitt input), checks that on both edges the time from the "
          "contact's first movement to the receiver's threshold, at the fastest tolerance corner, "
          "is at least the contact's bounce time × the margin. Latch, firmware and dedicated "
          "stages debounce elsewhere and are not checked here."),
    why=("If the filtered voltage crosses the threshold while the contact is still bouncing, the "
         "next bounce can pull it back across: the filter is there but does not filter. Parts at "
         "their low tolerance and a threshold near the start make the real board faster than the "
         "nominal calculation."),
    how=("t = R·C·ln((Vf − V0)/(Vf − Vth)) for one capacitor (exact multi-capacitor solution "
         "otherwise) at the fastest corner: R and C at their minimum, the threshold nearest the "
         "start (VT+ min rising, VT- max falling), the final value farthest. Compared with "
         "bounce × margin (limit `bounce_margin`)."),
    fix=("Raise the series resistor or the capacitor (press edge), or the pull plus series "
         "resistance (release edge); check latency afterwards. drc proposes standard values."),
    failing_example=netlist("10 ms tactile contact, 39 kΩ × 100 nF: both edges pass in about 1-2 ms",
                            *debounced_stage(c1="100n")),
    passing_example=netlist("The same stage with 1 µF: both edges take more than 10 ms",
                            *debounced_stage()),
    limits=(MARGIN,),
    figure="fastest crossing", bound="min",
)


@rule(DOC, kind="stage")
def check(result: StageResult, ctx: RuleContext):
    stage = result.stage
    if stage.kind not in RC_KINDS:
        return
    margin = ctx.limit(MARGIN)
    needed = stage.contact.bounce_s * margin
    for name in EDGES:
        edge = result.edges.get(name)
        if edge is None or edge.fastest_s is None or edge.fastest_s >= needed:
            continue
        margin_text = f" × margin {margin:g}" if margin != 1.0 else ""
        yield ctx.stage_finding(
            result, parts=timing_parts(result, name),
            measured=figure(edge.fastest_s, "s"), limit=figure(needed, "s"),
            message=(f"{name} edge reaches {threshold_name(result, edge)} "
                     f"{fq(edge.threshold_fastest_v, 'V')} in {fq(edge.fastest_s, 's')} at the "
                     f"fastest corner, under the {fq(stage.contact.bounce_s, 's')} bounce of "
                     f"{contact_name(result)}{margin_text}"),
            fix=(f"slow the {name} edge to at least {fq(needed, 's')} at the fastest corner: raise "
                 f"the resistance or capacitance of {timing_text(result, name)}"))
